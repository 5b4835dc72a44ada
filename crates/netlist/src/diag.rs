//! Diagnostics: every problem found in a stage file, with a stable code.
//!
//! Parsing and elaboration never stop at the first problem; they collect a
//! [`Diagnostic`] for each and carry on where they can. The codes in
//! [`CODES`] are stable and documented in docs/language.md.

use crate::source::Span;
use std::fmt;

/// How bad a diagnostic is.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord)]
pub enum Severity {
    /// Nothing is simulated from a file with errors.
    Error,
    /// Worth a look; the file is still used.
    Warning,
}

/// One problem, located in the input.
#[derive(Debug, Clone, PartialEq)]
pub struct Diagnostic {
    /// Stable short code (see [`CODES`]), e.g. `"unknown-element"`.
    pub code: &'static str,
    /// Error or warning.
    pub severity: Severity,
    /// What is wrong, in one sentence.
    pub message: String,
    /// File name as given or resolved (empty when not tied to a file).
    pub file: String,
    /// 1-based line (0 when not tied to a place).
    pub line: u32,
    /// 1-based column in characters (0 when not tied to a place).
    pub column: u32,
    /// The byte range it points at.
    pub span: Option<Span>,
    /// A hint, e.g. "did you mean 'collector'?".
    pub help: Option<String>,
    /// The include chain, innermost first: (file, line, column) of each `include`.
    pub included_from: Vec<(String, u32, u32)>,
}

impl Diagnostic {
    /// A diagnostic not tied to a place in a file (e.g. a bad override).
    pub fn global(
        code: &'static str,
        severity: Severity,
        message: impl Into<String>,
    ) -> Diagnostic {
        Diagnostic {
            code,
            severity,
            message: message.into(),
            file: String::new(),
            line: 0,
            column: 0,
            span: None,
            help: None,
            included_from: Vec::new(),
        }
    }
    /// Attach a hint.
    pub fn with_help(mut self, help: impl Into<String>) -> Diagnostic {
        self.help = Some(help.into());
        self
    }
    /// Attach a hint if there is one.
    pub fn with_help_opt(mut self, help: Option<String>) -> Diagnostic {
        if help.is_some() {
            self.help = help;
        }
        self
    }
    /// True for errors.
    pub fn is_error(&self) -> bool {
        self.severity == Severity::Error
    }
}

impl fmt::Display for Diagnostic {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let sev = match self.severity {
            Severity::Error => "error",
            Severity::Warning => "warning",
        };
        if self.line > 0 {
            write!(f, "{}:{}:{}: ", self.file, self.line, self.column)?;
        }
        write!(f, "{sev}[{}]: {}", self.code, self.message)?;
        if let Some(h) = &self.help {
            write!(f, " ({h})")?;
        }
        for (file, l, c) in &self.included_from {
            write!(f, "; included from {file}:{l}:{c}")?;
        }
        Ok(())
    }
}

/// Every diagnostic code with a one-line description (documented in docs/language.md).
pub const CODES: &[(&str, &str)] = &[
    ("io-error", "a file could not be read"),
    ("not-utf8", "a file is not valid UTF-8 text"),
    ("bad-character", "a character that cannot start any token"),
    ("bad-number", "a malformed number"),
    (
        "unknown-unit",
        "a number suffix that is not an SI prefix and/or a known unit",
    ),
    ("unterminated-string", "a string without its closing quote"),
    ("unclosed-bracket", "a ( [ or { without its closing partner"),
    ("unexpected-close", "a ) ] or } without an opening partner"),
    (
        "unknown-statement",
        "a line that does not start with a statement keyword",
    ),
    (
        "syntax",
        "a statement whose words are not in the expected order",
    ),
    (
        "unknown-option",
        "a name=value option the statement does not take",
    ),
    ("duplicate-option", "the same option given twice"),
    ("missing-option", "a required option is missing"),
    ("unknown-function", "an unknown function in an expression"),
    (
        "bad-call",
        "a function called with the wrong number of arguments",
    ),
    ("include-missing", "an included file cannot be read"),
    (
        "include-cycle",
        "a file includes itself, directly or through others",
    ),
    (
        "include-limit",
        "includes nested too deep or too many files included",
    ),
    (
        "include-outside",
        "an included file lies outside the include roots",
    ),
    ("include-not-stage", "an included file is not a stage file"),
    (
        "unknown-name",
        "a value names a parameter that is not defined",
    ),
    ("param-cycle", "parameters defined in terms of each other"),
    (
        "param-chain",
        "a parameter defined through a chain of more than 1000 others (docs/security.md)",
    ),
    (
        "too-large",
        "a count or size beyond the limits of docs/security.md (harmonics, steps, points, elements, estimated memory)",
    ),
    (
        "eval-error",
        "an expression divides by zero or gives a non-finite number",
    ),
    ("unit-mismatch", "a value's unit does not fit its slot"),
    (
        "bad-value",
        "a value outside its allowed range (e.g. a resistance <= 0)",
    ),
    (
        "duplicate-name",
        "an element, part, parameter or mask defined twice",
    ),
    (
        "duplicate-statement",
        "a statement that may appear once appears again",
    ),
    ("unknown-element", "a name that is not an element"),
    (
        "element-kind",
        "an element of the wrong kind for this place",
    ),
    ("unknown-part", "a part name that is not defined"),
    ("part-kind", "a part of the wrong kind for the element"),
    (
        "unknown-part-param",
        "a part block or parameter name the part kind does not have",
    ),
    (
        "missing-part-param",
        "a part parameter without a default is not given",
    ),
    (
        "old-spelling",
        "a spelling of an earlier version of the language (tankwave upgrade rewrites it)",
    ),
    ("unknown-keyword", "a word not among those allowed here"),
    ("unknown-metric", "a requirement names an unknown figure"),
    (
        "unknown-mask",
        "a requirement names a mask that does not exist",
    ),
    (
        "bad-override",
        "an override names a parameter or element that does not exist",
    ),
    ("coupling-range", "a coupling coefficient with |k| > 1"),
    (
        "inductor-loss",
        "an inductor q= without a frequency to apply it at",
    ),
    ("no-dc-path", "a node with no DC path to ground"),
    (
        "source-loop",
        "a loop of ideal voltage sources and/or inductors",
    ),
    (
        "current-cutset",
        "current sources (and capacitors) alone connect a part of the circuit",
    ),
    (
        "tolerance-unused",
        "warning: a `tolerance` in a file without `montecarlo` (tolerances apply only to Monte Carlo samples)",
    ),
    (
        "dangling-node",
        "warning: a node touched by only one element",
    ),
];

/// True if `code` is a documented code.
pub fn is_known_code(code: &str) -> bool {
    CODES.iter().any(|(c, _)| *c == code)
}
