//! Spectral helpers over one period of uniformly sampled data.

use num_complex::Complex64;
use realfft::{ComplexToReal, RealFftPlanner, RealToComplex};
use std::sync::Arc;

/// Time derivative of a periodic sample sequence by FFT.
pub(crate) struct Deriv {
    n: usize,
    fwd: Arc<dyn RealToComplex<f64>>,
    inv: Arc<dyn ComplexToReal<f64>>,
}

impl Deriv {
    pub fn new(n: usize) -> Self {
        let mut p = RealFftPlanner::<f64>::new();
        Self {
            n,
            fwd: p.plan_fft_forward(n.max(1)),
            inv: p.plan_fft_inverse(n.max(1)),
        }
    }

    /// d/dt of `v` (one period of `n` samples at fundamental `freq`); bins
    /// above the highest full harmonic (the Nyquist bin for even `n`) are dropped.
    pub fn derivative(&mut self, v: &[f64], freq: f64) -> Vec<f64> {
        let n = self.n;
        if v.len() != n || n < 2 {
            return vec![0.0; v.len()];
        }
        let mut input = v.to_vec();
        let mut spec = self.fwd.make_output_vec();
        if self.fwd.process(&mut input, &mut spec).is_err() {
            return vec![f64::NAN; n];
        }
        let w = 2.0 * std::f64::consts::PI * freq;
        let nb = spec.len();
        for (k, s) in spec.iter_mut().enumerate() {
            if n.is_multiple_of(2) && k == nb - 1 {
                *s = Complex64::new(0.0, 0.0);
            } else {
                *s *= Complex64::new(0.0, w * k as f64);
            }
        }
        spec[0] = Complex64::new(0.0, 0.0);
        let mut out = self.inv.make_output_vec();
        if self.inv.process(&mut spec, &mut out).is_err() {
            return vec![f64::NAN; n];
        }
        out.iter().map(|x| x / n as f64).collect()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn derivative_of_a_sine_is_a_cosine() {
        let n = 64;
        let f = 1e6;
        let w = 2.0 * std::f64::consts::PI * f;
        let v: Vec<f64> = (0..n)
            .map(|k| (w * k as f64 / (n as f64 * f) * 3.0).sin())
            .collect();
        let d = Deriv::new(n).derivative(&v, f);
        for (k, dv) in d.iter().enumerate() {
            let t = k as f64 / (n as f64 * f);
            let exact = 3.0 * w * (3.0 * w * t).cos();
            assert!((dv - exact).abs() < 1e-9 * 3.0 * w, "{k}");
        }
    }
}
