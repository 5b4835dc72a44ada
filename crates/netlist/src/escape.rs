//! Text from a stage file made safe to show on a terminal.
//!
//! A title, a name, a string or a line of a stage file may hold control
//! characters: an escape sequence could retitle the terminal window, move
//! the cursor or hide text, and a bidirectional override could make a line
//! read differently from what it is. Everything shown to a person passes
//! through [`escape`] (for text) or [`escape_json`] (for a JSON document);
//! [`same_width`] keeps byte offsets and character columns of a source line
//! intact for drawing a caret under it.

/// True for a character that must not reach a terminal raw: C0 controls
/// other than tab and newline, DEL, C1 controls, and the bidirectional
/// embedding, override and isolate characters (and the other invisible
/// format characters that reorder or hide text).
pub fn is_unsafe(c: char) -> bool {
    matches!(c,
        '\u{0}'..='\u{8}' | '\u{b}'..='\u{1f}' | '\u{7f}'..='\u{9f}'
        | '\u{200b}'..='\u{200f}' | '\u{202a}'..='\u{202e}' | '\u{2066}'..='\u{2069}'
        | '\u{feff}')
}

/// `s` with every unsafe character written as a visible escape (`\u{1b}`).
pub fn escape(s: &str) -> std::borrow::Cow<'_, str> {
    if !s.chars().any(is_unsafe) {
        return std::borrow::Cow::Borrowed(s);
    }
    let mut out = String::with_capacity(s.len() + 8);
    for c in s.chars() {
        if is_unsafe(c) {
            out.push_str(&format!("\\u{{{:x}}}", c as u32));
        } else {
            out.push(c);
        }
    }
    std::borrow::Cow::Owned(out)
}

/// A JSON document with the unsafe characters serde leaves raw (DEL, C1,
/// bidirectional controls) written as `\uXXXX` escapes. Valid JSON stays
/// valid: these characters can only occur inside strings, where the escape
/// means the same character.
pub fn escape_json(s: &str) -> std::borrow::Cow<'_, str> {
    if !s.chars().any(is_unsafe) {
        return std::borrow::Cow::Borrowed(s);
    }
    let mut out = String::with_capacity(s.len() + 8);
    for c in s.chars() {
        if is_unsafe(c) {
            out.push_str(&format!("\\u{:04x}", c as u32));
        } else {
            out.push(c);
        }
    }
    std::borrow::Cow::Owned(out)
}

/// `s` with every unsafe character (and a carriage return) replaced by a
/// visible one of the same UTF-8 length (`?`, `¿` or `�`): byte offsets into
/// the text and character columns stay as they were.
pub fn same_width(s: &str) -> String {
    s.chars()
        .map(|c| {
            if is_unsafe(c) || c == '\r' {
                match c.len_utf8() {
                    1 => '?',
                    2 => '¿',
                    _ => '\u{fffd}',
                }
            } else {
                c
            }
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn escapes_controls_and_bidi() {
        assert_eq!(escape("plain µ text"), "plain µ text");
        assert_eq!(escape("a\u{1b}]0;x\u{7}b"), "a\\u{1b}]0;x\\u{7}b");
        assert_eq!(escape("x\u{202e}y\u{9b}"), "x\\u{202e}y\\u{9b}");
        assert_eq!(escape("tab\tand\nnewline"), "tab\tand\nnewline");
        assert_eq!(escape_json("\"\u{202e}\""), "\"\\u202e\"");
        let s = "a\u{1b}\u{85}\u{202e}\rb";
        let w = same_width(s);
        assert_eq!(w.len(), s.len());
        assert_eq!(w.chars().count(), s.chars().count());
        assert!(!w.chars().any(is_unsafe));
    }
}
