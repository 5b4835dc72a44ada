//! The figures of a solve, placed on the lines that asked for them: each
//! `analyze` line gets its headline (the steady state's from the same rows
//! as the terminal report), each `require` line its verdict. The solve is
//! the one `run` does (tankwave-stage, every analysis), stoppable from
//! another thread.

use std::sync::atomic::AtomicBool;

use tankwave_circuit::outline::{Outline, SymbolKind};
use tankwave_circuit::{Circuit, Span};
use tankwave_report::stage as text;
use tankwave_stage::{Caps, Scope, SolveOptions, StageError, StageResults};

/// A solve of one text, and the figures placed on its lines.
#[derive(Debug)]
pub struct Solved {
    /// Every analysis as `run` computes it (`Err`: the solve failed; the
    /// message says what failed and where).
    pub results: Result<StageResults, String>,
    /// Figures per statement: the statement's place and the text to show
    /// at its end.
    pub lines: Vec<(Span, String)>,
}

/// Solve `circuit` as `run` does (every analysis; with `caps`, each
/// analysis bounded as for unchecked input), stopping early when `cancel`
/// is set; `None` when it was stopped.
pub fn solve(
    circuit: &Circuit,
    outline: &Outline,
    caps: Option<Caps>,
    cancel: &AtomicBool,
) -> Option<Solved> {
    let opts = SolveOptions {
        cancel: Some(cancel),
        caps,
        ..SolveOptions::scope(Scope::All)
    };
    let results = match tankwave_stage::solve(circuit, &opts) {
        Ok(r) => Ok(r),
        Err(StageError::Cancelled) => return None,
        Err(e) => Err(e.to_string()),
    };
    let lines = place(outline, &results);
    Some(Solved { results, lines })
}

/// How many of the steady state's headline rows a line shows (output
/// power, supply power, efficiency and the next; the hover shows all).
const HEADLINE_ROWS: usize = 4;

/// The steady state's headline rows, as the terminal report writes them.
pub fn headline(r: &StageResults) -> Vec<(String, String)> {
    r.steady
        .as_ref()
        .map(|s| text::headline_rows(&s.metrics))
        .unwrap_or_default()
}

/// The figures each `analyze` and `require` statement gets from `results`.
pub fn place(outline: &Outline, results: &Result<StageResults, String>) -> Vec<(Span, String)> {
    let mut out = Vec::new();
    let r = match results {
        Ok(r) => r,
        Err(e) => {
            // the failure goes on the first analysis line
            if let Some(a) = outline
                .symbols
                .iter()
                .find(|s| s.kind == SymbolKind::Analysis)
            {
                out.push((a.span, format!("solve failed: {e}")));
            }
            return out;
        }
    };
    let (mut transient, mut ac, mut rugged, mut steady_seen) = (0, 0, 0, false);
    let mut requirement = 0;
    for s in &outline.symbols {
        let shown = match s.kind {
            SymbolKind::Analysis => match s.name.as_str() {
                "bias" => {
                    r.op.as_ref()
                        .map(|op| format!("bias point in {} Newton iterations", op.info.iterations))
                }
                "transient" => {
                    transient += 1;
                    r.transients
                        .get(transient - 1)
                        .map(|t| text::transient_text(t).trim().to_string())
                }
                "ac" => {
                    ac += 1;
                    r.acs
                        .get(ac - 1)
                        .map(|a| text::ac_text(a).trim().to_string())
                }
                "ruggedness" => {
                    rugged += 1;
                    r.ruggedness.get(rugged - 1).map(|m| {
                        let fails = m.worst.iter().filter(|w| !w.pass).count();
                        if fails == 0 {
                            "ruggedness: every worst case passes".to_string()
                        } else {
                            format!("ruggedness: {fails} worst case(s) FAIL")
                        }
                    })
                }
                "steady" if !steady_seen => {
                    steady_seen = true;
                    let rows = headline(r);
                    (!rows.is_empty()).then(|| {
                        rows.iter()
                            .take(HEADLINE_ROWS)
                            .map(|(k, v)| format!("{k} {v}"))
                            .collect::<Vec<_>>()
                            .join(" · ")
                    })
                }
                _ => None,
            },
            SymbolKind::Requirement => {
                requirement += 1;
                r.verdicts.get(requirement - 1).map(verdict)
            }
            _ => None,
        };
        if let Some(t) = shown {
            out.push((s.span, t));
        }
    }
    out
}

/// A verdict in one line: pass or FAIL, the value, the limit and the margin.
pub fn verdict(v: &tankwave_measure::Verdict) -> String {
    let word = if v.pass { "pass" } else { "FAIL" };
    if let Some(why) = &v.not_measured {
        return format!("{word}: not measured ({why})");
    }
    let mut s = format!("{word}:");
    if let Some(x) = v.value {
        s.push_str(&format!(" {}", v.unit.show(x)));
    }
    if let Some(l) = v.limit {
        s.push_str(&format!(" {} {}", v.cmp, v.unit.show(l)));
    }
    if let Some(m) = v.margin {
        s.push_str(&format!(" (margin {})", v.unit.show_margin(m)));
    }
    if let Some(e) = &v.element {
        s.push_str(&format!(" at {e}"));
    }
    s
}
