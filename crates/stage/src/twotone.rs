//! The two-tone test of a stage (`analyze twotone`): the `input` source's
//! sine (amplitude A at f, phase φ) replaced by two tones of amplitude A/2 at
//! `f − spacing/2` and `f + spacing/2` (the envelope's peak is the single
//! tone's peak), solved by multi-tone harmonic balance
//! ([`tankwave_solve::multitone()`]) and measured in the `output` resistor
//! ([`tankwave_measure::twotone`]); with `levels=`, once per drive level.

use tankwave_circuit::ir::Shape;
use tankwave_circuit::{Circuit, ElementKind};
use tankwave_devices::DeviceSet;
use tankwave_measure::{sweep_levels, two_tone_metrics, ToneLevel, ToneView, TwoToneMetrics};
use tankwave_solve::{multitone, ToneDrive, ToneInfo, ToneParams, ToneSolution};

use crate::solve::Caps;
use crate::StageError;

/// Highest order under [`Caps`] (unchecked input).
pub const CAPPED_ORDER: usize = 5;
/// Most drive levels under [`Caps`].
pub const CAPPED_LEVELS: usize = 2;

/// What an `analyze twotone` asks for.
#[derive(Debug, Clone, PartialEq)]
pub struct TwoToneSpec {
    /// Distance between the tones, Hz.
    pub spacing: f64,
    /// Box truncation order.
    pub order: usize,
    /// Drive levels of the sweep, dB relative to the input's amplitude.
    pub levels: Vec<f64>,
    /// Spacings of the IMD-against-spacing sweep at full drive (ignored
    /// with fewer than two; the first is normally `spacing`).
    pub spacings: Vec<f64>,
}

/// A solved two-tone test.
#[derive(Debug, Clone, PartialEq)]
pub struct TwoToneTest {
    /// The input's frequency, the centre of the pair, Hz.
    pub centre_hz: f64,
    /// Distance between the tones, Hz.
    pub spacing_hz: f64,
    /// Box truncation order.
    pub order: usize,
    /// Mixing products kept (slots of the solve, DC included).
    pub products: usize,
    /// The figures at the input's own drive (0 dB).
    pub full: TwoToneMetrics,
    /// Largest product on the box's edge relative to the largest tone, at
    /// full drive (the truncation's size).
    pub edge: f64,
    /// Newton iterations at full drive.
    pub iterations: usize,
    /// Order of the Newton system.
    pub system_size: usize,
    /// The drive sweep, rising (empty without `levels=`).
    pub sweep: Vec<ToneLevel>,
    /// The figures at full drive at each spacing, in the order given
    /// (empty with fewer than two spacings).
    pub by_spacing: Vec<(f64, TwoToneMetrics)>,
}

fn bad(m: String) -> StageError {
    StageError::TwoTone(m)
}

/// Run one two-tone test of `circuit`.
pub fn two_tone(
    circuit: &Circuit,
    devices: &DeviceSet,
    spec: &TwoToneSpec,
    caps: Option<&Caps>,
) -> Result<TwoToneTest, StageError> {
    let input = circuit
        .input
        .ok_or_else(|| bad("the file has no `input`".into()))?;
    let el = circuit
        .elements
        .get(input.index())
        .ok_or_else(|| bad("the `input` is not an element".into()))?;
    let (amp, freq, phase) = match &el.kind {
        ElementKind::VoltageSource { wave, .. } | ElementKind::CurrentSource { wave, .. } => {
            match wave.shape {
                Some(Shape::Sine {
                    amp, freq, phase, ..
                }) => (amp, freq, phase),
                _ => return Err(bad(format!("the input '{}' has no sine", el.name))),
            }
        }
        _ => return Err(bad(format!("the input '{}' is not a source", el.name))),
    };
    let out = circuit.output_resistor().map_err(bad)?;
    let (a, b, r) = (out.a, out.b, out.r);
    let mut order = spec.order;
    let mut levels = spec.levels.clone();
    let mut spacings = if spec.spacings.len() >= 2 {
        spec.spacings.clone()
    } else {
        Vec::new()
    };
    if caps.is_some() {
        order = order.min(CAPPED_ORDER);
        levels.truncate(CAPPED_LEVELS);
        spacings.truncate(CAPPED_LEVELS);
    }
    for &s in std::iter::once(&spec.spacing).chain(&spacings) {
        if !(s > 0.0 && s < freq) {
            return Err(bad(format!(
                "the tone spacing {s} Hz is not between 0 and the input's frequency {freq} Hz"
            )));
        }
    }
    let solve_at = |spacing: f64,
                    level_db: f64|
     -> Result<(ToneSolution, TwoToneMetrics), StageError> {
        let tones = [freq - 0.5 * spacing, freq + 0.5 * spacing];
        let g = 10f64.powf(level_db / 20.0);
        let mut p = ToneParams {
            tones: tones.to_vec(),
            order,
            drives: (0..2)
                .map(|tone| ToneDrive {
                    source: input,
                    tone,
                    amp: 0.5 * amp * g,
                    phase,
                })
                .collect(),
            ..ToneParams::default()
        };
        if let Some(c) = caps {
            p.balance.max_levels = p.balance.max_levels.min(c.max_balance_levels);
            p.balance.max_iter = p.balance.max_iter.min(c.max_balance_iter);
        }
        let s = multitone(circuit, devices, &p)?;
        let volt = |node: tankwave_circuit::NodeId, m: i32, n: i32| match devices.voltage_of(node) {
            Some(u) => s.coefficient(&[m, n], u),
            None => Some(num_complex::Complex64::new(0.0, 0.0)),
        };
        let load = |m: i32, n: i32| Some(volt(a, m, n)? - volt(b, m, n)?);
        let view = ToneView {
            tones,
            load_ohm: r,
            load_voltage: &load,
            floor_rel: p.tol.rel_tolerance,
        };
        let metrics = two_tone_metrics(&view).map_err(|e| bad(e.to_string()))?;
        Ok((s, metrics))
    };
    let (s, full) = solve_at(spec.spacing, 0.0)?;
    let info: &ToneInfo = &s.info;
    let mut swept = Vec::with_capacity(levels.len());
    for &l in &levels {
        if l == 0.0 {
            swept.push((l, full.clone()));
        } else {
            swept.push((l, solve_at(spec.spacing, l)?.1));
        }
    }
    let mut by_spacing = Vec::with_capacity(spacings.len());
    for &sp in &spacings {
        if sp == spec.spacing {
            by_spacing.push((sp, full.clone()));
        } else {
            by_spacing.push((sp, solve_at(sp, 0.0)?.1));
        }
    }
    Ok(TwoToneTest {
        centre_hz: freq,
        spacing_hz: spec.spacing,
        order,
        products: s.products.len(),
        edge: info.edge,
        iterations: info.iterations,
        system_size: info.system_size,
        full,
        sweep: sweep_levels(swept),
        by_spacing,
    })
}
