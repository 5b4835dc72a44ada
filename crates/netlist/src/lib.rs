//! tankwave-netlist: the stage-file language — lexing, parsing, units,
//! expressions, includes, spans and diagnostics.
//!
//! This crate turns text into a syntax tree ([`ast::Statement`]s) with every
//! value kept as an unevaluated expression, plus a [`SourceMap`] and every
//! [`Diagnostic`] found. It knows nothing about circuits or solving: the
//! meaning of statements (node numbering, models, topology) belongs to the
//! circuit crate. It never panics on any input bytes.
//!
//! ```
//! let parsed = tankwave_netlist::parse_str("stage.tank", "resistor r1 a gnd 50Ohm\n");
//! assert!(parsed.diagnostics.is_empty());
//! assert_eq!(parsed.statements.len(), 1);
//! ```
#![deny(missing_docs)]

pub mod ast;
pub mod diag;
pub mod escape;
pub mod expr;
pub mod lexer;
pub mod limits;
pub mod parser;
pub mod source;
pub mod suggest;
pub mod units;
pub mod vocab;

pub use ast::Statement;
pub use diag::{Diagnostic, Severity, CODES};
pub use limits::{Limits, LIMITS};
pub use source::{FileId, SourceMap, Span};
pub use units::{Slot, Unit};

use parser::Item;
use std::path::{Path, PathBuf};
use std::sync::Arc;

/// Largest file read (bigger files are refused with `io-error`); see [`LIMITS`].
pub const MAX_FILE_BYTES: u64 = LIMITS.max_file_bytes;
/// Deepest include nesting; see [`LIMITS`].
pub const MAX_INCLUDE_DEPTH: usize = LIMITS.max_include_depth;

/// The result of parsing: statements (includes spliced in), sources and diagnostics.
#[derive(Debug, Clone)]
pub struct Parsed {
    /// Statements in order, with included files' statements in place of each `include`.
    pub statements: Vec<Statement>,
    /// Every file read.
    pub sources: Arc<SourceMap>,
    /// Every problem found while reading and parsing.
    pub diagnostics: Vec<Diagnostic>,
    /// Statements that failed to parse, as (keyword, name): their names are
    /// known to exist, so uses elsewhere are not reported as unknown again.
    pub broken: Vec<(String, String)>,
    /// Every file read from disk (the top file and each include), as opened.
    pub files_read: Vec<PathBuf>,
}

impl Parsed {
    /// True if any diagnostic is an error.
    pub fn has_errors(&self) -> bool {
        self.diagnostics.iter().any(|d| d.is_error())
    }
}

struct State {
    map: SourceMap,
    diags: Vec<Diagnostic>,
    stmts: Vec<Statement>,
    broken: Vec<(String, String)>,
    /// Canonical include roots: an include must resolve under one of them.
    roots: Vec<PathBuf>,
    /// Files read so far (the top file included).
    reads: usize,
    files_read: Vec<PathBuf>,
    /// Bytes read so far, every file together ([`Limits::max_total_bytes`]).
    bytes: u64,
    /// Expression operands the file may still hold ([`Limits::max_total_terms`]).
    terms_left: usize,
    /// Set once the statement or term budget is spent (reported once):
    /// nothing more is read.
    full: bool,
}

impl State {
    fn new(roots: Vec<PathBuf>) -> State {
        State {
            map: SourceMap::new(),
            diags: Vec::new(),
            stmts: Vec::new(),
            broken: Vec::new(),
            roots,
            reads: 1,
            files_read: Vec::new(),
            bytes: 0,
            terms_left: LIMITS.max_total_terms,
            full: false,
        }
    }
}

/// The default include roots of a stage file: its directory and that
/// directory's parents up to the enclosing repository root (the nearest
/// directory holding `.git`); without a repository, its directory and its
/// parents up to the current working directory when the file lies under it
/// (an unpacked archive run from its top), else its directory only.
/// Paths are canonical.
pub fn default_include_roots(path: &Path) -> Vec<PathBuf> {
    let dir = match path.parent() {
        Some(d) if !d.as_os_str().is_empty() => d.to_path_buf(),
        _ => PathBuf::from("."),
    };
    let dir = canonical(&dir);
    let mut chain = Vec::new();
    let mut cur = Some(dir.as_path());
    while let Some(d) = cur {
        chain.push(d.to_path_buf());
        if d.join(".git").exists() {
            return chain;
        }
        cur = d.parent();
    }
    if let Ok(cwd) = std::env::current_dir() {
        let cwd = canonical(&cwd);
        if dir.starts_with(&cwd) {
            return chain
                .into_iter()
                .take_while(|d| d.starts_with(&cwd))
                .collect();
        }
    }
    vec![dir]
}

/// Parse a stage file from disk. Includes are resolved relative to each
/// including file and must lie under the [`default_include_roots`] of `path`.
pub fn parse_file(path: impl AsRef<Path>) -> Parsed {
    parse_file_with_roots(path, &[])
}

/// [`parse_file`], with `extra_roots` allowed for includes besides the
/// default ones (directories that do not exist are ignored).
pub fn parse_file_with_roots(path: impl AsRef<Path>, extra_roots: &[PathBuf]) -> Parsed {
    let path = path.as_ref();
    let name = path.display().to_string();
    let mut roots = default_include_roots(path);
    roots.extend(
        extra_roots
            .iter()
            .filter_map(|r| std::fs::canonicalize(r).ok()),
    );
    let mut st = State::new(roots);
    match read_limited(path) {
        Ok(bytes) => {
            st.files_read.push(path.to_path_buf());
            let mut stack = vec![canonical(path)];
            let dir = path.parent().map(Path::to_path_buf).unwrap_or_default();
            st.source(&name, &bytes, None, &dir, &mut stack);
        }
        Err(e) => st.diags.push(Diagnostic::global(
            "io-error",
            Severity::Error,
            format!("cannot read {name}: {e}"),
        )),
    }
    st.finish()
}

/// Parse text given in memory; `name` is used in messages and as the base for includes.
pub fn parse_str(name: &str, text: &str) -> Parsed {
    parse_bytes(name, text.as_bytes())
}

/// Parse bytes given in memory (non-UTF-8 input gives a `not-utf8` diagnostic).
pub fn parse_bytes(name: &str, bytes: &[u8]) -> Parsed {
    parse_bytes_with_roots(name, bytes, &[])
}

/// [`parse_bytes`], with `extra_roots` allowed for includes besides the
/// default ones of `name` (directories that do not exist are ignored), as
/// [`parse_file_with_roots`] allows them for a file read from disk.
pub fn parse_bytes_with_roots(name: &str, bytes: &[u8], extra_roots: &[PathBuf]) -> Parsed {
    let p = Path::new(name);
    let mut roots = default_include_roots(p);
    roots.extend(
        extra_roots
            .iter()
            .filter_map(|r| std::fs::canonicalize(r).ok()),
    );
    let mut st = State::new(roots);
    let dir = p.parent().map(Path::to_path_buf).unwrap_or_default();
    let mut stack = vec![canonical(p)];
    st.source(name, bytes, None, &dir, &mut stack);
    st.finish()
}

fn canonical(p: &Path) -> PathBuf {
    std::fs::canonicalize(p).unwrap_or_else(|_| p.to_path_buf())
}

fn read_limited(p: &Path) -> Result<Vec<u8>, String> {
    let md = std::fs::metadata(p).map_err(|e| e.to_string())?;
    if !md.is_file() {
        return Err("not a regular file".into());
    }
    if md.len() > LIMITS.max_file_bytes {
        return Err(format!(
            "file is {} bytes, more than the {} byte limit",
            md.len(),
            LIMITS.max_file_bytes
        ));
    }
    std::fs::read(p).map_err(|e| e.to_string())
}

impl State {
    fn finish(self) -> Parsed {
        Parsed {
            statements: self.stmts,
            sources: Arc::new(self.map),
            diagnostics: self.diags,
            broken: self.broken,
            files_read: self.files_read,
        }
    }

    fn source(
        &mut self,
        name: &str,
        bytes: &[u8],
        from: Option<(FileId, u32)>,
        dir: &Path,
        stack: &mut Vec<PathBuf>,
    ) {
        let (text, bad_at) = match std::str::from_utf8(bytes) {
            Ok(s) => (s.to_string(), None),
            Err(e) => (
                String::from_utf8_lossy(bytes).into_owned(),
                Some(e.valid_up_to()),
            ),
        };
        self.bytes += bytes.len() as u64;
        let file = self.map.add(name, text, from);
        if let Some(at) = bad_at {
            // Offsets in the lossy text equal the original ones up to the first bad byte.
            let d = self.map.error(
                "not-utf8",
                Span::new(file, at, at + 1),
                format!("{name} is not UTF-8 text (bad byte at offset {at})"),
            );
            self.diags.push(d);
            return;
        }
        let text = self
            .map
            .file(file)
            .map(|f| f.text.clone())
            .unwrap_or_default();
        let toks = lexer::lex(&text, file, &self.map, &mut self.diags);
        if self.full {
            return;
        }
        let items = parser::parse_tokens(&toks, &self.map, &mut self.diags, &mut self.terms_left);
        if self.terms_left == 0 {
            self.full = true;
        }
        for item in items {
            if self.full && !matches!(item, Item::Broken(..)) {
                break;
            }
            match item {
                Item::Stmt(mut s) => {
                    if self.stmts.len() >= LIMITS.max_statements {
                        let mut d = self.map.error(
                            "too-large",
                            s.keyword.span,
                            format!(
                                "more than {} statements in one stage file (its includes \
                                 counted in); reading stops here",
                                LIMITS.max_statements
                            ),
                        );
                        d.help = Some("the limits are listed in docs/security.md".into());
                        self.diags.push(d);
                        self.full = true;
                        break;
                    }
                    if let ast::Stmt::Element(e) = &mut s.stmt {
                        if let Some(f) = &mut e.file {
                            f.source = self.data_file(&f.path, f.span, dir);
                        }
                    }
                    self.stmts.push(*s)
                }
                Item::Include(rel, span) => self.include(&rel, span, dir, stack),
                Item::Broken(kw, name) => self.broken.push((kw, name)),
            }
        }
    }

    /// Read a data file named at `span` (a Touchstone file): relative to
    /// `dir`, under the include roots, within the file-size limit, counted
    /// with the includes. Its text goes into the source map; it is not parsed
    /// here.
    fn data_file(&mut self, rel: &str, span: Span, dir: &Path) -> Option<FileId> {
        let path = dir.join(rel);
        let canon = canonical(&path);
        let shown = crate::escape::escape(rel).into_owned();
        if self.reads >= LIMITS.max_includes {
            let d = self.map.error(
                "include-limit",
                span,
                format!(
                    "more than {} files read for one stage file",
                    LIMITS.max_includes
                ),
            );
            self.diags.push(d);
            return None;
        }
        if canon.exists() && !self.roots.iter().any(|r| canon.starts_with(r)) {
            let d = self.map.error(
                "include-outside",
                span,
                format!("cannot read '{shown}': it lies outside the include roots"),
            );
            self.diags.push(d.with_help(
                "data files are read from the same directories as includes; add one with --include-root",
            ));
            return None;
        }
        if self.over_byte_cap(&path, span, &shown, "read") {
            return None;
        }
        match read_limited(&path) {
            Ok(bytes) => {
                self.reads += 1;
                self.bytes += bytes.len() as u64;
                self.files_read.push(path.clone());
                match String::from_utf8(bytes) {
                    Ok(text) => {
                        let name = path.display().to_string();
                        Some(self.map.add(&name, text, Some((span.file, span.start))))
                    }
                    Err(_) => {
                        let d = self.map.error(
                            "not-utf8",
                            span,
                            format!("cannot read '{shown}': it is not text"),
                        );
                        self.diags.push(d);
                        None
                    }
                }
            }
            Err(e) => {
                let d = self.map.error(
                    "include-missing",
                    span,
                    format!("cannot read '{shown}': {e}"),
                );
                self.diags.push(d);
                None
            }
        }
    }

    /// True (and an `include-limit` error at `span`) when reading `path`
    /// would take the stage file, its includes and data files together past
    /// [`Limits::max_total_bytes`]; `verb` says what was refused (`include`,
    /// `read`).
    fn over_byte_cap(&mut self, path: &Path, span: Span, shown: &str, verb: &str) -> bool {
        let size = std::fs::metadata(path).map(|m| m.len()).unwrap_or(0);
        if self.bytes.saturating_add(size) <= LIMITS.max_total_bytes {
            return false;
        }
        let mut d = self.map.error(
            "include-limit",
            span,
            format!(
                "cannot {verb} '{shown}': more than {} bytes in the stage file, its \
                 includes and data files together",
                LIMITS.max_total_bytes
            ),
        );
        d.help = Some("the limits are listed in docs/security.md".into());
        self.diags.push(d);
        true
    }

    fn include(&mut self, rel: &str, span: Span, dir: &Path, stack: &mut Vec<PathBuf>) {
        let path = dir.join(rel);
        let canon = canonical(&path);
        let shown = crate::escape::escape(rel).into_owned();
        if let Some(pos) = stack.iter().position(|p| *p == canon) {
            let chain: Vec<String> = stack[pos..]
                .iter()
                .chain(std::iter::once(&canon))
                .map(|p| {
                    p.file_name()
                        .map(|f| crate::escape::escape(&f.to_string_lossy()).into_owned())
                        .unwrap_or_default()
                })
                .collect();
            let d = self.map.error(
                "include-cycle",
                span,
                format!("include cycle: {}", chain.join(" -> ")),
            );
            self.diags.push(d);
            return;
        }
        if stack.len() >= LIMITS.max_include_depth {
            let d = self.map.error(
                "include-limit",
                span,
                format!(
                    "includes nested more than {} deep",
                    LIMITS.max_include_depth
                ),
            );
            self.diags.push(d);
            return;
        }
        if self.reads >= LIMITS.max_includes {
            let d = self.map.error(
                "include-limit",
                span,
                format!(
                    "more than {} files included for one stage file",
                    LIMITS.max_includes
                ),
            );
            self.diags.push(d);
            return;
        }
        if self.full {
            return;
        }
        if canon.exists() && !self.roots.iter().any(|r| canon.starts_with(r)) {
            let d = self.map.error(
                "include-outside",
                span,
                format!("cannot include '{shown}': it lies outside the include roots"),
            );
            let roots: Vec<String> = self
                .roots
                .iter()
                .map(|r| crate::escape::escape(&r.display().to_string()).into_owned())
                .collect();
            self.diags.push(d.with_help(format!(
                "includes may come from {}; add a directory with --include-root",
                roots.join(", ")
            )));
            return;
        }
        if self.over_byte_cap(&path, span, &shown, "include") {
            return;
        }
        match read_limited(&path) {
            Ok(bytes) => {
                self.reads += 1;
                self.files_read.push(path.clone());
                stack.push(canon);
                let sub = path.parent().map(Path::to_path_buf).unwrap_or_default();
                let name = path.display().to_string();
                let (diags_before, stmts_before) = (self.diags.len(), self.stmts.len());
                let broken_before = self.broken.len();
                self.source(&name, &bytes, Some((span.file, span.start)), &sub, stack);
                stack.pop();
                // A file of which not one statement could be read is not a
                // stage file (a system file, say): say so, and show none of
                // its content.
                let new_errors = self.diags[diags_before..].iter().any(|d| d.is_error());
                // (errors of its own includes are shown as they are)
                let nested = self.diags[diags_before..]
                    .iter()
                    .any(|d| d.code.starts_with("include-"));
                if new_errors && !nested && !self.full && self.stmts.len() == stmts_before {
                    self.diags.truncate(diags_before);
                    self.broken.truncate(broken_before);
                    let d = self.map.error(
                        "include-not-stage",
                        span,
                        format!("cannot include '{shown}': it is not a stage file"),
                    );
                    self.diags.push(d);
                }
            }
            Err(e) => {
                let d = self.map.error(
                    "include-missing",
                    span,
                    format!("cannot include '{shown}': {e}"),
                );
                self.diags.push(d.with_help(format!(
                    "the path is taken relative to {}",
                    if dir.as_os_str().is_empty() {
                        "the current directory".into()
                    } else {
                        crate::escape::escape(&dir.display().to_string()).into_owned()
                    }
                )));
            }
        }
    }
}
