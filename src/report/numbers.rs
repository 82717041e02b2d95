//! How numbers are written in the text report: readable, with enough digits to be useful.
//! (The JSON report carries every digit.)

/// Six significant digits, trailing zeros trimmed; scientific notation outside 1e-4 … 1e7.
pub fn significant(x: f64) -> String {
    if x == 0.0 {
        return "0".to_string();
    }
    if !x.is_finite() {
        return if x.is_nan() {
            "not a number".to_string()
        } else if x > 0.0 {
            "∞".to_string()
        } else {
            "-∞".to_string()
        };
    }
    let magnitude = x.abs();
    if !(1e-4..1e7).contains(&magnitude) {
        let text = format!("{x:.5e}");
        let (mantissa, exponent) = text.split_once('e').unwrap_or((&text, "0"));
        return format!("{}e{exponent}", trim(mantissa));
    }
    let digits_before_point = magnitude.log10().floor() as i32 + 1;
    let decimals = (6 - digits_before_point).max(0) as usize;
    trim(&format!("{x:.decimals$}"))
}

/// `x` with exactly `decimals` decimals (for aligned columns).
pub fn fixed(x: f64, decimals: usize) -> String {
    if x.is_finite() {
        // Avoid printing "-0.000".
        let text = format!("{x:.decimals$}");
        if text
            .trim_start_matches('-')
            .chars()
            .all(|c| c == '0' || c == '.')
        {
            text.trim_start_matches('-').to_string()
        } else {
            text
        }
    } else {
        significant(x)
    }
}

/// A list of coefficients, "[1, −0.5, 0.25]" style but with ASCII minus so it can be pasted.
pub fn list(values: &[f64]) -> String {
    let items: Vec<String> = values.iter().map(|v| significant(*v)).collect();
    format!("[{}]", items.join(", "))
}

fn trim(text: &str) -> String {
    if text.contains('.') {
        text.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        text.to_string()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn six_significant_digits_trimmed() {
        assert_eq!(significant(0.5), "0.5");
        assert_eq!(significant(-1.25), "-1.25");
        assert_eq!(significant(1.0 / 3.0), "0.333333");
        assert_eq!(significant(48_000.0), "48000");
        assert_eq!(significant(123_456.789), "123457");
        assert_eq!(significant(2.5e-9), "2.5e-9");
        assert_eq!(significant(0.0), "0");
    }

    #[test]
    fn fixed_never_shows_negative_zero() {
        assert_eq!(fixed(-0.00001, 3), "0.000");
        assert_eq!(fixed(-0.25, 3), "-0.250");
        assert_eq!(list(&[1.0, -0.5]), "[1, -0.5]");
    }
}
