//! Low-pass ladders against the committed reference data of
//! tests/reference/design/gen_lowpass.py:
//! - g-values from the closed forms of G. L. Matthaei, L. Young,
//!   E. M. T. Jones, 1964, §4.05 and D. M. Pozar, 4th ed., §8.3, evaluated
//!   with numpy (orders 1–9; Butterworth and Chebyshev 0.01/0.1/0.5/1/3 dB);
//! - the attenuation of the analog prototype from scipy.signal (butter,
//!   cheby1, freqs_zpk), an independent general-purpose reference for the
//!   response of the scaled ladder built here.

use tankwave_design::*;

const DATA: &str = include_str!("../../../tests/reference/design/lowpass_reference.txt");

fn kind_of(name: &str, ripple: f64) -> FilterKind {
    match name {
        "butterworth" => FilterKind::Butterworth,
        _ => FilterKind::Chebyshev { ripple_db: ripple },
    }
}

fn nums(words: &[&str]) -> Vec<f64> {
    words
        .iter()
        .map(|w| w.parse::<f64>().expect("number in reference file"))
        .collect()
}

/// Every g-value (and g_{n+1}) agrees with the reference to 1e-10 relative:
/// the file prints 12 significant digits.
#[test]
fn g_values_match_reference() {
    let mut count = 0;
    for line in DATA.lines().filter(|l| l.starts_with("g ")) {
        let w: Vec<&str> = line.split_whitespace().collect();
        let ripple: f64 = w[2].parse().unwrap();
        let n: usize = w[3].parse().unwrap();
        let want = nums(&w[4..]);
        let p = prototype(kind_of(w[1], ripple), n).unwrap();
        assert_eq!(want.len(), n + 1, "{line}");
        for (k, (g, r)) in p.g.iter().chain([&p.g_load]).zip(&want).enumerate() {
            assert!((g - r).abs() <= 1e-10 * r.abs(), "{line}: g{} = {g}", k + 1);
        }
        count += 1;
    }
    assert_eq!(count, 6 * 9, "all g records read");
}

/// The scaled ladder (10 MHz cutoff, 50 Ω, both first-element forms) loses
/// what scipy's analog prototype does at each Ω. Both are exact for a lossless
/// ladder; 1e-6 dB + 1e-9 relative covers rounding in the 12-digit file and in
/// evaluating losses up to ~200 dB.
#[test]
fn ladder_loss_matches_scipy() {
    let fc = 10e6;
    let mut count = 0;
    for line in DATA.lines().filter(|l| l.starts_with("loss ")) {
        let w: Vec<&str> = line.split_whitespace().collect();
        let ripple: f64 = w[2].parse().unwrap();
        let n: usize = w[3].parse().unwrap();
        let omega: f64 = w[4].parse().unwrap();
        let want: f64 = w[5].parse().unwrap();
        let kind = kind_of(w[1], ripple);
        // The prototype formula itself.
        let la = attenuation_db(kind, n, omega).unwrap();
        assert!(
            (la - want).abs() <= 1e-6 + 1e-9 * want,
            "{line}: formula {la}"
        );
        for first in [FirstElement::Shunt, FirstElement::Series] {
            if n == 1 && first == FirstElement::Shunt {
                continue; // a lone shunt capacitor has no separate output node
            }
            let p = LowpassParams {
                first,
                fundamental: Some(omega * fc),
                harmonics: 1,
                ..LowpassParams::default()
            };
            let d = design_lowpass(kind, n, fc, 50.0, &p).unwrap();
            let got = d.attenuation[0].network_db;
            assert!(
                (got - want).abs() <= 1e-6 + 1e-9 * want,
                "{line} {first:?}: ladder {got}"
            );
        }
        count += 1;
    }
    assert_eq!(count, 6 * 9 * 8, "all loss records read");
}
