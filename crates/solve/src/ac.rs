//! Small-signal AC analysis at the operating point.
//!
//! Linearising `i(x) + dq(x)/dt` about the bias point gives, per frequency,
//! `(G + jωC) X = b`, where `G` and `C` are the device Jacobians at the
//! operating point (solved with the sources' time-varying parts off) and `b`
//! is the unit excitation of one source ([`tankwave_devices::Device::ac_excitation`]).
//!
//! Impedance at an element: the element is removed (its devices left out of
//! `G` and `C`; any unknown left with no equation is pinned to zero) and a
//! unit current is injected into its first terminal and drawn from its
//! second, all other sources off. The impedance is `V(first) − V(second)`:
//! the driving-point impedance the element sees looking into the rest of the
//! circuit. For a source this is the impedance it drives (its own internal
//! resistance excluded); for a load resistor, the source impedance behind it.

use crate::error::When;
use crate::linalg::solve_complex;
use crate::op::{operating_point, OpParams, OpResult};
use crate::SolveError;
use num_complex::Complex64;
use tankwave_circuit::{Analysis, Circuit, ElementId, NodeId, Scale};
use tankwave_devices::{DenseStamp, DeviceSet, EvalCtx, Filter, UnknownId};

/// Options of an AC sweep.
#[derive(Debug, Clone, PartialEq)]
pub struct AcParams {
    /// Start frequency, Hz (> 0).
    pub from: f64,
    /// Stop frequency, Hz (≥ from).
    pub to: f64,
    /// Number of points (≥ 1).
    pub points: usize,
    /// Spacing.
    pub scale: Scale,
    /// The source driven with unit amplitude (default: `circuit.input`).
    pub source: Option<ElementId>,
    /// Element at whose terminals the impedance is reported.
    pub impedance_at: Option<ElementId>,
    /// Operating-point options (default: time-varying source parts off).
    pub op: OpParams,
}

impl Default for AcParams {
    fn default() -> Self {
        Self {
            from: 1e6,
            to: 30e6,
            points: 100,
            scale: Scale::Linear,
            source: None,
            impedance_at: None,
            op: OpParams {
                wave_scale: 0.0,
                ..OpParams::default()
            },
        }
    }
}

impl AcParams {
    /// Options from an `analyze ac` statement (`None` for other analyses).
    pub fn from_analysis(a: &Analysis) -> Option<Self> {
        match a {
            Analysis::Ac {
                from,
                to,
                points,
                scale,
                source,
                impedance_at,
            } => Some(Self {
                from: *from,
                to: *to,
                points: *points,
                scale: *scale,
                source: *source,
                impedance_at: *impedance_at,
                ..Self::default()
            }),
            _ => None,
        }
    }

    /// The sweep frequencies.
    pub fn frequencies(&self) -> Vec<f64> {
        if self.points <= 1 {
            return vec![self.from];
        }
        let m = (self.points - 1) as f64;
        (0..self.points)
            .map(|k| match self.scale {
                Scale::Linear => self.from + (self.to - self.from) * k as f64 / m,
                Scale::Log => {
                    (self.from.ln() + (self.to.ln() - self.from.ln()) * k as f64 / m).exp()
                }
            })
            .collect()
    }
}

/// Result of an AC sweep.
#[derive(Debug, Clone, PartialEq)]
pub struct AcResult {
    /// Frequencies, Hz.
    pub freq: Vec<f64>,
    /// Names of the unknowns.
    pub names: Vec<String>,
    /// `x[point][unknown]`: response to the unit excitation (empty when no source was driven).
    pub x: Vec<Vec<Complex64>>,
    /// Impedance at the requested element per point, Ω.
    pub impedance: Option<Vec<Complex64>>,
    /// The operating point used.
    pub op: OpResult,
}

impl AcResult {
    /// Index of the unknown a person named (`--probe V[out]`); code takes
    /// the index from a handle ([`tankwave_devices::DeviceSet::voltage_of`], …).
    pub fn index(&self, name: &str) -> Option<usize> {
        self.names.iter().position(|n| n == name)
    }
    /// Magnitude of unknown `k` in dB (20·log10|X|) at every point.
    pub fn magnitude_db(&self, k: usize) -> Vec<f64> {
        self.x
            .iter()
            .map(|v| {
                20.0 * v
                    .get(k)
                    .map(|c| c.norm())
                    .unwrap_or(0.0)
                    .max(1e-300)
                    .log10()
            })
            .collect()
    }
    /// Phase of unknown `k` in degrees (−180, 180] at every point.
    pub fn phase_deg(&self, k: usize) -> Vec<f64> {
        self.x
            .iter()
            .map(|v| v.get(k).map(|c| c.arg().to_degrees()).unwrap_or(0.0))
            .collect()
    }
}

/// Run an AC sweep.
pub fn ac(
    circuit: &Circuit,
    devices: &DeviceSet,
    params: &AcParams,
) -> Result<AcResult, SolveError> {
    let p = params;
    if !(p.from.is_finite() && p.from > 0.0 && p.to.is_finite() && p.to >= p.from) {
        return Err(SolveError::BadParams(format!(
            "AC sweep needs 0 < from ≤ to, got from = {} to = {}",
            p.from, p.to
        )));
    }
    if p.points == 0 {
        return Err(SolveError::BadParams(
            "AC sweep needs at least one point".into(),
        ));
    }
    let source = p.source.or(circuit.input);
    if source.is_none() && p.impedance_at.is_none() {
        return Err(SolveError::BadParams(
            "AC sweep needs a source (source=, or an input element) or an impedance element".into(),
        ));
    }
    let n = devices.n_unknowns;
    let op = operating_point(circuit, devices, &p.op)?;
    // Linearisation at the operating point.
    let ctx = EvalCtx {
        time: p.op.time,
        wave_scale: p.op.wave_scale,
        junction_leak: p.op.junction_leak,
        limit: false,
        ..EvalCtx::default()
    };
    let mut st = DenseStamp::new(n);
    let mut state = devices.initial_state();
    devices.eval_all(&op.x, &ctx, &mut state, &mut st, Filter::All);
    let freq = p.frequencies();
    let mut xs = Vec::new();
    if let Some(src) = source {
        let mut b = vec![Complex64::new(0.0, 0.0); n];
        let mut found = false;
        for d in devices.devices.iter().filter(|d| d.element() == src) {
            found = true;
            d.ac_excitation(&mut |row, v| {
                if let Some(e) = b.get_mut(row) {
                    *e += v;
                }
            });
        }
        if !found || b.iter().all(|v| v.norm() == 0.0) {
            return Err(SolveError::BadParams(format!(
                "AC source '{}' is not a source with a small-signal excitation",
                element_name(circuit, src)
            )));
        }
        for &f in &freq {
            xs.push(solve_at(devices, &st.g, &st.c, f, &b, "AC", None)?);
        }
    }
    let impedance = match p.impedance_at {
        None => None,
        Some(e) => Some(element_impedance_sweep(
            circuit, devices, &op.x, &ctx, &st, e, &freq,
        )?),
    };
    Ok(AcResult {
        freq,
        names: devices.names.clone(),
        x: xs,
        impedance,
        op,
    })
}

fn element_name(circuit: &Circuit, e: ElementId) -> String {
    circuit
        .elements
        .get(e.index())
        .map(|x| x.name.clone())
        .unwrap_or_else(|| format!("element #{}", e.index()))
}

/// Solve `(G + jωC + Y_f) X = b` at `f`, `Y_f` what the elements defined
/// over frequency (measured networks) add there, except `skip`'s.
fn solve_at(
    devices: &DeviceSet,
    g: &[f64],
    c: &[f64],
    f: f64,
    b: &[Complex64],
    what: &str,
    skip: Option<ElementId>,
) -> Result<Vec<Complex64>, SolveError> {
    let n = devices.n_unknowns;
    let w = 2.0 * std::f64::consts::PI * f;
    let mut a: Vec<Complex64> = g
        .iter()
        .zip(c)
        .map(|(gv, cv)| Complex64::new(*gv, w * cv))
        .collect();
    add_frequency_admittance(devices, f, skip, &mut a)?;
    let x = solve_complex(n, &a, b).map_err(|k| SolveError::Singular {
        analysis: format!("{what} at {f:.6e} Hz"),
        unknown: devices.names.get(k).cloned().unwrap_or_default(),
        cause: crate::singular::cause_complex(&a, n, |j| j, devices)
            .unwrap_or_else(|| crate::singular::guess(devices, k)),
        when: When(None),
    })?;
    if let Some(k) = x
        .iter()
        .position(|v| !(v.re.is_finite() && v.im.is_finite()))
    {
        return Err(SolveError::NonFinite {
            analysis: format!("{what} at {f:.6e} Hz"),
            unknown: devices.names.get(k).cloned().unwrap_or_default(),
            when: When(None),
        });
    }
    Ok(x)
}

/// Add to the dense `n×n` matrix `a` what every element defined over
/// frequency (a measured network) adds at `f` beyond its DC stamp, except
/// the element `skip`. A frequency such an element is not defined at is
/// refused (elaboration already refuses it for the analyses of the file).
pub(crate) fn add_frequency_admittance(
    devices: &DeviceSet,
    f: f64,
    skip: Option<ElementId>,
    a: &mut [Complex64],
) -> Result<(), SolveError> {
    let n = devices.n_unknowns;
    for d in devices.devices.iter().filter(|d| Some(d.element()) != skip) {
        let Some(entries) = d.frequency_admittance(f) else {
            return Err(SolveError::BadParams(format!(
                "measured network #{} is not defined at {f:.6e} Hz, outside its file's band \
                 (give it outside=open, outside=short, outside=hold or outside_r=)",
                d.element().index()
            )));
        };
        for (r, col, y) in entries {
            if let Some(v) = a.get_mut(r * n + col) {
                *v += y;
            }
        }
    }
    Ok(())
}

/// The small-signal impedance between nodes `port.0` and `port.1` of
/// `circuit` with element `removed` taken out, at each frequency in `freq`,
/// Ω: linearised at the operating point (sources' time-varying parts off),
/// a unit current injected into `port.0` and drawn from `port.1`, every
/// source off, `Z = V(port.0) − V(port.1)`. For a transistor removed and its
/// collector and emitter as the port, this is the impedance of the
/// collector's external network (the check of the collector load figures,
/// docs/measurements.md).
pub fn impedance_without(
    circuit: &Circuit,
    devices: &DeviceSet,
    removed: ElementId,
    port: (NodeId, NodeId),
    freq: &[f64],
) -> Result<Vec<Complex64>, SolveError> {
    let p = AcParams::default();
    let op = operating_point(circuit, devices, &p.op)?;
    let ctx = EvalCtx {
        time: p.op.time,
        wave_scale: p.op.wave_scale,
        junction_leak: p.op.junction_leak,
        limit: false,
        ..EvalCtx::default()
    };
    let mut st = DenseStamp::new(devices.n_unknowns);
    let mut state = devices.initial_state();
    devices.eval_all(&op.x, &ctx, &mut state, &mut st, Filter::All);
    let name = element_name(circuit, removed);
    impedance_sweep(devices, &op.x, &ctx, &st, removed, &name, port, freq)
}

fn element_impedance_sweep(
    circuit: &Circuit,
    devices: &DeviceSet,
    x: &[f64],
    ctx: &EvalCtx,
    full: &DenseStamp,
    e: ElementId,
    freq: &[f64],
) -> Result<Vec<Complex64>, SolveError> {
    let el = circuit.elements.get(e.index()).ok_or_else(|| {
        SolveError::BadParams(format!("impedance element #{} does not exist", e.index()))
    })?;
    let terms = el.kind.terminals();
    if terms.len() != 2 {
        return Err(SolveError::BadParams(format!(
            "impedance needs a two-terminal element; '{}' has {}",
            el.name,
            terms.len()
        )));
    }
    impedance_sweep(
        devices,
        x,
        ctx,
        full,
        e,
        &el.name,
        (terms[0], terms[1]),
        freq,
    )
}

#[allow(clippy::too_many_arguments)]
fn impedance_sweep(
    devices: &DeviceSet,
    x: &[f64],
    ctx: &EvalCtx,
    full: &DenseStamp,
    e: ElementId,
    name: &str,
    port: (NodeId, NodeId),
    freq: &[f64],
) -> Result<Vec<Complex64>, SolveError> {
    let n = devices.n_unknowns;
    let terms = [port.0, port.1];
    if terms[0] == terms[1] {
        return Err(SolveError::BadParams(format!(
            "the impedance port at '{name}' has both terminals on one node"
        )));
    }
    // Contributions of the element's own devices, to be removed.
    let mut own = DenseStamp::new(n);
    let mut state = devices.initial_state();
    for (di, d) in devices.devices.iter().enumerate() {
        if d.element() == e {
            let off = devices.state_offsets.get(di).copied().unwrap_or(0);
            let len = d.state_len();
            let sl = state.get_mut(off..off + len).unwrap_or(&mut []);
            d.eval(x, ctx, sl, &mut own);
        }
    }
    let mut g: Vec<f64> = full.g.iter().zip(&own.g).map(|(a, b)| a - b).collect();
    let mut c: Vec<f64> = full.c.iter().zip(&own.c).map(|(a, b)| a - b).collect();
    // Clean rounding residue where only the removed element contributed.
    for k in 0..n * n {
        if own.g[k] != 0.0 && g[k].abs() <= 1e-12 * own.g[k].abs() {
            g[k] = 0.0;
        }
        if own.c[k] != 0.0 && c[k].abs() <= 1e-12 * own.c[k].abs() {
            c[k] = 0.0;
        }
    }
    // Pin unknowns left without any equation.
    for k in 0..n {
        let empty = (0..n).all(|j| {
            g[k * n + j] == 0.0 && c[k * n + j] == 0.0 && g[j * n + k] == 0.0 && c[j * n + k] == 0.0
        });
        if empty {
            g[k * n + k] = 1.0;
        }
    }
    let mut b = vec![Complex64::new(0.0, 0.0); n];
    for (t, v) in terms.iter().zip([1.0, -1.0]) {
        if let Some(k) = UnknownId::voltage(*t).map(|u| u.index()) {
            match b.get_mut(k) {
                Some(e) => *e += v,
                None => {
                    return Err(SolveError::BadParams(format!(
                        "the port at '{name}' names node #{k} outside the {n} unknowns"
                    )))
                }
            }
        }
    }
    let what = format!("impedance at '{name}'");
    let mut z = Vec::with_capacity(freq.len());
    for &f in freq {
        let v = solve_at(devices, &g, &c, f, &b, &what, Some(e))?;
        let at = |t: NodeId| UnknownId::voltage(t).and_then(|u| v.get(u.index()).copied());
        let va = at(terms[0]).unwrap_or_default();
        let vb = at(terms[1]).unwrap_or_default();
        z.push(va - vb);
    }
    Ok(z)
}
