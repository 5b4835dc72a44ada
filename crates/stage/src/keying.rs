//! Keying: a source's sine switched on and off by a shaped envelope, the
//! envelope followed through the stage two ways (docs/analyses.md,
//! "Keying"):
//!
//! - **quasi-static**: the stage's output phasor at the fundamental against
//!   the drive amplitude (the AM–AM and AM–PM curves), from harmonic balance
//!   at [`QUASI_LEVELS`] drive levels, applied sample by sample to the
//!   keying envelope: right when every memory of the stage (tank, bias
//!   network) is short against the keying edges;
//! - **dynamic**: envelope following
//!   ([`mod@tankwave_solve::periodic::envelope`]), harmonic balance at every
//!   slow step, which keeps the tank's and the bias network's memory.
//!
//! Both use [`KEYING_HARMONICS`] harmonics of the carrier. The figures
//! (edges, sideband spectrum, occupied bandwidth) are measured on the last
//! of the pattern's periods followed, where the bias network has forgotten
//! the start; the departure of the quasi-static envelope from the dynamic
//! one says whether the first is enough.

use num_complex::Complex64 as C64;
use tankwave_circuit::keying::{KeyingEnvelope, KeyingSpec, KEPT_SAMPLES, KEYING_HARMONICS};
use tankwave_circuit::{Circuit, ElementId, ElementKind, Shape, SteadyMethod};
use tankwave_devices::DeviceSet;
use tankwave_measure::KeyingFigures;
use tankwave_solve::periodic::envelope::{envelope, EnvelopeInfo, EnvelopeParams};
use tankwave_solve::SteadyParams;

use crate::solve::Caps;
use crate::StageError;

/// Drive levels of the quasi-static sweep, evenly spaced in amplitude from
/// `1/QUASI_LEVELS` to 1 of the keyed source's sine (the output at zero
/// drive is zero). Linear interpolation between them is within
/// `Δa²/8 · |G''|` of the curve (common practice).
pub const QUASI_LEVELS: usize = 32;

/// The largest difference between the quasi-static and the dynamic output
/// envelope, as a fraction of the key-down amplitude, for which the report
/// calls the quasi-static path enough (common practice: a 1 % amplitude
/// error is 0.09 dB, below what keying figures are read to).
pub const QUASI_ENOUGH: f64 = 0.01;

/// The quasi-static drive sweep's levels under [`Caps`].
pub const CAPPED_QUASI_LEVELS: usize = 4;

/// The default span of the sideband spectrum, in necessary bandwidths
/// (the option table's "ten times the necessary bandwidth").
pub const SPAN_PER_NECESSARY: f64 = 10.0;

/// The slow steps per period of the pattern under [`Caps`] (coarser than
/// asked: the caps bound the work on unchecked input, not its accuracy).
pub const CAPPED_SLOW_STEPS: usize = 64;

/// One point of the quasi-static transfer curve.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TransferPoint {
    /// Drive amplitude, a fraction of the keyed source's full amplitude.
    pub drive: f64,
    /// The output voltage's fundamental phasor (two-sided, so that the
    /// peak amplitude is `2|X₁|`), V.
    pub output: C64,
    /// Output power at the fundamental, W.
    pub pout_w: f64,
}

/// The outcome of one `analyze keying`.
#[derive(Debug, Clone)]
pub struct KeyingRun {
    /// What the file asked for.
    pub spec: KeyingSpec,
    /// The carrier frequency, Hz.
    pub carrier_hz: f64,
    /// The keyed source's name.
    pub source: String,
    /// The output resistance, Ω.
    pub load_ohm: f64,
    /// The AM–AM and AM–PM curve, by increasing drive (the last point is
    /// full drive).
    pub transfer: Vec<TransferPoint>,
    /// Spacing of the envelope samples below, s.
    pub dt: f64,
    /// The drive envelope over the measured period, 0..1.
    pub drive: Vec<f64>,
    /// The output's fundamental phasor over the measured period, quasi-static, V.
    pub quasi: Vec<C64>,
    /// The same by envelope following, V.
    pub dynamic: Vec<C64>,
    /// `max |dynamic − quasi| / |key-down output|` over the measured period.
    pub departure: f64,
    /// How envelope following went.
    pub info: EnvelopeInfo,
    /// Periods of the pattern followed (the figures come from the last).
    pub cycles: usize,
    /// The figures of the dynamic envelope (the ones `require` reads).
    pub figures: KeyingFigures,
    /// The same figures of the quasi-static envelope.
    pub quasi_figures: KeyingFigures,
}

impl KeyingRun {
    /// The length of the pattern's period, s.
    pub fn period_s(&self) -> f64 {
        self.dt * self.dynamic.len() as f64
    }

    /// The key-down output phasor (the quasi-static curve at full drive), V.
    pub fn key_down(&self) -> C64 {
        self.transfer
            .last()
            .map_or(C64::new(0.0, 0.0), |p| p.output)
    }

    /// Key-down output power at the fundamental, W.
    pub fn key_down_w(&self) -> f64 {
        self.transfer.last().map_or(0.0, |p| p.pout_w)
    }
}

fn bad(m: String) -> StageError {
    StageError::Keying(m)
}

/// The output resistor: its two nodes and its resistance, Ω.
type OutputPort = (tankwave_circuit::NodeId, tankwave_circuit::NodeId, f64);

/// The keyed source, its name, its sine's frequency and the output resistor.
fn ports(
    circuit: &Circuit,
    spec: &KeyingSpec,
) -> Result<(ElementId, String, f64, OutputPort), StageError> {
    let id = spec
        .source
        .or(circuit.input)
        .ok_or_else(|| bad("the file has no `input` and the keying names no source".into()))?;
    let el = circuit
        .elements
        .get(id.index())
        .ok_or_else(|| bad("the keyed source is not an element".into()))?;
    let freq = match &el.kind {
        ElementKind::VoltageSource { wave, .. } | ElementKind::CurrentSource { wave, .. } => {
            match wave.shape {
                Some(Shape::Sine { freq, amp, .. }) if amp != 0.0 => freq,
                Some(Shape::Sine { .. }) => {
                    return Err(bad(format!(
                        "the keyed source '{}' has a sine of zero amplitude: nothing to key",
                        el.name
                    )))
                }
                _ => return Err(bad(format!("the keyed source '{}' has no sine", el.name))),
            }
        }
        _ => return Err(bad(format!("'{}' is not a source", el.name))),
    };
    let out = circuit.output_resistor().map_err(bad)?;
    Ok((id, el.name.clone(), freq, (out.a, out.b, out.r)))
}

/// The circuit with the sine of source `id` scaled by `k`.
fn scaled(circuit: &Circuit, id: ElementId, k: f64) -> Circuit {
    let mut c = circuit.clone();
    if let Some(e) = c.elements.get_mut(id.index()) {
        if let ElementKind::VoltageSource { wave, .. } | ElementKind::CurrentSource { wave, .. } =
            &mut e.kind
        {
            if let Some(Shape::Sine { amp, .. }) = &mut wave.shape {
                *amp *= k;
            }
        }
    }
    c
}

/// The fundamental phasor `X₁ = (1/N) Σ x[n] e^{−j2πn/N}` of one period of
/// samples at `t = n·T/N` (the convention of envelope following's phasors).
fn fundamental(x: &[f64]) -> C64 {
    let n = x.len().max(1) as f64;
    x.iter()
        .enumerate()
        .map(|(i, v)| C64::from_polar(*v, -2.0 * std::f64::consts::PI * i as f64 / n))
        .sum::<C64>()
        / n
}

/// The quasi-static transfer curve: the output's fundamental phasor at each
/// drive level, by harmonic balance with [`KEYING_HARMONICS`] harmonics,
/// each level warm-started from the one below.
pub fn transfer_curve(
    circuit: &Circuit,
    spec: &KeyingSpec,
    levels: usize,
) -> Result<Vec<TransferPoint>, StageError> {
    let (id, _, freq, (a, b, r)) = ports(circuit, spec)?;
    let mut warm: Option<Vec<f64>> = None;
    let mut out = Vec::with_capacity(levels);
    for i in 1..=levels {
        let k = i as f64 / levels as f64;
        let c = scaled(circuit, id, k);
        let devices = tankwave_devices::instantiate(&c).map_err(StageError::Devices)?;
        let mut p = SteadyParams {
            freq,
            harmonics: KEYING_HARMONICS,
            method: SteadyMethod::Balance,
            ..SteadyParams::default()
        };
        p.balance.raise_harmonics = false;
        p.balance.initial = warm.clone();
        let s = tankwave_solve::steady(&c, &devices, &p)?;
        let v = |node| {
            devices
                .voltage_of(node)
                .and_then(|u| s.x.get(u.index()))
                .map_or(C64::new(0.0, 0.0), |x| fundamental(x))
        };
        let output = v(a) - v(b);
        warm = Some(
            s.x.iter()
                .map(|u| u.first().copied().unwrap_or(0.0))
                .collect(),
        );
        out.push(TransferPoint {
            drive: k,
            output,
            pout_w: 2.0 * output.norm_sqr() / r,
        });
    }
    Ok(out)
}

/// The transfer curve at drive `a` (0..1), linear between its points, 0 at
/// zero drive.
pub fn transfer_at(curve: &[TransferPoint], a: f64) -> C64 {
    let a = a.clamp(0.0, 1.0);
    let mut lo = (0.0, C64::new(0.0, 0.0));
    for p in curve {
        if a <= p.drive {
            let span = p.drive - lo.0;
            let f = if span > 0.0 { (a - lo.0) / span } else { 1.0 };
            return lo.1 + (p.output - lo.1) * f;
        }
        lo = (p.drive, p.output);
    }
    lo.1
}

/// Run one keying of `circuit`: the quasi-static curve, envelope following
/// over `spec.cycles` periods of the pattern, both envelopes over the last.
pub fn keying(
    circuit: &Circuit,
    devices: &DeviceSet,
    spec: &KeyingSpec,
    caps: Option<&Caps>,
) -> Result<KeyingRun, StageError> {
    let (id, source, freq, (a, b, r)) = ports(circuit, spec)?;
    let env = KeyingEnvelope::new(spec);
    let period = env.period();
    let mut cycles = spec.cycles.max(1);
    let mut levels = QUASI_LEVELS;
    if caps.is_some() {
        cycles = 1;
        levels = CAPPED_QUASI_LEVELS;
    }
    let transfer = transfer_curve(circuit, spec, levels)?;

    // a whole number of slow steps in each period of the pattern
    let mut per_cycle = (period / spec.slow_step()).ceil().max(1.0) as usize;
    if caps.is_some() {
        per_cycle = per_cycle.min(CAPPED_SLOW_STEPS);
    }
    let h = period / per_cycle as f64;
    let steps = per_cycle * cycles;
    let watch: Vec<_> = [a, b]
        .iter()
        .filter_map(|n| devices.voltage_of(*n))
        .collect();
    let params = EnvelopeParams {
        freq,
        harmonics: KEYING_HARMONICS,
        stop: period * cycles as f64,
        step: h,
        keep_every: (steps / KEPT_SAMPLES).max(1),
        keyed: Some(id),
        watch: watch.clone(),
        ..EnvelopeParams::default()
    };
    let drive = |t: f64| env.at(t);
    let sol = envelope(circuit, devices, &params, &drive)?;
    let node = |n: tankwave_circuit::NodeId, i: usize| -> C64 {
        devices
            .voltage_of(n)
            .and_then(|u| watch.iter().position(|w| *w == u))
            .and_then(|w| sol.watched.get(w)?.get(i).copied())
            .unwrap_or(C64::new(0.0, 0.0))
    };
    let first = steps - per_cycle;
    let range = first..steps;
    let dynamic: Vec<C64> = range.clone().map(|i| node(a, i) - node(b, i)).collect();
    let drive_s: Vec<f64> = range.clone().map(|i| env.at(i as f64 * h)).collect();
    let quasi: Vec<C64> = drive_s.iter().map(|&d| transfer_at(&transfer, d)).collect();
    let key_down = transfer.last().map_or(0.0, |p| p.output.norm());
    if key_down.is_nan() || key_down <= 0.0 {
        return Err(bad(
            "the stage gives no output at full drive: nothing to key".into(),
        ));
    }
    let departure = dynamic
        .iter()
        .zip(&quasi)
        .map(|(d, q)| (d - q).norm() / key_down)
        .fold(0.0, f64::max);
    if dynamic.iter().any(|v| !v.is_finite()) {
        return Err(bad("envelope following gave a non-finite output".into()));
    }
    let figures = envelope_figures(spec, &dynamic, h, key_down, r)?;
    let quasi_figures = envelope_figures(spec, &quasi, h, key_down, r)?;
    Ok(KeyingRun {
        spec: spec.clone(),
        carrier_hz: freq,
        source,
        load_ohm: r,
        transfer,
        dt: h,
        drive: drive_s,
        quasi,
        dynamic,
        departure,
        info: sol.info,
        cycles,
        figures,
        quasi_figures,
    })
}

/// The keying figures of one output envelope (fundamental phasors, V, at
/// steps of `dt` over one period of the pattern), against the key-down
/// phasor magnitude `key_down` (|X₁| at full drive, the quasi-static
/// curve's end) and the load `r_ohm`. Rise, fall and overshoot are taken
/// on the envelope's own settled key-down level; the sideband levels and
/// the occupied band on the key-down carrier (so that the two envelopes
/// are read against the same 0 dBc).
fn envelope_figures(
    spec: &KeyingSpec,
    env: &[C64],
    dt: f64,
    key_down: f64,
    r_ohm: f64,
) -> Result<KeyingFigures, StageError> {
    use tankwave_measure::keying::{
        necessary_bandwidth_hz, try_keying_edges, try_sideband_spectrum, SidebandParams,
    };
    let magnitude: Vec<f64> = env.iter().map(|v| v.norm()).collect();
    let edges = try_keying_edges(&magnitude, dt).ok();
    let necessary =
        necessary_bandwidth_hz(spec.baud(), spec.k_factor).map_err(|e| bad(e.to_string()))?;
    let span = spec.span.unwrap_or(SPAN_PER_NECESSARY * necessary);
    let params = SidebandParams {
        rbw_hz: spec.rbw,
        max_offset_hz: Some(span),
        key_down_amplitude: Some(key_down),
        ..SidebandParams::default()
    };
    let sp = try_sideband_spectrum(env, dt, &params).map_err(|e| bad(e.to_string()))?;
    Ok(KeyingFigures {
        rise_s: edges.as_ref().map(|e| e.rise_s),
        fall_s: edges.as_ref().map(|e| e.fall_s),
        overshoot: edges.as_ref().map(|e| e.overshoot_pct / 100.0),
        occupied_bw_hz: Some(sp.occupied.width_hz),
        occupied_band_hz: Some([sp.occupied.lower_hz, sp.occupied.upper_hz]),
        necessary_bw_hz: necessary,
        key_down_w: 2.0 * key_down * key_down / r_ohm,
        sideband_offsets_hz: sp.offsets_hz,
        sideband_dbc: sp.dbc,
        rbw_hz: sp.rbw_hz,
        line_spacing_hz: sp.line_spacing_hz,
        window: format!("{:?}", sp.window).to_lowercase(),
    })
}
