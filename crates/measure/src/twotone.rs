//! Two-tone figures: the output power of each tone, the peak envelope power
//! and the intermodulation products of orders 3, 5 and 7 on each side, with
//! intercept estimates and, over a drive sweep, the gain compression.
//!
//! The input is a plain view of a multi-tone steady state ([`ToneView`]):
//! the coefficient of the load voltage at each mixing product `m·f₁ + n·f₂`
//! (f₁ the lower tone), so this crate needs nothing of the solver.
//!
//! * Power of a product in the load resistor R: `P = A²/(2R)`, `A` its peak
//!   amplitude (`2|V|` of the two-sided coefficient) — common practice.
//! * Peak envelope power of the two tones: `PEP = (A₁ + A₂)²/(2R)`, the power
//!   of a sine at the envelope's peak; for two equal tones `4·P_tone`,
//!   6.02 dB above one tone — common practice.
//! * Intermodulation of order `2k + 1` (k = 1, 2, 3): the lower product at
//!   `(k+1)·f₁ − k·f₂`, the upper one at `(k+1)·f₂ − k·f₁`. Each is given in
//!   dBc against the tone on its own side and in dB against PEP (negative:
//!   below). A product below the numerical floor of the solve is not
//!   resolved (`None`).
//! * Intercept estimates from one drive level: the output power where the
//!   tone and the product of order `2k + 1` would meet if the tone rose
//!   1 dB and the product `2k + 1` dB per dB: `P_tone + |dBc|/(2k)` (in dB;
//!   OIP3 = P_tone + |IM3 dBc|/2, OIP5 = P_tone + |IM5 dBc|/4) — common
//!   practice; the worse side is taken.
//! * Gain compression over a sweep: the change, from the smallest drive, of
//!   the mean tone power less the drive level (both in dB); negative when
//!   the stage compresses.

use num_complex::Complex64;
use serde::Serialize;

/// Orders of the intermodulation products reported.
pub const IMD_ORDERS: [u32; 3] = [3, 5, 7];

/// A plain view of a two-tone steady state.
pub struct ToneView<'a> {
    /// The lower and upper tone, Hz.
    pub tones: [f64; 2],
    /// The load resistance the output powers are read in, Ω.
    pub load_ohm: f64,
    /// The two-sided coefficient of the load voltage at `m·f₁ + n·f₂` (of
    /// `e^{j2π(m f₁ + n f₂)t}`), `None` outside the kept products.
    pub load_voltage: &'a dyn Fn(i32, i32) -> Option<Complex64>,
    /// Amplitude below which a product is not resolved, relative to the
    /// larger tone (the solver's relative tolerance).
    pub floor_rel: f64,
}

/// Which side of the tone pair a product lies on.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Side {
    /// Below the lower tone.
    Lower,
    /// Above the upper tone.
    Upper,
}

/// One intermodulation product.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ImdRow {
    /// Order (3, 5 or 7).
    pub order: u32,
    /// Side.
    pub side: Side,
    /// Frequency, Hz.
    pub freq_hz: f64,
    /// Power in the load, W (0 when not resolved).
    pub power_w: f64,
    /// Level against the tone on its side, dBc; `None` below the floor.
    pub dbc: Option<f64>,
    /// Level against PEP, dB (negative); `None` below the floor.
    pub below_pep_db: Option<f64>,
}

/// The figures of one two-tone solve.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TwoToneMetrics {
    /// The lower and upper tone, Hz.
    pub tones_hz: [f64; 2],
    /// Output power of each tone in the load, W.
    pub tone_w: [f64; 2],
    /// Peak envelope power of the two tones, W.
    pub pep_w: f64,
    /// IM3, IM5, IM7, lower then upper.
    pub products: Vec<ImdRow>,
    /// The level a product must reach to be resolved, dBc.
    pub floor_dbc: f64,
    /// Third-order output intercept estimate, W (`None` when IM3 is not resolved).
    pub oip3_w: Option<f64>,
    /// Fifth-order output intercept estimate, W (`None` when IM5 is not resolved).
    pub oip5_w: Option<f64>,
}

impl TwoToneMetrics {
    /// The worse side of the products of `order`, dBc (`None`: neither side
    /// resolved, or no such order).
    pub fn worst_dbc(&self, order: u32) -> Option<f64> {
        self.products
            .iter()
            .filter(|r| r.order == order)
            .filter_map(|r| r.dbc)
            .reduce(f64::max)
    }

    /// [`TwoToneMetrics::worst_dbc`], or the floor when neither side is
    /// resolved (the products are at most that): what a requirement reads.
    pub fn worst_dbc_or_floor(&self, order: u32) -> Option<f64> {
        if !IMD_ORDERS.contains(&order) {
            return None;
        }
        Some(self.worst_dbc(order).unwrap_or(self.floor_dbc))
    }

    /// The worse side of the products of `order`, dB against PEP.
    pub fn worst_below_pep_db(&self, order: u32) -> Option<f64> {
        self.products
            .iter()
            .filter(|r| r.order == order)
            .filter_map(|r| r.below_pep_db)
            .reduce(f64::max)
    }

    /// The mean output power of the two tones, W.
    pub fn mean_tone_w(&self) -> f64 {
        0.5 * (self.tone_w[0] + self.tone_w[1])
    }
}

/// Why two-tone figures could not be formed.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum ToneError {
    /// The view lacks a tone.
    #[error("two-tone figures: the solution has no coefficient at tone {0}")]
    MissingTone(usize),
    /// A tone carries no power: nothing to measure against.
    #[error(
        "two-tone figures: no output power at the tones (lower {lower_w:e} W, upper {upper_w:e} W)"
    )]
    NoTone {
        /// Lower tone's power, W.
        lower_w: f64,
        /// Upper tone's power, W.
        upper_w: f64,
    },
    /// A non-finite number.
    #[error("two-tone figures: a non-finite {0}")]
    NonFinite(&'static str),
    /// A load of no resistance.
    #[error("two-tone figures: the load resistance must be positive and finite, got {0} ohm")]
    BadLoad(f64),
}

fn db(ratio: f64) -> f64 {
    10.0 * ratio.log10()
}

/// The figures of one two-tone solve.
pub fn two_tone_metrics(v: &ToneView<'_>) -> Result<TwoToneMetrics, ToneError> {
    if !(v.load_ohm.is_finite() && v.load_ohm > 0.0) {
        return Err(ToneError::BadLoad(v.load_ohm));
    }
    let amp = |m: i32, n: i32| (v.load_voltage)(m, n).map(|c| 2.0 * c.norm());
    let a1 = amp(1, 0).ok_or(ToneError::MissingTone(1))?;
    let a2 = amp(0, 1).ok_or(ToneError::MissingTone(2))?;
    let power = |a: f64| a * a / (2.0 * v.load_ohm);
    let tone_w = [power(a1), power(a2)];
    if !(tone_w[0] > 0.0 && tone_w[1] > 0.0) {
        if tone_w.iter().any(|p| !p.is_finite()) {
            return Err(ToneError::NonFinite("tone power"));
        }
        return Err(ToneError::NoTone {
            lower_w: tone_w[0],
            upper_w: tone_w[1],
        });
    }
    let pep_w = power(a1 + a2);
    let floor_amp = v.floor_rel * a1.max(a2);
    let floor_dbc = 20.0 * v.floor_rel.log10();
    let [f1, f2] = v.tones;
    let mut products = Vec::new();
    for order in IMD_ORDERS {
        let k = (order as i32 - 1) / 2;
        for (side, (m, n), tone) in [
            (Side::Lower, (k + 1, -k), tone_w[0]),
            (Side::Upper, (-k, k + 1), tone_w[1]),
        ] {
            let freq_hz = m as f64 * f1 + n as f64 * f2;
            let a = amp(m, n).unwrap_or(0.0);
            if !a.is_finite() {
                return Err(ToneError::NonFinite("product amplitude"));
            }
            let resolved = a > floor_amp;
            let p = power(a);
            products.push(ImdRow {
                order,
                side,
                freq_hz,
                power_w: if resolved { p } else { 0.0 },
                dbc: resolved.then(|| db(p / tone)),
                below_pep_db: resolved.then(|| db(p / pep_w)),
            });
        }
    }
    let mut m = TwoToneMetrics {
        tones_hz: v.tones,
        tone_w,
        pep_w,
        products,
        floor_dbc,
        oip3_w: None,
        oip5_w: None,
    };
    let intercept = |m: &TwoToneMetrics, order: u32| -> Option<f64> {
        let k = f64::from(order - 1) / 2.0;
        m.products
            .iter()
            .filter(|r| r.order == order)
            .map(|r| {
                let tone = match r.side {
                    Side::Lower => m.tone_w[0],
                    Side::Upper => m.tone_w[1],
                };
                r.dbc.map(|d| tone * 10f64.powf(-d / (2.0 * k) / 10.0))
            })
            .collect::<Option<Vec<f64>>>()?
            .into_iter()
            .reduce(f64::min)
    };
    m.oip3_w = intercept(&m, 3);
    m.oip5_w = intercept(&m, 5);
    Ok(m)
}

/// One drive level of a two-tone sweep.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ToneLevel {
    /// Drive level, dB relative to the input's amplitude.
    pub level_db: f64,
    /// The figures at this level.
    pub metrics: TwoToneMetrics,
    /// Gain change from the smallest level, dB (negative: compression).
    pub gain_change_db: f64,
}

/// Gain compression over a sweep: each level's figures with the change of
/// `P_tone − level` (dB) from the smallest level. Levels are returned in
/// rising order.
pub fn sweep_levels(mut levels: Vec<(f64, TwoToneMetrics)>) -> Vec<ToneLevel> {
    levels.sort_by(|a, b| a.0.total_cmp(&b.0));
    let gain = |(l, m): &(f64, TwoToneMetrics)| db(m.mean_tone_w()) - l;
    let base = levels.first().map(gain).unwrap_or(0.0);
    levels
        .into_iter()
        .map(|lm| {
            let g = gain(&lm) - base;
            ToneLevel {
                level_db: lm.0,
                metrics: lm.1,
                gain_change_db: g,
            }
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A load voltage with two equal tones of amplitude `a` and products of
    /// order 2k+1 at `a·r^k` each side (r < 1).
    fn view_of(a: f64, r: f64) -> impl Fn(i32, i32) -> Option<Complex64> {
        move |m, n| {
            let order = (m.abs() + n.abs()) as u32;
            let lower = m > 0 && n < 0 && m == -n + 1;
            let upper = n > 0 && m < 0 && n == -m + 1;
            let c = if (m, n) == (1, 0) || (m, n) == (0, 1) {
                a / 2.0
            } else if lower || upper {
                a / 2.0 * r.powi(((order - 1) / 2) as i32)
            } else {
                0.0
            };
            Some(Complex64::new(c, 0.0))
        }
    }

    #[test]
    fn pep_is_six_db_above_one_of_two_equal_tones() {
        // PEP = (A + A)²/(2R) = 4·A²/(2R): 10·log10(4) = 6.0206 dB (common practice).
        let f = view_of(2.0, 0.01);
        let v = ToneView {
            tones: [14.0e6, 14.001e6],
            load_ohm: 50.0,
            load_voltage: &f,
            floor_rel: 1e-9,
        };
        let m = two_tone_metrics(&v).unwrap();
        assert!((m.tone_w[0] - 4.0 / 100.0).abs() < 1e-15);
        assert!((db(m.pep_w / m.tone_w[0]) - 6.020_599_913).abs() < 1e-9);
        // products at r^k in amplitude: IM3 at −40 dBc, IM5 at −80 dBc
        assert!((m.worst_dbc(3).unwrap() + 40.0).abs() < 1e-9);
        assert!((m.worst_dbc(5).unwrap() + 80.0).abs() < 1e-9);
        assert!((m.worst_below_pep_db(3).unwrap() + 46.020_599_913).abs() < 1e-9);
        // IM7 at −120 dBc lies above the −180 dBc floor: resolved
        assert!(m.worst_dbc(7).is_some());
        // OIP3 = P_tone + 40/2 dB, OIP5 = P_tone + 80/4 dB
        assert!((db(m.oip3_w.unwrap() / m.tone_w[0]) - 20.0).abs() < 1e-9);
        assert!((db(m.oip5_w.unwrap() / m.tone_w[0]) - 20.0).abs() < 1e-9);
        assert_eq!(m.products[0].freq_hz, 2.0 * 14.0e6 - 14.001e6);
        assert_eq!(m.products[1].freq_hz, 2.0 * 14.001e6 - 14.0e6);
    }

    #[test]
    fn products_below_the_floor_are_not_resolved() {
        let f = view_of(1.0, 1e-4);
        let v = ToneView {
            tones: [7.0e6, 7.001e6],
            load_ohm: 50.0,
            load_voltage: &f,
            floor_rel: 1e-6,
        };
        let m = two_tone_metrics(&v).unwrap();
        // IM3 at 1e-4 (−80 dBc) resolved; IM5 at 1e-8 below the 1e-6 floor
        assert!(m.worst_dbc(3).is_some());
        assert_eq!(m.worst_dbc(5), None);
        assert_eq!(m.oip5_w, None);
        assert_eq!(m.floor_dbc, -120.0);
    }

    #[test]
    fn a_sweep_reports_compression_from_its_smallest_level() {
        let at = |a: f64| {
            let f = view_of(a, 0.01);
            two_tone_metrics(&ToneView {
                tones: [1e6, 1.001e6],
                load_ohm: 50.0,
                load_voltage: &f,
                floor_rel: 1e-9,
            })
            .unwrap()
        };
        // output amplitude rises 1:1 with the drive, then 1 dB short
        let lv = sweep_levels(vec![
            (0.0, at(10f64.powf(-1.0 / 20.0))),
            (-6.0, at(10f64.powf(-6.0 / 20.0))),
        ]);
        assert_eq!(lv[0].level_db, -6.0);
        assert!(lv[0].gain_change_db.abs() < 1e-12);
        assert!((lv[1].gain_change_db + 1.0).abs() < 1e-9);
    }
}
