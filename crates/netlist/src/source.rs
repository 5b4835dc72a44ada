//! Source files, spans and the line/column map.
//!
//! Every token and statement carries a [`Span`]: a file id and a byte range.
//! The [`SourceMap`] owns the text of every file read (the top file and each
//! include) and turns byte offsets into 1-based line and column numbers.

use crate::diag::{Diagnostic, Severity};

/// Index of a file in the [`SourceMap`].
pub type FileId = u32;

/// A byte range in one source file.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Hash)]
pub struct Span {
    /// The file.
    pub file: FileId,
    /// First byte.
    pub start: u32,
    /// One past the last byte.
    pub end: u32,
}

impl Span {
    /// A span from `start` to `end` in `file`.
    pub fn new(file: FileId, start: usize, end: usize) -> Span {
        Span {
            file,
            start: start.min(u32::MAX as usize) as u32,
            end: end.min(u32::MAX as usize) as u32,
        }
    }
    /// The smallest span covering both (same file assumed; `self`'s file is kept).
    pub fn to(self, other: Span) -> Span {
        if other.file != self.file {
            return self;
        }
        Span {
            file: self.file,
            start: self.start.min(other.start),
            end: self.end.max(other.end),
        }
    }
}

/// One source file.
#[derive(Debug, Clone)]
pub struct SourceFile {
    /// Path as given or resolved.
    pub name: String,
    /// The text (invalid UTF-8 replaced, after a diagnostic).
    pub text: String,
    /// Byte offset of every line start.
    line_starts: Vec<u32>,
    /// Where this file was included from (file and byte offset of the include statement).
    pub included_from: Option<(FileId, u32)>,
    /// True if the text is all ASCII (columns are then byte differences).
    ascii: bool,
}

/// All files read for one parse.
#[derive(Debug, Clone, Default)]
pub struct SourceMap {
    files: Vec<SourceFile>,
}

impl SourceMap {
    /// An empty map.
    pub fn new() -> SourceMap {
        SourceMap::default()
    }

    /// Add a file and return its id. A lone carriage return (one not
    /// followed by a line feed, the old Macintosh line end) is stored as a
    /// line feed, so that lines are counted alike by the lexer, by the
    /// places of diagnostics and by the drawing of source lines; the text
    /// keeps its length, so every byte offset stays valid.
    pub fn add(
        &mut self,
        name: &str,
        mut text: String,
        included_from: Option<(FileId, u32)>,
    ) -> FileId {
        if text.contains('\r') {
            let mut bytes = text.into_bytes();
            for i in 0..bytes.len() {
                if bytes[i] == b'\r' && bytes.get(i + 1) != Some(&b'\n') {
                    bytes[i] = b'\n';
                }
            }
            // Replacing one ASCII byte by another keeps the text UTF-8.
            text = String::from_utf8(bytes).unwrap_or_default();
        }
        let mut line_starts = vec![0u32];
        for (i, b) in text.bytes().enumerate() {
            if b == b'\n' {
                line_starts.push((i + 1).min(u32::MAX as usize) as u32);
            }
        }
        let ascii = text.is_ascii();
        self.files.push(SourceFile {
            name: name.to_string(),
            ascii,
            text,
            line_starts,
            included_from,
        });
        (self.files.len() - 1) as FileId
    }

    /// The file with this id.
    pub fn file(&self, id: FileId) -> Option<&SourceFile> {
        self.files.get(id as usize)
    }

    /// Every file in order of reading.
    pub fn files(&self) -> &[SourceFile] {
        &self.files
    }

    /// 1-based line and column (in characters) of a byte offset.
    pub fn line_col(&self, file: FileId, offset: u32) -> (u32, u32) {
        let Some(f) = self.file(file) else {
            return (0, 0);
        };
        let idx = match f.line_starts.binary_search(&offset) {
            Ok(i) => i,
            Err(i) => i.saturating_sub(1),
        };
        let ls = f.line_starts.get(idx).copied().unwrap_or(0) as usize;
        let off = (offset as usize).min(f.text.len());
        let col = match f.text.get(ls..off) {
            Some(_) if f.ascii => off.saturating_sub(ls),
            // a byte-order mark at the start of the file is not a column
            Some(s) => s.strip_prefix('\u{feff}').unwrap_or(s).chars().count(),
            None => off.saturating_sub(ls),
        };
        ((idx + 1) as u32, (col + 1) as u32)
    }

    /// The text of the 1-based line `line` of `file` (without the newline).
    pub fn line_text(&self, file: FileId, line: u32) -> Option<&str> {
        let f = self.file(file)?;
        let i = (line as usize).checked_sub(1)?;
        let start = *f.line_starts.get(i)? as usize;
        let end = f
            .line_starts
            .get(i + 1)
            .map(|e| *e as usize)
            .unwrap_or(f.text.len());
        f.text
            .get(start..end)
            .map(|s| s.trim_end_matches(['\n', '\r']))
    }

    /// Build a located diagnostic: fills file name, line, column and the include chain.
    pub fn diag(
        &self,
        code: &'static str,
        severity: Severity,
        span: Span,
        message: impl Into<String>,
    ) -> Diagnostic {
        let (line, column) = self.line_col(span.file, span.start);
        let file = self
            .file(span.file)
            .map(|f| f.name.clone())
            .unwrap_or_default();
        let mut included_from = Vec::new();
        let mut cur = self.file(span.file).and_then(|f| f.included_from);
        let mut guard = 0;
        while let Some((fid, off)) = cur {
            let (l, c) = self.line_col(fid, off);
            let name = self.file(fid).map(|f| f.name.clone()).unwrap_or_default();
            included_from.push((name, l, c));
            cur = self.file(fid).and_then(|f| f.included_from);
            guard += 1;
            if guard > 1000 {
                break;
            }
        }
        Diagnostic {
            code,
            severity,
            message: message.into(),
            file,
            line,
            column,
            span: Some(span),
            help: None,
            included_from,
        }
    }

    /// An error at `span`.
    pub fn error(&self, code: &'static str, span: Span, message: impl Into<String>) -> Diagnostic {
        self.diag(code, Severity::Error, span, message)
    }

    /// A warning at `span`.
    pub fn warning(
        &self,
        code: &'static str,
        span: Span,
        message: impl Into<String>,
    ) -> Diagnostic {
        self.diag(code, Severity::Warning, span, message)
    }

    /// The source text of a span (empty if out of range).
    pub fn slice(&self, span: Span) -> &str {
        self.file(span.file)
            .and_then(|f| f.text.get(span.start as usize..span.end as usize))
            .unwrap_or("")
    }
}
