//! Reproducible tolerance draws.
//!
//! Every random number of a study comes from ChaCha8 (`rand_chacha`, whose
//! output stream is fixed by its algorithm and documented as portable), keyed
//! by the Monte Carlo seed and the sample number, on a stream chosen by the
//! tolerance number:
//!
//! * key (32 bytes) = `seed` (8 bytes, little-endian) ‖ `sample` (8 bytes,
//!   little-endian) ‖ 16 zero bytes;
//! * stream = the 0-based position of the `tolerance` statement.
//!
//! So draw k of tolerance t in Monte Carlo sample j depends only on
//! (seed, j, t): never on threads, shards, resumes or the other tolerances.
//! The conversions below use only integer operations, IEEE-754 multiply/add,
//! `sqrt` (correctly rounded by IEEE-754) and `libm::log` (a pure-Rust
//! implementation, the same on every machine), so the draws are bit-identical
//! on any IEEE-754 platform.
//!
//! Meaning of a tolerance of fraction `f` (a `5%` tolerance is f = 0.05):
//! * uniform: the factor is `1 + f·u`, u uniform on [−1, 1);
//!   mean 1, variance f²/3.
//! * gaussian: the factor is `1 + (f/3)·z`, z standard normal truncated to
//!   |z| ≤ 3 by redrawing, so f is the 3σ point and no part leaves its
//!   marked band; mean 1, variance (f/3)²·(1 − 6φ(3)/(2Φ(3) − 1)) ≈ 0.9733·(f/3)².

use rand::{RngCore, SeedableRng};
use rand_chacha::ChaCha8Rng;
use tankwave_circuit::Distribution;

/// The generator for one (seed, sample, tolerance) triple.
pub fn tolerance_rng(seed: u64, sample: u64, tolerance: usize) -> ChaCha8Rng {
    let mut key = [0u8; 32];
    key[..8].copy_from_slice(&seed.to_le_bytes());
    key[8..16].copy_from_slice(&sample.to_le_bytes());
    let mut rng = ChaCha8Rng::from_seed(key);
    rng.set_stream(tolerance as u64);
    rng
}

/// A uniform number on [0, 1) from the top 53 bits of one 64-bit word.
pub fn unit(rng: &mut impl RngCore) -> f64 {
    (rng.next_u64() >> 11) as f64 * (1.0 / 9_007_199_254_740_992.0)
}

/// A standard normal number by Marsaglia's polar method (Marsaglia and Bray,
/// SIAM Review 6(3), 1964; also Knuth, TAOCP vol. 2, §3.4.1 Algorithm P),
/// keeping one of the pair.
pub fn standard_normal(rng: &mut impl RngCore) -> f64 {
    loop {
        let u = 2.0 * unit(rng) - 1.0;
        let v = 2.0 * unit(rng) - 1.0;
        let s = u * u + v * v;
        if s > 0.0 && s < 1.0 {
            return u * (-2.0 * libm::log(s) / s).sqrt();
        }
    }
}

/// A standard normal number truncated to |z| ≤ 3 (redrawn outside; about 0.27% of draws).
pub fn truncated_normal(rng: &mut impl RngCore) -> f64 {
    loop {
        let z = standard_normal(rng);
        if z.abs() <= 3.0 {
            return z;
        }
    }
}

/// The multiplier a tolerance of `fraction` with `distribution` gives for
/// (seed, sample, tolerance index): see the module overview for the meaning.
pub fn tolerance_factor(
    seed: u64,
    sample: u64,
    tolerance: usize,
    fraction: f64,
    distribution: Distribution,
) -> f64 {
    let mut rng = tolerance_rng(seed, sample, tolerance);
    match distribution {
        Distribution::Uniform => 1.0 + fraction * (2.0 * unit(&mut rng) - 1.0),
        Distribution::Gaussian => 1.0 + fraction / 3.0 * truncated_normal(&mut rng),
    }
}
