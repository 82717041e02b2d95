//! Byte offsets (what toml's spans give) → 1-based line and column (what a person looks for).

/// Start offsets of every line of a text, for turning byte offsets into line:column.
#[derive(Debug, Clone)]
pub(crate) struct LineIndex {
    line_starts: Vec<usize>,
}

impl LineIndex {
    pub(crate) fn new(text: &str) -> Self {
        let mut line_starts = vec![0];
        // A line ends at '\n'; a '\r' before it belongs to the line's end and is never counted
        // as a column, because nothing can be pointed at after it.
        line_starts.extend(text.match_indices('\n').map(|(i, _)| i + 1));
        Self { line_starts }
    }

    /// 1-based (line, column) of byte `offset` in `text`; the column counts characters, not
    /// bytes, so a name with accents before the value does not shift the caret. Offsets past the
    /// end, or inside a multi-byte character, are clamped to the nearest position before them.
    pub(crate) fn position(&self, text: &str, offset: usize) -> (usize, usize) {
        let mut offset = offset.min(text.len());
        while !text.is_char_boundary(offset) {
            offset -= 1;
        }
        let line = self.line_starts.partition_point(|&start| start <= offset);
        let start = self.line_starts[line - 1];
        let column = text[start..offset].chars().count() + 1;
        (line, column)
    }

    /// The text of the 1-based `line`, without its line ending.
    pub(crate) fn line_text<'t>(&self, text: &'t str, line: usize) -> &'t str {
        let start = self
            .line_starts
            .get(line - 1)
            .copied()
            .unwrap_or(text.len());
        let end = self
            .line_starts
            .get(line)
            .map_or(text.len(), |&next| next - 1);
        text[start..end.max(start)].trim_end_matches('\r')
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn at(text: &str, offset: usize) -> (usize, usize) {
        LineIndex::new(text).position(text, offset)
    }

    #[test]
    fn first_character_is_line_one_column_one() {
        assert_eq!(at("abc", 0), (1, 1));
        assert_eq!(at("", 0), (1, 1));
    }

    #[test]
    fn columns_within_a_line() {
        assert_eq!(at("abc\ndef", 2), (1, 3));
        // The newline itself sits one past the last character.
        assert_eq!(at("abc\ndef", 3), (1, 4));
        assert_eq!(at("abc\ndef", 4), (2, 1));
        assert_eq!(at("abc\ndef", 6), (2, 3));
    }

    #[test]
    fn end_of_text_and_beyond() {
        assert_eq!(at("abc\n", 4), (2, 1));
        assert_eq!(at("abc\nde", 6), (2, 3));
        assert_eq!(at("abc\nde", 600), (2, 3));
    }

    #[test]
    fn empty_lines_count() {
        let text = "a\n\n\nb";
        assert_eq!(at(text, 2), (2, 1));
        assert_eq!(at(text, 3), (3, 1));
        assert_eq!(at(text, 4), (4, 1));
    }

    #[test]
    fn crlf_line_endings() {
        let text = "ab\r\ncd\r\nef";
        assert_eq!(at(text, 4), (2, 1));
        assert_eq!(at(text, 5), (2, 2));
        assert_eq!(at(text, 8), (3, 1));
        assert_eq!(LineIndex::new(text).line_text(text, 2), "cd");
    }

    #[test]
    fn columns_count_characters_not_bytes() {
        // "é" is two bytes and "→" three; the 'x' after them is the 4th character.
        let text = "# é→ x\nlabel = \"Süd\" # y";
        assert_eq!(at(text, "# é→ ".len()), (1, 6));
        let y = text.rfind('y').unwrap();
        assert_eq!(at(text, y), (2, 17));
    }

    #[test]
    fn offset_inside_a_character_is_clamped_back() {
        let text = "é";
        assert_eq!(at(text, 1), (1, 1));
    }

    #[test]
    fn line_text_of_each_line() {
        let text = "one\ntwo\n\nfour";
        let index = LineIndex::new(text);
        assert_eq!(index.line_text(text, 1), "one");
        assert_eq!(index.line_text(text, 2), "two");
        assert_eq!(index.line_text(text, 3), "");
        assert_eq!(index.line_text(text, 4), "four");
        assert_eq!(index.line_text(text, 9), "");
    }
}
