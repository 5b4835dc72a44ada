//! The Floquet multipliers that verify a periodic steady state
//! (tankwave_solve::floquet) against outside values: a series RLC against
//! its closed form exp(λT), a half-wave rectifier against a scipy reference
//! (tests/reference/solve/floquet_rectifier.py), and the margin δ against
//! the TR-BDF2 error constant. Sources: docs/check-values.md, "Periodic
//! steady state" (Floquet multipliers, TR-BDF2).

mod support;
use num_complex::Complex64;
use support::*;
use tankwave_circuit::ir::{DiodeParams, Waveform};
use tankwave_circuit::SteadyMethod;
use tankwave_devices::instantiate;
use tankwave_solve::*;

/// TR-BDF2's local error constant for γ = 2 − √2, (−3γ² + 4γ − 2)/(12(2 − γ))
/// (M. E. Hosea, L. F. Shampine, Appl. Numer. Math. 20, 1996, from memory):
/// one step multiplies e^{λt} by e^{z}(1 + C z³ + O(z⁴)), z = λh.
fn trbdf2_error_constant() -> f64 {
    let g = 2.0 - std::f64::consts::SQRT_2;
    (-3.0 * g * g + 4.0 * g - 2.0) / (12.0 * (2.0 - g))
}

fn multipliers(info: &SteadyInfo) -> Vec<Complex64> {
    let f = info
        .floquet
        .as_ref()
        .expect("a verified orbit carries its multipliers");
    f.multipliers
        .iter()
        .map(|(re, im)| Complex64::new(*re, *im))
        .collect()
}

#[test]
fn series_rlc_multipliers_are_exp_lambda_t() {
    // Series R-L-C driven by a sine: natural frequencies
    // λ = −α ± jω_d, α = R/(2L), ω_d = √(1/(LC) − α²) (any circuits text;
    // common practice), so the multipliers over a period T are exp(λT).
    let (r, l, c, f) = (2.0, 1e-6, 1e-9, 2e6);
    let mut b = B::new();
    b.vsrc(
        "vs",
        "in",
        "gnd",
        Waveform {
            dc: 0.0,
            shape: Some(sine(1.0, f)),
        },
        0.0,
    );
    b.r("r1", "in", "a", r);
    b.ind("l1", "a", "b", l, 0.0);
    b.cap("c1", "b", "gnd", c);
    let d = instantiate(&b.c).unwrap();
    let alpha = r / (2.0 * l);
    let wd = (1.0 / (l * c) - alpha * alpha).sqrt();
    let t = 1.0 / f;
    for steps in [256usize, 1024] {
        let p = SteadyParams {
            freq: f,
            harmonics: 8,
            method: SteadyMethod::Shooting,
            steps_per_period: steps,
            ..SteadyParams::default()
        };
        let s = steady(&b.c, &d, &p).unwrap();
        let mu = multipliers(&s.info);
        let lambda = Complex64::new(-alpha, wd);
        let exact = (lambda * t).exp();
        // Over N steps the discrete map is exp(λT)(1 + N·C·z³ + …): the
        // first-order relative error N·|C|·|z|³; the next term is smaller by
        // |z| (0.06 at 256 steps).
        let z = (lambda * t / steps as f64).norm();
        let tol = steps as f64 * trbdf2_error_constant().abs() * z.powi(3) * (1.0 + z);
        for want in [exact, exact.conj()] {
            let err = mu
                .iter()
                .take(2)
                .map(|m| (m - want).norm() / want.norm())
                .fold(f64::INFINITY, f64::min);
            eprintln!(
                "RLC, {steps} steps: μ = {want:.6}, relative error {err:.3e} (bound {tol:.3e})"
            );
            assert!(err <= tol, "{mu:?} against {want}");
        }
        // The other unknowns are algebraic: their multipliers vanish (the
        // L-stable integrator maps them to zero), below the pair's by far.
        if let Some(third) = mu.get(2) {
            assert!(third.norm() < 1e-6 * exact.norm(), "{mu:?}");
        }
    }
}

/// v(0) and the multiplier of the scipy reference.
fn rectifier_reference() -> (f64, f64) {
    let path = concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/../../tests/reference/solve/floquet_rectifier.txt"
    );
    let text = std::fs::read_to_string(path).expect("reference data");
    let get = |key: &str| -> f64 {
        text.lines()
            .find_map(|l| l.strip_prefix(key))
            .and_then(|v| v.trim().parse().ok())
            .expect(key)
    };
    (get("v_start_V "), get("multiplier "))
}

#[test]
fn rectifier_multiplier_matches_scipy_and_converges_at_second_order() {
    let (v0_ref, mu_ref) = rectifier_reference();
    let mut b = B::new();
    b.c.temperature_k = 298.15;
    b.vsrc(
        "vs",
        "in",
        "gnd",
        Waveform {
            dc: 0.0,
            shape: Some(sine(10.0, 1e3)),
        },
        0.0,
    );
    b.r("rs", "in", "a", 100.0);
    b.diode(
        "d1",
        "a",
        "out",
        DiodeParams {
            sat_current: 1e-14,
            emission: 1.0,
            t_measured: 298.15,
            ..DiodeParams::default()
        },
    );
    b.r("rl", "out", "gnd", 1e3);
    b.cap("cl", "out", "gnd", 1e-6);
    let d = instantiate(&b.c).unwrap();
    let k = d.names.iter().position(|n| n == "V[out]").unwrap();
    let mut errors = Vec::new();
    for steps in [1024usize, 4096] {
        let p = SteadyParams {
            freq: 1e3,
            harmonics: 8,
            method: SteadyMethod::Shooting,
            steps_per_period: steps,
            ..SteadyParams::default()
        };
        let s = steady(&b.c, &d, &p).unwrap();
        let mu = multipliers(&s.info);
        // one state (the load capacitor): one multiplier, the rest vanish
        let err = (mu[0].re - mu_ref).abs() / mu_ref;
        eprintln!(
            "rectifier, {steps} steps: v(0) {:.9} V (reference {v0_ref:.9} V), μ {:.9} (reference {mu_ref:.9}), relative error {err:.3e}",
            s.x[k][0], mu[0].re
        );
        assert!(mu[0].im.abs() < 1e-12, "{mu:?}");
        assert!(mu.get(1).is_none_or(|m| m.norm() < 1e-6 * mu_ref), "{mu:?}");
        errors.push(err);
    }
    // TR-BDF2 is second order: four times the steps cut the error about
    // sixteenfold (measured 1.1e-5 → 6.8e-7). A multiplier converging to a
    // wrong value would stall instead. Eightfold (half the order's factor)
    // allows for the switching instants, which fall between steps.
    assert!(errors[1] <= errors[0] / 8.0, "{errors:?}");
}

#[test]
fn margin_is_the_integrators_damping_of_the_drive_frequency() {
    // δ = 1 − |R(j2π/N)|^N. With R(z) = e^{z}(1 + C z³ + O(z⁴)) and z = jθ
    // the C z³ term is imaginary (a phase error), so the damping per step
    // is of order θ⁴ and over N steps δ ∝ N·θ⁴ ∝ N⁻³: doubling N divides δ
    // by 8 (Hosea and Shampine's error expansion, docs/check-values.md).
    for n in [64usize, 128, 256, 512] {
        let ratio = floquet::margin(2 * n) / floquet::margin(n);
        assert!((ratio - 0.125).abs() < 0.01, "N = {n}: ratio {ratio}");
        assert!(floquet::margin(n) > 0.0);
    }
}
