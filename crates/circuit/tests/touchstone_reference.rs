//! The Touchstone reader against files written by a general-purpose RF
//! library (scikit-rf 2.2.0, tests/reference/touchstone/gen.py; see
//! docs/check-values.md, "Touchstone files"): every file, in versions 1.1
//! and 2.0, as S, Y and Z parameters, RI/MA/DB, Hz to GHz and reference
//! resistances of 25, 50 and 75 ohms, must give back the admittance matrix
//! the generator computed from circuit theory and handed to the library.

use num_complex::Complex64;
use std::path::PathBuf;
use tankwave_circuit::touchstone::{read, Parameter, Version};

fn dir() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../../tests/reference/touchstone")
}

fn expected(name: &str) -> Vec<Vec<f64>> {
    let text = std::fs::read_to_string(dir().join(format!("{name}.csv"))).unwrap();
    text.lines()
        .skip(1)
        .map(|l| l.split(',').map(|v| v.parse().unwrap()).collect())
        .collect()
}

#[test]
fn every_file_written_by_the_reference_library_reads_back() {
    let mut seen = 0;
    let mut kinds = std::collections::BTreeSet::new();
    for entry in std::fs::read_dir(dir()).unwrap() {
        let path = entry.unwrap().path();
        let name = path.file_name().unwrap().to_string_lossy().into_owned();
        let ext = path.extension().unwrap().to_string_lossy().into_owned();
        if ext == "py" || ext == "txt" || ext == "csv" {
            continue;
        }
        let text = std::fs::read_to_string(&path).unwrap();
        let net = read(&name, &text).unwrap_or_else(|e| panic!("{name}: {e}"));
        let network = name.split('_').next().unwrap();
        let rows = expected(network);
        assert_eq!(net.freqs.len(), rows.len(), "{name}");
        assert_eq!(net.ports, if network == "pi2" { 2 } else { 1 }, "{name}");
        kinds.insert((
            net.version == Version::Two,
            match net.parameter {
                Parameter::S => 'S',
                Parameter::Y => 'Y',
                Parameter::Z => 'Z',
            },
            net.ports,
        ));
        for (k, row) in rows.iter().enumerate() {
            // The library writes frequencies in the file's unit with 17
            // significant digits: equal to a few ulp.
            assert!(
                (net.freqs[k] - row[0]).abs() <= 1e-12 * row[0],
                "{name} point {k}: {} Hz, expected {} Hz",
                net.freqs[k],
                row[0]
            );
            let y = net.admittance_at(k).unwrap();
            let scale = y.iter().map(|v| v.norm()).fold(0.0, f64::max);
            for (i, v) in y.iter().enumerate() {
                let (re, im) = (row[1 + 2 * i], row[2 + 2 * i]);
                // Values are written with 17 significant digits; magnitude
                // and angle (or dB) round-trip within a few hundred ulp, and
                // the S-to-Y conversion divides by det(I + S), no smaller
                // than 1e-3 here: 1e-9 of the largest entry covers both.
                let err = ((v.re - re).powi(2) + (v.im - im).powi(2)).sqrt();
                assert!(
                    err <= 1e-9 * scale,
                    "{name} point {k} Y[{i}]: {v}, expected {re}{im:+}j"
                );
            }
        }
        // The impedance matrix (read with outside=short) is the inverse of
        // the same admittance: ‖Z·Y − I‖ ≤ δ‖Z‖‖Y‖ for a relative error δ
        // in Z, held to the same 1e-9 (definition of Z and Y; common
        // practice).
        for (k, row) in rows.iter().enumerate() {
            let z = net
                .impedance_at(k)
                .unwrap_or_else(|| panic!("{name} point {k} has no impedance"));
            let n = net.ports;
            let y: Vec<Complex64> = (0..n * n)
                .map(|i| Complex64::new(row[1 + 2 * i], row[2 + 2 * i]))
                .collect();
            let norm = |m: &[Complex64]| m.iter().map(|v| v.norm_sqr()).sum::<f64>().sqrt();
            let mut res = 0.0f64;
            for i in 0..n {
                for j in 0..n {
                    let p: Complex64 = (0..n).map(|m| z[i * n + m] * y[m * n + j]).sum();
                    let id = if i == j { 1.0 } else { 0.0 };
                    res = res.max((p - id).norm());
                }
            }
            let bound = 1e-9 * norm(&z) * norm(&y);
            assert!(
                res <= bound,
                "{name} point {k}: ‖ZY − I‖ = {res:.3e} > {bound:.3e}"
            );
        }
        seen += 1;
    }
    assert_eq!(seen, 16, "every file the generator writes is checked");
    // Both versions, S, Y and Z, one- and two-port are among them.
    assert!(kinds.contains(&(false, 'Y', 1)) && kinds.contains(&(true, 'Z', 2)));
    assert!(kinds.contains(&(true, 'S', 1)) && kinds.contains(&(false, 'S', 2)));
}
