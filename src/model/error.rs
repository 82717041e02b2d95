//! Config errors: what went wrong, where in the file, and what the user can do about it.
//!
//! Every error names the place (file, line, column), the key path (`path[1].roots.zeros[2]`,
//! indices zero-based like the channel numbers), the value exactly as written, the problem, and
//! a help line. The config stage stops at the first error it finds.

use std::fmt;
use std::path::PathBuf;

/// What kind of mistake a [`ConfigError`] reports; tests and callers match on this, users read
/// the message.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ConfigErrorKind {
    /// The config file does not exist.
    FileNotFound,
    /// The config file exists but could not be read (permissions, I/O failure).
    FileNotReadable,
    /// The config path names a directory.
    IsDirectory,
    /// The config file is not UTF-8 text.
    NotUtf8,
    /// The text is not valid TOML.
    Syntax,
    /// A required key (or table) is absent.
    MissingKey,
    /// A key the schema does not know.
    UnknownKey,
    /// A value of the wrong TOML type (a string where a number belongs, …).
    WrongType,
    /// A `nan` or `inf` value, or a number too large for f64.
    NotFinite,
    /// A number outside its allowed range (sample rate, channel index, delay, tolerance, …).
    OutOfRange,
    /// A string that is not one of the allowed choices.
    BadChoice,
    /// A list that must not be empty is empty.
    EmptyList,
    /// A numerator that is zero everywhere: the channel passes nothing.
    AllZero,
    /// A denominator whose leading coefficient is zero (`a[0]`, or a section's a0).
    LeadingZero,
    /// More coefficients, roots, sections or delay than [`crate::model::MAX_ORDER`] allows.
    TooLong,
    /// A list item of the wrong length (a second-order section that is not six numbers).
    WrongLength,
    /// A complex zero or pole whose conjugate is missing, under `conjugates = "require"`.
    MissingConjugate,
    /// A zero or pole that is not a valid complex value (wrong array length, negative radius, …).
    MalformedComplex,
    /// Two keys were given where only one of them may be (`delay_samples` and `delay_ms`, …).
    ConflictingKeys,
    /// A path with none of the four model keys.
    NoModel,
    /// A path with more than one of the four model keys.
    SeveralModels,
    /// An audio channel claimed by two paths, or listed twice in one.
    ChannelTwice,
    /// An audio channel no path models.
    ChannelNotCovered,
    /// A config written in a newer format than this build reads.
    NewerFormat,
}

/// A config that cannot become a [`crate::model::Link`], told with enough context to fix it.
#[derive(Debug, Clone, PartialEq)]
pub struct ConfigError {
    pub kind: ConfigErrorKind,
    /// The file the config came from, when it came from one.
    pub file: Option<PathBuf>,
    /// 1-based line of the offending text; `None` when the file could not be read at all.
    pub line: Option<usize>,
    /// 1-based column, counted in characters.
    pub column: Option<usize>,
    /// Key path of the offending value, e.g. `path[1].difference_equation.a`; `None` for syntax
    /// and file errors.
    pub key: Option<String>,
    /// The offending value as written in the file (shortened when long); `None` when the value
    /// is missing altogether.
    pub value: Option<String>,
    /// What is wrong.
    pub problem: String,
    /// What to do about it.
    pub help: String,
}

impl ConfigError {
    /// An error not yet tied to a place; the config stage adds file, line and key.
    pub(crate) fn new(
        kind: ConfigErrorKind,
        problem: impl Into<String>,
        help: impl Into<String>,
    ) -> Self {
        Self {
            kind,
            file: None,
            line: None,
            column: None,
            key: None,
            value: None,
            problem: problem.into(),
            help: help.into(),
        }
    }
}

impl fmt::Display for ConfigError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match &self.file {
            Some(file) => write!(f, "{}", file.display())?,
            None => write!(f, "<config>")?,
        }
        if let (Some(line), Some(column)) = (self.line, self.column) {
            write!(f, ":{line}:{column}")?;
        }
        write!(f, ":")?;
        match (&self.key, &self.value) {
            (Some(key), Some(value)) => write!(f, " {} = {value}", shown_key(key))?,
            (Some(key), None) => write!(f, " {}", shown_key(key))?,
            (None, Some(value)) => write!(f, " {value}")?,
            (None, None) => {}
        }
        write!(f, "\n  problem: {}\n  help: {}", self.problem, self.help)
    }
}

impl std::error::Error for ConfigError {}

/// A key path as a person reads it: the `[[path]]` tables are counted from 1, as every report
/// counts them ("path 2"), so `path[1].structure` is shown as "path 2, `structure`". Indices
/// inside a key (`zeros[2]`, `b[0]`) stay as the config's arrays count them, from 0.
fn shown_key(key: &str) -> String {
    let numbered = key
        .strip_prefix("path[")
        .and_then(|rest| rest.split_once(']'))
        .and_then(|(index, rest)| Some((index.parse::<usize>().ok()? + 1, rest)));
    match numbered {
        Some((number, "")) => format!("path {number}"),
        Some((number, rest)) => format!("path {number}, `{}`", rest.trim_start_matches('.')),
        None => format!("`{key}`"),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn display_has_place_key_value_problem_and_help() {
        let mut e = ConfigError::new(
            ConfigErrorKind::LeadingZero,
            "a[0] is zero",
            "scale the denominator",
        );
        e.file = Some(PathBuf::from("configs/x.toml"));
        e.line = Some(12);
        e.column = Some(7);
        e.key = Some("path[1].difference_equation.a".into());
        e.value = Some("[0.0, 1.0]".into());
        assert_eq!(
            e.to_string(),
            "configs/x.toml:12:7: path 2, `difference_equation.a` = [0.0, 1.0]\n  \
             problem: a[0] is zero\n  help: scale the denominator"
        );
    }

    #[test]
    fn paths_are_counted_from_one_as_in_the_reports() {
        assert_eq!(shown_key("path[0]"), "path 1");
        assert_eq!(
            shown_key("path[3].roots.zeros[2]"),
            "path 4, `roots.zeros[2]`"
        );
        assert_eq!(shown_key("link.sample_rate_hz"), "`link.sample_rate_hz`");
    }

    #[test]
    fn display_without_file_or_position() {
        let e = ConfigError::new(ConfigErrorKind::FileNotFound, "no such file", "check it");
        assert_eq!(
            e.to_string(),
            "<config>:\n  problem: no such file\n  help: check it"
        );
    }
}
