//! Harmonic phasors of one uniformly sampled period, by a real FFT.
//!
//! Convention (documented in docs/measurements.md): a period of N samples
//! `x[n] = x(nT/N)` has the DFT `X[k] = Σ x[n] exp(−j2πkn/N)`. The DC value
//! is `X[0]/N` and the complex amplitude (phasor) of harmonic k ≥ 1 is
//! `A_k = 2 X[k]/N`, so that `x(t) = X0 + Σ_k Re(A_k exp(jkωt))` and the peak
//! amplitude of harmonic k is `|A_k| = 2|X[k]|/N`. A signal `A cos(kωt + φ)`
//! gives `A_k = A exp(jφ)`.

use num_complex::Complex64;
use realfft::RealFftPlanner;

use crate::error::MeasureError;

/// The DC value and the phasors of harmonics 1..=K of one period.
#[derive(Debug, Clone, PartialEq)]
pub struct Spectrum {
    /// `phasors[0]` is the DC value (real); `phasors[k]` is the complex
    /// amplitude A_k of harmonic k (peak, not RMS), k = 1..=K.
    pub phasors: Vec<Complex64>,
}

impl Spectrum {
    /// The DC (mean) value.
    pub fn dc(&self) -> f64 {
        self.phasors.first().map(|c| c.re).unwrap_or(0.0)
    }
    /// Complex amplitude of harmonic `k` (k = 0 gives the DC value); zero past K.
    pub fn phasor(&self, k: usize) -> Complex64 {
        self.phasors
            .get(k)
            .copied()
            .unwrap_or(Complex64::new(0.0, 0.0))
    }
    /// Peak amplitude |A_k| of harmonic `k` (the DC value's magnitude for k = 0).
    pub fn amplitude(&self, k: usize) -> f64 {
        self.phasor(k).norm()
    }
    /// Number of harmonics K carried (not counting DC).
    pub fn harmonics(&self) -> usize {
        self.phasors.len().saturating_sub(1)
    }
}

/// Check the sample count: a power of two larger than 2K, and K ≥ 1.
pub fn check_samples(samples: usize, harmonics: usize) -> Result<(), MeasureError> {
    if harmonics == 0 {
        return Err(MeasureError::NoHarmonics);
    }
    if samples == 0 {
        return Err(MeasureError::Empty);
    }
    if !samples.is_power_of_two() {
        return Err(MeasureError::SamplesNotPowerOfTwo { samples });
    }
    let need = harmonics.saturating_mul(2);
    if samples <= need {
        return Err(MeasureError::TooFewSamples {
            samples,
            harmonics,
            need,
        });
    }
    Ok(())
}

/// DC value and phasors of harmonics 1..=K of one period `x` (N samples, a
/// power of two, N > 2K, all finite).
pub fn spectrum(x: &[f64], harmonics: usize) -> Result<Spectrum, MeasureError> {
    check_samples(x.len(), harmonics)?;
    if let Some((index, &value)) = x.iter().enumerate().find(|(_, v)| !v.is_finite()) {
        return Err(MeasureError::NotFinite {
            what: "signal".to_string(),
            index,
            value,
        });
    }
    let n = x.len();
    let mut planner = RealFftPlanner::<f64>::new();
    let fft = planner.plan_fft_forward(n);
    let mut input = x.to_vec();
    let mut output = fft.make_output_vec();
    // The lengths match by construction (plan and buffers from the same n),
    // so the only failure is impossible; map it to Empty rather than panic.
    fft.process(&mut input, &mut output)
        .map_err(|_| MeasureError::Empty)?;
    let scale = 1.0 / n as f64;
    let mut phasors = Vec::with_capacity(harmonics + 1);
    phasors.push(Complex64::new(
        output.first().map(|c| c.re).unwrap_or(0.0) * scale,
        0.0,
    ));
    for k in 1..=harmonics {
        let xk = output.get(k).copied().unwrap_or(Complex64::new(0.0, 0.0));
        phasors.push(xk * (2.0 * scale));
    }
    Ok(Spectrum { phasors })
}

/// Time average of the product of two periods, mean(a·b); 0 for empty input.
pub fn mean_product(a: &[f64], b: &[f64]) -> f64 {
    let n = a.len().min(b.len());
    if n == 0 {
        return 0.0;
    }
    a.iter().zip(b).map(|(x, y)| x * y).sum::<f64>() / n as f64
}

/// Root-mean-square value of one period; 0 for empty input.
pub fn rms(x: &[f64]) -> f64 {
    if x.is_empty() {
        return 0.0;
    }
    (x.iter().map(|v| v * v).sum::<f64>() / x.len() as f64).sqrt()
}

/// Mean value of one period; 0 for empty input.
pub fn mean(x: &[f64]) -> f64 {
    if x.is_empty() {
        return 0.0;
    }
    x.iter().sum::<f64>() / x.len() as f64
}

/// Average power ½ Re(V I*) of one harmonic from voltage and current phasors
/// (peak amplitudes), W.
pub fn harmonic_power(v: Complex64, i: Complex64) -> f64 {
    0.5 * (v * i.conj()).re
}
