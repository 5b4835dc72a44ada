//! Expression evaluation in plain SI numbers.
//!
//! Literals are converted with [`crate::units::to_si`]; names are resolved by
//! a caller-supplied lookup (the circuit crate resolves `let` parameters and
//! detects cycles). `pi` is built in. A division by zero, a domain error or a
//! non-finite result is an [`EvalError`], never a NaN.

use crate::ast::{BinOp, Expr, ExprKind, Func};
use crate::source::Span;
use crate::units::to_si;
use thiserror::Error;

/// Why an expression could not be evaluated.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum EvalError {
    /// A name that is not defined.
    #[error("'{name}' is not a defined parameter")]
    Unknown {
        /// The name.
        name: String,
        /// Where.
        span: Span,
    },
    /// Division by zero.
    #[error("division by zero ({num} / 0)")]
    DivZero {
        /// The numerator.
        num: f64,
        /// Where.
        span: Span,
    },
    /// A result that is NaN or infinite.
    #[error("{what} gives a non-finite result")]
    NotFinite {
        /// Which operation (e.g. "sqrt(-1)").
        what: String,
        /// Where.
        span: Span,
    },
    /// The lookup failed and has already reported why (e.g. a parameter cycle).
    #[error("already reported")]
    Reported,
}

impl EvalError {
    /// Where the problem is (None for `Reported`).
    pub fn span(&self) -> Option<Span> {
        match self {
            EvalError::Unknown { span, .. }
            | EvalError::DivZero { span, .. }
            | EvalError::NotFinite { span, .. } => Some(*span),
            EvalError::Reported => None,
        }
    }
}

/// A name resolver: `Ok(None)` for a name it does not know.
pub type Lookup<'a> = dyn FnMut(&str, Span) -> Result<Option<f64>, EvalError> + 'a;

/// Evaluate `e`, resolving names through `lookup` (which returns `None` for unknown names).
pub fn eval(e: &Expr, lookup: &mut Lookup<'_>) -> Result<f64, EvalError> {
    let v = match &e.kind {
        ExprKind::Number { value, unit } => to_si(*value, *unit),
        ExprKind::Name(n) => match lookup(n, e.span)? {
            Some(v) => v,
            None if n == "pi" => std::f64::consts::PI,
            None => {
                return Err(EvalError::Unknown {
                    name: n.clone(),
                    span: e.span,
                })
            }
        },
        ExprKind::Neg(x) => -eval(x, lookup)?,
        ExprKind::Binary(op, a, b) => {
            let x = eval(a, lookup)?;
            let y = eval(b, lookup)?;
            match op {
                BinOp::Add => x + y,
                BinOp::Sub => x - y,
                BinOp::Mul => x * y,
                BinOp::Div => {
                    if y == 0.0 {
                        return Err(EvalError::DivZero {
                            num: x,
                            span: e.span,
                        });
                    }
                    x / y
                }
                BinOp::Pow => x.powf(y),
            }
        }
        ExprKind::Call(f, args) => {
            let mut vals = Vec::with_capacity(args.len());
            for a in args {
                vals.push(eval(a, lookup)?);
            }
            let x = vals.first().copied().unwrap_or(f64::NAN);
            match f {
                Func::Sqrt => x.sqrt(),
                Func::Exp => x.exp(),
                Func::Ln => x.ln(),
                Func::Log10 => x.log10(),
                Func::Sin => x.sin(),
                Func::Cos => x.cos(),
                Func::Tan => x.tan(),
                Func::Atan => x.atan(),
                Func::Abs => x.abs(),
                Func::Min => vals.iter().copied().fold(f64::INFINITY, f64::min),
                Func::Max => vals.iter().copied().fold(f64::NEG_INFINITY, f64::max),
            }
        }
    };
    if v.is_finite() {
        Ok(v)
    } else {
        Err(EvalError::NotFinite {
            what: describe(e),
            span: e.span,
        })
    }
}

/// Evaluate an expression with no names but `pi`.
pub fn eval_const(e: &Expr) -> Result<f64, EvalError> {
    eval(e, &mut |_, _| Ok(None))
}

fn describe(e: &Expr) -> String {
    match &e.kind {
        ExprKind::Call(f, _) => {
            let name = Func::ALL
                .iter()
                .find(|(_, g)| g == f)
                .map(|(n, _)| *n)
                .unwrap_or("?");
            format!("{name}(...)")
        }
        ExprKind::Binary(BinOp::Pow, _, _) => "a power".into(),
        _ => "the expression".into(),
    }
}

/// Every name an expression refers to.
pub fn names(e: &Expr, out: &mut Vec<(String, Span)>) {
    match &e.kind {
        ExprKind::Number { .. } => {}
        ExprKind::Name(n) => out.push((n.clone(), e.span)),
        ExprKind::Neg(x) => names(x, out),
        ExprKind::Binary(_, a, b) => {
            names(a, out);
            names(b, out);
        }
        ExprKind::Call(_, args) => args.iter().for_each(|a| names(a, out)),
    }
}
