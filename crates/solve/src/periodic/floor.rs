//! The numerical floor of a periodic solution: per unknown, the harmonic
//! amplitude (peak, in the unknown's unit) below which the method does not
//! resolve a harmonic, estimated from the method's own error
//! (docs/measurements.md, "Numerical floor").
//!
//! - Harmonic balance: the truncation tail, the largest amplitude among the
//!   top tenth of the K harmonics carried (at least the top one): what the
//!   series has not yet shed is the size of what it cannot represent.
//! - Shooting and settle (TR-BDF2, second order): the same orbit solved again
//!   on a grid of N/2 steps per period, warm-started from the solution at N;
//!   with error ∝ h², `X_N − X* ≈ (X_{N/2} − X_N)/3` (Richardson), so the
//!   floor is the largest `|X_N,k − X_{N/2},k|/3` over harmonics 2 and up that
//!   both grids carry.
//!
//! When the half grid cannot be solved (too coarse for harmonic 2, or it
//! does not converge), shooting and settle fall back to the truncation tail
//! of their own samples, as balance does: usually a higher, so more
//! cautious, floor; a floor is never left out.
//!
//! Every method adds the convergence tolerance it met, `rel_tolerance` times
//! the unknown's peak over the period: the orbit is only known to that.

use num_complex::Complex64;
use realfft::RealFftPlanner;

/// Phasors `2X[k]/N` of harmonics 0..=k_max of one period (zeros when the
/// period is too short or the FFT fails).
pub(crate) fn phasors(x: &[f64], k_max: usize) -> Vec<Complex64> {
    let n = x.len();
    let zero = vec![Complex64::new(0.0, 0.0); k_max + 1];
    if n < 2 {
        return zero;
    }
    let fft = RealFftPlanner::<f64>::new().plan_fft_forward(n);
    let mut input = x.to_vec();
    let mut out = fft.make_output_vec();
    if fft.process(&mut input, &mut out).is_err() {
        return zero;
    }
    (0..=k_max)
        .map(|k| out.get(k).copied().unwrap_or_default() * (2.0 / n as f64))
        .collect()
}

/// `rel_tolerance · max |x|` of one period.
fn tolerance_part(x: &[f64], rel_tolerance: f64) -> f64 {
    rel_tolerance * x.iter().fold(0.0f64, |m, v| m.max(v.abs()))
}

/// Harmonic balance: per unknown, the largest amplitude among the top tenth
/// of harmonics 1..=K (at least harmonic K), plus the tolerance part.
pub(crate) fn tail_floor(x: &[Vec<f64>], harmonics: usize, rel_tolerance: f64) -> Vec<f64> {
    let top = (harmonics / 10).max(1);
    x.iter()
        .map(|w| {
            let k_max = harmonics.min(w.len().saturating_sub(1) / 2);
            let p = phasors(w, k_max);
            let from = (k_max + 1).saturating_sub(top).max(1);
            let tail = (from..=k_max).map(|k| p[k].norm()).fold(0.0, f64::max);
            tail + tolerance_part(w, rel_tolerance)
        })
        .collect()
}

/// Shooting and settle: per unknown, the largest `|X_N,k − X_{N/2},k|/3` over
/// harmonics 2..=K that both grids carry (the half grid carries fewer than
/// N/4), plus the tolerance part; `fine` and `half` start at the same phase.
pub(crate) fn grid_floor(
    fine: &[Vec<f64>],
    half: &[Vec<f64>],
    harmonics: usize,
    rel_tolerance: f64,
) -> Vec<f64> {
    fine.iter()
        .zip(half)
        .map(|(a, b)| {
            let k_max = harmonics
                .min(a.len().saturating_sub(1) / 2)
                .min(b.len().saturating_sub(1) / 2);
            let (pa, pb) = (phasors(a, k_max), phasors(b, k_max));
            let diff = (2..=k_max)
                .map(|k| (pa[k] - pb[k]).norm() / 3.0)
                .fold(0.0, f64::max);
            diff + tolerance_part(a, rel_tolerance)
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    fn wave(n: usize, amps: &[f64]) -> Vec<f64> {
        (0..n)
            .map(|s| {
                let t = 2.0 * std::f64::consts::PI * s as f64 / n as f64;
                amps.iter()
                    .enumerate()
                    .map(|(k, a)| a * ((k + 1) as f64 * t).cos())
                    .sum()
            })
            .collect()
    }

    #[test]
    fn the_tail_floor_is_the_top_tenth_of_the_harmonics() {
        // 20 harmonics 1, 0.1, 0.01, …: the top tenth is harmonics 19 and 20,
        // the larger of them is 1e-18 (exact DFT of a trigonometric sum, to
        // rounding, about 1e-16 of the peak; common practice).
        let amps: Vec<f64> = (0..20).map(|k| 10f64.powi(-k)).collect();
        let x = vec![wave(64, &amps)];
        let f = tail_floor(&x, 20, 0.0);
        assert!(f[0] < 1e-15 && f[0] >= 0.0, "{}", f[0]);
        // with a tolerance of 1e-6 the floor is that times the peak (about 1.111)
        let f = tail_floor(&x, 20, 1e-6);
        assert!((f[0] - 1.1111111e-6).abs() < 1e-12, "{}", f[0]);
        // a slowly decaying series: harmonic 20 is 0.05, harmonic 19 is 0.06
        let amps: Vec<f64> = (0..20).map(|k| 1.0 - 0.05 * k as f64).collect();
        let f = tail_floor(&[wave(64, &amps)], 20, 0.0);
        assert!((f[0] - 0.1).abs() < 1e-12, "{}", f[0]);
    }

    #[test]
    fn the_grid_floor_is_a_third_of_the_difference_of_the_grids() {
        // the same wave on both grids but harmonic 3 off by 3e-3: floor 1e-3
        let a = wave(64, &[1.0, 0.1, 0.01]);
        let b = wave(32, &[1.0, 0.1, 0.013]);
        let f = grid_floor(&[a], &[b], 10, 0.0);
        assert!((f[0] - 1e-3).abs() < 1e-12, "{}", f[0]);
        // a difference in the fundamental alone is not a harmonic's floor
        let a = wave(64, &[1.0, 0.1]);
        let b = wave(32, &[1.1, 0.1]);
        let f = grid_floor(&[a], &[b], 10, 0.0);
        assert!(f[0] < 1e-14, "{}", f[0]);
    }
}
