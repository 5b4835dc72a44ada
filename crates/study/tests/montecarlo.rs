//! Monte Carlo tolerance factors against the analytic moments of their distributions.

mod common;

use common::*;
use tankwave_circuit::{Distribution, MonteCarlo, StudySpec};
use tankwave_study::Plan;

const N: u64 = 40_000;

fn factors(distribution: Distribution, fraction: f64, seed: u64) -> (Vec<f64>, Vec<f64>) {
    let spec = StudySpec {
        tolerances: vec![
            tol(0, fraction, distribution),
            tol(1, fraction, distribution),
        ],
        montecarlo: Some(MonteCarlo {
            runs: N as usize,
            seed,
        }),
        ..Default::default()
    };
    let plan = Plan::new(&spec, &ELEMENTS).unwrap();
    assert_eq!(plan.len(), N);
    let (mut a, mut b) = (Vec::new(), Vec::new());
    for i in 0..N {
        let v = plan.variant(i).unwrap();
        a.push(v.values["ctun.factor"]);
        b.push(v.values["lt.factor"]);
    }
    (a, b)
}

fn moments(x: &[f64]) -> (f64, f64) {
    let n = x.len() as f64;
    let m = x.iter().sum::<f64>() / n;
    let v = x.iter().map(|y| (y - m) * (y - m)).sum::<f64>() / (n - 1.0);
    (m, v)
}

/// Checks sample mean and variance of `x` against the analytic mean 1 and
/// variance `var`, within 4 standard errors: the sample mean has standard
/// error σ/√n; the sample variance σ²·√((κ − 1)/n) for kurtosis κ (standard
/// large-sample result, e.g. Kendall & Stuart, The Advanced Theory of
/// Statistics vol. 1, §10.5; from memory). A 4σ bound fails by chance with
/// probability about 6e-5 per check, and the seeds are fixed, so the test is
/// not flaky.
fn check(x: &[f64], var: f64, kurtosis: f64, what: &str) {
    let n = x.len() as f64;
    let (m, v) = moments(x);
    let se_mean = (var / n).sqrt();
    let se_var = var * ((kurtosis - 1.0) / n).sqrt();
    assert!(
        (m - 1.0).abs() < 4.0 * se_mean,
        "{what}: mean {m}, bound {}",
        4.0 * se_mean
    );
    assert!(
        (v - var).abs() < 4.0 * se_var,
        "{what}: var {v} vs {var}, bound {}",
        4.0 * se_var
    );
}

#[test]
fn uniform_factors_have_the_analytic_moments() {
    let r = reference();
    // scipy.stats.uniform(-1, 2): variance 1/3, excess kurtosis −1.2.
    let var_u = r["uniform_pm1"]["var"].as_f64().unwrap();
    let kurt = 3.0 + r["uniform_pm1"]["excess_kurtosis"].as_f64().unwrap();
    let f = 0.05;
    for seed in [7u64, 2026] {
        let (a, b) = factors(Distribution::Uniform, f, seed);
        check(&a, f * f * var_u, kurt, "uniform a");
        check(&b, f * f * var_u, kurt, "uniform b");
        assert!(a.iter().chain(&b).all(|x| (1.0 - f..1.0 + f).contains(x)));
        correlation_is_small(&a, &b);
    }
}

#[test]
fn gaussian_factors_have_the_truncated_normal_moments() {
    let r = reference();
    // scipy.stats.truncnorm(−3, 3): variance 0.97334, excess kurtosis −0.171.
    let var_z = r["truncnorm3"]["var"].as_f64().unwrap();
    let kurt = 3.0 + r["truncnorm3"]["excess_kurtosis"].as_f64().unwrap();
    let f = 0.1;
    let sigma = f / 3.0;
    for seed in [7u64, 99] {
        let (a, b) = factors(Distribution::Gaussian, f, seed);
        check(&a, sigma * sigma * var_z, kurt, "gaussian a");
        check(&b, sigma * sigma * var_z, kurt, "gaussian b");
        assert!(a.iter().chain(&b).all(|x| (1.0 - f..=1.0 + f).contains(x)));
        // Fraction beyond 1σ: 2·truncnorm(−3, 3).sf(1) from scipy (≈ 0.3155).
        // Binomial standard error √(p(1−p)/n); 4 of them.
        let p = r["truncnorm3"]["beyond_1sigma"].as_f64().unwrap();
        let beyond = a.iter().filter(|x| (*x - 1.0).abs() > sigma).count() as f64 / a.len() as f64;
        assert!(
            (beyond - p).abs() < 4.0 * (p * (1.0 - p) / a.len() as f64).sqrt(),
            "beyond 1σ: {beyond}"
        );
        correlation_is_small(&a, &b);
    }
}

/// Two tolerances draw independent streams: the sample correlation of
/// independent variables has standard error ≈ 1/√n; allow 4 of them.
fn correlation_is_small(a: &[f64], b: &[f64]) {
    let (ma, va) = moments(a);
    let (mb, vb) = moments(b);
    let n = a.len() as f64;
    let cov = a
        .iter()
        .zip(b)
        .map(|(x, y)| (x - ma) * (y - mb))
        .sum::<f64>()
        / (n - 1.0);
    let rho = cov / (va * vb).sqrt();
    assert!(rho.abs() < 4.0 / n.sqrt(), "correlation {rho}");
}
