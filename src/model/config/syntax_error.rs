//! Turns toml's syntax messages into ones that say what the user most likely did.

/// (problem, help) for a syntax error reported as `message` on a line reading `line_text`.
pub(crate) fn explain_syntax_error(line_text: &str, message: &str) -> (String, String) {
    // toml reports `key =` with nothing after it as an unquoted string; say what it is.
    let value_missing = line_text.split_once('=').is_some_and(|(_, rest)| {
        let rest = rest.trim_start();
        rest.is_empty() || rest.starts_with('#')
    });
    // A bare word after `=` (precision = f64) makes toml guess at a boolean or a number.
    let bare_word = line_text.split_once('=').and_then(|(key, rest)| {
        let word = rest.split('#').next().unwrap_or("").trim();
        let is_word = word.starts_with(|c: char| c.is_ascii_alphabetic())
            && word.chars().all(|c| c.is_ascii_alphanumeric() || c == '_')
            && !["true", "false", "inf", "nan"].contains(&word);
        is_word.then(|| (key.trim(), word))
    });
    if line_text.contains('\u{2212}') {
        // Copied from a document: TOML (and so the config) knows only the ASCII minus.
        (
            format!(
                "not valid TOML: {message}; the line has a typographic minus `\u{2212}` \
                 (U+2212), which TOML does not read as a minus"
            ),
            "write the minus as `-` (the ASCII hyphen-minus), e.g. a = [1.0, -0.15]".to_owned(),
        )
    } else if let Some((key, word)) = bare_word {
        (
            format!("`{word}` is not quoted: text values are written in double quotes"),
            format!("write {key} = \"{word}\""),
        )
    } else if value_missing {
        (
            "nothing follows `=`: the value is missing".to_owned(),
            "write a value after `=`, or remove the line to use the default".to_owned(),
        )
    } else if message.contains("duplicate key") {
        (
            format!("not valid TOML: {message}"),
            "each key may appear only once in a table: remove or rename one of them".to_owned(),
        )
    } else if message.contains("quoted") {
        (
            format!("not valid TOML: {message}"),
            "write text in double quotes (\"f32\"), numbers as digits (48000, 0.5), lists in [ ]"
                .to_owned(),
        )
    } else {
        (
            format!("not valid TOML: {message}"),
            "fix the TOML syntax here: text in double quotes, lists in [ ], one `key = value` \
             per line"
                .to_owned(),
        )
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn bare_word_gets_quotes_suggested() {
        let (problem, help) = explain_syntax_error("precision = f64 # run", "invalid boolean");
        assert!(problem.contains("`f64` is not quoted"));
        assert_eq!(help, "write precision = \"f64\"");
    }

    #[test]
    fn missing_value_is_named() {
        let (problem, _) = explain_syntax_error("channel_count =   # two", "expected literal");
        assert!(problem.contains("value is missing"));
    }

    #[test]
    fn a_typographic_minus_is_named() {
        let (problem, help) = explain_syntax_error("a = [1.0, \u{2212}0.15]", "invalid array");
        assert!(problem.contains("U+2212"), "{problem}");
        assert!(help.contains("`-`"), "{help}");
    }

    #[test]
    fn other_messages_pass_through() {
        let (problem, _) = explain_syntax_error("b = 1.5.3", "invalid float");
        assert_eq!(problem, "not valid TOML: invalid float");
        let (_, help) = explain_syntax_error("[link", "unclosed table");
        assert!(help.contains("fix the TOML syntax"));
    }
}
