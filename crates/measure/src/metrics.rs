//! Power-stage figures from one period: output harmonics, DC input,
//! efficiency, drive, transistor figures and component stress.
//!
//! Every figure is defined in docs/measurements.md. No figure is ever NaN:
//! a figure that is undefined for the given data is `None`, and a [`Note`]
//! in [`Metrics::notes`] says why.

use num_complex::Complex64;
use serde::Serialize;
use tankwave_circuit::{ElementId, ElementKind, ModelParams};

use crate::error::MeasureError;
use crate::period::{Period, PeriodData};
use crate::spectrum::{harmonic_power, mean, mean_product, rms, spectrum};
use crate::units::{dbc, dbm, vswr};

/// Options of [`measure`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MeasureParams {
    /// Conduction threshold as a fraction of the peak collector current:
    /// samples above it conduct, and each pulse edge is then followed down to
    /// its zero crossing (see [`conduction_angle_deg`]). Default 0.05 (5 %),
    /// above the ripple a K-harmonic reconstruction leaves in the off
    /// interval; see docs/measurements.md.
    pub conduction_threshold: f64,
}

impl Default for MeasureParams {
    fn default() -> Self {
        Self {
            conduction_threshold: 0.05,
        }
    }
}

/// Why a figure is missing.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Note {
    /// The figure (the requirement spelling, e.g. `gain`, `tj Q1`).
    pub figure: String,
    /// Why it was not measured.
    pub reason: String,
}

/// A complex impedance, Ω.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Impedance {
    /// Resistance, Ω.
    pub re: f64,
    /// Reactance, Ω.
    pub im: f64,
}

/// Power delivered to the output element at one harmonic.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct HarmonicPower {
    /// Harmonic number n (1 = fundamental).
    pub n: usize,
    /// Frequency n·f0, Hz.
    pub freq_hz: f64,
    /// Average power P_n = ½ Re(V_n I_n*), W.
    pub power_w: f64,
    /// The same in dBm (power floored at 1e-30 W).
    pub dbm: f64,
    /// Relative to the fundamental, dBc; `None` if the fundamental power is
    /// not positive, or if the harmonic is not resolved (below the floor).
    pub dbc: Option<f64>,
    /// Whether the level is above the numerical floor
    /// ([`OutputMetrics::floor_dbc`]); the fundamental always is.
    pub resolved: bool,
    /// Peak amplitude of the voltage across the output element at this harmonic, V.
    pub voltage_v: f64,
    /// Peak amplitude of the current through it, A.
    pub current_a: f64,
}

/// Figures at the output element.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct OutputMetrics {
    /// Output element name.
    pub element: String,
    /// Output element index.
    pub element_id: ElementId,
    /// Harmonics 1..=K, in order (index 0 is the fundamental).
    pub harmonics: Vec<HarmonicPower>,
    /// Power at the fundamental P_1, W.
    pub p1_w: f64,
    /// P_1 in dBm.
    pub p1_dbm: f64,
    /// Total harmonic power Σ_{n=2..K} P_n, W.
    pub harmonic_power_w: f64,
    /// DC power into the output element V_0·I_0, W.
    pub dc_power_w: f64,
    /// Total average power into the output element mean(v·i), W.
    pub total_power_w: f64,
    /// THD on power: sqrt(Σ_{n≥2} max(P_n, 0) / P_1), fraction; `None` if P_1 ≤ 0.
    pub thd: Option<f64>,
    /// The numerical floor at the output, dBc: `20·log10(δV/|V_1|)` with
    /// δV the solver's floor of the voltage across the output element (the
    /// level a harmonic of that amplitude has in a resistive load). A
    /// harmonic whose voltage amplitude is not above δV is not resolved.
    /// `None` when the solver gave no floor (or there is no carrier).
    pub floor_dbc: Option<f64>,
}

impl OutputMetrics {
    /// The level harmonic `h` is judged by against an upper limit, dBc: its
    /// measured level when resolved, the floor (an upper bound on the true
    /// level) when not; `None` without a carrier.
    pub fn judged_dbc(&self, h: &HarmonicPower) -> Option<f64> {
        if h.resolved {
            dbc(h.power_w, self.p1_w)
        } else {
            self.floor_dbc
        }
    }
}

/// Average power delivered by one supply (a source other than the drive).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SupplyPower {
    /// Source name.
    pub element: String,
    /// Source index.
    pub element_id: ElementId,
    /// Average power delivered into the circuit −mean(Σ v_k i_k), W.
    pub power_w: f64,
    /// Mean terminal voltage V_p − V_n, V.
    pub voltage_v: f64,
    /// Mean current delivered out of the p terminal into the circuit, A.
    pub current_a: f64,
}

/// How the transducer gain was referred.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub enum GainBasis {
    /// P_1,out / P_avs, P_avs = |Vs1|²/(8 Rs) the source's available power.
    AvailablePower,
    /// P_1,out / P_in (source without resistance: no available power is defined).
    InputPower,
}

/// Figures at the drive source, at the fundamental.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DriveMetrics {
    /// Drive source name.
    pub element: String,
    /// Drive source index.
    pub element_id: ElementId,
    /// Source resistance Rs, Ω (0 for an ideal source; `None` for a current source).
    pub source_resistance_ohm: Option<f64>,
    /// Peak fundamental voltage at the source terminals |V1|, V.
    pub v1_v: f64,
    /// Peak fundamental current delivered into the circuit |I1|, A.
    pub i1_a: f64,
    /// Power delivered into the circuit at the fundamental P_in = ½ Re(V1 I1*), W.
    pub pin_w: f64,
    /// Average power delivered into the circuit at all frequencies, W.
    pub average_power_w: f64,
    /// Peak open-circuit EMF at the fundamental |Vs1| = |V1 + Rs I1|, V (voltage sources).
    pub emf1_v: Option<f64>,
    /// Available power |Vs1|²/(8 Rs), W; `None` unless Rs > 0.
    pub pavs_w: Option<f64>,
    /// Large-signal input impedance Z = V1/I1 looking into the circuit, Ω.
    pub z_in: Option<Impedance>,
    /// Input VSWR against Rs (capped at `units::VSWR_CAP`); `None` unless Rs > 0.
    pub vswr: Option<f64>,
}

/// Figures of one bipolar transistor (signs flipped for pnp so that normal
/// operation reads positive).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TransistorMetrics {
    /// Element name.
    pub element: String,
    /// Element index.
    pub element_id: ElementId,
    /// true for pnp.
    pub pnp: bool,
    /// Conduction angle, degrees (0..=360): total conduction per period of
    /// the collector transport current, saturation notches bridged
    /// ([`conduction`]).
    pub conduction_deg: f64,
    /// Collector current pulses per period (a bridged notch does not split one).
    pub conduction_pulses: usize,
    /// Saturation notches bridged inside the pulses.
    pub conduction_notches: usize,
    /// Peak collector–emitter voltage, V.
    pub vce_peak_v: f64,
    /// Minimum collector–emitter voltage, V.
    pub vce_min_v: f64,
    /// Peak reverse base–emitter voltage max(−v_be), V (0 when the
    /// junction is never reversed): what an emitter–base breakdown rating
    /// is checked against.
    pub vbe_reverse_v: f64,
    /// Peak collector current, A.
    pub ic_peak_a: f64,
    /// Mean collector current (DC), A.
    pub ic_mean_a: f64,
    /// Average dissipation mean(Σ v_k i_k), W.
    pub dissipation_w: f64,
    /// Thermal resistance junction to ambient, K/W, if the model gives one.
    pub rth_k_per_w: Option<f64>,
    /// Junction temperature T_ambient + Rth·P_diss, K; `None` without Rth.
    /// With `analyze heat`, the self-consistent junction temperature.
    pub tj_k: Option<f64>,
    /// Peak junction temperature over the transmission of `analyze heat
    /// transmit=`, K; `None` (and left out of JSON) otherwise.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub tj_peak_k: Option<f64>,
    /// Peak avalanche multiplication M − 1 of the collector–base junction
    /// over the period (a part with `avalanche { cb_voltage= }`; set by the
    /// stage from the device, [`Metrics::set_multiplication`]); `None` (and
    /// left out of JSON) otherwise.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub multiplication_peak: Option<f64>,
}

/// What a stress row measures.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub enum StressQuantity {
    /// Peak |v| across a capacitor, V (rated by `rating_v`).
    PeakVoltage,
    /// RMS current through an inductor or capacitor, A (inductors rated by `rating_a`).
    RmsCurrent,
    /// Average power in a resistor, W (rated by `rating_w`).
    AveragePower,
    /// Peak collector–emitter voltage of a transistor, V (`max_vce`).
    VcePeak,
    /// Peak collector current, A (`max_ic`).
    IcPeak,
    /// Average dissipation, W (`max_power`).
    Dissipation,
    /// Junction temperature, K (`max_tj`).
    JunctionTemp,
    /// Peak reverse base–emitter voltage, V (`vbe_reverse_max`; a row only
    /// when the part is rated).
    VbeReverse,
    /// Peak collector–base voltage of a transistor, V (`vcb_max`; a row only
    /// when the part is rated).
    VcbPeak,
}

impl StressQuantity {
    /// A short label for people ("peak voltage", …).
    pub fn label(self) -> &'static str {
        match self {
            StressQuantity::PeakVoltage => "peak voltage",
            StressQuantity::RmsCurrent => "RMS current",
            StressQuantity::AveragePower => "average power",
            StressQuantity::VcePeak => "peak vce",
            StressQuantity::IcPeak => "peak ic",
            StressQuantity::Dissipation => "dissipation",
            StressQuantity::JunctionTemp => "junction temperature",
            StressQuantity::VbeReverse => "reverse vbe",
            StressQuantity::VcbPeak => "peak vcb",
        }
    }
}

/// One line of the component stress table.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StressRow {
    /// Element name.
    pub element: String,
    /// Element index.
    pub element_id: ElementId,
    /// What is measured.
    pub quantity: StressQuantity,
    /// The value, in `unit`.
    pub value: f64,
    /// Unit of `value` and `rating` ("V", "A", "W", "K").
    pub unit: String,
    /// The element's rating for this quantity, if rated.
    pub rating: Option<f64>,
    /// Fraction of the rating used (value / rating; for junction temperature
    /// the fraction of the allowed rise above ambient), if rated.
    pub fraction: Option<f64>,
    /// For a transistor's peak v_ce, which collector–emitter rating its
    /// base return selects and why (`None`: the part gives only one).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub basis: Option<crate::base_return::VceBasis>,
}

/// Every figure measured from one period.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Metrics {
    /// Fundamental frequency, Hz.
    pub freq_hz: f64,
    /// Harmonics measured K.
    pub harmonics: usize,
    /// Samples per period N.
    pub samples: usize,
    /// Output figures; `None` without a usable `output` element.
    pub output: Option<OutputMetrics>,
    /// Average power from each supply (every voltage or current source except the drive).
    pub supplies: Vec<SupplyPower>,
    /// Total supply power P_dc = Σ supplies, W.
    pub pdc_w: f64,
    /// Collector efficiency η = P_1,out / P_dc, fraction.
    pub efficiency: Option<f64>,
    /// Power-added efficiency (P_1,out − P_in)/P_dc, fraction.
    pub pae: Option<f64>,
    /// Drive figures; `None` without a usable `input` element.
    pub drive: Option<DriveMetrics>,
    /// Transducer gain, dB (see `gain_basis`).
    pub gain_db: Option<f64>,
    /// How `gain_db` was referred.
    pub gain_basis: Option<GainBasis>,
    /// Figures of each bipolar transistor, in element order.
    pub transistors: Vec<TransistorMetrics>,
    /// Component stress table, in element order.
    pub stress: Vec<StressRow>,
    /// Why figures are missing.
    pub notes: Vec<Note>,
    /// The two-tone figures of the file's first `analyze twotone` at full
    /// drive ([`crate::twotone`]), set by whoever ran it (`None`: none ran;
    /// left out of JSON then).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub two_tone: Option<crate::twotone::TwoToneMetrics>,
    /// The figures of the first `analyze keying`, set by whoever ran it
    /// (`None`: none ran; left out of JSON then).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub keying: Option<KeyingFigures>,
}

/// The figures of a keying (docs/measurements.md, "Keying"), measured on
/// the output envelope of envelope following over the last period of the
/// pattern.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct KeyingFigures {
    /// 10–90 % rise time of the output envelope, s (`None`: no full edge).
    pub rise_s: Option<f64>,
    /// 90–10 % fall time of the output envelope, s.
    pub fall_s: Option<f64>,
    /// Overshoot of the output envelope over its settled key-down level, a
    /// fraction.
    pub overshoot: Option<f64>,
    /// The band holding 99 % of the mean power, Hz (ITU Radio Regulations
    /// No. 1.153).
    pub occupied_bw_hz: Option<f64>,
    /// The occupied band's lower and upper edge, as offsets from the
    /// carrier, Hz.
    pub occupied_band_hz: Option<[f64; 2]>,
    /// The necessary bandwidth of telegraphy B·K, Hz (ITU Radio Regulations
    /// Appendix 1).
    pub necessary_bw_hz: f64,
    /// Key-down output power at the fundamental, W (the 0 dBc reference).
    pub key_down_w: f64,
    /// Offsets from the carrier of the sideband spectrum, Hz, ascending
    /// (negative below the carrier).
    pub sideband_offsets_hz: Vec<f64>,
    /// The sideband levels at those offsets, dBc against the key-down
    /// carrier, at the resolution bandwidth and window below.
    pub sideband_dbc: Vec<f64>,
    /// Resolution bandwidth of the levels, Hz.
    pub rbw_hz: f64,
    /// Spacing of the spectral lines of the periodic pattern, Hz.
    pub line_spacing_hz: f64,
    /// The window the levels were taken with.
    pub window: String,
}

impl Metrics {
    /// The note for `figure`, if one was recorded.
    pub fn note(&self, figure: &str) -> Option<&str> {
        self.notes
            .iter()
            .find(|n| n.figure == figure)
            .map(|n| n.reason.as_str())
    }
}

/// How steep the edge of a pulse must stay, as a fraction of its steepness
/// where it crosses the threshold, for the edge to be followed down to zero
/// (see [`conduction_angle_deg`]).
pub const EDGE_SLOPE_FRACTION: f64 = 0.25;

/// The conduction intervals of a current sampled uniformly over one period
/// of length `period` (sample k at k·period/N), as (start, end) times within
/// [0, period], sorted; an interval that wraps around the period end comes
/// back as two. The rule is the measurement rule of
/// [`conduction_angle_deg`] (docs/measurements.md): samples
/// above `threshold_fraction` × peak conduct; each pulse edge is followed
/// outward while the current stays positive and keeps falling steeply; the
/// boundary is the zero crossing of the line through the edge's last two
/// samples. The total length of the intervals is that conduction angle.
pub fn conduction_intervals(i: &[f64], period: f64, threshold_fraction: f64) -> Vec<(f64, f64)> {
    conduction(i, None, period, threshold_fraction).intervals
}

/// The conduction of a transistor over one period: what the conduction
/// angle counts (docs/measurements.md, "Conduction angle").
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Conduction {
    /// Conducting intervals (start, end) within [0, period], sorted; one that
    /// wraps around the period end comes back as two. Bridged notches are
    /// inside them.
    pub intervals: Vec<(f64, f64)>,
    /// Total conduction per period, degrees (0..=360): the summed length of
    /// the intervals.
    pub angle_deg: f64,
    /// Current pulses per period, a bridged notch not splitting its pulse.
    pub pulses: usize,
    /// Saturation notches bridged (dips of the current inside one pulse).
    pub notches: usize,
}

/// A run of conduction in sample units: start position and length (circular).
type Run = (f64, f64);

/// Conduction of current `i` sampled uniformly over one period of length
/// `period`, with the collector–emitter voltage `vce` over the same samples
/// when known.
///
/// Pulses are found as in [`conduction_intervals`]. A gap between two pulses
/// is a saturation notch, and counts as conduction, when `vce` stays below
/// its mean over the period at every sample inside the gap (the current dips
/// while the collector voltage is in its low half-cycle, where the transistor
/// saturates; the gap between real pulses holds the collector voltage crest,
/// which is above the mean, the supply voltage of a choke-fed stage). A gap
/// with no sample inside it is bridged too. At least one gap stays open, so a
/// period is never made fully conducting by bridging. Without `vce` no gap is
/// bridged and every lobe counts as a pulse.
pub fn conduction(
    i: &[f64],
    vce: Option<&[f64]>,
    period: f64,
    threshold_fraction: f64,
) -> Conduction {
    let n = i.len();
    if n == 0 || !(period.is_finite() && period > 0.0) {
        return Conduction::default();
    }
    let runs = match conduction_runs(i, threshold_fraction) {
        Some(r) => r,
        None => {
            return Conduction {
                intervals: vec![(0.0, period)],
                angle_deg: 360.0,
                pulses: 1,
                notches: 0,
            }
        }
    };
    let vce = vce.filter(|v| v.len() == n && v.iter().all(|x| x.is_finite()));
    let (runs, notches) = bridge_notches(runs, vce, n);
    let dt = period / n as f64;
    let mut intervals = Vec::new();
    for &(p0, len) in &runs {
        let len = len.clamp(0.0, n as f64);
        let (t0, t1) = (p0 * dt, (p0 + len) * dt);
        if t1 <= period {
            intervals.push((t0, t1));
        } else {
            intervals.push((t0, period));
            intervals.push((0.0, (t1 - period).min(period)));
        }
    }
    intervals.sort_by(|a, b| a.0.total_cmp(&b.0));
    let total: f64 = intervals.iter().map(|(a, b)| b - a).sum();
    Conduction {
        angle_deg: (total / period * 360.0).clamp(0.0, 360.0),
        pulses: runs.len(),
        notches,
        intervals,
    }
}

/// Join the runs across saturation notches (see [`conduction`]); returns the
/// joined runs and the number of gaps bridged.
fn bridge_notches(mut runs: Vec<Run>, vce: Option<&[f64]>, n: usize) -> (Vec<Run>, usize) {
    let Some(vce) = vce else {
        return (runs, 0);
    };
    if runs.len() < 2 {
        return (runs, 0);
    }
    runs.sort_by(|a, b| a.0.total_cmp(&b.0));
    let nf = n as f64;
    let mean = vce.iter().sum::<f64>() / nf;
    let m = runs.len();
    // gap g runs from the end of run g to the start of run g+1 (circular)
    let gaps: Vec<(f64, f64)> = (0..m)
        .map(|g| {
            let (p0, len) = runs[g];
            let end = p0 + len;
            let mut next = runs[(g + 1) % m].0;
            while next < end - nf {
                next += nf;
            }
            if g + 1 == m {
                next += nf;
            }
            (end, next)
        })
        .collect();
    let mut bridge: Vec<bool> = gaps
        .iter()
        .map(|&(a, b)| {
            let first = a.floor() as i64 + 1;
            let last = b.ceil() as i64 - 1;
            (first..=last).all(|k| {
                vce.get(k.rem_euclid(n as i64) as usize)
                    .is_some_and(|v| *v < mean)
            })
        })
        .collect();
    if bridge.iter().all(|b| *b) {
        // keep the longest gap open
        let longest = (0..m)
            .max_by(|&a, &b| (gaps[a].1 - gaps[a].0).total_cmp(&(gaps[b].1 - gaps[b].0)))
            .unwrap_or(0);
        if let Some(b) = bridge.get_mut(longest) {
            *b = false;
        }
    }
    let Some(open) = bridge.iter().position(|b| !b) else {
        return (runs, 0);
    };
    let mut out: Vec<Run> = Vec::new();
    let mut notches = 0;
    for k in 1..=m {
        let r = (open + k) % m;
        let (p0, len) = runs[r];
        let prev_gap = (r + m - 1) % m;
        match out.last_mut() {
            Some(last) if bridge[prev_gap] => {
                let end = gaps[r].0;
                let mut e = end;
                while e < last.0 {
                    e += nf;
                }
                last.1 = (e - last.0).min(nf);
                notches += 1;
            }
            _ => out.push((p0, len)),
        }
    }
    (out, notches)
}

/// The conducting runs of `i` (start, length) in sample units, by the rule of
/// [`conduction_intervals`]; `None` when every sample conducts, empty when
/// none does.
fn conduction_runs(i: &[f64], threshold_fraction: f64) -> Option<Vec<Run>> {
    let n = i.len();
    let peak = i.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    if n == 0 || !(peak.is_finite() && peak > 0.0) {
        return Some(Vec::new());
    }
    let frac = if threshold_fraction.is_finite() {
        threshold_fraction.clamp(0.0, 1.0)
    } else {
        0.0
    };
    let thr = frac * peak;
    let nn = n as isize;
    let idx = |k: isize| k.rem_euclid(nn) as usize;
    let at = |k: isize| i.get(idx(k)).copied().unwrap_or(0.0);
    let core = |k: isize| at(k) > thr;
    let count = (0..nn).filter(|&k| core(k)).count();
    if count == n {
        return None;
    }
    if count == 0 {
        return Some(Vec::new());
    }
    let mut claimed = vec![false; n];
    // boundary events in sample units: (position, rising?)
    let mut events: Vec<(f64, bool)> = Vec::new();
    for m in 0..nn {
        if !core(m) {
            continue;
        }
        for dir in [1isize, -1] {
            if core(m + dir) {
                continue;
            }
            let inner = if core(m - dir) {
                at(m - dir) - at(m)
            } else {
                0.0
            };
            let s0 = inner.max(at(m) - at(m + dir));
            let mut j = m;
            let mut walked = 0;
            while walked < nn
                && s0 > 0.0
                && !core(j + dir)
                && !claimed.get(idx(j + dir)).copied().unwrap_or(true)
                && at(j + dir) > 0.0
                && at(j) - at(j + dir) >= EDGE_SLOPE_FRACTION * s0
            {
                j += dir;
                walked += 1;
                if let Some(c) = claimed.get_mut(idx(j)) {
                    *c = true;
                }
            }
            let (a_in, a_j, a_out) = (at(j - dir), at(j), at(j + dir));
            let u = if a_in > a_j {
                a_j / (a_in - a_j)
            } else if a_out <= 0.0 && a_j > a_out {
                a_j / (a_j - a_out)
            } else {
                0.5
            };
            let u = if u.is_finite() {
                u.clamp(0.0, 1.0)
            } else {
                0.5
            };
            let pos = (j as f64 + dir as f64 * u).rem_euclid(n as f64);
            events.push((pos, dir < 0));
        }
    }
    events.sort_by(|a, b| a.0.total_cmp(&b.0));
    let mut out = Vec::new();
    let ne = events.len();
    for (k, &(p0, rising)) in events.iter().enumerate() {
        if !rising {
            continue;
        }
        // the next falling boundary in circular order closes this pulse
        let Some(&(p1, _)) = (1..=ne).map(|d| &events[(k + d) % ne]).find(|e| !e.1) else {
            continue;
        };
        out.push((p0, (p1 - p0).rem_euclid(n as f64)));
    }
    out.sort_by(|a, b| a.0.total_cmp(&b.0));
    Some(out)
}

/// Conduction angle of a current over one period, degrees.
///
/// 1. Samples above `threshold_fraction` × the peak current are conducting;
///    each stands for one sample interval centred on it.
/// 2. From each edge of a conducting run the edge is followed outward, sample
///    by sample, while the current stays positive and keeps falling by at
///    least [`EDGE_SLOPE_FRACTION`] of the step with which it crossed the
///    threshold. These samples conduct too. A slow positive tail (junction
///    charging current, leakage, ripple of a K-harmonic series) falls much
///    more slowly than the pulse edge and is not followed.
/// 3. The boundary is then placed at the zero crossing of the straight line
///    through the last two samples of the edge, clamped to the sample
///    interval beyond the last one.
///
/// On a truncated cosine the result is 2θ within the sampling resolution
/// (for 2θ up to 330° and thresholds of 1–20 %). A current that is never
/// positive gives 0°; one that never falls to the threshold gives 360°.
///
/// It is the total length of the [`conduction_intervals`] of one period.
pub fn conduction_angle_deg(i: &[f64], threshold_fraction: f64) -> f64 {
    conduction(i, None, 1.0, threshold_fraction).angle_deg
}

/// Supply power below which collector efficiency is not meaningful, W
/// (1 µW: a stage drawing less is off; common practice).
pub const EFFICIENCY_FLOOR_W: f64 = 1e-6;

/// Relative tolerance of the energy balance P_out ≤ P_dc + P_in: 1.2 % of
/// the power budget, the acceptance figure of the steady-state methods on
/// the fundamental (0.05 dB, tests/it/agreement.rs), so a solution the
/// methods accept never trips it.
pub const ENERGY_BALANCE_REL: f64 = 0.012;

/// Absolute tolerance of the energy balance, W (1 nW, below any figure shown).
pub const ENERGY_BALANCE_ABS_W: f64 = 1e-9;

fn note(notes: &mut Vec<Note>, figure: &str, reason: impl Into<String>) {
    notes.push(Note {
        figure: figure.to_string(),
        reason: reason.into(),
    });
}

fn finite(x: f64) -> Option<f64> {
    x.is_finite().then_some(x)
}

fn rating(r: Option<f64>) -> Option<f64> {
    r.filter(|v| v.is_finite() && *v > 0.0)
}

/// The fraction of a junction temperature rating used: of the allowed
/// rise above the ambient when the rating is above it, else of the rating.
fn junction_fraction(tj: f64, t_amb: f64, rating: f64) -> Option<f64> {
    if rating > t_amb {
        finite((tj - t_amb) / (rating - t_amb))
    } else {
        finite(tj / rating)
    }
}

impl Metrics {
    /// Set the peak avalanche multiplication M − 1 of transistor `id` over
    /// the period (the device's own law, evaluated by the stage at every
    /// sample of the solved period).
    pub fn set_multiplication(&mut self, id: ElementId, peak: f64) {
        for t in self.transistors.iter_mut().filter(|t| t.element_id == id) {
            t.multiplication_peak = Some(peak);
        }
    }

    /// Replace the junction temperature of transistor `id` (its figure and
    /// its stress row) by `tj_k`, and set its peak over a transmission:
    /// what the electrothermal steady state (`analyze heat`) found, in
    /// place of T_ambient + Rth·P. `ambient_k` is the ambient temperature.
    pub fn set_junction_temperature(
        &mut self,
        id: ElementId,
        tj_k: f64,
        tj_peak_k: Option<f64>,
        ambient_k: f64,
    ) {
        for t in self.transistors.iter_mut().filter(|t| t.element_id == id) {
            t.tj_k = Some(tj_k);
            t.tj_peak_k = tj_peak_k;
        }
        for row in self
            .stress
            .iter_mut()
            .filter(|r| r.element_id == id && r.quantity == StressQuantity::JunctionTemp)
        {
            row.value = tj_k;
            row.fraction = row
                .rating
                .and_then(|r| junction_fraction(tj_k, ambient_k, r));
        }
    }
}

fn stress_row(
    name: &str,
    id: ElementId,
    quantity: StressQuantity,
    value: f64,
    unit: &str,
    rated: Option<f64>,
) -> StressRow {
    let rated = rating(rated);
    StressRow {
        element: name.to_string(),
        element_id: id,
        quantity,
        value,
        unit: unit.to_string(),
        rating: rated,
        fraction: rated.and_then(|r| finite(value / r)),
        basis: None,
    }
}

/// Measure every figure of one period of a steady state.
pub fn measure(data: &PeriodData<'_>, params: &MeasureParams) -> Result<Metrics, MeasureError> {
    let p = Period::new(*data)?;
    let c = data.circuit;
    let k_max = data.harmonics;
    let f0 = data.freq;
    let mut notes = Vec::new();

    // ---- output ----
    let output = match c.output {
        None => {
            note(&mut notes, "pout", "no output element is declared");
            None
        }
        Some(id) => match c.elements.get(id.index()) {
            None => {
                note(
                    &mut notes,
                    "pout",
                    format!("output element index {} does not exist", id.index()),
                );
                None
            }
            Some(el) => {
                let terms = el.kind.terminals();
                if terms.len() != 2 {
                    note(
                        &mut notes,
                        "pout",
                        format!(
                            "output element {} has {} terminals; output power needs a two-terminal element",
                            el.name,
                            terms.len()
                        ),
                    );
                    None
                } else {
                    let v = p.across(terms[0], terms[1]);
                    let i = p.current(id, 0);
                    let sv = spectrum(&v, k_max)?;
                    let si = spectrum(i, k_max)?;
                    let powers: Vec<f64> = (1..=k_max)
                        .map(|n| harmonic_power(sv.phasor(n), si.phasor(n)))
                        .collect();
                    let p1 = powers.first().copied().unwrap_or(0.0);
                    let floor_v = p.floor_across(terms[0], terms[1]);
                    let v1 = sv.amplitude(1);
                    let floor_dbc = floor_v
                        .filter(|_| p1 > 0.0 && v1 > 0.0)
                        .and_then(|f| finite(20.0 * (f.max(1e-300) / v1).log10()));
                    let harmonics = powers
                        .iter()
                        .enumerate()
                        .map(|(idx, &pw)| {
                            let n = idx + 1;
                            let resolved = n == 1 || floor_v.is_none_or(|f| sv.amplitude(n) > f);
                            HarmonicPower {
                                n,
                                freq_hz: n as f64 * f0,
                                power_w: pw,
                                dbm: dbm(pw),
                                dbc: dbc(pw, p1).filter(|_| resolved),
                                resolved,
                                voltage_v: sv.amplitude(n),
                                current_a: si.amplitude(n),
                            }
                        })
                        .collect();
                    let harmonic_power_w: f64 = powers.iter().skip(1).sum();
                    let positive_harm: f64 = powers.iter().skip(1).map(|x| x.max(0.0)).sum();
                    let thd = if p1 > 0.0 {
                        finite((positive_harm / p1).sqrt())
                    } else {
                        note(
                            &mut notes,
                            "thd",
                            format!("fundamental output power is {p1:e} W, not positive"),
                        );
                        None
                    };
                    if p1 <= 0.0 {
                        note(
                            &mut notes,
                            "harmonics",
                            format!(
                                "fundamental output power is {p1:e} W: no carrier to refer dBc to"
                            ),
                        );
                    }
                    Some(OutputMetrics {
                        element: el.name.clone(),
                        element_id: id,
                        harmonics,
                        p1_w: p1,
                        p1_dbm: dbm(p1),
                        harmonic_power_w,
                        dc_power_w: sv.dc() * si.dc(),
                        total_power_w: mean_product(&v, i),
                        thd,
                        floor_dbc,
                    })
                }
            }
        },
    };
    let p1_out = output.as_ref().map(|o| o.p1_w);

    // ---- supplies ----
    let mut supplies = Vec::new();
    for (id, el) in c.element_ids() {
        let (pn, nn) = match &el.kind {
            ElementKind::VoltageSource { p, n, .. } | ElementKind::CurrentSource { p, n, .. } => {
                (*p, *n)
            }
            _ => continue,
        };
        if c.input == Some(id) {
            continue;
        }
        supplies.push(SupplyPower {
            element: el.name.clone(),
            element_id: id,
            power_w: -mean(&p.absorbed(id)),
            voltage_v: mean(&p.across(pn, nn)),
            current_a: -mean(p.current(id, 0)),
        });
    }
    let pdc_w: f64 = supplies.iter().map(|s| s.power_w).sum();

    // ---- drive ----
    let drive = match c.input {
        None => {
            note(&mut notes, "input_vswr", "no input element is declared");
            None
        }
        Some(id) => match c.elements.get(id.index()).map(|e| (e, &e.kind)) {
            Some((
                el,
                ElementKind::VoltageSource {
                    p: pn, n: nn, rs, ..
                },
            )) => Some(drive_metrics(
                &p,
                id,
                &el.name,
                *pn,
                *nn,
                Some(*rs),
                &mut notes,
            )?),
            Some((el, ElementKind::CurrentSource { p: pn, n: nn, .. })) => {
                Some(drive_metrics(&p, id, &el.name, *pn, *nn, None, &mut notes)?)
            }
            Some((el, _)) => {
                note(
                    &mut notes,
                    "input_vswr",
                    format!("input element {} is not a source", el.name),
                );
                None
            }
            None => {
                note(
                    &mut notes,
                    "input_vswr",
                    format!("input element index {} does not exist", id.index()),
                );
                None
            }
        },
    };

    // ---- efficiency, PAE, gain ----
    let efficiency = match p1_out {
        Some(_) if pdc_w > 0.0 && pdc_w < EFFICIENCY_FLOOR_W => {
            note(
                &mut notes,
                "efficiency",
                format!(
                    "not meaningful: supply power {pdc_w:.3e} W is below the floor of \
                     {EFFICIENCY_FLOOR_W:.0e} W"
                ),
            );
            None
        }
        Some(po) if pdc_w > 0.0 && po >= pdc_w => {
            note(
                &mut notes,
                "efficiency",
                format!(
                    "not meaningful: drive power feeds through to the output \
                     (output {po:.3e} W >= supply {pdc_w:.3e} W)"
                ),
            );
            None
        }
        Some(po) if pdc_w > 0.0 => finite(po / pdc_w),
        Some(_) => {
            note(
                &mut notes,
                "efficiency",
                format!("supply power is {pdc_w:e} W, not positive"),
            );
            None
        }
        None => {
            note(
                &mut notes,
                "efficiency",
                "no output power (no output element)",
            );
            None
        }
    };
    if let (Some(po), Some(d)) = (p1_out, &drive) {
        let budget = pdc_w.max(0.0) + d.pin_w.max(0.0);
        let tol_w = ENERGY_BALANCE_REL * budget + ENERGY_BALANCE_ABS_W;
        if po > budget + tol_w {
            return Err(MeasureError::EnergyBalance {
                pout_w: po,
                pdc_w,
                pin_w: d.pin_w,
                tol_w,
            });
        }
    }
    let pae = match (p1_out, &drive) {
        (Some(po), Some(d)) if pdc_w > 0.0 => finite((po - d.pin_w) / pdc_w),
        (None, _) => {
            note(&mut notes, "pae", "no output power (no output element)");
            None
        }
        (_, None) => {
            note(&mut notes, "pae", "no drive source (no input element)");
            None
        }
        _ => {
            note(
                &mut notes,
                "pae",
                format!("supply power is {pdc_w:e} W, not positive"),
            );
            None
        }
    };
    let (gain_db, gain_basis) = match (p1_out, &drive) {
        (Some(po), Some(d)) => {
            let (den, basis) = match d.pavs_w {
                Some(pa) => (pa, GainBasis::AvailablePower),
                None => (d.pin_w, GainBasis::InputPower),
            };
            if po > 0.0 && den > 0.0 {
                (finite(10.0 * (po / den).log10()), Some(basis))
            } else {
                note(
                    &mut notes,
                    "gain",
                    format!(
                        "output power {po:e} W and reference power {den:e} W must both be positive"
                    ),
                );
                (None, None)
            }
        }
        (None, _) => {
            note(&mut notes, "gain", "no output power (no output element)");
            (None, None)
        }
        (_, None) => {
            note(&mut notes, "gain", "no drive source (no input element)");
            (None, None)
        }
    };

    // ---- transistors and stress ----
    let mut transistors = Vec::new();
    let mut stress = Vec::new();
    let t_amb = c.temperature_k;
    for (id, el) in c.element_ids() {
        match &el.kind {
            ElementKind::Capacitor {
                a,
                b,
                rating_v,
                rating_a,
                ..
            } => {
                let v = p.across(*a, *b);
                let vpk = v.iter().fold(0.0f64, |m, x| m.max(x.abs()));
                stress.push(stress_row(
                    &el.name,
                    id,
                    StressQuantity::PeakVoltage,
                    vpk,
                    "V",
                    *rating_v,
                ));
                stress.push(stress_row(
                    &el.name,
                    id,
                    StressQuantity::RmsCurrent,
                    rms(p.current(id, 0)),
                    "A",
                    *rating_a,
                ));
            }
            ElementKind::Inductor { rating_a, .. } => {
                stress.push(stress_row(
                    &el.name,
                    id,
                    StressQuantity::RmsCurrent,
                    rms(p.current(id, 0)),
                    "A",
                    *rating_a,
                ));
            }
            ElementKind::Resistor { rating_w, .. } => {
                stress.push(stress_row(
                    &el.name,
                    id,
                    StressQuantity::AveragePower,
                    mean(&p.absorbed(id)),
                    "W",
                    *rating_w,
                ));
            }
            ElementKind::Bjt {
                c: nc,
                b: nb,
                e: ne,
                model,
                ..
            } => {
                let bp = match c.models.get(model.index()).map(|m| &m.params) {
                    Some(ModelParams::Bjt(bp)) => Some(bp),
                    _ => {
                        note(
                            &mut notes,
                            &format!("tj {}", el.name),
                            format!(
                                "model #{} of {} is not a bipolar model",
                                model.index(),
                                el.name
                            ),
                        );
                        None
                    }
                };
                let pnp = bp.map(|b| b.pnp).unwrap_or(false);
                let s = if pnp { -1.0 } else { 1.0 };
                let ic: Vec<f64> = p.current(id, 0).iter().map(|x| s * x).collect();
                let vce: Vec<f64> = p.across(*nc, *ne).iter().map(|x| s * x).collect();
                let vce_peak = vce.iter().copied().fold(f64::NEG_INFINITY, f64::max);
                let vce_min = vce.iter().copied().fold(f64::INFINITY, f64::min);
                let vbe_reverse = p.across(*nb, *ne).iter().fold(0.0f64, |m, x| m.max(-s * x));
                let ic_peak = ic.iter().copied().fold(f64::NEG_INFINITY, f64::max);
                let diss = mean(&p.absorbed(id));
                let rth = bp.and_then(|b| b.thermal_resistance());
                let tj = match rth {
                    Some(r) if t_amb.is_finite() => finite(t_amb + r * diss),
                    Some(_) => {
                        note(
                            &mut notes,
                            &format!("tj {}", el.name),
                            format!("ambient temperature {t_amb} K is not finite"),
                        );
                        None
                    }
                    None => {
                        note(
                            &mut notes,
                            &format!("tj {}", el.name),
                            format!("model of {} gives no thermal resistance", el.name),
                        );
                        None
                    }
                };
                // conduction is measured on the transport current when the
                // solver gave it (the terminal current also carries the
                // junction charging current)
                let it: Vec<f64> = match p.transport(id) {
                    Some(t) => t.iter().map(|x| s * x).collect(),
                    None => ic.clone(),
                };
                let cond = conduction(&it, Some(&vce), 1.0, params.conduction_threshold);
                let t = TransistorMetrics {
                    element: el.name.clone(),
                    element_id: id,
                    pnp,
                    conduction_deg: cond.angle_deg,
                    conduction_pulses: cond.pulses,
                    conduction_notches: cond.notches,
                    vce_peak_v: vce_peak,
                    vce_min_v: vce_min,
                    vbe_reverse_v: vbe_reverse,
                    ic_peak_a: ic_peak,
                    ic_mean_a: mean(&ic),
                    dissipation_w: diss,
                    rth_k_per_w: rth,
                    tj_k: tj,
                    tj_peak_k: None,
                    multiplication_peak: None,
                };
                let (mv, mi, mp, mt) = bp
                    .map(|b| (b.max_vce, b.max_ic, b.max_power, b.max_tj))
                    .unwrap_or((f64::INFINITY, f64::INFINITY, f64::INFINITY, f64::INFINITY));
                // the collector–emitter rating the base return selects
                let (mv, basis) = match bp {
                    Some(b) => crate::base_return::vce_rating(
                        b,
                        crate::base_return::base_return(c, *nb, *ne),
                    ),
                    None => (mv, None),
                };
                let mut row = stress_row(
                    &el.name,
                    id,
                    StressQuantity::VcePeak,
                    vce_peak,
                    "V",
                    Some(mv),
                );
                row.basis = basis;
                stress.push(row);
                stress.push(stress_row(
                    &el.name,
                    id,
                    StressQuantity::IcPeak,
                    ic_peak,
                    "A",
                    Some(mi),
                ));
                stress.push(stress_row(
                    &el.name,
                    id,
                    StressQuantity::Dissipation,
                    diss,
                    "W",
                    Some(mp),
                ));
                // reverse base–emitter voltage: a row only for a rated part
                // (the demo stages' golden tables keep their rows)
                if let Some(mr) = bp.map(|b| b.max_vbe_reverse).filter(|r| r.is_finite()) {
                    stress.push(stress_row(
                        &el.name,
                        id,
                        StressQuantity::VbeReverse,
                        vbe_reverse,
                        "V",
                        Some(mr),
                    ));
                }
                // collector–base voltage: a row only for a rated part
                if let Some(mcb) = bp.map(|b| b.max_vcb).filter(|r| r.is_finite()) {
                    let vcb_peak = p
                        .across(*nc, *nb)
                        .iter()
                        .fold(f64::NEG_INFINITY, |m, x| m.max(s * x));
                    stress.push(stress_row(
                        &el.name,
                        id,
                        StressQuantity::VcbPeak,
                        vcb_peak,
                        "V",
                        Some(mcb),
                    ));
                }
                if let Some(tj) = tj {
                    let mut row = stress_row(
                        &el.name,
                        id,
                        StressQuantity::JunctionTemp,
                        tj,
                        "K",
                        Some(mt),
                    );
                    row.fraction = row.rating.and_then(|r| junction_fraction(tj, t_amb, r));
                    stress.push(row);
                }
                transistors.push(t);
            }
            _ => {}
        }
    }

    Ok(Metrics {
        freq_hz: f0,
        harmonics: k_max,
        samples: p.samples,
        output,
        supplies,
        pdc_w,
        efficiency,
        pae,
        drive,
        gain_db,
        gain_basis,
        transistors,
        stress,
        notes,
        two_tone: None,
        keying: None,
    })
}

fn drive_metrics(
    p: &Period<'_>,
    id: ElementId,
    name: &str,
    pn: tankwave_circuit::NodeId,
    nn: tankwave_circuit::NodeId,
    rs: Option<f64>,
    notes: &mut Vec<Note>,
) -> Result<DriveMetrics, MeasureError> {
    let k = p.data.harmonics;
    let v = p.across(pn, nn);
    // Current delivered out of the p terminal into the circuit.
    let i_out: Vec<f64> = p.current(id, 0).iter().map(|x| -x).collect();
    let sv = spectrum(&v, k)?;
    let si = spectrum(&i_out, k)?;
    let v1 = sv.phasor(1);
    let i1 = si.phasor(1);
    let pin_w = harmonic_power(v1, i1);
    let z = v1 / i1;
    let z_in = if i1.norm() > 0.0 && z.re.is_finite() && z.im.is_finite() {
        Some(Impedance { re: z.re, im: z.im })
    } else {
        note(
            notes,
            "input_vswr",
            format!(
                "fundamental drive current is {:e} A: no input impedance",
                i1.norm()
            ),
        );
        None
    };
    let rs_ok = rs.filter(|r| r.is_finite() && *r > 0.0);
    let emf1: Option<Complex64> = rs.filter(|r| r.is_finite()).map(|r| v1 + i1 * r);
    let pavs_w = match (rs_ok, emf1) {
        (Some(r), Some(e)) => finite(e.norm_sqr() / (8.0 * r)),
        _ => None,
    };
    let vswr_v = match (rs_ok, z_in) {
        (Some(r), Some(zi)) => vswr(Complex64::new(zi.re, zi.im), r),
        (None, _) => {
            note(
                notes,
                "input_vswr",
                "the drive source has no source resistance to refer the VSWR to",
            );
            None
        }
        _ => None,
    };
    Ok(DriveMetrics {
        element: name.to_string(),
        element_id: id,
        source_resistance_ohm: rs,
        v1_v: v1.norm(),
        i1_a: i1.norm(),
        pin_w,
        average_power_w: -mean(&p.absorbed(id)),
        emf1_v: emf1.map(|e| e.norm()),
        pavs_w,
        z_in,
        vswr: vswr_v,
    })
}
