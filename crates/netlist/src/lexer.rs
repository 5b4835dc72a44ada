//! The lexer: text to tokens with spans.
//!
//! Numbers (with SI prefix and unit), names, strings and punctuation are
//! recognised with small `nom` parsers. Newlines end statements only outside
//! brackets; inside `( )`, `[ ]` and `{ }` they are plain space. A bracket left
//! open when a line starts with a statement keyword is reported as unclosed
//! there, so one missing `}` does not swallow the rest of the file.

use crate::diag::Diagnostic;
use crate::source::{FileId, SourceMap, Span};
use crate::units::{split_suffix, Unit};
use nom::bytes::complete::take_while;
use nom::character::complete::{digit0, digit1, one_of, satisfy};
use nom::combinator::{opt, recognize};
use nom::{IResult, Parser};

use crate::vocab::is_statement_keyword;

/// What a token is.
#[derive(Debug, Clone, PartialEq)]
pub enum TokKind {
    /// A name `[A-Za-z_][A-Za-z0-9_]*`.
    Ident(String),
    /// A number with its prefix applied, and its unit symbol if any.
    Number {
        /// Value with the SI prefix applied (unit conversion not yet applied).
        value: f64,
        /// Unit symbol.
        unit: Option<Unit>,
    },
    /// A double-quoted string (contents).
    Str(String),
    /// `(`
    LParen,
    /// `)`
    RParen,
    /// `{`
    LBrace,
    /// `}`
    RBrace,
    /// `[`
    LBrack,
    /// `]`
    RBrack,
    /// `=`
    Eq,
    /// `,`
    Comma,
    /// `:` (between a time and a value in `table(...)`)
    Colon,
    /// `+`
    Plus,
    /// `-`
    Minus,
    /// `*`
    Star,
    /// `/`
    Slash,
    /// `^`
    Caret,
    /// `<=`
    Le,
    /// `>=`
    Ge,
    /// `<`
    Lt,
    /// `>`
    Gt,
    /// End of a statement.
    Newline,
    /// Something already reported (the statement is skipped).
    Error,
    /// End of input.
    Eof,
}

impl TokKind {
    /// A short description for messages.
    pub fn describe(&self) -> String {
        match self {
            TokKind::Ident(s) => format!("'{s}'"),
            TokKind::Number { .. } => "a number".into(),
            TokKind::Str(_) => "a string".into(),
            TokKind::Newline => "end of line".into(),
            TokKind::Eof => "end of file".into(),
            TokKind::Error => "a bad token".into(),
            other => format!("'{}'", other.punct()),
        }
    }
    fn punct(&self) -> &'static str {
        match self {
            TokKind::LParen => "(",
            TokKind::RParen => ")",
            TokKind::LBrace => "{",
            TokKind::RBrace => "}",
            TokKind::LBrack => "[",
            TokKind::RBrack => "]",
            TokKind::Eq => "=",
            TokKind::Comma => ",",
            TokKind::Colon => ":",
            TokKind::Plus => "+",
            TokKind::Minus => "-",
            TokKind::Star => "*",
            TokKind::Slash => "/",
            TokKind::Caret => "^",
            TokKind::Le => "<=",
            TokKind::Ge => ">=",
            TokKind::Lt => "<",
            TokKind::Gt => ">",
            _ => "?",
        }
    }
}

/// A token and where it is.
#[derive(Debug, Clone, PartialEq)]
pub struct Token {
    /// What it is.
    pub kind: TokKind,
    /// Where it is.
    pub span: Span,
}

fn ident(i: &str) -> IResult<&str, &str> {
    recognize((
        satisfy(|c| c.is_ascii_alphabetic() || c == '_'),
        take_while(|c: char| c.is_ascii_alphanumeric() || c == '_'),
    ))
    .parse(i)
}

/// Mantissa: `12`, `12.`, `12.5`, `.5`.
fn mantissa(i: &str) -> IResult<&str, &str> {
    let with_int = recognize((digit1, opt((nom::character::complete::char('.'), digit0))));
    let frac_only = recognize((nom::character::complete::char('.'), digit1));
    nom::branch::alt((with_int, frac_only)).parse(i)
}

/// Exponent part `e-3`, `E+12` (only when digits follow).
fn exponent(i: &str) -> IResult<&str, &str> {
    recognize((one_of("eE"), opt(one_of("+-")), digit1)).parse(i)
}

/// Suffix characters: letters, µ, μ, Ω, % (digits or dots here make a bad number).
fn suffix(i: &str) -> IResult<&str, &str> {
    take_while(|c: char| {
        c.is_ascii_alphanumeric()
            || c == '_'
            || c == '.'
            || c == 'µ'
            || c == 'μ'
            || c == 'Ω'
            || c == '%'
    })
    .parse(i)
}

/// Lex one file into tokens (ending with `Eof`), reporting problems into `diags`.
pub fn lex(text: &str, file: FileId, map: &SourceMap, diags: &mut Vec<Diagnostic>) -> Vec<Token> {
    let mut toks: Vec<Token> = Vec::with_capacity(text.len() / 4 + 1);
    let mut stack: Vec<(TokKind, Span)> = Vec::new();
    // A byte-order mark at the start is not content.
    let mut rest = text.strip_prefix('\u{FEFF}').unwrap_or(text);
    let len = text.len();
    let mut at_line_start = true;
    while !rest.is_empty() {
        let pos = len - rest.len();
        let c = match rest.chars().next() {
            Some(c) => c,
            None => break,
        };
        // Whitespace and comments.
        if c == '\n' {
            if stack.is_empty()
                && !matches!(toks.last().map(|t| &t.kind), Some(TokKind::Newline) | None)
            {
                toks.push(Token {
                    kind: TokKind::Newline,
                    span: Span::new(file, pos, pos + 1),
                });
            }
            rest = &rest[1..];
            at_line_start = true;
            continue;
        }
        if c.is_whitespace() {
            rest = &rest[c.len_utf8()..];
            continue;
        }
        if c == '#' {
            let end = rest.find('\n').unwrap_or(rest.len());
            rest = &rest[end..];
            continue;
        }
        let line_start = at_line_start;
        at_line_start = false;
        // Names.
        if let Ok((r, name)) = ident(rest) {
            if line_start
                && !stack.is_empty()
                && is_statement_keyword(name)
                && !r.trim_start_matches([' ', '\t']).starts_with('=')
            {
                // A statement keyword at the start of a line while a bracket is open:
                // the bracket was never closed. Report it and start afresh here.
                for (k, sp) in stack.drain(..).take(3) {
                    push_capped(
                        diags,
                        map.error(
                            "unclosed-bracket",
                            sp,
                            format!("{} is never closed", k.describe()),
                        )
                        .with_help(format!("close it before the '{name}' statement")),
                    );
                }
                toks.push(Token {
                    kind: TokKind::Error,
                    span: Span::new(file, pos, pos),
                });
                toks.push(Token {
                    kind: TokKind::Newline,
                    span: Span::new(file, pos, pos),
                });
            }
            toks.push(Token {
                kind: TokKind::Ident(name.to_string()),
                span: Span::new(file, pos, pos + name.len()),
            });
            rest = r;
            continue;
        }
        // Numbers.
        if let Ok((r, mant)) = mantissa(rest) {
            let (r, exp) = match exponent(r) {
                Ok((r2, e)) => (r2, Some(e)),
                Err(_) => (r, None),
            };
            let (r, suf) = suffix(r).unwrap_or((r, ""));
            let end = len - r.len();
            let span = Span::new(file, pos, end);
            rest = r;
            let e0: i64 = exp.and_then(|e| e[1..].parse::<i64>().ok()).unwrap_or(0);
            match split_suffix(suf) {
                Ok((pe, unit)) => {
                    let total = e0.saturating_add(pe as i64);
                    let value = format!("{mant}e{total}").parse::<f64>().unwrap_or(f64::NAN);
                    if !value.is_finite() {
                        push_capped(
                            diags,
                            map.error(
                                "bad-number",
                                span,
                                format!("'{}' is too large a number", &text[pos..end]),
                            ),
                        );
                        toks.push(Token {
                            kind: TokKind::Error,
                            span,
                        });
                    } else {
                        toks.push(Token {
                            kind: TokKind::Number { value, unit },
                            span,
                        });
                    }
                }
                Err(msg) => {
                    let code = if suf.starts_with(|c: char| c.is_ascii_digit() || c == '.') {
                        "bad-number"
                    } else {
                        "unknown-unit"
                    };
                    let help = if code == "unknown-unit" {
                        let number = &text[pos..end - suf.len()];
                        let tips = crate::units::suffix_suggestions(suf);
                        Some(if tips.is_empty() {
                            crate::units::suffix_help()
                        } else {
                            let tips: Vec<String> =
                                tips.iter().map(|t| format!("{number}{t}")).collect();
                            format!(
                                "did you mean {}? (units are case-sensitive)",
                                tips.join(" or ")
                            )
                        })
                    } else {
                        None
                    };
                    push_capped(
                        diags,
                        map.error(
                            code,
                            span,
                            format!("bad number '{}': {msg}", &text[pos..end]),
                        )
                        .with_help_opt(help),
                    );
                    toks.push(Token {
                        kind: TokKind::Error,
                        span,
                    });
                }
            }
            continue;
        }
        // Strings.
        if c == '"' {
            let body = &rest[1..];
            let mut out = String::new();
            let mut end = None;
            let mut chars = body.char_indices();
            while let Some((i, ch)) = chars.next() {
                match ch {
                    '"' => {
                        end = Some(i + 1);
                        break;
                    }
                    '\n' => break,
                    '\\' => match chars.next() {
                        Some((_, '\n')) | None => break,
                        Some((_, e)) => out.push(e),
                    },
                    ch => out.push(ch),
                }
            }
            match end {
                Some(e) => {
                    let span = Span::new(file, pos, pos + 1 + e);
                    toks.push(Token {
                        kind: TokKind::Str(out),
                        span,
                    });
                    rest = &body[e..];
                }
                None => {
                    let line_end = rest.find('\n').unwrap_or(rest.len());
                    let span = Span::new(file, pos, pos + line_end);
                    push_capped(
                        diags,
                        map.error(
                            "unterminated-string",
                            Span::new(file, pos, pos + 1),
                            "string has no closing '\"'",
                        )
                        .with_help("close the string on the same line"),
                    );
                    toks.push(Token {
                        kind: TokKind::Error,
                        span,
                    });
                    rest = &rest[line_end..];
                }
            }
            continue;
        }
        // Punctuation.
        let two = rest.get(..2).unwrap_or("");
        let (kind, n) = match two {
            "<=" => (TokKind::Le, 2),
            ">=" => (TokKind::Ge, 2),
            _ => match c {
                '(' => (TokKind::LParen, 1),
                ')' => (TokKind::RParen, 1),
                '{' => (TokKind::LBrace, 1),
                '}' => (TokKind::RBrace, 1),
                '[' => (TokKind::LBrack, 1),
                ']' => (TokKind::RBrack, 1),
                '=' => (TokKind::Eq, 1),
                ',' => (TokKind::Comma, 1),
                ':' => (TokKind::Colon, 1),
                '+' => (TokKind::Plus, 1),
                '-' => (TokKind::Minus, 1),
                '*' => (TokKind::Star, 1),
                '/' => (TokKind::Slash, 1),
                '^' => (TokKind::Caret, 1),
                '<' => (TokKind::Lt, 1),
                '>' => (TokKind::Gt, 1),
                _ => (TokKind::Error, bad_run_len(rest)),
            },
        };
        let span = Span::new(file, pos, pos + n);
        rest = &rest[n..];
        match kind {
            TokKind::Error => {
                let count = rest_len_chars(&text[pos..pos + n]);
                let message = if count == 1 {
                    format!("unexpected character '{}'", c.escape_debug())
                } else {
                    format!(
                        "{count} unexpected characters, the first '{}'",
                        c.escape_debug()
                    )
                };
                push_capped(diags, map.error("bad-character", span, message));
                toks.push(Token { kind, span });
            }
            TokKind::LParen | TokKind::LBrace | TokKind::LBrack => {
                stack.push((kind.clone(), span));
                toks.push(Token { kind, span });
            }
            TokKind::RParen | TokKind::RBrace | TokKind::RBrack => {
                let want = match kind {
                    TokKind::RParen => TokKind::LParen,
                    TokKind::RBrace => TokKind::LBrace,
                    _ => TokKind::LBrack,
                };
                if stack.last().map(|(k, _)| k) == Some(&want) {
                    stack.pop();
                    toks.push(Token { kind, span });
                } else if let Some((open, osp)) = stack.last().cloned() {
                    push_capped(
                        diags,
                        map.error(
                            "unexpected-close",
                            span,
                            format!("{} does not close {}", kind.describe(), open.describe()),
                        )
                        .with_help(format!(
                            "the open bracket is at line {}",
                            map.line_col(osp.file, osp.start).0
                        )),
                    );
                    toks.push(Token {
                        kind: TokKind::Error,
                        span,
                    });
                } else {
                    push_capped(
                        diags,
                        map.error(
                            "unexpected-close",
                            span,
                            format!("{} without an opening partner", kind.describe()),
                        ),
                    );
                    toks.push(Token {
                        kind: TokKind::Error,
                        span,
                    });
                }
            }
            _ => toks.push(Token { kind, span }),
        }
    }
    // Report the outermost few (a hundred unclosed brackets are one mistake repeated).
    if !stack.is_empty() {
        toks.push(Token {
            kind: TokKind::Error,
            span: Span::new(file, len, len),
        });
    }
    for (k, sp) in stack.drain(..).take(3) {
        push_capped(
            diags,
            map.error(
                "unclosed-bracket",
                sp,
                format!("{} is never closed", k.describe()),
            ),
        );
    }
    toks.push(Token {
        kind: TokKind::Eof,
        span: Span::new(file, len, len),
    });
    toks
}

/// Push a diagnostic unless [`crate::LIMITS`]`.max_diagnostics_collected`
/// are already held (the lexer then only carries on to the end of the file).
fn push_capped(diags: &mut Vec<Diagnostic>, d: Diagnostic) {
    if diags.len() < crate::LIMITS.max_diagnostics_collected {
        diags.push(d);
    }
}

/// Number of characters in `s`.
fn rest_len_chars(s: &str) -> usize {
    s.chars().count()
}

/// Byte length of the run of characters at the start of `rest` that cannot
/// start any token: a run of junk (a file of NUL bytes, say) is one token
/// and one diagnostic, not one per byte.
fn bad_run_len(rest: &str) -> usize {
    rest.char_indices()
        .find(|&(_, ch)| {
            ch.is_alphanumeric() || ch.is_whitespace() || "()[]{}=,+-*/^<>\"#.'_".contains(ch)
        })
        .map(|(i, _)| i)
        .unwrap_or(rest.len())
        .max(rest.chars().next().map(char::len_utf8).unwrap_or(1))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn kinds(s: &str) -> (Vec<TokKind>, Vec<Diagnostic>) {
        let mut map = SourceMap::new();
        let f = map.add("t", s.to_string(), None);
        let mut d = Vec::new();
        let t = lex(s, f, &map, &mut d);
        (t.into_iter().map(|t| t.kind).collect(), d)
    }

    #[test]
    fn numbers_with_prefix_and_unit() {
        let (k, d) = kinds("13.56MHz 10n 2.5uH 1e3 .5k 47Ω");
        assert!(d.is_empty());
        let vals: Vec<(f64, Option<Unit>)> = k
            .iter()
            .filter_map(|k| match k {
                TokKind::Number { value, unit } => Some((*value, *unit)),
                _ => None,
            })
            .collect();
        assert_eq!(vals[0], (13.56e6, Some(Unit::Hertz)));
        assert_eq!(vals[1], (10e-9, None));
        assert_eq!(vals[2], (2.5e-6, Some(Unit::Henry)));
        assert_eq!(vals[3], (1e3, None));
        assert_eq!(vals[4], (500.0, None));
        assert_eq!(vals[5], (47.0, Some(Unit::Ohm)));
    }

    #[test]
    fn newlines_inside_brackets_are_space() {
        let (k, _) = kinds("a (1 +\n 2)\nb");
        let nl = k.iter().filter(|k| **k == TokKind::Newline).count();
        assert_eq!(nl, 1);
    }

    #[test]
    fn a_leading_byte_order_mark_is_skipped() {
        let (k, d) = kinds("\u{FEFF}let x = 1");
        assert!(d.is_empty());
        assert_eq!(k[0], TokKind::Ident("let".into()));
    }

    #[test]
    fn bad_things_are_reported() {
        let (_, d) = kinds("x 12kq \"abc\n }");
        let codes: Vec<&str> = d.iter().map(|d| d.code).collect();
        assert_eq!(
            codes,
            vec!["unknown-unit", "unterminated-string", "unexpected-close"]
        );
    }

    #[test]
    fn a_wrong_case_unit_suggests_the_number_written_right() {
        let (_, d) = kinds("a 10uh b 4.7kohms c 12xyz");
        let helps: Vec<String> = d
            .iter()
            .map(|d| d.help.clone().unwrap_or_default())
            .collect();
        assert!(helps[0].contains("did you mean 10uH?"), "{helps:?}");
        assert!(helps[1].contains("did you mean 4.7kOhm?"), "{helps:?}");
        // No near spelling: the list of units and prefixes instead.
        assert!(helps[2].contains("K is kelvin"), "{helps:?}");
    }

    #[test]
    fn unclosed_brace_recovers_at_next_statement() {
        let (k, d) = kinds("part m npn {\n transport { beta=50 }\nresistor r1 a b 1\n");
        assert_eq!(d.len(), 1);
        assert_eq!(d[0].code, "unclosed-bracket");
        assert_eq!((d[0].line, d[0].column), (1, 12));
        assert!(k.contains(&TokKind::Ident("resistor".into())));
    }
}
