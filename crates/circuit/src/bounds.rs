//! Bounds on what a stage file may ask of the solvers, checked at elaboration.
//!
//! Every size a stage file chooses is compared with
//! [`tankwave_netlist::LIMITS`] here, so that `lint` already refuses it with
//! file:line:column (exit 2) instead of a solver running out of memory or time
//! (docs/security.md lists the values). The checks here:
//!
//! * `param_order`: the order in which the `let` parameters are evaluated,
//!   found without recursion (Kahn's topological sort), so that evaluating a
//!   parameter never recurses through a chain of others; chains longer than
//!   `max_parameter_chain` and cycles are reported.
//! * `analysis`: the counts an analysis asks for (AC points, transient
//!   steps, harmonics, steps per period).
//! * `size`: the number of elements, and an estimate of the memory each
//!   analysis needs from the number of unknowns ([`unknowns`]).
//! * `override_units`: a value set from outside (`--set`) carries the unit
//!   the stage file gives that parameter, as a value in the file must.

use crate::ir::{Analysis, Circuit, ElementKind, Overrides};
use std::collections::BTreeMap;
use std::collections::{HashMap, VecDeque};
use tankwave_netlist::ast::{Expr, ExprKind, Ident, Opt, OptValue};
use tankwave_netlist::{Diagnostic, Severity, SourceMap, Span, LIMITS};

/// The outcome of [`param_order`].
pub(crate) struct ParamOrder<'a> {
    /// Parameters to evaluate, each after every parameter it names.
    pub order: Vec<&'a str>,
    /// Parameters not to evaluate (reported in `diags`, or on a reported cycle).
    pub failed: Vec<&'a str>,
    /// Cycles and over-long chains.
    pub diags: Vec<Diagnostic>,
}

/// The `let` names an expression refers to, walked without recursion.
fn names_in(e: &Expr, out: &mut Vec<String>) {
    let mut stack = vec![e];
    while let Some(e) = stack.pop() {
        match &e.kind {
            ExprKind::Number { .. } => {}
            ExprKind::Name(n) => out.push(n.clone()),
            ExprKind::Neg(a) => stack.push(a),
            ExprKind::Binary(_, a, b) => {
                stack.push(b);
                stack.push(a);
            }
            ExprKind::Call(_, args) => stack.extend(args.iter().rev()),
        }
    }
}

/// Order the parameters `lets` for evaluation (dependencies first), without
/// recursion. `fixed(name)` is true for a parameter set from outside
/// (`--set`), which depends on nothing. A parameter whose chain of
/// definitions is longer than `LIMITS.max_parameter_chain` is reported and
/// not evaluated; so is every cycle (once, at its first parameter in file
/// order); parameters that only depend on those are evaluated and fail
/// silently.
pub(crate) fn param_order<'a>(
    lets: &HashMap<&'a str, (&'a Ident, &'a Expr)>,
    fixed: impl Fn(&str) -> bool,
    map: &SourceMap,
) -> ParamOrder<'a> {
    let mut entries: Vec<(&'a str, &'a Ident, &'a Expr)> =
        lets.iter().map(|(n, (i, e))| (*n, *i, *e)).collect();
    entries.sort_unstable_by_key(|(_, i, _)| (i.span.file, i.span.start));
    let names: Vec<&'a str> = entries.iter().map(|e| e.0).collect();
    let index: HashMap<&str, usize> = names.iter().enumerate().map(|(i, n)| (*n, i)).collect();
    let n = names.len();
    let mut deps: Vec<Vec<usize>> = vec![Vec::new(); n];
    let mut dependents: Vec<Vec<usize>> = vec![Vec::new(); n];
    let mut buf = Vec::new();
    for (i, name) in names.iter().enumerate() {
        if fixed(name) {
            continue;
        }
        buf.clear();
        names_in(entries[i].2, &mut buf);
        let mut d: Vec<usize> = buf
            .iter()
            .filter_map(|m| index.get(m.as_str()).copied())
            .collect();
        // Keep the first mention of each (the order of the file, for messages).
        let mut seen = std::collections::HashSet::new();
        d.retain(|j| seen.insert(*j));
        for &j in &d {
            dependents[j].push(i);
        }
        deps[i] = d;
    }
    #[derive(Clone, Copy, PartialEq)]
    enum St {
        Open,
        Queued,
        Done,
        Failed,
    }
    let mut state = vec![St::Open; n];
    let mut waiting: Vec<usize> = deps.iter().map(|d| d.len()).collect();
    let mut depth = vec![0usize; n];
    let mut tainted = vec![false; n];
    let mut queue: VecDeque<usize> = VecDeque::new();
    for i in 0..n {
        if waiting[i] == 0 {
            state[i] = St::Queued;
            queue.push_back(i);
        }
    }
    let mut out = ParamOrder {
        order: Vec::with_capacity(n),
        failed: Vec::new(),
        diags: Vec::new(),
    };
    let max = LIMITS.max_parameter_chain;
    let mut scan = 0;
    loop {
        while let Some(i) = queue.pop_front() {
            // A parameter naming a failed one fails silently when evaluated.
            tainted[i] = deps[i]
                .iter()
                .any(|j| state[*j] == St::Failed || tainted[*j]);
            let d = 1 + deps[i]
                .iter()
                .filter(|j| state[**j] == St::Done)
                .map(|j| depth[*j])
                .max()
                .unwrap_or(0);
            depth[i] = d;
            if d > max && !tainted[i] {
                state[i] = St::Failed;
                out.failed.push(names[i]);
                let mut diag = map.error(
                    "param-chain",
                    entries[i].1.span,
                    format!(
                        "parameter '{}' is defined through a chain of more than {max} parameters",
                        names[i]
                    ),
                );
                diag.help = Some("the limit is listed in docs/security.md".into());
                out.diags.push(diag);
            } else {
                state[i] = St::Done;
                out.order.push(names[i]);
            }
            for &k in &dependents[i] {
                waiting[k] -= 1;
                if waiting[k] == 0 && state[k] == St::Open {
                    state[k] = St::Queued;
                    queue.push_back(k);
                }
            }
        }
        // Whatever is left waits on a cycle: find one from the first open
        // parameter, following a dependency that is still open.
        while scan < n && state[scan] != St::Open {
            scan += 1;
        }
        if scan == n {
            break;
        }
        let mut path: Vec<usize> = Vec::new();
        let mut on_path: HashMap<usize, usize> = HashMap::new();
        let mut cur = scan;
        let cycle: Vec<usize> = loop {
            if let Some(&p) = on_path.get(&cur) {
                break path[p..].to_vec();
            }
            on_path.insert(cur, path.len());
            path.push(cur);
            match deps[cur].iter().find(|j| state[**j] == St::Open) {
                Some(&j) => cur = j,
                // Cannot happen (an open parameter waits on an open one); fail it alone.
                None => break vec![cur],
            }
        };
        let mut shown: Vec<String> = cycle.iter().map(|i| names[*i].to_string()).collect();
        if shown.len() > 8 {
            let hidden = shown.len() - 6;
            shown.splice(3..shown.len() - 3, [format!("({hidden} more)")]);
        }
        shown.push(names[cycle[0]].to_string());
        let mut diag = map.error(
            "param-cycle",
            entries[cycle[0]].1.span,
            format!("parameter cycle: {}", shown.join(" -> ")),
        );
        diag.help = Some("define one of these parameters without referring to the others".into());
        out.diags.push(diag);
        for &i in &cycle {
            state[i] = St::Failed;
            out.failed.push(names[i]);
        }
        for &i in &cycle {
            for &k in &dependents[i] {
                waiting[k] -= 1;
                if waiting[k] == 0 && state[k] == St::Open {
                    state[k] = St::Queued;
                    queue.push_back(k);
                }
            }
        }
    }
    out
}

/// The value expression of option `key` (its place), if given.
fn option_span(options: &[Opt], key: &str) -> Option<Span> {
    options
        .iter()
        .find(|o| o.key.name == key)
        .map(|o| match &o.value {
            OptValue::Expr(e) => e.span,
            OptValue::List(_, span) => *span,
            OptValue::Wave(_) => o.key.span,
            OptValue::Text(_, span) => *span,
        })
}

fn too_many(map: &SourceMap, at: Span, what: &str, asked: f64, max: f64) -> Diagnostic {
    let mut d = map.error(
        "too-large",
        at,
        format!(
            "{what}: {} asked, at most {} allowed",
            count(asked),
            count(max)
        ),
    );
    d.help = Some("the limits are listed in docs/security.md".into());
    d
}

/// A count for a message: whole numbers as such, huge ones in exponent form.
fn count(v: f64) -> String {
    if v < 1e15 {
        format!("{}", v.round() as u64)
    } else {
        format!("{v:.3e}")
    }
}

/// Check the counts analysis `a` (written as `analyze KIND OPTIONS`) asks for.
pub(crate) fn analysis(
    map: &SourceMap,
    kind: &Ident,
    options: &[Opt],
    a: &Analysis,
) -> Vec<Diagnostic> {
    let at = |key: &str| option_span(options, key).unwrap_or(kind.span);
    let mut out = Vec::new();
    match a {
        Analysis::Bias => {}
        Analysis::Transient {
            stop,
            step,
            max_step,
            ..
        } => {
            let steps = stop / step;
            if steps > LIMITS.max_transient_steps {
                out.push(too_many(
                    map,
                    at("step"),
                    "transient output steps (stop / step)",
                    steps,
                    LIMITS.max_transient_steps,
                ));
            }
            if let Some(ms) = max_step {
                let steps = stop / ms;
                if steps > LIMITS.max_transient_steps {
                    out.push(too_many(
                        map,
                        at("max_step"),
                        "transient steps (stop / max_step)",
                        steps,
                        LIMITS.max_transient_steps,
                    ));
                }
            }
        }
        Analysis::Ac { points, .. } => {
            if *points as f64 > LIMITS.max_ac_points {
                out.push(too_many(
                    map,
                    at("points"),
                    "AC points",
                    *points as f64,
                    LIMITS.max_ac_points,
                ));
            }
        }
        Analysis::Steady {
            harmonics,
            steps_per_period,
            ..
        } => {
            if *harmonics as f64 > LIMITS.max_harmonics {
                out.push(too_many(
                    map,
                    at("harmonics"),
                    "harmonics",
                    *harmonics as f64,
                    LIMITS.max_harmonics,
                ));
            }
            if *steps_per_period as f64 > LIMITS.max_steps_per_period {
                out.push(too_many(
                    map,
                    at("steps"),
                    "steps per period",
                    *steps_per_period as f64,
                    LIMITS.max_steps_per_period,
                ));
            }
        }
        Analysis::Keying(k) => {
            let period = k.units().len() as f64 * k.unit;
            let steps = k.cycles as f64 * period / k.slow_step();
            if steps > LIMITS.max_slow_steps {
                out.push(too_many(
                    map,
                    at("step"),
                    "slow-time steps of a keying (cycles × pattern period / step)",
                    steps,
                    LIMITS.max_slow_steps,
                ));
            }
        }
        Analysis::TwoTone {
            levels, spacings, ..
        } => {
            if levels.len() as f64 > LIMITS.max_loads {
                out.push(too_many(
                    map,
                    at("levels"),
                    "drive levels of a two-tone sweep",
                    levels.len() as f64,
                    LIMITS.max_loads,
                ));
            }
            if spacings.len() as f64 > LIMITS.max_loads {
                out.push(too_many(
                    map,
                    at("spacing"),
                    "tone spacings of a two-tone test",
                    spacings.len() as f64,
                    LIMITS.max_loads,
                ));
            }
        }
        Analysis::Ruggedness { vswr, phases, .. } => {
            let loads = vswr.len() as f64 * *phases as f64;
            if loads > LIMITS.max_loads {
                out.push(too_many(
                    map,
                    at("phases"),
                    "loads of a sweep (circles × phases)",
                    loads,
                    LIMITS.max_loads,
                ));
            }
        }
        Analysis::LoadPull(p) => {
            let loads = p.points as f64 * p.points as f64;
            if loads > LIMITS.max_loads {
                out.push(too_many(
                    map,
                    at("points"),
                    "loads of a sweep (the load-pull grid, points × points)",
                    loads,
                    LIMITS.max_loads,
                ));
            }
        }
        Analysis::Heat(h) => {
            if h.rounds as f64 > MAX_HEAT_ROUNDS {
                out.push(too_many(
                    map,
                    at("rounds"),
                    "electrothermal rounds",
                    h.rounds as f64,
                    MAX_HEAT_ROUNDS,
                ));
            }
            if let Some(t) = h.transmit {
                let cycles = if h.space > 0.0 {
                    (t / (h.mark + h.space)).ceil()
                } else {
                    1.0
                };
                if cycles > MAX_KEYING_CYCLES {
                    out.push(too_many(
                        map,
                        at("transmit"),
                        "keying cycles of a transmission",
                        cycles,
                        MAX_KEYING_CYCLES,
                    ));
                }
            }
        }
    }
    out
}

/// Most electrical solves one `analyze heat` may spend.
pub const MAX_HEAT_ROUNDS: f64 = 200.0;
/// Most keying cycles (mark + space) a heating run steps through (each
/// cycle costs two exact steps of a small network).
pub const MAX_KEYING_CYCLES: f64 = 1e6;

/// An upper estimate of the unknowns of `c` and of those a nonlinear device
/// touches: every node, one branch current per voltage source and inductor,
/// up to three internal nodes per transistor and one per diode (the device
/// crate allocates them only for nonzero series resistances).
pub fn unknowns(c: &Circuit) -> (f64, f64) {
    let mut u = c.nodes.len() as f64;
    let mut ports = 0.0;
    for e in &c.elements {
        match e.kind {
            ElementKind::VoltageSource { .. } | ElementKind::Inductor { .. } => u += 1.0,
            ElementKind::Bjt { .. } => {
                u += 3.0;
                ports += 6.0;
            }
            ElementKind::Diode { .. } => {
                u += 1.0;
                ports += 3.0;
            }
            _ => {}
        }
    }
    (u, f64::min(u, ports))
}

/// An estimate of the memory, in bytes, analysis `a` needs on circuit `c`:
/// the dense matrices (8 bytes a real entry, 16 a complex one, twice for the
/// factorisation) and the stored waveforms.
pub fn analysis_bytes(c: &Circuit, a: &Analysis) -> f64 {
    let (u, ports) = unknowns(c);
    let dense = 2.0 * 8.0 * u * u;
    match a {
        Analysis::Bias => dense,
        Analysis::Transient { stop, step, .. } => dense + 8.0 * u * (stop / step + 1.0),
        Analysis::Ac { points, .. } => 2.0 * dense + 16.0 * u * *points as f64,
        // one load's circuit at a time, plus its figures
        Analysis::Ruggedness { .. } => dense,
        // one load's harmonic balance at a time (as a steady state), plus
        // the figures of each grid point
        Analysis::LoadPull(p) => dense + 64.0 * (p.points * p.points) as f64,
        // one steady state at a time, a small thermal network and its samples
        Analysis::Heat(_) => dense,
        // one slow step's balance at a time (as a steady state of
        // KEYING_HARMONICS), and the kept samples of the output phasor
        Analysis::Keying(k) => {
            let kk = crate::keying::KEYING_HARMONICS as f64;
            let balance = 2.0 * 8.0 * (ports * (2.0 * kk + 1.0)).powi(2) + 2.0 * dense * (kk + 1.0);
            let period = k.units().len() as f64 * k.unit;
            balance
                + 16.0 * u * (kk + 1.0) * (crate::keying::KEPT_SAMPLES + 2) as f64
                + 32.0 * k.cycles as f64 * period / k.slow_step()
        }
        // one drive level at a time: the reduced network per mixing product
        // (p² complex entries each), a GMRES basis of 64 vectors of the real
        // system, and the dense matrices of the operating point
        Analysis::TwoTone { order, .. } => {
            let slots = (((2 * order + 1) * (2 * order + 1)) / 2 + 1) as f64;
            16.0 * ports * ports * slots + 8.0 * 64.0 * ports * 2.0 * slots + dense
        }
        Analysis::Steady {
            harmonics,
            steps_per_period,
            ..
        } => {
            let k = *harmonics as f64;
            let n = *steps_per_period as f64;
            let balance = 2.0 * 8.0 * (ports * (2.0 * k + 1.0)).powi(2) + 2.0 * dense * (k + 1.0);
            let shooting = 3.0 * dense + 8.0 * u * n;
            balance.max(shooting)
        }
    }
}

/// Check the size of `c`: the element count (`element_spans` are where each
/// element was written) and the estimated memory of each analysis
/// (`analysis_spans[i]` is where `c.analyses[i]` was written).
pub(crate) fn size(
    map: &SourceMap,
    c: &Circuit,
    element_spans: &[Span],
    analysis_spans: &[Span],
) -> Vec<Diagnostic> {
    let mut out = Vec::new();
    if c.elements.len() > LIMITS.max_elements {
        let at = element_spans
            .get(LIMITS.max_elements)
            .copied()
            .unwrap_or_default();
        out.push(too_many(
            map,
            at,
            "elements",
            c.elements.len() as f64,
            LIMITS.max_elements as f64,
        ));
        return out;
    }
    let max = LIMITS.max_analysis_bytes;
    for (a, at) in c.analyses.iter().zip(analysis_spans) {
        let need = analysis_bytes(c, a);
        if need > max {
            let (u, _) = unknowns(c);
            let mut d = map.error(
                "too-large",
                *at,
                format!(
                    "this analysis would need about {} of memory for {} unknowns, at most {} allowed",
                    crate::si::si_prefixed(need, "B", 3),
                    u,
                    crate::si::si_prefixed(max, "B", 3)
                ),
            );
            d.help = Some(
                "use fewer harmonics, points or steps; the estimate and the limit are in docs/security.md"
                    .into(),
            );
            out.push(d);
        }
    }
    out
}

/// Warn at every `tolerance` statement of a file that has no `montecarlo`:
/// tolerances are applied only to Monte Carlo samples (docs/studies.md), so
/// without one they do nothing.
pub(crate) fn unused_tolerances(parsed: &tankwave_netlist::Parsed, c: &Circuit) -> Vec<Diagnostic> {
    if c.study.montecarlo.is_some() {
        return Vec::new();
    }
    parsed
        .statements
        .iter()
        .filter(|s| matches!(s.stmt, tankwave_netlist::ast::Stmt::Tolerance { .. }))
        .map(|s| {
            let mut d = parsed.sources.warning(
                "tolerance-unused",
                s.keyword.span,
                "tolerance has no effect without montecarlo: tolerances are drawn only for Monte Carlo samples",
            );
            d.help = Some("add e.g. 'montecarlo runs=100', or remove the tolerance".into());
            d
        })
        .collect()
}

/// Check every unit written with an override (`ov.param_units`) against the
/// unit the stage file gives that parameter (`file_units`, SI symbols from
/// [`crate::param_units::collect`]); a plain number is taken as given in the
/// parameter's own unit.
pub(crate) fn override_units(
    file_units: &BTreeMap<String, String>,
    ov: &Overrides,
) -> Vec<Diagnostic> {
    let mut out = Vec::new();
    for (name, written) in &ov.param_units {
        let Some(own) = file_units.get(name) else {
            if !written.is_empty() {
                out.push(Diagnostic::global(
                    "unit-mismatch",
                    Severity::Error,
                    format!(
                        "override of '{name}' is in {written}, but the stage file gives '{name}' as a plain number"
                    ),
                ));
            }
            continue;
        };
        if own != written {
            let shown = |u: &str| {
                if u.is_empty() {
                    "a plain number".to_string()
                } else {
                    u.to_string()
                }
            };
            out.push(Diagnostic::global(
                "unit-mismatch",
                Severity::Error,
                format!(
                    "override of '{name}' is in {}, but the stage file gives '{name}' in {}",
                    shown(written),
                    shown(own)
                ),
            ));
        }
    }
    out
}
