//! The outline of a parsed stage file: what each statement defines, which
//! names it uses, and the value literals written in it, each with its place
//! in the file — plain data for tools that point into the text (the editor
//! server) without reading the syntax tree themselves.
//!
//! The outline is built from the syntax tree here, in the elaboration layer
//! (the only layer besides the parser that may read the tree); the layers
//! after it get only [`Outline`].

use tankwave_netlist::ast::*;
use tankwave_netlist::units::to_si;
use tankwave_netlist::{Parsed, Span};

use crate::figure::About;
use crate::options::{self, Takes};
use crate::param_units::si_symbol;

/// What a statement defines.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SymbolKind {
    /// A `let` parameter.
    Param,
    /// An element (`resistor`, `bjt`, …).
    Element,
    /// A `part` (a transistor or diode model with its parameters).
    Part,
    /// A `mask`.
    Mask,
    /// An `analyze` statement.
    Analysis,
    /// A `require` statement.
    Requirement,
}

/// One definition (or, for analyses and requirements, one statement) with
/// its place.
#[derive(Debug, Clone, PartialEq)]
pub struct Symbol {
    /// What it is.
    pub kind: SymbolKind,
    /// The statement keyword (`let`, `resistor`, `part`, `analyze`, …).
    pub keyword: String,
    /// The name defined (for an analysis its kind word, for a requirement
    /// its figure word).
    pub name: String,
    /// Where the name is written.
    pub name_span: Span,
    /// The whole statement.
    pub span: Span,
    /// The kind written after a part's name (`npn`, `pnp`, `diode`), or
    /// empty.
    pub part_kind: String,
    /// The nodes an element connects (positional names and node options,
    /// in the order written).
    pub nodes: Vec<String>,
}

/// What a name written in the file refers to.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum RefKind {
    /// A `let` parameter used in an expression (or a `vary`/`tune` target).
    Param,
    /// A part named by `part=`.
    Part,
    /// A mask named as the bound of a `require`.
    Mask,
    /// An element named by an option, a requirement, `output`, `input` or a
    /// study statement.
    Element,
}

/// One use of a name.
#[derive(Debug, Clone, PartialEq)]
pub struct Reference {
    /// What it refers to.
    pub kind: RefKind,
    /// The name as written.
    pub name: String,
    /// Where it is written.
    pub span: Span,
}

/// A number written in the file, converted to SI.
#[derive(Debug, Clone, PartialEq)]
pub struct Literal {
    /// Where it is written.
    pub span: Span,
    /// The value in SI units (`%` as a fraction, `dBm` in watts, `degC` in
    /// kelvin).
    pub value: f64,
    /// The SI unit symbol of `value` (empty for a plain number).
    pub unit: &'static str,
    /// The text as written.
    pub text: String,
}

/// The outline of a parsed stage file.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Outline {
    /// Definitions and statements, in file order (includes in place).
    pub symbols: Vec<Symbol>,
    /// Uses of names.
    pub references: Vec<Reference>,
    /// Numbers written with their values.
    pub literals: Vec<Literal>,
}

/// The outline of `parsed`.
pub fn outline(parsed: &Parsed) -> Outline {
    let mut o = Outline::default();
    let text = |s: Span| parsed.sources.slice(s).to_string();
    for st in &parsed.statements {
        let mut exprs: Vec<&Expr> = Vec::new();
        match &st.stmt {
            Stmt::Let { name, value } => {
                o.symbols.push(symbol(SymbolKind::Param, st, name, ""));
                exprs.push(value);
            }
            Stmt::Element(e) => {
                let mut sym = symbol(SymbolKind::Element, st, &e.name, "");
                let kind = e.kind.keyword();
                if e.kind == ElemKeyword::Coupling {
                    for n in &e.nodes {
                        o.references.push(reference(RefKind::Element, n));
                    }
                } else {
                    sym.nodes = e.nodes.iter().map(|n| n.name.clone()).collect();
                }
                exprs.extend(e.value.iter());
                for opt in &e.options {
                    let spec = options::element::of(kind)
                        .iter()
                        .find(|s| s.name == opt.key.name);
                    let bare = match &opt.value {
                        OptValue::Expr(x) => x.as_name().map(|n| (n, x.span)),
                        _ => None,
                    };
                    match (spec.map(|s| s.takes), bare) {
                        (Some(Takes::Node), Some((n, _))) => sym.nodes.push(n.to_string()),
                        (Some(Takes::Part), Some((n, span))) => o.references.push(Reference {
                            kind: RefKind::Part,
                            name: n.to_string(),
                            span,
                        }),
                        (Some(Takes::Element), Some((n, span))) => o.references.push(Reference {
                            kind: RefKind::Element,
                            name: n.to_string(),
                            span,
                        }),
                        (Some(Takes::Word(_)), _) => {}
                        _ => option_exprs(&opt.value, &mut exprs),
                    }
                }
                o.symbols.push(sym);
            }
            Stmt::Part(p) => {
                o.symbols
                    .push(symbol(SymbolKind::Part, st, &p.name, &p.kind.name));
                for b in &p.blocks {
                    exprs.extend(b.params.iter().map(|(_, x)| x));
                }
                exprs.extend(p.loose.iter().map(|(_, x)| x));
            }
            Stmt::Mask(m) => {
                o.symbols.push(symbol(SymbolKind::Mask, st, &m.name, ""));
                for r in &m.rules {
                    match &r.range {
                        RangeAst::Harmonics { from, to } => {
                            exprs.push(from);
                            exprs.extend(to.iter());
                        }
                        RangeAst::Frequency { from, to } | RangeAst::Offset { from, to } => {
                            exprs.extend([from, to])
                        }
                        RangeAst::All => {}
                    }
                    limit_exprs(&r.limit, &mut exprs);
                    if let Some((a, b)) = &r.carrier {
                        exprs.extend([a, b]);
                    }
                }
            }
            Stmt::Analyze {
                kind,
                options: opts,
            } => {
                o.symbols.push(symbol(SymbolKind::Analysis, st, kind, ""));
                let table = options::analysis::of(&kind.name).unwrap_or(&[]);
                for opt in opts {
                    let spec = table.iter().find(|s| s.name == opt.key.name);
                    match (spec.map(|s| s.takes), &opt.value) {
                        (Some(Takes::Element), OptValue::Expr(x)) => {
                            if let Some(n) = x.as_name() {
                                o.references.push(Reference {
                                    kind: RefKind::Element,
                                    name: n.to_string(),
                                    span: x.span,
                                });
                            }
                        }
                        (Some(Takes::Word(_)), _) => {}
                        _ => option_exprs(&opt.value, &mut exprs),
                    }
                }
            }
            Stmt::Require(r) => {
                o.symbols
                    .push(symbol(SymbolKind::Requirement, st, &r.metric, ""));
                exprs.extend(r.number.iter());
                if let Some(e) = &r.element {
                    o.references.push(reference(RefKind::Element, e));
                }
                match r.bound.as_name() {
                    Some(n)
                        if crate::figure::Figure::from_word(&r.metric.name).is_some_and(|f| {
                            matches!(
                                f.about(),
                                About::Mask | About::SidebandMask | About::Harmonic
                            )
                        }) =>
                    {
                        o.references.push(Reference {
                            kind: RefKind::Mask,
                            name: n.to_string(),
                            span: r.bound.span,
                        })
                    }
                    _ => exprs.push(&r.bound),
                }
            }
            Stmt::Output(n) | Stmt::Input(n) => o.references.push(reference(RefKind::Element, n)),
            Stmt::Ambient(x) => exprs.push(x),
            Stmt::Vary { target, sweep } => {
                o.references.push(reference(RefKind::Param, target));
                match sweep {
                    SweepAst::List(v) => exprs.extend(v.iter()),
                    SweepAst::Step { from, to, step } => exprs.extend([from, to, step]),
                    SweepAst::Points {
                        from, to, points, ..
                    } => exprs.extend([from, to, points]),
                }
            }
            Stmt::Tolerance { element, value, .. } => {
                o.references.push(reference(RefKind::Element, element));
                exprs.push(value);
            }
            Stmt::MonteCarlo(opts) => {
                for opt in opts {
                    option_exprs(&opt.value, &mut exprs);
                }
            }
            Stmt::Tune { param, from, to } => {
                o.references.push(reference(RefKind::Param, param));
                exprs.extend([from, to]);
            }
            Stmt::Title(_) => {}
        }
        for x in exprs {
            walk(x, &mut o, &text, 0);
        }
    }
    o
}

fn symbol(kind: SymbolKind, st: &Statement, name: &Ident, part_kind: &str) -> Symbol {
    Symbol {
        kind,
        keyword: st.keyword.name.clone(),
        name: name.name.clone(),
        name_span: name.span,
        span: st.span,
        part_kind: part_kind.to_string(),
        nodes: Vec::new(),
    }
}

fn reference(kind: RefKind, name: &Ident) -> Reference {
    Reference {
        kind,
        name: name.name.clone(),
        span: name.span,
    }
}

fn option_exprs<'a>(v: &'a OptValue, out: &mut Vec<&'a Expr>) {
    match v {
        OptValue::Expr(x) => out.push(x),
        OptValue::List(xs, _) => out.extend(xs.iter()),
        OptValue::Text(..) => {}
        OptValue::Wave(w) => {
            out.extend(w.args.iter().map(|a| &a.value));
            for (t, v) in &w.points {
                out.extend([t, v]);
            }
        }
    }
}

fn limit_exprs<'a>(l: &'a LimitAst, out: &mut Vec<&'a Expr>) {
    let mut stack = vec![l];
    // an explicit stack: a hostile file may nest limits deeply
    while let Some(l) = stack.pop() {
        match l {
            LimitAst::Below(x) | LimitAst::AtMost(x) => out.push(x),
            LimitAst::Stricter(v, _) | LimitAst::Looser(v, _) => stack.extend(v.iter()),
            LimitAst::IfCarrierBelow {
                power,
                then,
                otherwise,
            } => {
                out.push(power);
                stack.push(then);
                stack.push(otherwise);
            }
        }
    }
}

/// Words an expression may name that are not parameters.
const NOT_PARAMS: &[&str] = &["pi", "pcarrier"];

fn walk(x: &Expr, o: &mut Outline, text: &dyn Fn(Span) -> String, depth: usize) {
    // the parser bounds nesting (LIMITS); this guard only keeps the walk finite
    if depth > 256 {
        return;
    }
    match &x.kind {
        ExprKind::Number { value, unit } => o.literals.push(Literal {
            span: x.span,
            value: to_si(*value, *unit),
            unit: unit.map(si_symbol).unwrap_or(""),
            text: text(x.span),
        }),
        ExprKind::Name(n) if !NOT_PARAMS.contains(&n.as_str()) => o.references.push(Reference {
            kind: RefKind::Param,
            name: n.clone(),
            span: x.span,
        }),
        ExprKind::Name(_) => {}
        ExprKind::Neg(a) => walk(a, o, text, depth + 1),
        ExprKind::Binary(_, a, b) => {
            walk(a, o, text, depth + 1);
            walk(b, o, text, depth + 1);
        }
        ExprKind::Call(_, args) => {
            for a in args {
                walk(a, o, text, depth + 1);
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn of(text: &str) -> Outline {
        outline(&tankwave_netlist::parse_str("t.tank", text))
    }

    #[test]
    fn definitions_uses_and_values_with_their_places() {
        let text = "let f0 = 13.56MHz\nvoltage v1 a gnd wave=sine(amp=1V, freq=f0)\n\
                    bjt q1 c=a b=b e=gnd part=p1\npart p1 npn { transport { sat_current=1fA beta=50 beta_reverse=1 } }\n\
                    analyze steady freq=f0\nrequire tj q1 <= 125degC\n";
        let o = of(text);
        let names: Vec<_> = o
            .symbols
            .iter()
            .map(|s| (s.kind, s.name.as_str()))
            .collect();
        assert_eq!(
            names,
            [
                (SymbolKind::Param, "f0"),
                (SymbolKind::Element, "v1"),
                (SymbolKind::Element, "q1"),
                (SymbolKind::Part, "p1"),
                (SymbolKind::Analysis, "steady"),
                (SymbolKind::Requirement, "tj"),
            ]
        );
        let q1 = &o.symbols[2];
        assert_eq!(q1.nodes, ["a", "b", "gnd"]);
        assert_eq!(
            &text[q1.name_span.start as usize..q1.name_span.end as usize],
            "q1"
        );
        let uses: Vec<_> = o
            .references
            .iter()
            .map(|r| (r.kind, r.name.as_str()))
            .collect();
        assert!(uses.contains(&(RefKind::Param, "f0")), "{uses:?}");
        assert!(uses.contains(&(RefKind::Part, "p1")), "{uses:?}");
        assert!(uses.contains(&(RefKind::Element, "q1")), "{uses:?}");
        // 13.56 MHz in hertz, 125 degC in kelvin (273.15 K offset, SI Brochure 2.3.1)
        let f = o
            .literals
            .iter()
            .find(|l| l.text == "13.56MHz")
            .expect("f0");
        assert!((f.value - 13.56e6).abs() < 1e-3 && f.unit == "Hz");
        let t = o.literals.iter().find(|l| l.text == "125degC").expect("tj");
        assert!((t.value - 398.15).abs() < 1e-9 && t.unit == "K");
    }

    #[test]
    fn a_mask_bound_is_a_mask_reference() {
        let o = of("mask m { harmonics from 2 below 40dB }\nrequire harmonics <= m\n");
        assert!(o
            .references
            .iter()
            .any(|r| r.kind == RefKind::Mask && r.name == "m"));
        assert_eq!(o.symbols[0].kind, SymbolKind::Mask);
    }
}
