//! The statement parser: tokens to [`Statement`]s.
//!
//! Each statement is parsed on its own; on a problem the parser reports it,
//! skips to the end of the statement and carries on, so one run reports every
//! broken statement. `include` statements are handed back to the caller
//! (see [`crate::parse_file`]), which reads the file and splices its
//! statements in place.

use crate::ast::*;
use crate::diag::Diagnostic;
use crate::lexer::{TokKind, Token};
use crate::source::{SourceMap, Span};
use crate::suggest::did_you_mean;
use crate::vocab::{self, Place, ELEMENT_KINDS, WAVEFORMS};

/// One parsed item of a file.
#[derive(Debug, Clone, PartialEq)]
pub enum Item {
    /// A statement.
    Stmt(Box<Statement>),
    /// `include "path"` with the span of the statement.
    Include(String, Span),
    /// A declaration that failed to parse (already reported): its keyword and name,
    /// so later uses of the name are not reported again as unknown.
    Broken(String, String),
}

struct Parser<'a> {
    toks: &'a [Token],
    pos: usize,
    map: &'a SourceMap,
    diags: &'a mut Vec<Diagnostic>,
    depth: usize,
    /// Operands read so far in the expression being parsed (reset at its start).
    terms: usize,
    /// Operands the stage file may still hold in all its expressions
    /// ([`crate::LIMITS`]`.max_total_terms` at the start of the top file).
    terms_left: usize,
    /// Set when `terms_left` ran out (reported once): parsing stops.
    exhausted: bool,
}

/// Deepest nesting of expressions and limits in parser levels (guards the
/// stack on hostile input); see [`crate::LIMITS`]`.max_expression_depth`.
pub const MAX_NESTING: usize = crate::LIMITS.max_expression_depth;

type P<T> = Result<T, ()>;

/// A token stepped past (its place).
struct Bumped {
    span: Span,
}

/// Parse a token stream (from [`crate::lexer::lex`]) into items.
/// `terms_left` is the number of expression operands the stage file may still
/// hold ([`crate::LIMITS`]`.max_total_terms` for the whole file and its
/// includes); it is reduced by those read here. When it runs out, the place
/// is reported once and parsing stops (then `*terms_left` is 0).
pub fn parse_tokens(
    toks: &[Token],
    map: &SourceMap,
    diags: &mut Vec<Diagnostic>,
    terms_left: &mut usize,
) -> Vec<Item> {
    let mut p = Parser {
        toks,
        pos: 0,
        map,
        diags,
        depth: 0,
        terms: 0,
        terms_left: *terms_left,
        exhausted: *terms_left == 0,
    };
    let mut items = Vec::new();
    loop {
        if p.exhausted {
            p.terms_left = 0;
            break;
        }
        match p.peek() {
            TokKind::Eof => break,
            TokKind::Newline => {
                p.pos += 1;
                continue;
            }
            _ => {}
        }
        let start = p.pos;
        match p.statement() {
            Ok(item) => {
                if matches!(p.peek(), TokKind::Newline | TokKind::Eof) {
                    items.push(item);
                } else {
                    if !matches!(p.peek(), TokKind::Error) {
                        let t = p.tok().clone();
                        let kw = match &p.toks.get(start).map(|t| &t.kind) {
                            Some(TokKind::Ident(s)) => s.clone(),
                            _ => String::new(),
                        };
                        p.err(
                            t.span,
                            format!(
                                "unexpected {} at the end of the '{kw}' statement",
                                t.kind.describe()
                            ),
                        );
                    }
                    p.skip_statement();
                }
            }
            Err(()) => {
                if let (Some(TokKind::Ident(kw)), Some(TokKind::Ident(name))) = (
                    p.toks.get(start).map(|t| &t.kind),
                    p.toks.get(start + 1).map(|t| &t.kind),
                ) {
                    // A retired keyword declares the same thing as its replacement.
                    let kw = vocab::retired(kw, Place::Statement)
                        .map(|r| r.new.to_string())
                        .unwrap_or_else(|| kw.clone());
                    items.push(Item::Broken(kw, name.clone()));
                }
                p.skip_statement()
            }
        }
    }
    *terms_left = p.terms_left;
    items
}

impl<'a> Parser<'a> {
    fn tok(&self) -> &Token {
        let i = self.pos.min(self.toks.len().saturating_sub(1));
        &self.toks[i]
    }
    fn peek(&self) -> &TokKind {
        &self.tok().kind
    }
    fn peek_at(&self, n: usize) -> &TokKind {
        let i = (self.pos + n).min(self.toks.len().saturating_sub(1));
        &self.toks[i].kind
    }
    /// Step past the current token, returning where it was.
    fn bump(&mut self) -> Bumped {
        let span = self.tok().span;
        if self.pos < self.toks.len() {
            self.pos += 1;
        }
        Bumped { span }
    }
    fn prev_end(&self) -> Span {
        let i = self
            .pos
            .saturating_sub(1)
            .min(self.toks.len().saturating_sub(1));
        self.toks[i].span
    }
    fn err(&mut self, span: Span, msg: impl Into<String>) {
        if self.diags.len() < crate::LIMITS.max_diagnostics_collected {
            let d = self.map.error("syntax", span, msg);
            self.diags.push(d);
        }
    }
    fn err_help(
        &mut self,
        code: &'static str,
        span: Span,
        msg: impl Into<String>,
        help: Option<String>,
    ) {
        if self.diags.len() < crate::LIMITS.max_diagnostics_collected {
            let d = self.map.error(code, span, msg).with_help_opt(help);
            self.diags.push(d);
        }
    }
    /// Report "expected X" at the current token (unless it is an already-reported bad token).
    fn expected<T>(&mut self, what: &str) -> P<T> {
        let t = self.tok().clone();
        if t.kind != TokKind::Error {
            self.err(
                t.span,
                format!("expected {what}, got {}", t.kind.describe()),
            );
        }
        Err(())
    }
    fn skip_statement(&mut self) {
        while !matches!(self.peek(), TokKind::Newline | TokKind::Eof) {
            self.pos += 1;
        }
    }
    fn eat(&mut self, k: &TokKind) -> bool {
        if self.peek() == k {
            self.pos += 1;
            true
        } else {
            false
        }
    }
    fn expect(&mut self, k: TokKind, what: &str) -> P<Bumped> {
        if self.peek() == &k {
            Ok(self.bump())
        } else {
            self.expected(what)
        }
    }
    fn is_word(&self, w: &str) -> bool {
        matches!(self.peek(), TokKind::Ident(s) if s == w)
    }
    fn eat_word(&mut self, w: &str) -> bool {
        if self.is_word(w) {
            self.pos += 1;
            true
        } else {
            false
        }
    }
    fn expect_word(&mut self, w: &str) -> P<()> {
        if self.eat_word(w) {
            Ok(())
        } else {
            self.expected(&format!("'{w}'"))
        }
    }
    fn ident(&mut self, what: &str) -> P<Ident> {
        if let TokKind::Ident(name) = self.peek() {
            let name = name.clone();
            let span = self.bump().span;
            return Ok(Ident { name, span });
        }
        match self.peek() {
            TokKind::Number { .. } if what.contains("node") => {
                let t = self.tok().clone();
                self.err_help(
                    "syntax",
                    t.span,
                    format!("expected {what}, got a number"),
                    Some("names start with a letter or '_' (e.g. n1)".into()),
                );
                Err(())
            }
            _ => self.expected(what),
        }
    }

    fn statement(&mut self) -> P<Item> {
        let t = self.tok().clone();
        let kw = match &t.kind {
            TokKind::Ident(s) => s.clone(),
            TokKind::Error => return Err(()),
            other => {
                let d = other.describe();
                self.err_help(
                    "unknown-statement",
                    t.span,
                    format!("a statement starts with a keyword, got {d}"),
                    None,
                );
                return Err(());
            }
        };
        let keyword = Ident {
            name: kw.clone(),
            span: t.span,
        };
        self.pos += 1;
        let stmt = match kw.as_str() {
            "title" => match self.peek().clone() {
                TokKind::Str(s) => {
                    self.pos += 1;
                    Stmt::Title(s)
                }
                _ => return self.expected("a quoted title"),
            },
            "include" => match self.peek().clone() {
                TokKind::Str(s) => {
                    self.pos += 1;
                    return Ok(Item::Include(s, t.span.to(self.prev_end())));
                }
                _ => return self.expected("a quoted file name"),
            },
            "ambient" => Stmt::Ambient(self.value()?),
            "let" => {
                let name = self.ident("a parameter name")?;
                self.expect(TokKind::Eq, "'='")?;
                Stmt::Let {
                    name,
                    value: self.value()?,
                }
            }
            k if ELEMENT_KINDS.contains(&k) => {
                let kind = ElemKeyword::from_keyword(&kw).ok_or(())?;
                Stmt::Element(self.element(kind)?)
            }
            "part" => Stmt::Part(self.part()?),
            "output" => Stmt::Output(self.ident("an element name")?),
            "input" => Stmt::Input(self.ident("an element name")?),
            "analyze" => {
                let kind = self.ident("an analysis (bias, transient, ac or steady)")?;
                Stmt::Analyze {
                    kind,
                    options: self.options()?,
                }
            }
            "mask" => Stmt::Mask(self.mask()?),
            "require" => Stmt::Require(self.require()?),
            "vary" => self.vary()?,
            "tolerance" => {
                let element = self.ident("an element name")?;
                let value = self.value()?;
                let distribution = match self.peek() {
                    TokKind::Ident(_) => Some(self.ident("a distribution")?),
                    _ => None,
                };
                Stmt::Tolerance {
                    element,
                    value,
                    distribution,
                }
            }
            "montecarlo" => Stmt::MonteCarlo(self.options()?),
            "tune" => {
                let param = self.ident("a parameter name")?;
                self.expect_word("from")?;
                let from = self.value()?;
                self.expect_word("to")?;
                let to = self.value()?;
                Stmt::Tune { param, from, to }
            }
            old if vocab::retired(old, Place::Statement).is_some() => {
                if let Some(r) = vocab::retired(old, Place::Statement) {
                    self.err_help("old-spelling", t.span, vocab::retired_message(r), None);
                }
                return Err(());
            }
            _ => {
                let help = did_you_mean(&kw, vocab::statement_keywords());
                let msg = if matches!(self.peek(), TokKind::Eq) {
                    format!(
                        "unknown statement '{kw}' (parameters are defined with 'let {kw} = ...')"
                    )
                } else {
                    format!("unknown statement '{kw}'")
                };
                self.err_help("unknown-statement", t.span, msg, help);
                return Err(());
            }
        };
        Ok(Item::Stmt(Box::new(Statement {
            stmt,
            keyword,
            span: t.span.to(self.prev_end()),
        })))
    }

    fn element(&mut self, kind: ElemKeyword) -> P<ElementStmt> {
        let name = self.ident(&format!("a name for the {}", kind.keyword()))?;
        let mut nodes = Vec::new();
        let mut value = None;
        let mut file = None;
        match kind {
            ElemKeyword::Resistor | ElemKeyword::Capacitor | ElemKeyword::Inductor => {
                nodes.push(self.ident("a node name")?);
                nodes.push(self.ident("a second node name")?);
                if matches!(self.peek(), TokKind::Newline | TokKind::Eof) || self.option_ahead() {
                    let sp = self.tok().span;
                    self.err_help(
                        "missing-option",
                        sp,
                        format!(
                            "{} {} needs a value after its two nodes",
                            kind.keyword(),
                            name.name
                        ),
                        None,
                    );
                    return Err(());
                }
                value = Some(self.value()?);
            }
            ElemKeyword::Voltage | ElemKeyword::Current | ElemKeyword::Diode => {
                nodes.push(self.ident("a node name")?);
                nodes.push(self.ident("a second node name")?);
            }
            ElemKeyword::Coupling => {
                while matches!(self.peek(), TokKind::Ident(_)) && !self.option_ahead() {
                    nodes.push(self.ident("an inductor name")?);
                }
            }
            ElemKeyword::Bjt => {}
            ElemKeyword::Measured => {
                while matches!(self.peek(), TokKind::Ident(_)) && !self.option_ahead() {
                    nodes.push(self.ident("a node name")?);
                }
                match self.peek().clone() {
                    TokKind::Str(s) => {
                        let sp = self.tok().span;
                        self.pos += 1;
                        file = Some(DataFile {
                            path: s,
                            span: sp,
                            source: None,
                        });
                    }
                    _ => {
                        return self
                            .expected("the quoted name of a Touchstone file after the nodes")
                    }
                }
            }
        }
        let options = self.options()?;
        Ok(ElementStmt {
            kind,
            name,
            nodes,
            value,
            options,
            file,
        })
    }

    fn option_ahead(&self) -> bool {
        matches!(self.peek(), TokKind::Ident(_)) && matches!(self.peek_at(1), TokKind::Eq)
    }

    fn options(&mut self) -> P<Vec<Opt>> {
        let mut out = Vec::new();
        loop {
            match self.peek() {
                TokKind::Newline | TokKind::Eof | TokKind::RBrace => return Ok(out),
                TokKind::Ident(_) if matches!(self.peek_at(1), TokKind::Eq) => {
                    let key = self.ident("an option name")?;
                    self.pos += 1; // '='
                    let value = if key.name == "wave"
                        || (matches!(self.peek(), TokKind::Ident(s) if vocab::waveform_args(s).is_some()
                            || vocab::retired(s, Place::Waveform).is_some())
                            && matches!(self.peek_at(1), TokKind::LParen))
                    {
                        OptValue::Wave(self.wave()?)
                    } else if matches!(self.peek(), TokKind::LBrack) {
                        self.option_list()?
                    } else if let TokKind::Str(text) = self.peek() {
                        let text = text.clone();
                        let span = self.tok().span;
                        self.pos += 1;
                        OptValue::Text(text, span)
                    } else {
                        OptValue::Expr(self.value()?)
                    };
                    out.push(Opt { key, value });
                }
                _ => return self.expected("a name=value option"),
            }
        }
    }

    /// `[v, v, …]` after an option's `=`: one or more values.
    fn option_list(&mut self) -> P<OptValue> {
        let open = self.expect(TokKind::LBrack, "'['")?;
        let mut v = Vec::new();
        loop {
            v.push(self.value()?);
            if !self.eat(&TokKind::Comma) {
                let close = self.expect(TokKind::RBrack, "',' or ']'")?;
                return Ok(OptValue::List(v, open.span.to(close.span)));
            }
        }
    }

    fn wave(&mut self) -> P<WaveAst> {
        let names: Vec<&str> = WAVEFORMS.iter().map(|(n, _)| *n).collect();
        let shape = self.ident("a waveform (sine, square or table)")?;
        if let Some(r) = vocab::retired(&shape.name, Place::Waveform) {
            self.err_help("old-spelling", shape.span, vocab::retired_message(r), None);
            return Err(());
        }
        if vocab::waveform_args(&shape.name).is_none() {
            let help = did_you_mean(&shape.name, names.iter());
            self.err_help(
                "unknown-keyword",
                shape.span,
                format!("unknown waveform '{}' ({})", shape.name, names.join(", ")),
                help,
            );
            return Err(());
        }
        self.expect(TokKind::LParen, "'(' after the waveform's name")?;
        let mut args = Vec::new();
        let mut points = Vec::new();
        let table = shape.name == "table";
        loop {
            if self.eat(&TokKind::RParen) {
                break;
            }
            if table {
                let t = self.value()?;
                self.expect(TokKind::Colon, "':' between a time and its value")?;
                let v = self.value()?;
                points.push((t, v));
            } else {
                if !self.option_ahead() {
                    let sp = self.tok().span;
                    let msg = if shape.name == "sine" {
                        "sine takes named arguments only, e.g. sine(amp=4V, freq=f0); \
                         run `tankwave upgrade FILE` to rewrite positional ones"
                            .to_string()
                    } else {
                        format!("{} takes named arguments only (name=value)", shape.name)
                    };
                    let code = if shape.name == "sine" {
                        "old-spelling"
                    } else {
                        "syntax"
                    };
                    self.err_help(code, sp, msg, None);
                    return Err(());
                }
                let name = self.ident("an argument name")?;
                self.pos += 1;
                let value = self.value()?;
                args.push(WaveArg { name, value });
            }
            if !self.eat(&TokKind::Comma) {
                self.expect(TokKind::RParen, "',' or ')'")?;
                break;
            }
        }
        Ok(WaveAst {
            span: shape.span.to(self.prev_end()),
            shape,
            args,
            points,
        })
    }

    /// A value: a number, a name, a function call or a parenthesised expression.
    pub fn value(&mut self) -> P<Expr> {
        match self.peek().clone() {
            TokKind::Minus => {
                let m = self.bump();
                match self.peek().clone() {
                    TokKind::Number { value, unit } => {
                        let t = self.bump();
                        Ok(Expr {
                            kind: ExprKind::Number {
                                value: -value,
                                unit,
                            },
                            span: m.span.to(t.span),
                            paren: false,
                        })
                    }
                    TokKind::Ident(_) | TokKind::LParen => {
                        self.enter()?;
                        let inner = self.value();
                        self.depth -= 1;
                        let inner = inner?;
                        let span = m.span.to(inner.span);
                        Ok(Expr {
                            kind: ExprKind::Neg(Box::new(inner)),
                            span,
                            paren: true,
                        })
                    }
                    _ => self.expected("a value after '-'"),
                }
            }
            TokKind::Number { value, unit } => {
                let t = self.bump();
                Ok(Expr {
                    kind: ExprKind::Number { value, unit },
                    span: t.span,
                    paren: false,
                })
            }
            TokKind::Ident(name) => {
                if matches!(self.peek_at(1), TokKind::LParen) {
                    let mut e = self.atom()?;
                    e.paren = true;
                    return Ok(e);
                }
                let t = self.bump();
                Ok(Expr {
                    kind: ExprKind::Name(name),
                    span: t.span,
                    paren: false,
                })
            }
            TokKind::LParen => {
                let mut e = self.atom()?;
                e.paren = true;
                Ok(e)
            }
            _ => self.expected("a value"),
        }
    }

    fn enter(&mut self) -> P<()> {
        self.depth += 1;
        if self.depth == 1 {
            self.terms = 0;
        }
        if self.depth > MAX_NESTING {
            let sp = self.tok().span;
            self.err(
                sp,
                format!(
                    "expression nested more than {MAX_NESTING} levels deep \
                     (a bracket counts two levels, a sign or power one)"
                ),
            );
            return Err(());
        }
        Ok(())
    }

    /// Count one more operand of the expression being parsed; refuse an
    /// expression longer than [`crate::LIMITS`]`.max_expression_terms` (its
    /// tree would be as deep as it is long).
    fn term_read(&mut self, at: Span) -> P<()> {
        if self.terms_left == 0 {
            if !self.exhausted {
                self.exhausted = true;
                let total = crate::LIMITS.max_total_terms;
                let mut d = self.map.error(
                    "too-large",
                    at,
                    format!(
                        "the stage file holds more than {total} terms in its expressions \
                         (its includes counted in); reading stops here"
                    ),
                );
                d.help = Some("the limits are listed in docs/security.md".into());
                self.diags.push(d);
            }
            return Err(());
        }
        self.terms_left -= 1;
        self.terms += 1;
        let max = crate::LIMITS.max_expression_terms;
        if self.terms > max {
            self.err(at, format!("expression longer than {max} terms"));
            return Err(());
        }
        Ok(())
    }

    fn expr(&mut self) -> P<Expr> {
        self.enter()?;
        let r = self.expr_inner();
        self.depth -= 1;
        r
    }

    fn expr_inner(&mut self) -> P<Expr> {
        let mut lhs = self.term()?;
        loop {
            let op = match self.peek() {
                TokKind::Plus => BinOp::Add,
                TokKind::Minus => BinOp::Sub,
                _ => return Ok(lhs),
            };
            let at = self.tok().span;
            self.term_read(at)?;
            self.pos += 1;
            let rhs = self.term()?;
            let span = lhs.span.to(rhs.span);
            lhs = Expr {
                kind: ExprKind::Binary(op, Box::new(lhs), Box::new(rhs)),
                span,
                paren: false,
            };
        }
    }

    fn term(&mut self) -> P<Expr> {
        let mut lhs = self.unary()?;
        loop {
            let op = match self.peek() {
                TokKind::Star => BinOp::Mul,
                TokKind::Slash => BinOp::Div,
                _ => return Ok(lhs),
            };
            let at = self.tok().span;
            self.term_read(at)?;
            self.pos += 1;
            let rhs = self.unary()?;
            let span = lhs.span.to(rhs.span);
            lhs = Expr {
                kind: ExprKind::Binary(op, Box::new(lhs), Box::new(rhs)),
                span,
                paren: false,
            };
        }
    }

    fn unary(&mut self) -> P<Expr> {
        self.enter()?;
        let r = self.unary_inner();
        self.depth -= 1;
        r
    }

    fn unary_inner(&mut self) -> P<Expr> {
        if matches!(self.peek(), TokKind::Minus) {
            let m = self.bump();
            if let TokKind::Number { value, unit } = self.peek().clone() {
                if !matches!(self.peek_at(1), TokKind::Caret) {
                    let t = self.bump();
                    return Ok(Expr {
                        kind: ExprKind::Number {
                            value: -value,
                            unit,
                        },
                        span: m.span.to(t.span),
                        paren: false,
                    });
                }
            }
            let inner = self.unary()?;
            let span = m.span.to(inner.span);
            return Ok(Expr {
                kind: ExprKind::Neg(Box::new(inner)),
                span,
                paren: false,
            });
        }
        let base = self.atom()?;
        if matches!(self.peek(), TokKind::Caret) {
            let at = self.tok().span;
            self.term_read(at)?;
        }
        if self.eat(&TokKind::Caret) {
            let exp = self.unary()?;
            let span = base.span.to(exp.span);
            return Ok(Expr {
                kind: ExprKind::Binary(BinOp::Pow, Box::new(base), Box::new(exp)),
                span,
                paren: false,
            });
        }
        Ok(base)
    }

    fn atom(&mut self) -> P<Expr> {
        match self.peek().clone() {
            TokKind::Number { value, unit } => {
                let t = self.bump();
                Ok(Expr {
                    kind: ExprKind::Number { value, unit },
                    span: t.span,
                    paren: false,
                })
            }
            TokKind::Ident(name) => {
                let t = self.bump();
                if matches!(self.peek(), TokKind::LParen) {
                    let Some(func) = Func::from_name(&name) else {
                        let help = did_you_mean(&name, Func::ALL.iter().map(|(n, _)| n));
                        self.err_help(
                            "unknown-function",
                            t.span,
                            format!("unknown function '{name}'"),
                            help,
                        );
                        return Err(());
                    };
                    self.pos += 1;
                    let mut args = Vec::new();
                    if !self.eat(&TokKind::RParen) {
                        loop {
                            let at = self.tok().span;
                            self.term_read(at)?;
                            args.push(self.expr()?);
                            if self.eat(&TokKind::Comma) {
                                continue;
                            }
                            self.expect(TokKind::RParen, "',' or ')'")?;
                            break;
                        }
                    }
                    let span = t.span.to(self.prev_end());
                    let ok = if func.variadic() {
                        args.len() >= 2
                    } else {
                        args.len() == 1
                    };
                    if !ok {
                        let want = if func.variadic() {
                            "two or more arguments"
                        } else {
                            "one argument"
                        };
                        self.err_help(
                            "bad-call",
                            span,
                            format!("{name}() takes {want}, got {}", args.len()),
                            None,
                        );
                        return Err(());
                    }
                    return Ok(Expr {
                        kind: ExprKind::Call(func, args),
                        span,
                        paren: false,
                    });
                }
                Ok(Expr {
                    kind: ExprKind::Name(name),
                    span: t.span,
                    paren: false,
                })
            }
            TokKind::LParen => {
                let open = self.bump();
                let mut e = self.expr()?;
                self.expect(TokKind::RParen, "')'")?;
                e.span = open.span.to(self.prev_end());
                e.paren = true;
                Ok(e)
            }
            _ => self.expected("a number, a name or '('"),
        }
    }

    fn part(&mut self) -> P<PartStmt> {
        let name = self.ident("a part name")?;
        let kind = self.ident("a part kind (npn, pnp or diode)")?;
        self.expect(TokKind::LBrace, "'{' to open the part's blocks")?;
        let mut blocks = Vec::new();
        let mut loose = Vec::new();
        loop {
            if self.eat(&TokKind::RBrace) {
                break;
            }
            if self.eat(&TokKind::Comma) {
                continue;
            }
            let key = self.ident("a block name (e.g. transport) or '}'")?;
            if self.eat(&TokKind::Eq) {
                // A parameter outside any block: kept so the elaborator can say where it goes.
                loose.push((key, self.value()?));
                continue;
            }
            self.expect(TokKind::LBrace, "'{' to open the block's parameters")?;
            let mut params = Vec::new();
            loop {
                if self.eat(&TokKind::RBrace) {
                    break;
                }
                if self.eat(&TokKind::Comma) {
                    continue;
                }
                let p = self.ident("a parameter name or '}'")?;
                self.expect(TokKind::Eq, "'=' after the parameter name")?;
                params.push((p, self.value()?));
            }
            blocks.push(PartBlock { name: key, params });
        }
        Ok(PartStmt {
            name,
            kind,
            blocks,
            loose,
        })
    }

    fn mask(&mut self) -> P<MaskStmt> {
        let name = self.ident("a mask name")?;
        self.expect(TokKind::LBrace, "'{' to open the mask rules")?;
        let mut rules = Vec::new();
        let mut ok = true;
        loop {
            if self.eat(&TokKind::RBrace) {
                break;
            }
            if matches!(
                self.peek(),
                TokKind::Eof | TokKind::Newline | TokKind::Error
            ) {
                return Err(());
            }
            if self.eat(&TokKind::Comma) {
                continue;
            }
            match self.rule() {
                Ok(r) => rules.push(r),
                Err(()) => {
                    ok = false;
                    // Skip to the next rule word or the closing brace.
                    while !(matches!(
                        self.peek(),
                        TokKind::RBrace | TokKind::Eof | TokKind::Newline
                    ) || self.is_word("harmonics")
                        || self.is_word("frequency")
                        || self.is_word("offset")
                        || self.is_word("all"))
                    {
                        self.pos += 1;
                    }
                }
            }
        }
        if ok {
            Ok(MaskStmt { name, rules })
        } else {
            Err(())
        }
    }

    fn rule(&mut self) -> P<RuleAst> {
        let start = self.tok().span;
        let range = if self.eat_word("harmonics") {
            if self.eat_word("from") {
                RangeAst::Harmonics {
                    from: self.value()?,
                    to: None,
                }
            } else {
                let from = self.value()?;
                let to = if self.eat_word("to") {
                    self.value()?
                } else {
                    from.clone()
                };
                RangeAst::Harmonics { from, to: Some(to) }
            }
        } else if self.eat_word("frequency") {
            let from = self.value()?;
            self.expect_word("to")?;
            let to = self.value()?;
            RangeAst::Frequency { from, to }
        } else if self.eat_word("offset") {
            let from = self.value()?;
            self.expect_word("to")?;
            let to = self.value()?;
            RangeAst::Offset { from, to }
        } else if self.eat_word("all") {
            RangeAst::All
        } else {
            let t = self.tok().clone();
            let help = match &t.kind {
                TokKind::Ident(s) => {
                    did_you_mean(s, ["harmonics", "frequency", "offset", "all"].iter())
                }
                _ => None,
            };
            self.err_help(
                "syntax",
                t.span,
                format!(
                    "expected a mask rule (harmonics, frequency, offset or all), got {}",
                    t.kind.describe()
                ),
                help,
            );
            return Err(());
        };
        let limit = self.limit()?;
        let carrier = if self.eat_word("when") {
            self.expect_word("carrier")?;
            let a = self.value()?;
            self.expect_word("to")?;
            let b = self.value()?;
            Some((a, b))
        } else {
            None
        };
        Ok(RuleAst {
            range,
            limit,
            carrier,
            span: start.to(self.prev_end()),
        })
    }

    fn limit(&mut self) -> P<LimitAst> {
        self.enter()?;
        let r = self.limit_inner();
        self.depth -= 1;
        r
    }

    fn limit_inner(&mut self) -> P<LimitAst> {
        let t = self.tok().clone();
        if self.eat_word("below") {
            return Ok(LimitAst::Below(self.value()?));
        }
        if self.eat_word("at_most") {
            return Ok(LimitAst::AtMost(self.value()?));
        }
        if self.eat_word("if_carrier_below") {
            self.expect(TokKind::LParen, "'('")?;
            let power = self.value()?;
            self.expect(TokKind::Comma, "',' after the carrier power")?;
            let then = Box::new(self.limit()?);
            self.expect(TokKind::Comma, "',' between the two limits")?;
            let otherwise = Box::new(self.limit()?);
            self.expect(TokKind::RParen, "')'")?;
            return Ok(LimitAst::IfCarrierBelow {
                power,
                then,
                otherwise,
            });
        }
        let strict = self.is_word("stricter");
        if strict || self.is_word("looser") {
            self.pos += 1;
            self.expect(TokKind::LParen, "'('")?;
            let mut v = vec![self.limit()?];
            while self.eat(&TokKind::Comma) {
                v.push(self.limit()?);
            }
            self.expect(TokKind::RParen, "',' or ')'")?;
            let span = t.span.to(self.prev_end());
            return Ok(if strict {
                LimitAst::Stricter(v, span)
            } else {
                LimitAst::Looser(v, span)
            });
        }
        let help = match &t.kind {
            TokKind::Ident(s) => did_you_mean(
                s,
                ["below", "at_most", "stricter", "looser", "if_carrier_below"].iter(),
            ),
            _ => None,
        };
        self.err_help(
            "syntax",
            t.span,
            format!(
                "expected a limit (below, at_most, stricter, looser or if_carrier_below), got {}",
                t.kind.describe()
            ),
            help,
        );
        Err(())
    }

    fn require(&mut self) -> P<RequireStmt> {
        let metric = self.ident("a figure to require (pout, efficiency, harmonics, ...)")?;
        let number = if matches!(self.peek(), TokKind::Number { .. } | TokKind::LParen) {
            Some(self.value()?)
        } else {
            None
        };
        let element = if self.eat(&TokKind::LBrack) {
            let e = self.ident("an element name")?;
            self.expect(TokKind::RBrack, "']'")?;
            Some(e)
        } else if matches!(self.peek(), TokKind::Ident(_)) {
            Some(self.ident("an element name")?)
        } else {
            None
        };
        let ct = self.tok().clone();
        let cmp = match ct.kind {
            TokKind::Le => CmpAst::Le,
            TokKind::Ge => CmpAst::Ge,
            TokKind::Lt => CmpAst::Lt,
            TokKind::Gt => CmpAst::Gt,
            _ => return self.expected("a comparison (<=, >=, < or >)"),
        };
        self.pos += 1;
        let bound = self.value()?;
        Ok(RequireStmt {
            metric,
            number,
            element,
            cmp,
            cmp_span: ct.span,
            bound,
        })
    }

    fn vary(&mut self) -> P<Stmt> {
        let target = self.ident("a parameter or element name")?;
        if self.eat(&TokKind::LBrack) {
            let mut v = Vec::new();
            loop {
                if self.eat(&TokKind::RBrack) {
                    break;
                }
                v.push(self.value()?);
                if !self.eat(&TokKind::Comma) {
                    self.expect(TokKind::RBrack, "',' or ']'")?;
                    break;
                }
            }
            return Ok(Stmt::Vary {
                target,
                sweep: SweepAst::List(v),
            });
        }
        if !self.is_word("from") {
            return self.expected("'[' with a list of values, or 'from'");
        }
        self.pos += 1;
        let from = self.value()?;
        self.expect_word("to")?;
        let to = self.value()?;
        if self.eat_word("step") {
            let step = self.value()?;
            return Ok(Stmt::Vary {
                target,
                sweep: SweepAst::Step { from, to, step },
            });
        }
        if self.eat_word("points") {
            let points = self.value()?;
            let log = self.eat_word("log");
            return Ok(Stmt::Vary {
                target,
                sweep: SweepAst::Points {
                    from,
                    to,
                    points,
                    log,
                },
            });
        }
        self.expected("'step' or 'points'")
    }
}

/// The span of the one value that starts at token `pos` (a number, a name, a
/// call or a parenthesised expression, with a leading minus) and the index of
/// the token after it; `None` if no value starts there. Used by the circuit
/// crate's `upgrade` module to cut old files into values without evaluating them.
pub fn value_at(toks: &[Token], pos: usize, map: &SourceMap) -> Option<(Span, usize)> {
    let mut diags = Vec::new();
    let mut p = Parser {
        toks,
        pos,
        map,
        diags: &mut diags,
        depth: 0,
        terms: 0,
        terms_left: usize::MAX,
        exhausted: false,
    };
    let e = p.value().ok()?;
    Some((e.span, p.pos))
}
