//! Reading toml's spanned document: typed access to values that remembers, for every value, its
//! key path and its place in the text, so any check can fail with a fully placed [`ConfigError`].
//!
//! We walk toml's own spanned tree (`toml::de::DeTable`) instead of deriving a serde schema:
//! serde's messages cannot name the nearest valid key, tell "nan" from a wrong type, or explain
//! which of the three ways to write a complex value went wrong.

use std::ops::Range;
use std::path::{Path, PathBuf};

use toml::de::{DeTable, DeValue};

use super::line_index::LineIndex;
use super::schema::{TableSchema, ALL_TABLES};
use super::syntax_error::explain_syntax_error;
use crate::model::error::{ConfigError, ConfigErrorKind};

/// Longest value text quoted in an error before it is shortened.
const MAX_QUOTED_CHARS: usize = 60;

/// Similarity (Jaro–Winkler, 0..1) above which a stray key is taken for a misspelling.
const SUGGESTION_THRESHOLD: f64 = 0.8;

/// The text being read and where it came from; turns spans into placed errors.
pub(crate) struct Ctx<'t> {
    text: &'t str,
    file: Option<PathBuf>,
    lines: LineIndex,
}

impl<'t> Ctx<'t> {
    pub(crate) fn new(text: &'t str, file: Option<&Path>) -> Self {
        Self {
            text,
            file: file.map(Path::to_path_buf),
            lines: LineIndex::new(text),
        }
    }

    /// `error` placed at the start of `span`, naming `key`.
    fn place(&self, mut error: ConfigError, key: Option<&str>, span: &Range<usize>) -> ConfigError {
        let (line, column) = self.lines.position(self.text, span.start);
        error.file = self.file.clone();
        error.line = Some(line);
        error.column = Some(column);
        error.key = key.filter(|k| !k.is_empty()).map(str::to_owned);
        error
    }

    /// A TOML syntax error, placed where the parser stopped, quoting the line it stopped on.
    pub(crate) fn syntax(&self, error: &toml::de::Error) -> ConfigError {
        let span = error.span().unwrap_or(0..0);
        let (line, _) = self.lines.position(self.text, span.start);
        let line_text = self.lines.line_text(self.text, line);
        let (problem, help) = explain_syntax_error(line_text, error.message().trim());
        let mut placed = self.place(
            ConfigError::new(ConfigErrorKind::Syntax, problem, help),
            None,
            &span,
        );
        placed.value = Some(quoted(line_text)).filter(|v| !v.is_empty());
        placed
    }

    /// The whole document as a table node with key path "".
    pub(crate) fn root<'a>(&'a self, table: &'a DeTable<'a>) -> Table<'a> {
        Table {
            node: Node {
                ctx: self,
                key: String::new(),
                value: None,
                span: 0..0,
            },
            entries: table,
        }
    }
}

/// Shortens a value's source text to one line of at most [`MAX_QUOTED_CHARS`] characters.
fn quoted(written: &str) -> String {
    let one_line = written.split_whitespace().collect::<Vec<_>>().join(" ");
    if one_line.chars().count() <= MAX_QUOTED_CHARS {
        one_line
    } else {
        let head: String = one_line.chars().take(MAX_QUOTED_CHARS).collect();
        format!("{head} …")
    }
}

/// `parent.name`, or `name` at the top level.
fn join_key(parent: &str, name: &str) -> String {
    if parent.is_empty() {
        name.to_owned()
    } else {
        format!("{parent}.{name}")
    }
}

/// How a TOML type is named to someone who may not know TOML's vocabulary.
fn type_name(value: &DeValue<'_>) -> &'static str {
    match value {
        DeValue::String(_) => "text (a string)",
        DeValue::Integer(_) => "a whole number",
        DeValue::Float(_) => "a decimal number",
        DeValue::Boolean(_) => "true/false",
        DeValue::Datetime(_) => "a date/time",
        DeValue::Array(_) => "a list",
        DeValue::Table(_) => "a table",
    }
}

/// One value of the document with its key path and span.
#[derive(Clone)]
pub(crate) struct Node<'a> {
    ctx: &'a Ctx<'a>,
    /// Key path, e.g. `path[0].roots.zeros[2]`.
    pub key: String,
    /// `None` only for the document root.
    value: Option<&'a DeValue<'a>>,
    pub span: Range<usize>,
}

impl<'a> Node<'a> {
    fn child(&self, key: String, value: &'a toml::Spanned<DeValue<'a>>) -> Node<'a> {
        Node {
            ctx: self.ctx,
            key,
            value: Some(value.get_ref()),
            span: value.span(),
        }
    }

    /// An error about this value, quoting it as written (tables written as `[header]` are not
    /// quoted: the header is not their value).
    pub(crate) fn fail(
        &self,
        kind: ConfigErrorKind,
        problem: impl Into<String>,
        help: impl Into<String>,
    ) -> ConfigError {
        self.fail_at(&self.span, kind, problem, help)
    }

    /// Like [`Node::fail`], but the line and column are those of `position` (a key, say).
    pub(crate) fn fail_at(
        &self,
        position: &Range<usize>,
        kind: ConfigErrorKind,
        problem: impl Into<String>,
        help: impl Into<String>,
    ) -> ConfigError {
        let is_inline_or_scalar = match self.value {
            Some(DeValue::Table(_)) => self.written().starts_with('{'),
            Some(_) => true,
            None => false,
        };
        let mut error = self.ctx.place(
            ConfigError::new(kind, problem, help),
            Some(&self.key),
            position,
        );
        if is_inline_or_scalar {
            error.value = Some(quoted(self.written())).filter(|v| !v.is_empty());
        }
        error
    }

    /// This value's source text, exactly as written.
    pub(crate) fn written(&self) -> &'a str {
        self.ctx.text.get(self.span.clone()).unwrap_or("")
    }

    fn wrong_type(&self, wanted: &str, help: &str) -> ConfigError {
        let found = self.value.map_or("nothing", type_name);
        let help = match self.value {
            Some(DeValue::String(s)) if s.trim().parse::<f64>().is_ok() => {
                "remove the quotes: numbers are written without them".to_owned()
            }
            _ => help.to_owned(),
        };
        self.fail(
            ConfigErrorKind::WrongType,
            format!("expected {wanted}, found {found}"),
            help,
        )
    }

    /// A finite number; TOML integers are accepted and converted.
    pub(crate) fn number(&self) -> Result<f64, ConfigError> {
        match self.value {
            Some(DeValue::Float(f)) => self.finite_float(f.as_str()),
            Some(DeValue::Integer(i)) => self.whole(i).map(|v| v as f64),
            _ => Err(self.wrong_type("a number", "write a number such as 0.5 or 48000")),
        }
    }

    fn finite_float(&self, decoded: &str) -> Result<f64, ConfigError> {
        let value: f64 = decoded.parse().map_err(|_| {
            self.fail(
                ConfigErrorKind::WrongType,
                format!("`{decoded}` is not a number"),
                "write a number such as 0.5 or 48000",
            )
        })?;
        if value.is_nan() {
            Err(self.fail(
                ConfigErrorKind::NotFinite,
                "nan (not a number) cannot describe a filter",
                "replace it with a finite number",
            ))
        } else if value.is_infinite() && decoded.contains("inf") {
            Err(self.fail(
                ConfigErrorKind::NotFinite,
                "inf (infinity) cannot describe a filter",
                "replace it with a finite number",
            ))
        } else if value.is_infinite() {
            Err(self.fail(
                ConfigErrorKind::NotFinite,
                "this number is too large for 64-bit floating point and becomes infinite",
                "use a number below about 1.8e308 in magnitude",
            ))
        } else {
            Ok(value)
        }
    }

    fn whole(&self, integer: &toml::de::DeInteger<'_>) -> Result<i64, ConfigError> {
        i64::from_str_radix(integer.as_str(), integer.radix()).map_err(|_| {
            self.fail(
                ConfigErrorKind::OutOfRange,
                "this whole number is too large",
                "use a value that fits the setting's range",
            )
        })
    }

    /// A whole number; a decimal number is refused, even if its fraction is zero, so `2.5`
    /// channels never silently becomes 2.
    pub(crate) fn integer(&self) -> Result<i64, ConfigError> {
        match self.value {
            Some(DeValue::Integer(i)) => self.whole(i),
            Some(DeValue::Float(f)) => {
                let value = self.finite_float(f.as_str())?;
                let help = if value.fract() == 0.0 {
                    format!("write it without the decimal point: {value:.0}")
                } else {
                    "this setting counts whole things (channels, samples): round it".to_owned()
                };
                Err(self.fail(
                    ConfigErrorKind::WrongType,
                    "expected a whole number, found a decimal number",
                    help,
                ))
            }
            _ => Err(self.wrong_type("a whole number", "write a whole number such as 2")),
        }
    }

    pub(crate) fn string(&self) -> Result<&'a str, ConfigError> {
        match self.value {
            Some(DeValue::String(s)) => Ok(s.as_ref()),
            _ => Err(self.wrong_type("text in double quotes", "put the text in double quotes")),
        }
    }

    /// `true` or `false`.
    pub(crate) fn boolean(&self) -> Result<bool, ConfigError> {
        match self.value {
            Some(DeValue::Boolean(b)) => Ok(*b),
            _ => Err(self.wrong_type("true or false", "write true or false, without quotes")),
        }
    }

    /// One of a fixed set of strings, mapped to its meaning.
    pub(crate) fn choice<T: Copy>(&self, options: &[(&str, T)]) -> Result<T, ConfigError> {
        let names: Vec<String> = options.iter().map(|(n, _)| format!("\"{n}\"")).collect();
        let list = names.join(", ");
        let written = match self.value {
            Some(DeValue::String(s)) => s.as_ref(),
            _ => return Err(self.wrong_type(&format!("one of {list}"), "put the choice in quotes")),
        };
        if let Some((_, meaning)) = options.iter().find(|(n, _)| *n == written) {
            return Ok(*meaning);
        }
        let nearest = nearest(written, options.iter().map(|(n, _)| *n));
        let help = match nearest {
            Some(n) => format!("did you mean \"{n}\"?"),
            None => format!("use one of {list}"),
        };
        Err(self.fail(
            ConfigErrorKind::BadChoice,
            format!("\"{written}\" is not one of {list}"),
            help,
        ))
    }

    /// The items of a list, each with its key path `key[i]`.
    pub(crate) fn array(&self) -> Result<Vec<Node<'a>>, ConfigError> {
        match self.value {
            Some(DeValue::Array(items)) => Ok(items
                .iter()
                .enumerate()
                .map(|(i, item)| self.child(format!("{}[{i}]", self.key), item))
                .collect()),
            _ => Err(self.wrong_type("a list in [ ]", "write a list such as [1.0, 0.5]")),
        }
    }

    /// A list of finite numbers.
    pub(crate) fn numbers(&self) -> Result<Vec<f64>, ConfigError> {
        self.array()?.iter().map(Node::number).collect()
    }

    /// This value as a table of `schema`'s kind; any key the schema does not know is an error.
    pub(crate) fn table(&self, schema: &'static TableSchema) -> Result<Table<'a>, ConfigError> {
        match self.value {
            Some(DeValue::Table(entries)) => {
                let table = Table {
                    node: self.clone(),
                    entries,
                };
                table.refuse_unknown_keys(schema)?;
                Ok(table)
            }
            _ => Err(self.wrong_type(
                &format!("a table ({})", schema.name),
                "write it as a table: { key = value, … } or a [section] with keys under it",
            )),
        }
    }

    pub(crate) fn is_array(&self) -> bool {
        matches!(self.value, Some(DeValue::Array(_)))
    }

    pub(crate) fn is_table(&self) -> bool {
        matches!(self.value, Some(DeValue::Table(_)))
    }
}

/// A table of the document: the table's own node plus its entries.
pub(crate) struct Table<'a> {
    pub node: Node<'a>,
    entries: &'a DeTable<'a>,
}

impl<'a> Table<'a> {
    /// Checks the table's keys against `schema`; used on tables reached by [`Node::table`], and
    /// directly on the root.
    pub(crate) fn refuse_unknown_keys(&self, schema: &TableSchema) -> Result<(), ConfigError> {
        let mut stray: Vec<_> = self
            .entries
            .iter()
            .filter(|(k, _)| !schema.keys.contains(&k.get_ref().as_ref()))
            .collect();
        // Report the first stray key in reading order, not in the map's order.
        stray.sort_by_key(|(k, _)| k.span().start);
        let Some((key, value)) = stray.first() else {
            return Ok(());
        };
        let name: &str = key.get_ref().as_ref();
        let help = match nearest(name, schema.keys.iter().copied()) {
            Some(valid) => format!("did you mean `{valid}`?"),
            None => match ALL_TABLES
                .iter()
                .find(|t| t.keys.contains(&name) && t.name != schema.name)
            {
                Some(home) => format!("`{name}` belongs in {}, not in {}", home.name, schema.name),
                None => format!(
                    "the keys allowed in {} are: {}",
                    schema.name,
                    schema
                        .keys
                        .iter()
                        .map(|k| format!("`{k}`"))
                        .collect::<Vec<_>>()
                        .join(", ")
                ),
            },
        };
        // Point at the key itself; quote the value it was given.
        let node = self.node.child(join_key(&self.node.key, name), value);
        let error = node.fail_at(
            &key.span(),
            ConfigErrorKind::UnknownKey,
            format!("`{name}` is not a key of {}", schema.name),
            help,
        );
        Err(error)
    }

    /// Key path of entry `name` of this table.
    pub(crate) fn key_of(&self, name: &str) -> String {
        join_key(&self.node.key, name)
    }

    pub(crate) fn get(&self, name: &str) -> Option<Node<'a>> {
        self.entries
            .get(name)
            .map(|value| self.node.child(self.key_of(name), value))
    }

    /// Span of key `name` itself (where it is written), when present.
    pub(crate) fn key_span(&self, name: &str) -> Option<Range<usize>> {
        self.entries.get_key_value(name).map(|(k, _)| k.span())
    }

    /// The value of a required key, or an error placed at this table saying it is missing.
    pub(crate) fn require(&self, name: &str, help: &str) -> Result<Node<'a>, ConfigError> {
        self.get(name).ok_or_else(|| {
            self.missing(
                name,
                ConfigErrorKind::MissingKey,
                format!("required key `{name}` is missing"),
                help,
            )
        })
    }

    /// An error about key `name` that is absent from this table, placed at the table.
    pub(crate) fn missing(
        &self,
        name: &str,
        kind: ConfigErrorKind,
        problem: impl Into<String>,
        help: impl Into<String>,
    ) -> ConfigError {
        self.node.ctx.place(
            ConfigError::new(kind, problem, help),
            Some(&self.key_of(name)),
            &self.node.span,
        )
    }
}

/// The candidate most like `written`, if any is close enough to be a likely misspelling.
fn nearest<'n>(written: &str, candidates: impl Iterator<Item = &'n str>) -> Option<&'n str> {
    let written = written.to_lowercase();
    candidates
        .map(|c| (strsim::jaro_winkler(&written, c), c))
        .filter(|(score, _)| *score >= SUGGESTION_THRESHOLD)
        .max_by(|x, y| x.0.total_cmp(&y.0))
        .map(|(_, c)| c)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn nearest_finds_misspellings_only() {
        let keys = [
            "sample_rate_hz",
            "channel_count",
            "circle_tolerance",
            "precision",
        ];
        assert_eq!(
            nearest("sample_rate", keys.iter().copied()),
            Some("sample_rate_hz")
        );
        assert_eq!(
            nearest("Channel_Count", keys.iter().copied()),
            Some("channel_count")
        );
        assert_eq!(nearest("zzz", keys.iter().copied()), None);
    }

    #[test]
    fn long_values_are_shortened_to_one_line() {
        assert_eq!(quoted("[1.0,\n   2.0]"), "[1.0, 2.0]");
        let long = format!("[{}]", vec!["0.125"; 40].join(", "));
        let q = quoted(&long);
        assert!(q.ends_with(" …"));
        assert_eq!(q.chars().count(), MAX_QUOTED_CHARS + 2);
    }

    #[test]
    fn key_paths_join_with_dots() {
        assert_eq!(join_key("", "link"), "link");
        assert_eq!(join_key("path[0]", "roots"), "path[0].roots");
    }
}
