//! Numbers given on the command line, and what is said when one is wrong.
//!
//! Decimal numbers: an ASCII hyphen-minus or the typographic minus sign
//! (U+2212, which text copied from documents and web pages often has) both mean "negative", so
//! `--level-dbfs −30` works as `--level-dbfs -30` does.

/// The typographic minus sign.
const MINUS_SIGN: char = '\u{2212}';

/// Parses a decimal number, accepting either minus.
pub fn number(text: &str) -> Result<f64, String> {
    text.trim()
        .replace(MINUS_SIGN, "-")
        .parse::<f64>()
        .map_err(|_| format!("`{text}` is not a number"))
}

/// A parser for a whole number from `low` to `high`, whose error says so in those words.
pub fn whole_in(low: u32, high: u32) -> impl Fn(&str) -> Result<u32, String> + Clone {
    move |text: &str| match text.trim().parse::<u32>() {
        Ok(n) if (low..=high).contains(&n) => Ok(n),
        _ => Err(format!("give a whole number from {low} to {high}")),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn both_minus_signs_parse() {
        assert_eq!(number("-30"), Ok(-30.0));
        assert_eq!(number("\u{2212}30"), Ok(-30.0));
        assert_eq!(number("\u{2212}2.5e-1"), Ok(-0.25));
        assert_eq!(number("12"), Ok(12.0));
        assert!(number("30 dB").is_err());
    }

    #[test]
    fn whole_numbers_are_bounded_in_words() {
        let block = whole_in(1, 64);
        assert_eq!(block("64"), Ok(64));
        assert_eq!(
            block("0"),
            Err("give a whole number from 1 to 64".to_string())
        );
        assert!(block("lots").is_err());
    }
}
