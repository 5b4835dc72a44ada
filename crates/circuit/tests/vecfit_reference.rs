//! Vector fitting (`tankwave_circuit::rational`) against the vector fitting
//! of a general-purpose RF library: scikit-rf 2.2.0's `VectorFitting`, run
//! by the committed generator tests/reference/vecfit/gen.py (which also
//! wrote the Touchstone files; docs/check-values.md, "Vector fitting").
//!
//! Criteria (stated in docs/check-values.md):
//! - at the same number of poles, our RMS relative error over the file's
//!   points is no worse than twice the reference model's, both measured
//!   here with one measure (‖Y_model − Y‖/‖Y‖, Frobenius, per point);
//! - on the noisy rational two-port, both fits find its two pole pairs
//!   (known in closed form) and agree with each other, to 1e-3 relative,
//!   the size of the noise the generator added.

use num_complex::Complex64;
use std::path::PathBuf;
use tankwave_circuit::rational::{fit, fit_error, FitParams, Proportional};
use tankwave_circuit::touchstone::{read, MeasuredNetwork, Outside};

fn dir() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../../tests/reference/vecfit")
}

fn network(file: &str) -> MeasuredNetwork {
    let path = dir().join(file);
    let text = std::fs::read_to_string(&path).unwrap();
    let net = read(file, &text).unwrap();
    MeasuredNetwork::from_network(&net, Outside::Refuse).unwrap()
}

fn csv(file: &str) -> Vec<Vec<f64>> {
    std::fs::read_to_string(dir().join(file))
        .unwrap()
        .lines()
        .skip(1)
        .map(|l| l.split(',').map(|v| v.trim().parse().unwrap()).collect())
        .collect()
}

/// The reference model's Y at the file's points, row order per point.
fn reference_response(name: &str, n: &MeasuredNetwork) -> Vec<Complex64> {
    let rows = csv(&format!("{name}.fit.csv"));
    assert_eq!(rows.len(), n.freqs.len());
    let mut out = Vec::new();
    for (r, f) in rows.iter().zip(&n.freqs) {
        assert!((r[0] - f).abs() <= 1e-9 * f, "{} vs {f}", r[0]);
        for k in 0..n.ports * n.ports {
            out.push(Complex64::new(r[1 + 2 * k], r[2 + 2 * k]));
        }
    }
    out
}

/// RMS over points of the relative error of `model` against `data`.
fn rms_relative(ports: usize, model: &[Complex64], data: &[Complex64]) -> f64 {
    let n2 = ports * ports;
    let norm = |v: &[Complex64]| v.iter().map(|x| x.norm_sqr()).sum::<f64>().sqrt();
    let mut sum = 0.0;
    let mut k = 0;
    for (m, d) in model.chunks(n2).zip(data.chunks(n2)) {
        let diff: Vec<Complex64> = m.iter().zip(d).map(|(a, b)| a - b).collect();
        sum += (norm(&diff) / norm(d)).powi(2);
        k += 1;
    }
    (sum / k as f64).sqrt()
}

fn compare(name: &str, file: &str, poles: usize, prop: Proportional) -> (f64, f64, Vec<Complex64>) {
    let n = network(file);
    let reference = reference_response(name, &n);
    let ref_rms = rms_relative(n.ports, &reference, &n.values);
    let p = FitParams {
        min_order: poles,
        max_order: poles,
        proportional: prop,
        ..FitParams::default()
    };
    let (m, info) = fit(n.ports, &n.freqs, &n.values, &p).unwrap();
    let (rms, worst, _) = fit_error(&m, &n.freqs, &n.values);
    assert_eq!((rms, worst), (info.rms_error, info.worst_error));
    assert!(m.is_stable());
    assert!(
        rms <= 2.0 * ref_rms,
        "{name}: our RMS relative error {rms:.3e} against the reference's {ref_rms:.3e}"
    );
    (rms, ref_rms, m.terms.iter().map(|t| t.pole).collect())
}

#[test]
fn a_line_fed_antenna_fits_as_well_as_the_reference() {
    // 5 pole pairs, no proportional term, as the generator asked of scikit-rf.
    let (rms, ref_rms, _) = compare("feed1", "feed1.s1p", 10, Proportional::Never);
    // The network is not rational: neither fit is exact (the measure sees
    // a real error, not rounding).
    assert!(ref_rms > 1e-6 && rms > 1e-9, "{rms} {ref_rms}");
}

#[test]
fn a_lossy_line_two_port_fits_as_well_as_the_reference() {
    let (rms, ref_rms, _) = compare("line2", "line2.s2p", 12, Proportional::Never);
    assert!(ref_rms > 1e-6 && rms > 1e-9, "{rms} {ref_rms}");
}

#[test]
fn a_noisy_rational_two_port_gives_its_poles() {
    let (_, _, ours) = compare("bp2n", "bp2n.s2p", 4, Proportional::Always);
    // Closed-form poles of L s² + R s + 1/C (the generator's two branches).
    let exact = |r: f64, l: f64, c: f64| {
        let a = -r / (2.0 * l);
        Complex64::new(a, (1.0 / (l * c) - a * a).sqrt())
    };
    let truth = [exact(5.0, 1e-6, 500e-12), exact(3.0, 0.5e-6, 200e-12)];
    let theirs: Vec<Complex64> = csv("bp2n.poles.csv")
        .iter()
        .map(|r| Complex64::new(r[0], r[1]))
        .collect();
    let near = |set: &[Complex64], p: Complex64| {
        set.iter()
            .map(|q| (q - p).norm() / p.norm())
            .fold(f64::INFINITY, f64::min)
    };
    for t in truth {
        // 1e-3 relative: the generator's noise level (the pole moves by
        // about the data's relative error or less at a well-separated pole).
        assert!(near(&ours, t) < 1e-3, "ours miss {t}: {ours:?}");
        assert!(near(&theirs, t) < 1e-3, "reference misses {t}: {theirs:?}");
        let o = ours[ours
            .iter()
            .enumerate()
            .min_by(|a, b| (a.1 - t).norm().total_cmp(&(b.1 - t).norm()))
            .unwrap()
            .0];
        assert!(
            near(&theirs, o) < 1e-3,
            "ours {o} vs the reference's {theirs:?}"
        );
    }
}
