//! The syntax tree of a stage file.
//!
//! The tree keeps every value as an unevaluated [`Expr`] with its span, so the
//! circuit crate can evaluate it many times with different parameter
//! overrides, check its unit against the slot it sits in, and point at it in
//! messages.

use crate::source::Span;
use crate::units::Unit;

/// A name with its place.
#[derive(Debug, Clone, PartialEq)]
pub struct Ident {
    /// The name.
    pub name: String,
    /// Where it is.
    pub span: Span,
}

/// Binary operators in expressions.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum BinOp {
    /// `+`
    Add,
    /// `-`
    Sub,
    /// `*`
    Mul,
    /// `/`
    Div,
    /// `^`
    Pow,
}

/// Functions callable in expressions.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Func {
    /// `sqrt(x)`
    Sqrt,
    /// `exp(x)`
    Exp,
    /// `ln(x)`
    Ln,
    /// `log10(x)`
    Log10,
    /// `sin(x)` (radians)
    Sin,
    /// `cos(x)` (radians)
    Cos,
    /// `tan(x)` (radians)
    Tan,
    /// `atan(x)` (radians)
    Atan,
    /// `abs(x)`
    Abs,
    /// `min(a, b, ...)`
    Min,
    /// `max(a, b, ...)`
    Max,
}

impl Func {
    /// Every function with its spelling.
    pub const ALL: &'static [(&'static str, Func)] = &[
        ("sqrt", Func::Sqrt),
        ("exp", Func::Exp),
        ("ln", Func::Ln),
        ("log10", Func::Log10),
        ("sin", Func::Sin),
        ("cos", Func::Cos),
        ("tan", Func::Tan),
        ("atan", Func::Atan),
        ("abs", Func::Abs),
        ("min", Func::Min),
        ("max", Func::Max),
    ];
    /// Look a function up by spelling.
    pub fn from_name(s: &str) -> Option<Func> {
        Func::ALL.iter().find(|(n, _)| *n == s).map(|(_, f)| *f)
    }
    /// True for `min` and `max`, which take two or more arguments.
    pub fn variadic(self) -> bool {
        matches!(self, Func::Min | Func::Max)
    }
}

/// What an expression is.
#[derive(Debug, Clone, PartialEq)]
pub enum ExprKind {
    /// A number (prefix applied, unit conversion not yet applied).
    Number {
        /// Value as written with its prefix applied (sign folded in).
        value: f64,
        /// Unit symbol.
        unit: Option<Unit>,
    },
    /// A parameter name (or `pi`, or `pcarrier` in masks).
    Name(String),
    /// Unary minus.
    Neg(Box<Expr>),
    /// A binary operation.
    Binary(BinOp, Box<Expr>, Box<Expr>),
    /// A function call.
    Call(Func, Vec<Expr>),
}

/// An expression with its place.
#[derive(Debug, Clone, PartialEq)]
pub struct Expr {
    /// What it is.
    pub kind: ExprKind,
    /// Where it is.
    pub span: Span,
    /// True if written in parentheses (units inside are converted, not checked against the slot).
    pub paren: bool,
}

impl Expr {
    /// The literal's unit, if this is a bare literal (not parenthesised).
    pub fn literal_unit(&self) -> Option<Option<Unit>> {
        match &self.kind {
            ExprKind::Number { unit, .. } if !self.paren => Some(*unit),
            _ => None,
        }
    }
    /// The name, if this is a bare name.
    pub fn as_name(&self) -> Option<&str> {
        match &self.kind {
            ExprKind::Name(n) if !self.paren => Some(n),
            _ => None,
        }
    }
}

/// A `wave=` shape: `sine(...)`, `square(...)` or `table(...)` (names in
/// [`crate::vocab::WAVEFORMS`]).
#[derive(Debug, Clone, PartialEq)]
pub struct WaveAst {
    /// The waveform's name.
    pub shape: Ident,
    /// Arguments `name=value` (`sine`, `square`).
    pub args: Vec<WaveArg>,
    /// `time: value` pairs (`table`).
    pub points: Vec<(Expr, Expr)>,
    /// The whole call.
    pub span: Span,
}

/// One argument of a wave shape.
#[derive(Debug, Clone, PartialEq)]
pub struct WaveArg {
    /// The argument's name (`name=value`).
    pub name: Ident,
    /// The value.
    pub value: Expr,
}

/// The value of a `name=value` option.
#[derive(Debug, Clone, PartialEq)]
pub enum OptValue {
    /// A value or a bare word (part names, `start=bias`, …).
    Expr(Expr),
    /// A waveform shape.
    Wave(WaveAst),
    /// A list of values in brackets (`vswr=[1.5, 2, 3]`), with the place
    /// of the whole list.
    List(Vec<Expr>, Span),
    /// A double-quoted text (`message="CQ TEST"`), with its place.
    Text(String, Span),
}

/// A `name=value` option.
#[derive(Debug, Clone, PartialEq)]
pub struct Opt {
    /// The option name.
    pub key: Ident,
    /// The value.
    pub value: OptValue,
}

/// Element statement keywords.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ElemKeyword {
    /// `resistor`
    Resistor,
    /// `capacitor`
    Capacitor,
    /// `inductor`
    Inductor,
    /// `coupling`
    Coupling,
    /// `voltage` (a voltage source)
    Voltage,
    /// `current` (a current source)
    Current,
    /// `diode`
    Diode,
    /// `bjt`
    Bjt,
    /// `measured`: a network measured over frequency, from a Touchstone file.
    Measured,
}

impl ElemKeyword {
    /// From a statement keyword.
    pub fn from_keyword(s: &str) -> Option<ElemKeyword> {
        Some(match s {
            "resistor" => ElemKeyword::Resistor,
            "capacitor" => ElemKeyword::Capacitor,
            "inductor" => ElemKeyword::Inductor,
            "coupling" => ElemKeyword::Coupling,
            "voltage" => ElemKeyword::Voltage,
            "current" => ElemKeyword::Current,
            "diode" => ElemKeyword::Diode,
            "bjt" => ElemKeyword::Bjt,
            "measured" => ElemKeyword::Measured,
            _ => return None,
        })
    }
    /// The keyword.
    pub fn keyword(self) -> &'static str {
        match self {
            ElemKeyword::Resistor => "resistor",
            ElemKeyword::Capacitor => "capacitor",
            ElemKeyword::Inductor => "inductor",
            ElemKeyword::Coupling => "coupling",
            ElemKeyword::Voltage => "voltage",
            ElemKeyword::Current => "current",
            ElemKeyword::Diode => "diode",
            ElemKeyword::Bjt => "bjt",
            ElemKeyword::Measured => "measured",
        }
    }
}

/// An element statement.
#[derive(Debug, Clone, PartialEq)]
pub struct ElementStmt {
    /// Which element.
    pub kind: ElemKeyword,
    /// Instance name.
    pub name: Ident,
    /// Positional names: nodes (two-terminal elements) or inductor names (coupling).
    pub nodes: Vec<Ident>,
    /// The positional main value (resistor, capacitor, inductor).
    pub value: Option<Expr>,
    /// `name=value` options.
    pub options: Vec<Opt>,
    /// The data file a `measured` element names (quoted, after its nodes).
    pub file: Option<DataFile>,
}

/// A data file named in a statement (a Touchstone file of a `measured`
/// element), read by the parser like an include: under the include roots,
/// within the file-size limit, its text added to the source map so that
/// problems inside it are reported at its own line and column.
#[derive(Debug, Clone, PartialEq)]
pub struct DataFile {
    /// The path as written (relative to the file that names it).
    pub path: String,
    /// Where the quoted path is written.
    pub span: Span,
    /// The file in the source map, once read (`None`: it could not be read,
    /// and a diagnostic says why).
    pub source: Option<crate::source::FileId>,
}

/// `part NAME KIND { BLOCK { name=value ... } ... }`.
#[derive(Debug, Clone, PartialEq)]
pub struct PartStmt {
    /// Part name.
    pub name: Ident,
    /// `npn`, `pnp` or `diode`.
    pub kind: Ident,
    /// The named blocks of parameters, in file order.
    pub blocks: Vec<PartBlock>,
    /// Parameters written outside any block (an error the elaborator
    /// explains by naming the block each belongs in).
    pub loose: Vec<(Ident, Expr)>,
}

/// One block of a part: `transport { sat_current=5pA beta=50 }`.
#[derive(Debug, Clone, PartialEq)]
pub struct PartBlock {
    /// The block's name.
    pub name: Ident,
    /// Its parameters.
    pub params: Vec<(Ident, Expr)>,
}

/// Which emissions a mask rule covers (as written).
#[derive(Debug, Clone, PartialEq)]
pub enum RangeAst {
    /// `harmonics N`, `harmonics N to M`, `harmonics from N`.
    Harmonics {
        /// First harmonic.
        from: Expr,
        /// Last harmonic (None = open; same as `from` for a single one is encoded as Some(from)).
        to: Option<Expr>,
    },
    /// `frequency A to B`.
    Frequency {
        /// Lower edge.
        from: Expr,
        /// Upper edge.
        to: Expr,
    },
    /// `offset A to B`: keying sidebands from A to B away from the carrier
    /// (either side).
    Offset {
        /// Nearer edge.
        from: Expr,
        /// Farther edge.
        to: Expr,
    },
    /// `all`: every spurious emission.
    All,
}

/// A limit as written.
#[derive(Debug, Clone, PartialEq)]
pub enum LimitAst {
    /// `below X` (dB under the carrier).
    Below(Expr),
    /// `at_most P` (W or dBm).
    AtMost(Expr),
    /// `stricter(l1, l2, ...)`: all must hold.
    Stricter(Vec<LimitAst>, Span),
    /// `looser(l1, l2, ...)`: the least stringent applies.
    Looser(Vec<LimitAst>, Span),
    /// `if_carrier_below(P, l1, l2)`: `l1` when the carrier power is below P, else `l2`.
    IfCarrierBelow {
        /// The carrier-power threshold (W or dBm).
        power: Expr,
        /// The limit below the threshold.
        then: Box<LimitAst>,
        /// The limit at or above it.
        otherwise: Box<LimitAst>,
    },
}

/// One mask rule.
#[derive(Debug, Clone, PartialEq)]
pub struct RuleAst {
    /// Range.
    pub range: RangeAst,
    /// Limit.
    pub limit: LimitAst,
    /// `when carrier A to B`.
    pub carrier: Option<(Expr, Expr)>,
    /// The rule's text.
    pub span: Span,
}

/// `mask NAME { rules }`.
#[derive(Debug, Clone, PartialEq)]
pub struct MaskStmt {
    /// Mask name.
    pub name: Ident,
    /// Rules.
    pub rules: Vec<RuleAst>,
}

/// Comparison operators.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum CmpAst {
    /// `<=`
    Le,
    /// `>=`
    Ge,
    /// `<`
    Lt,
    /// `>`
    Gt,
}

/// `require METRIC [N] [ELEMENT] CMP BOUND`.
#[derive(Debug, Clone, PartialEq)]
pub struct RequireStmt {
    /// The figure's name.
    pub metric: Ident,
    /// The harmonic number for `harmonic N`.
    pub number: Option<Expr>,
    /// The element the figure is about.
    pub element: Option<Ident>,
    /// Comparison.
    pub cmp: CmpAst,
    /// Where the comparison is.
    pub cmp_span: Span,
    /// The bound (a value, or a mask name for `harmonics`).
    pub bound: Expr,
}

/// How a `vary` gives its values.
#[derive(Debug, Clone, PartialEq)]
pub enum SweepAst {
    /// `[a, b, c]`.
    List(Vec<Expr>),
    /// `from A to B step S`.
    Step {
        /// First.
        from: Expr,
        /// Last.
        to: Expr,
        /// Step.
        step: Expr,
    },
    /// `from A to B points N [log]`.
    Points {
        /// First.
        from: Expr,
        /// Last.
        to: Expr,
        /// Count.
        points: Expr,
        /// Log spacing.
        log: bool,
    },
}

/// What a statement is.
#[derive(Debug, Clone, PartialEq)]
pub enum Stmt {
    /// `title "..."`.
    Title(String),
    /// `ambient VALUE` (the ambient temperature).
    Ambient(Expr),
    /// `let NAME = VALUE`.
    Let {
        /// Name.
        name: Ident,
        /// Value.
        value: Expr,
    },
    /// An element.
    Element(ElementStmt),
    /// A part (a transistor or diode with its parameters).
    Part(PartStmt),
    /// `output NAME`.
    Output(Ident),
    /// `input NAME`.
    Input(Ident),
    /// `analyze KIND options`.
    Analyze {
        /// `bias`, `transient`, `ac`, `steady`.
        kind: Ident,
        /// Options.
        options: Vec<Opt>,
    },
    /// A mask.
    Mask(MaskStmt),
    /// A requirement.
    Require(RequireStmt),
    /// `vary TARGET ...`.
    Vary {
        /// Parameter or element name.
        target: Ident,
        /// Values.
        sweep: SweepAst,
    },
    /// `tolerance ELEMENT VALUE [uniform|gaussian]`.
    Tolerance {
        /// Element.
        element: Ident,
        /// Relative tolerance.
        value: Expr,
        /// Distribution word.
        distribution: Option<Ident>,
    },
    /// `montecarlo runs=N seed=S`.
    MonteCarlo(Vec<Opt>),
    /// `tune PARAM from A to B`.
    Tune {
        /// Parameter.
        param: Ident,
        /// Lower bound.
        from: Expr,
        /// Upper bound.
        to: Expr,
    },
}

/// A statement with its place.
#[derive(Debug, Clone, PartialEq)]
pub struct Statement {
    /// What it is.
    pub stmt: Stmt,
    /// The keyword.
    pub keyword: Ident,
    /// The whole statement.
    pub span: Span,
}
