//! Places in the text as the Language Server Protocol counts them: a
//! 0-based line and a column in UTF-16 code units (the protocol's default
//! position encoding, LSP 3.17 `PositionEncodingKind`), to and from byte
//! offsets into the UTF-8 text the parser reads.
//!
//! A line ends at a line feed, a carriage return followed by a line feed,
//! or a lone carriage return (as the protocol and the parser's source map
//! both count lines). A byte-order mark at the start of the text is a
//! character like any other here: it is one UTF-16 unit of the first line,
//! as it is in the client's copy of the text.

use lsp_types::Position;

/// The line starts of one text, for converting places both ways.
#[derive(Debug, Clone)]
pub struct LineIndex {
    /// Byte offset of the start of every line.
    starts: Vec<usize>,
    /// Length of the text in bytes.
    len: usize,
}

impl LineIndex {
    /// Index the lines of `text`.
    pub fn new(text: &str) -> LineIndex {
        let b = text.as_bytes();
        let mut starts = vec![0];
        let mut i = 0;
        while i < b.len() {
            match b[i] {
                b'\n' => starts.push(i + 1),
                b'\r' if b.get(i + 1) != Some(&b'\n') => starts.push(i + 1),
                _ => {}
            }
            i += 1;
        }
        LineIndex {
            starts,
            len: text.len(),
        }
    }

    /// The byte range of line `line` without its line end (`None` past the
    /// last line).
    fn line_range(&self, text: &str, line: usize) -> Option<(usize, usize)> {
        let start = *self.starts.get(line)?;
        let mut end = self.starts.get(line + 1).copied().unwrap_or(self.len);
        let b = text.as_bytes();
        while end > start && matches!(b.get(end - 1), Some(b'\n' | b'\r')) {
            end -= 1;
        }
        Some((start, end))
    }

    /// The protocol position of byte `offset` of `text` (an offset inside a
    /// character counts from that character's start; past the end, the end).
    pub fn position(&self, text: &str, offset: usize) -> Position {
        let mut offset = offset.min(self.len).min(text.len());
        while offset > 0 && !text.is_char_boundary(offset) {
            offset -= 1;
        }
        let line = match self.starts.binary_search(&offset) {
            Ok(i) => i,
            Err(i) => i.saturating_sub(1),
        };
        let start = self.starts.get(line).copied().unwrap_or(0);
        let col: usize = text
            .get(start..offset)
            .map(|s| s.encode_utf16().count())
            .unwrap_or(0);
        Position::new(to_u32(line), to_u32(col))
    }

    /// The byte offset in `text` of a protocol position. A column past the
    /// end of its line is the line's end, a column inside a surrogate pair
    /// is the character's start, and a line past the last is the end of
    /// the text (as the protocol asks).
    pub fn offset(&self, text: &str, pos: Position) -> usize {
        let Some((start, end)) = self.line_range(text, pos.line as usize) else {
            return text.len();
        };
        let want = pos.character as usize;
        let mut units = 0;
        for (i, c) in text.get(start..end).unwrap_or("").char_indices() {
            let next = units + c.len_utf16();
            if next > want {
                return start + i;
            }
            units = next;
        }
        end
    }

    /// The byte range of the line holding byte `offset`, without its end.
    pub fn line_of(&self, text: &str, offset: usize) -> (usize, usize) {
        let line = self.position(text, offset).line as usize;
        self.line_range(text, line)
            .unwrap_or((text.len(), text.len()))
    }
}

fn to_u32(n: usize) -> u32 {
    u32::try_from(n).unwrap_or(u32::MAX)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Round trips on lines holding µ (U+00B5: 2 UTF-8 bytes, 1 UTF-16
    /// unit), Ω (U+03A9: 2 bytes, 1 unit), a character outside the basic
    /// plane (U+1D11E: 4 bytes, 2 units, a surrogate pair) and a byte-order
    /// mark (U+FEFF: 3 bytes, 1 unit). The widths are those of the Unicode
    /// Standard's encoding forms (UTF-8: RFC 3629; UTF-16: RFC 2781).
    #[test]
    fn utf16_columns_on_wide_characters() {
        let text =
            "\u{feff}let a = 1\ninductor l1 x gnd 4.7µH # 𝄞 note\r\nresistor r1 x gnd 50Ω\rend";
        let ix = LineIndex::new(text);
        // BOM: "let" starts at byte 3, UTF-16 column 1
        assert_eq!(ix.position(text, 3), Position::new(0, 1));
        assert_eq!(ix.offset(text, Position::new(0, 1)), 3);
        // line 1: "H" after µ: "inductor l1 x gnd 4.7µ" is 22 chars, µ is 1 unit
        let h = text.find("µH").unwrap() + 'µ'.len_utf8();
        assert_eq!(ix.position(text, h), Position::new(1, 22));
        assert_eq!(ix.offset(text, Position::new(1, 22)), h);
        // the clef is at column 26 and takes 2 units: " note" starts at 28
        let after = text.find('𝄞').unwrap() + 4;
        assert_eq!(ix.position(text, after), Position::new(1, 28));
        assert_eq!(ix.offset(text, Position::new(1, 28)), after);
        // a column inside the surrogate pair lands on the clef's start
        assert_eq!(ix.offset(text, Position::new(1, 27)), after - 4);
        // an offset inside the clef's bytes counts from its start
        assert_eq!(ix.position(text, after - 1), Position::new(1, 26));
        // CR LF ends line 1; Ω on line 2, a lone CR ends line 2
        let ohm = text.find('Ω').unwrap();
        assert_eq!(ix.position(text, ohm), Position::new(2, 20));
        assert_eq!(ix.position(text, ohm + 2), Position::new(2, 21));
        assert_eq!(ix.position(text, text.len()), Position::new(3, 3));
        // past the line end: the line end; past the last line: the text end
        assert_eq!(ix.offset(text, Position::new(2, 99)), ohm + 2);
        assert_eq!(ix.offset(text, Position::new(9, 0)), text.len());
    }
}
