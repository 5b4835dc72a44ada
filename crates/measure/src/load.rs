//! The collector's large-signal load: the impedance each transistor's
//! collector sees at the fundamental and at harmonics 2..=[`LOAD_HARMONICS`],
//! from the steady-state voltage and current phasors at its terminals.
//!
//! Sign convention: `Z_n = −V_ce,n / I_c,n`, where `V_ce,n` is the phasor of
//! the collector–emitter voltage at n·f0 and `I_c,n` the phasor of the
//! current flowing *into* the collector terminal. The current the external
//! network delivers into its own port at the collector is `−I_c`, so `Z_n`
//! is the impedance of the external network seen from the collector (a
//! passive load has `Re Z_n ≥ 0`). When the collector's network is driven at
//! n·f0 only through the transistor (no source and no coupling from the base
//! network at that frequency, the usual common-emitter stage), `Z_n` equals
//! the small-signal impedance of the network with the transistor removed,
//! between collector and emitter, at n·f0 (docs/measurements.md,
//! "Collector load").
//!
//! A harmonic whose collector current is below the numerical floor
//! ([`LOAD_CURRENT_FLOOR_REL`] of the peak collector current plus
//! [`LOAD_CURRENT_FLOOR_A`]) is reported as not resolved: a ratio of two
//! numbers at the solver's noise level would be noise.
//!
//! Kept in its own module (with its own types) so it can move onto a figure
//! catalogue without touching the other figures.

use num_complex::Complex64;
use serde::Serialize;
use tankwave_circuit::{ElementId, ElementKind};

use crate::error::MeasureError;
use crate::metrics::Impedance;
use crate::period::{Period, PeriodData};
use crate::spectrum::spectrum;

/// Highest harmonic whose collector load is reported (the fundamental and
/// harmonics 2..5: the terminations that shape a class-B/C waveform; common
/// practice).
pub const LOAD_HARMONICS: usize = 5;

/// Relative part of the floor below which a collector-current harmonic is
/// not resolved: 1e-4 of the peak collector current. The steady-state
/// methods converge to a relative tolerance of 1e-7 (shooting) to 1e-6
/// (Newton residuals) of the largest terms (docs/analyses.md); a harmonic a
/// thousand times above 1e-7 of the peak carries at most about 1e-3 relative
/// error from that noise.
pub const LOAD_CURRENT_FLOOR_REL: f64 = 1e-4;

/// Absolute part of that floor, A: a thousand times the solver's current
/// floor of 1e-12 A (docs/analyses.md, Newton tolerances).
pub const LOAD_CURRENT_FLOOR_A: f64 = 1e-9;

/// The collector load of one transistor at one harmonic.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct HarmonicLoad {
    /// Harmonic number n (1 = fundamental).
    pub n: usize,
    /// Frequency n·f0, Hz.
    pub freq_hz: f64,
    /// Peak amplitude of the collector–emitter voltage at n·f0, |V_ce,n|, V.
    pub vce_v: f64,
    /// Peak amplitude of the collector current at n·f0, |I_c,n|, A.
    pub ic_a: f64,
    /// The impedance `−V_ce,n / I_c,n` the collector sees, Ω; `None` when
    /// not resolved (see `unresolved`).
    pub z: Option<Impedance>,
    /// Why `z` is missing: the collector current at this harmonic is below
    /// the numerical floor (the floor in A is given).
    pub unresolved: Option<String>,
}

/// The collector load of one transistor at the fundamental and harmonics.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CollectorLoad {
    /// Transistor name.
    pub element: String,
    /// Transistor index.
    pub element_id: ElementId,
    /// The floor |I_c,n| must reach to be resolved, A.
    pub floor_a: f64,
    /// Harmonics 1..=min(K, [`LOAD_HARMONICS`]), in order.
    pub harmonics: Vec<HarmonicLoad>,
}

/// The collector load of every bipolar transistor, in element order, at
/// harmonics 1..=min(K, [`LOAD_HARMONICS`]).
pub fn collector_loads(data: &PeriodData<'_>) -> Result<Vec<CollectorLoad>, MeasureError> {
    let p = Period::new(*data)?;
    let c = data.circuit;
    let k = data.harmonics.min(LOAD_HARMONICS);
    let mut out = Vec::new();
    for (id, el) in c.element_ids() {
        let ElementKind::Bjt {
            c: coll, e: emit, ..
        } = &el.kind
        else {
            continue;
        };
        let vce = p.across(*coll, *emit);
        let ic = p.current(id, 0);
        let sv = spectrum(&vce, data.harmonics)?;
        let si = spectrum(ic, data.harmonics)?;
        let peak = ic.iter().fold(0.0f64, |m, x| m.max(x.abs()));
        let floor_a = LOAD_CURRENT_FLOOR_REL * peak + LOAD_CURRENT_FLOOR_A;
        let harmonics = (1..=k)
            .map(|n| {
                let v = sv.phasor(n);
                let i = si.phasor(n);
                let (z, unresolved) = impedance(v, i, floor_a);
                HarmonicLoad {
                    n,
                    freq_hz: n as f64 * data.freq,
                    vce_v: v.norm(),
                    ic_a: i.norm(),
                    z,
                    unresolved,
                }
            })
            .collect();
        out.push(CollectorLoad {
            element: el.name.clone(),
            element_id: id,
            floor_a,
            harmonics,
        });
    }
    Ok(out)
}

/// `−v / i` when `|i|` reaches the floor and the ratio is finite.
fn impedance(v: Complex64, i: Complex64, floor_a: f64) -> (Option<Impedance>, Option<String>) {
    let unresolved = || {
        Some(format!(
            "collector current {:.3e} A is below the numerical floor {:.3e} A",
            i.norm(),
            floor_a
        ))
    };
    if i.norm().is_nan() || i.norm() < floor_a {
        return (None, unresolved());
    }
    let z = -v / i;
    if z.re.is_finite() && z.im.is_finite() {
        (Some(Impedance { re: z.re, im: z.im }), None)
    } else {
        (None, unresolved())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn sign_convention_and_floor() {
        // A collector current of 1 A into the collector with V_ce = −50 V in
        // phase is a 50 Ω resistor seen from the collector (common practice:
        // a load absorbs the power the device delivers).
        let (z, why) = impedance(Complex64::new(-50.0, 0.0), Complex64::new(1.0, 0.0), 1e-6);
        assert!(why.is_none());
        let z = z.expect("resolved");
        assert_eq!((z.re, z.im), (50.0, 0.0));
        let (z, why) = impedance(Complex64::new(1.0, 0.0), Complex64::new(1e-9, 0.0), 1e-6);
        assert!(z.is_none());
        assert!(why.expect("a reason").contains("below the numerical floor"));
        let (z, _) = impedance(
            Complex64::new(1.0, 0.0),
            Complex64::new(f64::NAN, 0.0),
            1e-6,
        );
        assert!(z.is_none(), "a NaN current is never a figure");
    }
}
