//! Keying figures of a keyed (CW) carrier, from its sampled complex envelope.
//!
//! The input is the output's complex envelope a(t) — the fundamental phasor
//! of the output voltage — sampled at uniform slow-time steps `dt`. This
//! module only measures; it does not solve or print. Every figure is
//! defined in docs/measurements.md ("Keying") with its source:
//!
//! * **Edges** ([`try_keying_edges`]): from the magnitude |a| of one key-down
//!   pulse (or the first pulse of a train), the rise and fall times between
//!   10 % and 90 % of the settled key-down level (linear interpolation
//!   between samples), the width at half that level, and the overshoot of
//!   the peak over it, in per cent. The *settled key-down level* is the
//!   median of the middle half of the key-down interval, the interval being
//!   where |a| stays at or above half its peak from its first rise through
//!   half the peak (common practice; our wording).
//! * **Sideband spectrum** ([`try_sideband_spectrum`]): the record is
//!   exactly one period T of a periodic dot train (N samples, the first
//!   sample not repeated at the end), so the RF spectrum around the carrier
//!   is a line spectrum at offsets m/T whose line powers are |c_m|², c_m the
//!   Fourier coefficients of a(t). Levels are in dBc against the key-down
//!   carrier |A|², as a swept analyser with a rectangular (brick-wall)
//!   resolution filter of width RBW would show them at each line offset;
//!   see [`SidebandParams`] and [`SpectrumWindow`] for the filter and the
//!   windows, and [`DBC_FLOOR`] for the floor.
//! * **Occupied bandwidth** ([`OccupiedBand`]): the 99 % band of the exact
//!   line powers (ITU Radio Regulations, Article 1, No. 1.153).
//! * **Necessary bandwidth** of telegraphy, B·K ([`necessary_bandwidth_hz`],
//!   ITU Radio Regulations, Appendix 1).
//! * **Sideband mask** ([`SidebandMask`], [`sideband_margin`]): a limit in
//!   dBc piecewise-linear in the offset, and the worst margin of a
//!   spectrum against it (positive passes).
//!
//! Every function returns a [`KeyingError`] carrying the numbers that
//! explain a refusal; none panics, and no level is NaN or infinite.
//!
//! ```
//! use num_complex::Complex64;
//! use tankwave_measure::keying::{
//!     try_keying_edges, try_sideband_spectrum, SidebandMask, SidebandParams, sideband_margin,
//! };
//! // One period (40 ms) of a dot train sampled every 0.1 ms: key-down for
//! // 20 ms with linear edges of 2 ms, key-up for the rest.
//! let dt = 1e-4;
//! let env: Vec<Complex64> = (0..400)
//!     .map(|n| {
//!         let t = n as f64 * dt;
//!         let up = ((t - 0.005) / 0.002).clamp(0.0, 1.0);
//!         let down = ((0.027 - t) / 0.002).clamp(0.0, 1.0);
//!         Complex64::new(up.min(down), 0.0)
//!     })
//!     .collect();
//! let mag: Vec<f64> = env.iter().map(|a| a.norm()).collect();
//! let edges = try_keying_edges(&mag, dt).expect("one full pulse");
//! // 10 % to 90 % of a 2 ms linear ramp: 1.6 ms.
//! assert!((edges.rise_s - 1.6e-3).abs() < 1e-9);
//! let s = try_sideband_spectrum(&env, dt, &SidebandParams::default()).expect("a spectrum");
//! assert_eq!(s.line_spacing_hz, 25.0);
//! let mask = SidebandMask::symmetric(&[(100.0, -20.0), (1000.0, -40.0)]).expect("a mask");
//! let margin = sideband_margin(&s, &mask).expect("the mask covers the spectrum");
//! assert!(margin.worst_margin_db.is_finite());
//! ```

use num_complex::Complex64;
use rustfft::FftPlanner;
use serde::Serialize;
use thiserror::Error;

/// The lowest level reported, dBc: a line weaker than this (or of zero
/// power) reads as this floor instead of −∞.
pub const DBC_FLOOR: f64 = -300.0;

/// Fewest samples a record may have: a key-down interval needs at least
/// this many samples for its middle half (project choice).
pub const MIN_SAMPLES: usize = 4;

/// The edge thresholds, as fractions of the settled key-down level: the
/// rise and fall times run from 10 % to 90 % (common practice).
pub const EDGE_LOW: f64 = 0.1;
/// Upper edge threshold, fraction of the settled key-down level.
pub const EDGE_HIGH: f64 = 0.9;
/// The level the pulse width is read at, fraction of the settled key-down level.
pub const EDGE_HALF: f64 = 0.5;

/// Fraction of the total mean power inside the occupied band: 99 %, so
/// 0.5 % lies below the lower limit and 0.5 % above the upper (ITU Radio
/// Regulations, Article 1, No. 1.153).
pub const OCCUPIED_FRACTION: f64 = 0.99;

/// The factor K of the necessary bandwidth B·K of Morse telegraphy on a
/// fading circuit (ITU Radio Regulations, Appendix 1).
pub const K_FADING: f64 = 5.0;

/// Why keying figures cannot be measured, with the numbers that explain it.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum KeyingError {
    /// The record is shorter than [`MIN_SAMPLES`].
    #[error("the record has {samples} samples; at least {need} are needed")]
    TooFewSamples {
        /// Samples given.
        samples: usize,
        /// The least accepted.
        need: usize,
    },
    /// The sample step is not finite and positive, or the record's length
    /// or its line offsets overflow.
    #[error("sample step {dt_s:e} s over {samples} samples gives no usable time base")]
    BadStep {
        /// The step given, s.
        dt_s: f64,
        /// Samples in the record.
        samples: usize,
    },
    /// A sample is NaN or infinite.
    #[error("sample {index} is not finite ({value})")]
    NotFinite {
        /// Sample index.
        index: usize,
        /// The offending value (the real or imaginary part for a complex sample).
        value: f64,
    },
    /// A magnitude sample is negative.
    #[error("magnitude sample {index} is negative ({value})")]
    Negative {
        /// Sample index.
        index: usize,
        /// The value.
        value: f64,
    },
    /// The envelope is zero throughout: no key-down to refer to.
    #[error("the envelope's peak is {peak}: there is no key-down carrier")]
    NoKeyDown {
        /// The largest magnitude in the record.
        peak: f64,
    },
    /// The record does not start below the edge threshold, so the rising
    /// edge is not wholly inside it.
    #[error(
        "no full rising edge: the record starts at {first} (or never rises through {threshold} \
         from below)"
    )]
    NoRisingEdge {
        /// The first magnitude sample.
        first: f64,
        /// The threshold the edge must rise through.
        threshold: f64,
    },
    /// The envelope does not fall back below the edge threshold after the
    /// key-down interval, so the falling edge is not wholly inside the record.
    #[error(
        "no full falling edge: the record ends at {last}, not below {threshold} after key-down"
    )]
    NoFallingEdge {
        /// The last magnitude sample.
        last: f64,
        /// The threshold the edge must fall through.
        threshold: f64,
    },
    /// The key-down interval is too short to tell its settled level.
    #[error("the key-down interval has {samples} samples; at least {need} are needed")]
    KeyDownTooShort {
        /// Samples at or above half the peak.
        samples: usize,
        /// The least accepted.
        need: usize,
    },
    /// A given key-down amplitude is not finite and positive (or is out of
    /// range against the record's scale).
    #[error("key-down amplitude {amplitude} is not usable (finite and positive needed)")]
    BadKeyDown {
        /// The amplitude given or measured.
        amplitude: f64,
    },
    /// The resolution bandwidth is not finite and positive.
    #[error("resolution bandwidth {rbw_hz} Hz is not finite and positive")]
    BadRbw {
        /// The RBW given, Hz.
        rbw_hz: f64,
    },
    /// The largest offset shown is NaN or negative.
    #[error("largest offset {max_offset_hz} Hz is not a non-negative number")]
    BadMaxOffset {
        /// The offset given, Hz.
        max_offset_hz: f64,
    },
    /// A mask has no points on a side.
    #[error("the sideband mask has no points on its {side} side")]
    MaskEmpty {
        /// Which side ("lower" or "upper").
        side: &'static str,
    },
    /// A mask offset is NaN, negative, or not larger than the one before.
    #[error(
        "sideband mask {side} point {index}: offset {offset_hz} Hz must be finite, \
         non-negative and above the previous {previous_hz} Hz"
    )]
    MaskOffset {
        /// Which side.
        side: &'static str,
        /// Point index.
        index: usize,
        /// The offset, Hz.
        offset_hz: f64,
        /// The previous offset, Hz (−∞ for the first point).
        previous_hz: f64,
    },
    /// A mask level is NaN or infinite.
    #[error("sideband mask {side} point {index}: level {level_dbc} dBc is not finite")]
    MaskLevel {
        /// Which side.
        side: &'static str,
        /// Point index.
        index: usize,
        /// The level, dBc.
        level_dbc: f64,
    },
    /// No offset of the spectrum lies under the mask.
    #[error(
        "the mask starts at {mask_from_hz} Hz from the carrier but the spectrum shows offsets \
         only to {shown_to_hz} Hz"
    )]
    MaskNotCovered {
        /// The nearest offset the mask constrains, Hz.
        mask_from_hz: f64,
        /// The largest distance from the carrier the spectrum shows, Hz.
        shown_to_hz: f64,
    },
    /// A keying speed or a factor K that is not finite and positive, or a
    /// product that overflows.
    #[error("necessary bandwidth: speed {baud} Bd and factor K = {k} must be finite and positive")]
    BadTelegraphy {
        /// Speed, Bd.
        baud: f64,
        /// The factor K.
        k: f64,
    },
}

/// Rise, fall, width and overshoot of one key-down pulse.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct KeyingEdges {
    /// Time from 10 % to 90 % of the settled key-down level on the rising edge, s.
    pub rise_s: f64,
    /// Time from 90 % to 10 % of the settled key-down level on the falling edge, s.
    pub fall_s: f64,
    /// Width between the 50 % crossings of the rising and falling edges, s.
    pub width_s: f64,
    /// Peak of the pulse over the settled key-down level, % (0 when none).
    pub overshoot_pct: f64,
    /// The settled key-down level (median of the middle half of the
    /// key-down interval), in the unit of the samples.
    pub key_down_amplitude: f64,
}

/// The window applied to the record before its lines are taken.
///
/// The record is exactly one period, so [`SpectrumWindow::Rectangular`]
/// (the default) gives the exact lines. The others, for a record whose
/// period is not exact, are the periodic (DFT-even) forms of F. J. Harris,
/// "On the use of windows for harmonic analysis with the discrete Fourier
/// transform", Proc. IEEE 66(1), 1978: w\[n\] = Σ_k (−1)^k a_k cos(2πkn/N).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum SpectrumWindow {
    /// No window (w = 1): exact for a record of exactly one period.
    #[default]
    Rectangular,
    /// Hann: a = [0.5, 0.5].
    Hann,
    /// Four-term Blackman–Harris (the −92 dB one): a = [0.35875, 0.48829,
    /// 0.14128, 0.01168].
    BlackmanHarris,
}

impl SpectrumWindow {
    /// Every window, in declaration order.
    pub const ALL: [SpectrumWindow; 3] = [
        SpectrumWindow::Rectangular,
        SpectrumWindow::Hann,
        SpectrumWindow::BlackmanHarris,
    ];

    /// The cosine-sum coefficients a_k (Harris 1978, from memory; checked
    /// against scipy.signal.windows in tests/reference/keying/).
    pub fn coefficients(self) -> &'static [f64] {
        match self {
            SpectrumWindow::Rectangular => &[1.0],
            SpectrumWindow::Hann => &[0.5, 0.5],
            SpectrumWindow::BlackmanHarris => &[0.35875, 0.48829, 0.14128, 0.01168],
        }
    }

    /// The N window samples w\[n\], n = 0..N.
    pub fn samples(self, n: usize) -> Vec<f64> {
        let a = self.coefficients();
        (0..n)
            .map(|i| {
                let x = 2.0 * std::f64::consts::PI * i as f64 / n as f64;
                a.iter()
                    .enumerate()
                    .map(|(k, ak)| {
                        let s = if k.is_multiple_of(2) { 1.0 } else { -1.0 };
                        s * ak * (k as f64 * x).cos()
                    })
                    .sum()
            })
            .collect()
    }

    /// Coherent gain Σw/N: the factor a line's amplitude is scaled by, and
    /// corrected for (Harris 1978, table 1).
    pub fn coherent_gain(self, n: usize) -> f64 {
        if n == 0 {
            return 1.0;
        }
        self.samples(n).iter().sum::<f64>() / n as f64
    }

    /// Equivalent noise bandwidth in bins, N·Σw²/(Σw)² (Harris 1978, table 1).
    pub fn enbw_bins(self, n: usize) -> f64 {
        let w = self.samples(n);
        let s: f64 = w.iter().sum();
        if s == 0.0 {
            return 1.0;
        }
        n as f64 * w.iter().map(|v| v * v).sum::<f64>() / (s * s)
    }
}

/// How the sideband spectrum is viewed.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct SidebandParams {
    /// Resolution bandwidth, Hz: the width of the rectangular filter whose
    /// power is shown at each offset. `None` (the default): the line spacing
    /// 1/T, so each offset shows its own line alone.
    pub rbw_hz: Option<f64>,
    /// The window (default rectangular, exact for one period).
    pub window: SpectrumWindow,
    /// Largest distance from the carrier shown, Hz; `None` (the default):
    /// every line the record resolves, up to N/(2T).
    pub max_offset_hz: Option<f64>,
    /// The key-down carrier amplitude |A| the levels refer to, in the unit
    /// of the samples; `None` (the default): measured from the record, as
    /// the settled key-down level of the record turned to start at its
    /// smallest magnitude (a record that never falls below half its peak is
    /// all key-down, and its level is the median of every sample).
    pub key_down_amplitude: Option<f64>,
}

/// The 99 % occupied band of a line spectrum.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct OccupiedBand {
    /// Lower limit, Hz from the carrier (negative below it).
    pub lower_hz: f64,
    /// Upper limit, Hz from the carrier.
    pub upper_hz: f64,
    /// Width `upper_hz − lower_hz`, Hz.
    pub width_hz: f64,
    /// The fraction of the total mean power inside ([`OCCUPIED_FRACTION`]).
    pub fraction: f64,
}

/// The sideband spectrum of one period of a keyed carrier.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SidebandSpectrum {
    /// The offsets shown, Hz from the carrier, rising: the line offsets m/T
    /// within ±`max_offset_hz`.
    pub offsets_hz: Vec<f64>,
    /// The level shown at each offset, dBc (floored at [`DBC_FLOOR`]): the
    /// windowed lines inside the RBW filter centred there, calibrated so a
    /// lone line reads its own power.
    pub dbc: Vec<f64>,
    /// The line spacing 1/T, Hz.
    pub line_spacing_hz: f64,
    /// The resolution bandwidth used, Hz (the line spacing when none was given).
    pub rbw_hz: f64,
    /// The window used.
    pub window: SpectrumWindow,
    /// The key-down amplitude |A| the levels refer to, in the unit of the samples.
    pub key_down_amplitude: f64,
    /// Every line the record resolves, Hz from the carrier: m/T for
    /// m = −⌊N/2⌋..=⌊N/2⌋ (for even N the line at N/(2T) is one bin shared
    /// by both ends, its power split equally between them).
    pub line_offsets_hz: Vec<f64>,
    /// The exact power of each line (no window, no RBW), dBc, floored at [`DBC_FLOOR`].
    pub line_dbc: Vec<f64>,
    /// The 99 % occupied band of the exact line powers.
    pub occupied: OccupiedBand,
}

/// A sideband mask: the highest level allowed, dBc, against the distance
/// from the carrier, piecewise-linear in Hz between its points.
///
/// Each side is a list of (distance from the carrier in Hz, largest level
/// in dBc) points with distances non-negative and strictly rising. Nearer
/// the carrier than a side's first point nothing is constrained; beyond its
/// last point the last level holds. A symmetric mask uses one list for
/// both sides.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SidebandMask {
    lower: Vec<(f64, f64)>,
    upper: Vec<(f64, f64)>,
}

/// The worst margin of a sideband spectrum against a mask.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SidebandMargin {
    /// Allowed − shown level at the worst offset, dB (positive passes).
    pub worst_margin_db: f64,
    /// The worst offset, Hz from the carrier.
    pub at_offset_hz: f64,
    /// The level shown there, dBc.
    pub level_dbc: f64,
    /// The limit there, dBc.
    pub limit_dbc: f64,
    /// Offsets checked (those the mask constrains).
    pub checked: usize,
    /// Whether every checked offset meets the mask (margin ≥ 0).
    pub pass: bool,
}

fn check_step(dt_s: f64, samples: usize) -> Result<f64, KeyingError> {
    let period = dt_s * samples as f64;
    if !(dt_s.is_finite() && dt_s > 0.0 && period.is_finite() && (1.0 / dt_s).is_finite()) {
        return Err(KeyingError::BadStep { dt_s, samples });
    }
    Ok(period)
}

fn check_magnitudes(m: &[f64]) -> Result<(), KeyingError> {
    if m.len() < MIN_SAMPLES {
        return Err(KeyingError::TooFewSamples {
            samples: m.len(),
            need: MIN_SAMPLES,
        });
    }
    for (index, &value) in m.iter().enumerate() {
        if !value.is_finite() {
            return Err(KeyingError::NotFinite { index, value });
        }
        if value < 0.0 {
            return Err(KeyingError::Negative { index, value });
        }
    }
    Ok(())
}

/// The key-down interval `[r, f)` (first rise to half the peak, first fall
/// below it after) and its settled level (median of the middle half).
/// `periodic`: a record that never falls back ends its interval at the end.
fn settled_level(m: &[f64], periodic: bool) -> Result<(f64, usize, usize), KeyingError> {
    let peak = m.iter().copied().fold(0.0, f64::max);
    if peak <= 0.0 {
        return Err(KeyingError::NoKeyDown { peak });
    }
    let half = EDGE_HALF * peak;
    let first = m.first().copied().unwrap_or(0.0);
    let r = match (1..m.len()).find(|&k| m[k - 1] < half && m[k] >= half) {
        Some(r) => r,
        None => {
            return Err(KeyingError::NoRisingEdge {
                first,
                threshold: half,
            })
        }
    };
    let f = match (r..m.len()).find(|&k| m[k] < half) {
        Some(f) => f,
        None if periodic => m.len(),
        None => {
            return Err(KeyingError::NoFallingEdge {
                last: m.last().copied().unwrap_or(0.0),
                threshold: half,
            })
        }
    };
    let level = middle_half_median(&m[r..f])?;
    Ok((level, r, f))
}

fn middle_half_median(interval: &[f64]) -> Result<f64, KeyingError> {
    let len = interval.len();
    if len < MIN_SAMPLES {
        return Err(KeyingError::KeyDownTooShort {
            samples: len,
            need: MIN_SAMPLES,
        });
    }
    Ok(median(&interval[len / 4..len - len / 4]))
}

/// Time of the crossing of `level` between samples k−1 and k (linear
/// interpolation), in samples.
fn crossing(m: &[f64], k: usize, level: f64) -> f64 {
    let (a, b) = (m[k - 1], m[k]);
    let d = b - a;
    let frac = if d != 0.0 {
        ((level - a) / d).clamp(0.0, 1.0)
    } else {
        0.0
    };
    (k - 1) as f64 + frac
}

/// Rise and fall times, half-level width and overshoot of the first
/// key-down pulse in `magnitude` (|a| sampled every `dt_s` seconds).
///
/// The pulse must rise through 10 % of the settled key-down level inside
/// the record (so the record starts below it), reach key-down and fall back
/// below 10 % before the record ends; otherwise
/// [`KeyingError::NoRisingEdge`] or [`KeyingError::NoFallingEdge`]. Edge
/// times are read between samples by linear interpolation; the crossings
/// used are the last rise through a threshold before the pulse reaches
/// it and the first fall through it after, so ringing inside key-down does
/// not count as an edge.
pub fn try_keying_edges(magnitude: &[f64], dt_s: f64) -> Result<KeyingEdges, KeyingError> {
    check_magnitudes(magnitude)?;
    check_step(dt_s, magnitude.len())?;
    let m = magnitude;
    let (level, r, f) = settled_level(m, false)?;
    let lo = EDGE_LOW * level;
    let hi = EDGE_HIGH * level;
    let mid = EDGE_HALF * level;
    let first = m[0];
    let last = m[m.len() - 1];
    // Rising: the last rise through 10 % at or before the half-peak crossing r.
    let k10r =
        (1..=r)
            .rev()
            .find(|&k| m[k - 1] < lo && m[k] >= lo)
            .ok_or(KeyingError::NoRisingEdge {
                first,
                threshold: lo,
            })?;
    let up_through = |level: f64| (k10r..f).find(|&k| m[k] >= level);
    // Falling: the first fall below 10 % at or after the half-peak fall f.
    let k10f = (f.max(1)..m.len())
        .find(|&k| m[k] < lo)
        .ok_or(KeyingError::NoFallingEdge {
            last,
            threshold: lo,
        })?;
    let down_through = |level: f64| (k10r..k10f).rev().find(|&j| m[j] >= level).map(|j| j + 1);
    let (k90r, k50r, k90f, k50f) = match (
        up_through(hi),
        up_through(mid),
        down_through(hi),
        down_through(mid),
    ) {
        (Some(a), Some(b), Some(c), Some(d)) => (a, b, c, d),
        // The middle half holds samples at or above the level, so these
        // exist; refuse rather than panic should they not.
        _ => {
            return Err(KeyingError::KeyDownTooShort {
                samples: f - r,
                need: MIN_SAMPLES,
            })
        }
    };
    // Rising crossings: k is the first sample at or above the level from
    // k10r on, and m[k10r − 1] < lo ≤ level, so m[k − 1] < level ≤ m[k].
    // Falling crossings: sample k − 1 is the last at or above the level
    // before k10f, so m[k − 1] ≥ level > m[k].
    let rise = (crossing(m, k90r, hi) - crossing(m, k10r, lo)).max(0.0) * dt_s;
    let fall = (crossing(m, k10f, lo) - crossing(m, k90f, hi)).max(0.0) * dt_s;
    let width = (crossing(m, k50f, mid) - crossing(m, k50r, mid)).max(0.0) * dt_s;
    let peak = m[k10r..k10f].iter().copied().fold(0.0, f64::max);
    let overshoot = ((peak / level - 1.0) * 100.0).max(0.0);
    Ok(KeyingEdges {
        rise_s: rise,
        fall_s: fall,
        width_s: width,
        overshoot_pct: overshoot,
        key_down_amplitude: level,
    })
}

/// Sums of non-negative numbers over index ranges, by a segment tree: each
/// range is a sum of O(log n) partial sums of non-negative terms, so no
/// cancellation (unlike differences of prefix sums) spoils a weak range
/// next to a strong one.
struct RangeSum {
    n: usize,
    tree: Vec<f64>,
}

impl RangeSum {
    fn new(values: &[f64]) -> Self {
        let n = values.len();
        let mut tree = vec![0.0; 2 * n];
        tree[n..].copy_from_slice(values);
        for i in (1..n).rev() {
            tree[i] = tree[2 * i] + tree[2 * i + 1];
        }
        RangeSum { n, tree }
    }

    /// Σ values[lo..hi], with the range clipped to the values.
    fn sum(&self, lo: i64, hi: i64) -> f64 {
        let lo = lo.clamp(0, self.n as i64) as usize;
        let hi = hi.clamp(0, self.n as i64) as usize;
        let (mut l, mut r) = (lo + self.n, hi + self.n);
        let mut s = 0.0;
        while l < r {
            if l & 1 == 1 {
                s += self.tree[l];
                l += 1;
            }
            if r & 1 == 1 {
                r -= 1;
                s += self.tree[r];
            }
            l >>= 1;
            r >>= 1;
        }
        s
    }

    fn at(&self, i: i64) -> f64 {
        if i < 0 || i as usize >= self.n {
            0.0
        } else {
            self.tree[self.n + i as usize]
        }
    }
}

/// The rectangular filter in lines: lines at |j| ≤ `full` count whole, and
/// when `edge` the two at |j| = full + 1 lie on its edges and count half.
#[derive(Clone, Copy)]
struct Filter {
    full: i64,
    edge: bool,
}

impl Filter {
    /// The filter of half-width `half_width` line spacings (RBW·T/2), over
    /// a spectrum of `lines` lines.
    fn new(half_width: f64, lines: usize) -> Self {
        let cap = lines as f64 + 1.0;
        let h = half_width.min(cap);
        let r = h.round();
        // An edge within 1e-9 (relative) of a line counts as on it: the
        // floating-point form of "exactly on the edge".
        if r >= 1.0 && (h - r).abs() <= 1e-9 * r.max(1.0) {
            Filter {
                full: r as i64 - 1,
                edge: true,
            }
        } else {
            Filter {
                full: h.floor() as i64,
                edge: false,
            }
        }
    }

    /// Power through the filter centred on line index `i`.
    fn apply(self, s: &RangeSum, i: i64) -> f64 {
        let mut p = s.sum(i - self.full, i + self.full + 1);
        if self.edge {
            p += 0.5 * (s.at(i - self.full - 1) + s.at(i + self.full + 1));
        }
        p
    }
}

/// Line powers |X_m|² for m = −⌊N/2⌋..=⌊N/2⌋ from an N-point DFT `x`
/// (natural order), each scaled by `scale`; for even N the Nyquist bin's
/// power is split between both ends.
fn line_powers(x: &[Complex64], scale: f64) -> Vec<f64> {
    let n = x.len();
    let half = n / 2;
    let mut p = Vec::with_capacity(2 * half + 1);
    for i in 0..=2 * half {
        let m = i as i64 - half as i64;
        let k = m.rem_euclid(n as i64) as usize;
        let mut v = (x[k] * scale).norm_sqr();
        if n.is_multiple_of(2) && (m == half as i64 || m == -(half as i64)) {
            v *= 0.5;
        }
        p.push(v);
    }
    p
}

fn fft(mut buf: Vec<Complex64>) -> Vec<Complex64> {
    let mut planner = FftPlanner::<f64>::new();
    planner.plan_fft_forward(buf.len()).process(&mut buf);
    buf
}

/// dB of a power ratio `p` (not negative) less `ref_db`, floored at [`DBC_FLOOR`].
fn level_dbc(p: f64, ref_db: f64) -> f64 {
    let db = if p > 0.0 {
        10.0 * p.log10() - ref_db
    } else {
        DBC_FLOOR
    };
    if db.is_nan() {
        DBC_FLOOR
    } else {
        db.max(DBC_FLOOR)
    }
}

/// The 99 % band of line powers `p` (non-negative, line index i at offset
/// (i − half)·spacing): the lower limit is the first line at which the
/// power summed from below exceeds 0.5 % of the total, the upper the first
/// from above; so at most 0.5 % lies beyond each.
fn occupied_band(p: &[f64], half: usize, spacing: f64) -> OccupiedBand {
    let total: f64 = RangeSum::new(p).sum(0, p.len() as i64);
    let tail = 0.5 * (1.0 - OCCUPIED_FRACTION) * total;
    let first_over = |iter: &mut dyn Iterator<Item = usize>| {
        let mut cum = 0.0;
        let mut last = 0;
        for i in iter {
            cum += p[i];
            last = i;
            if cum > tail {
                return i;
            }
        }
        last
    };
    let lo = first_over(&mut (0..p.len()));
    let hi = first_over(&mut (0..p.len()).rev());
    let (lo, hi) = (lo.min(hi), lo.max(hi));
    let off = |i: usize| (i as f64 - half as f64) * spacing;
    OccupiedBand {
        lower_hz: off(lo),
        upper_hz: off(hi),
        width_hz: off(hi) - off(lo),
        fraction: OCCUPIED_FRACTION,
    }
}

/// The sideband spectrum of one period of a keyed carrier's complex
/// envelope `envelope`, sampled every `dt_s` seconds (the period is
/// T = N·`dt_s`; the first sample is not repeated at the end).
///
/// Each offset shown is a line offset m/T. The level there is
/// Σ_j H(j)·|ĉ_{m+j}|² / (G·|A|²) in dB, where ĉ are the windowed line
/// coefficients Σ w\[n\] a\[n\] e^{−j2πmn/N} / Σ w\[n\] (Harris's coherent-gain
/// correction), H the rectangular RBW filter's power response (1 inside
/// ±RBW/2, ½ for a line exactly on an edge, 0 beyond), and G the same sum
/// for a pure carrier at its own offset, so that a lone line reads its own
/// power whatever the window and RBW (for a filter no wider than the
/// line spacing G = 1; for one spanning the window's whole spectrum G is
/// Harris's equivalent noise bandwidth in bins). The occupied band is
/// taken from the exact lines |c_m|² (no window, no filter).
pub fn try_sideband_spectrum(
    envelope: &[Complex64],
    dt_s: f64,
    params: &SidebandParams,
) -> Result<SidebandSpectrum, KeyingError> {
    let n = envelope.len();
    if n < MIN_SAMPLES {
        return Err(KeyingError::TooFewSamples {
            samples: n,
            need: MIN_SAMPLES,
        });
    }
    let mut scale = 0.0f64;
    for (index, a) in envelope.iter().enumerate() {
        for value in [a.re, a.im] {
            if !value.is_finite() {
                return Err(KeyingError::NotFinite { index, value });
            }
            scale = scale.max(value.abs());
        }
    }
    let period = check_step(dt_s, n)?;
    if let Some(rbw_hz) = params.rbw_hz {
        if !(rbw_hz.is_finite() && rbw_hz > 0.0) {
            return Err(KeyingError::BadRbw { rbw_hz });
        }
    }
    if let Some(max_offset_hz) = params.max_offset_hz {
        if max_offset_hz.is_nan() || max_offset_hz < 0.0 {
            return Err(KeyingError::BadMaxOffset { max_offset_hz });
        }
    }
    if scale == 0.0 {
        return Err(KeyingError::NoKeyDown { peak: 0.0 });
    }
    // Scale by the largest part so every magnitude is at most √2 and no
    // square or sum below overflows; levels are ratios, so the scale cancels.
    let b: Vec<Complex64> = envelope.iter().map(|a| a / scale).collect();
    let key_down = match params.key_down_amplitude {
        Some(amplitude) => {
            let rel = amplitude / scale;
            if !(amplitude.is_finite() && amplitude > 0.0 && rel.is_finite() && rel > 0.0) {
                return Err(KeyingError::BadKeyDown { amplitude });
            }
            (rel, amplitude)
        }
        None => {
            let mag: Vec<f64> = b.iter().map(|a| a.norm()).collect();
            let start = mag
                .iter()
                .enumerate()
                .min_by(|x, y| x.1.total_cmp(y.1))
                .map(|(i, _)| i)
                .unwrap_or(0);
            let turned: Vec<f64> = mag[start..].iter().chain(&mag[..start]).copied().collect();
            let peak = turned.iter().copied().fold(0.0, f64::max);
            let rel = if turned[0] >= EDGE_HALF * peak {
                median(&turned)
            } else {
                settled_level(&turned, true)?.0
            };
            let amplitude = rel * scale;
            if !(amplitude.is_finite() && amplitude > 0.0) {
                return Err(KeyingError::BadKeyDown { amplitude });
            }
            (rel, amplitude)
        }
    };
    let (rel, key_down_amplitude) = key_down;
    let ref_db = 20.0 * rel.log10();
    let spacing = 1.0 / period;
    let half = n / 2;
    let nf = n as f64;

    // Exact lines: no window.
    let exact = fft(b.clone());
    let exact_p = line_powers(&exact, 1.0 / nf);
    let line_offsets_hz: Vec<f64> = (0..exact_p.len())
        .map(|i| (i as f64 - half as f64) * spacing)
        .collect();
    let line_dbc: Vec<f64> = exact_p.iter().map(|&p| level_dbc(p, ref_db)).collect();
    let occupied = occupied_band(&exact_p, half, spacing);

    // The view: windowed lines through the RBW filter, calibrated on the
    // window's own spectrum (a pure carrier).
    let w = params.window.samples(n);
    let wsum: f64 = w.iter().sum();
    let (view_p, cal_p) = if params.window == SpectrumWindow::Rectangular {
        (exact_p.clone(), line_powers(&unit_line(n), 1.0))
    } else {
        let xw = fft(b.iter().zip(&w).map(|(a, wi)| a * *wi).collect());
        let ww = fft(w.iter().map(|&v| Complex64::new(v, 0.0)).collect());
        (line_powers(&xw, 1.0 / wsum), line_powers(&ww, 1.0 / wsum))
    };
    let rbw_hz = params.rbw_hz.unwrap_or(spacing);
    let filter = Filter::new(0.5 * rbw_hz * period, exact_p.len());
    let view = RangeSum::new(&view_p);
    let gain = filter.apply(&RangeSum::new(&cal_p), half as i64);
    let gain = if gain > 0.0 && gain.is_finite() {
        gain
    } else {
        1.0
    };
    let shown = match params.max_offset_hz {
        Some(mo) => ((mo * period + 1e-9).floor()).min(half as f64) as usize,
        None => half,
    };
    let mut offsets_hz = Vec::with_capacity(2 * shown + 1);
    let mut dbc = Vec::with_capacity(2 * shown + 1);
    let first = half - shown;
    for (i, &f) in line_offsets_hz
        .iter()
        .enumerate()
        .skip(first)
        .take(2 * shown + 1)
    {
        offsets_hz.push(f);
        dbc.push(level_dbc(filter.apply(&view, i as i64) / gain, ref_db));
    }
    Ok(SidebandSpectrum {
        offsets_hz,
        dbc,
        line_spacing_hz: spacing,
        rbw_hz,
        window: params.window,
        key_down_amplitude,
        line_offsets_hz,
        line_dbc,
        occupied,
    })
}

/// The DFT of a constant record of ones scaled to a unit line at 0: the
/// rectangular window's own spectrum.
fn unit_line(n: usize) -> Vec<Complex64> {
    let mut x = vec![Complex64::new(0.0, 0.0); n];
    if let Some(x0) = x.first_mut() {
        *x0 = Complex64::new(1.0, 0.0);
    }
    x
}

/// The median of `m` (0 when empty).
fn median(m: &[f64]) -> f64 {
    let mut v = m.to_vec();
    v.sort_by(f64::total_cmp);
    let n = v.len();
    if n == 0 {
        0.0
    } else if !n.is_multiple_of(2) {
        v[n / 2]
    } else {
        v[n / 2 - 1] / 2.0 + v[n / 2] / 2.0
    }
}

/// The necessary bandwidth of Morse telegraphy, B·K Hz, for a keying speed
/// of `baud` Bd and the factor `k` ([`K_FADING`] = 5 for a fading circuit),
/// ITU Radio Regulations, Appendix 1. 47 CFR §97.307(b) sets no number for
/// it; a cleanly keyed signal's occupied bandwidth is wider than B·K.
pub fn necessary_bandwidth_hz(baud: f64, k: f64) -> Result<f64, KeyingError> {
    let b = baud * k;
    if !(baud.is_finite() && baud > 0.0 && k.is_finite() && k > 0.0 && b.is_finite()) {
        return Err(KeyingError::BadTelegraphy { baud, k });
    }
    Ok(b)
}

fn check_side(side: &'static str, points: &[(f64, f64)]) -> Result<Vec<(f64, f64)>, KeyingError> {
    if points.is_empty() {
        return Err(KeyingError::MaskEmpty { side });
    }
    let mut previous_hz = f64::NEG_INFINITY;
    for (index, &(offset_hz, level_dbc)) in points.iter().enumerate() {
        if !(offset_hz.is_finite() && offset_hz >= 0.0 && offset_hz > previous_hz) {
            return Err(KeyingError::MaskOffset {
                side,
                index,
                offset_hz,
                previous_hz,
            });
        }
        if !level_dbc.is_finite() {
            return Err(KeyingError::MaskLevel {
                side,
                index,
                level_dbc,
            });
        }
        previous_hz = offset_hz;
    }
    Ok(points.to_vec())
}

fn side_limit(points: &[(f64, f64)], d: f64) -> Option<f64> {
    let &(first_hz, _) = points.first()?;
    if d.is_nan() || d < first_hz {
        return None;
    }
    let i = points.partition_point(|p| p.0 <= d);
    // points[i − 1].0 ≤ d < points[i].0, or d beyond the last point.
    let (x0, y0) = points[i - 1];
    match points.get(i) {
        Some(&(x1, y1)) => Some(y0 + (y1 - y0) * (d - x0) / (x1 - x0)),
        None => Some(y0),
    }
}

impl SidebandMask {
    /// The same limit on both sides of the carrier: `points` are (distance
    /// from the carrier in Hz, largest level in dBc).
    pub fn symmetric(points: &[(f64, f64)]) -> Result<Self, KeyingError> {
        let p = check_side("upper", points)?;
        Ok(SidebandMask {
            lower: p.clone(),
            upper: p,
        })
    }

    /// Different limits below and above the carrier; both lists give the
    /// distance from the carrier (non-negative, in Hz) and the largest level.
    pub fn two_sided(lower: &[(f64, f64)], upper: &[(f64, f64)]) -> Result<Self, KeyingError> {
        Ok(SidebandMask {
            lower: check_side("lower", lower)?,
            upper: check_side("upper", upper)?,
        })
    }

    /// The largest level allowed at `offset_hz` from the carrier (negative
    /// below it), dBc; `None` where the mask sets no limit.
    pub fn limit_dbc(&self, offset_hz: f64) -> Option<f64> {
        if offset_hz < 0.0 {
            side_limit(&self.lower, -offset_hz)
        } else {
            side_limit(&self.upper, offset_hz)
        }
    }

    /// The nearest distance from the carrier the mask constrains, Hz.
    pub fn nearest_hz(&self) -> f64 {
        let first = |p: &[(f64, f64)]| p.first().map_or(f64::INFINITY, |x| x.0);
        first(&self.lower).min(first(&self.upper))
    }
}

/// The worst margin (allowed − shown, dB; positive passes) of `spectrum`'s
/// shown levels against `mask`, over every offset the mask constrains.
/// [`KeyingError::MaskNotCovered`] when it constrains none of them.
pub fn sideband_margin(
    spectrum: &SidebandSpectrum,
    mask: &SidebandMask,
) -> Result<SidebandMargin, KeyingError> {
    let mut worst: Option<SidebandMargin> = None;
    let mut checked = 0;
    for (&f, &level) in spectrum.offsets_hz.iter().zip(&spectrum.dbc) {
        let Some(limit) = mask.limit_dbc(f) else {
            continue;
        };
        checked += 1;
        let margin = limit - level;
        if worst.as_ref().is_none_or(|w| margin < w.worst_margin_db) {
            worst = Some(SidebandMargin {
                worst_margin_db: margin,
                at_offset_hz: f,
                level_dbc: level,
                limit_dbc: limit,
                checked: 0,
                pass: false,
            });
        }
    }
    match worst {
        Some(mut w) => {
            w.checked = checked;
            w.pass = w.worst_margin_db >= 0.0;
            Ok(w)
        }
        None => Err(KeyingError::MaskNotCovered {
            mask_from_hz: mask.nearest_hz(),
            shown_to_hz: spectrum
                .offsets_hz
                .iter()
                .map(|f| f.abs())
                .fold(0.0, f64::max),
        }),
    }
}
