//! Multi-tone harmonic balance against outside results: the two-tone
//! spectrum of an exponential junction (modified Bessel functions, scipy
//! reference), the textbook third-order intermodulation law, the AC analysis
//! on a linear network, and single-tone balance on commensurate tones.

mod support;
use num_complex::Complex64;
use support::*;
use tankwave_circuit::ir::{DiodeParams, ElementId, Shape, Waveform};
use tankwave_circuit::SteadyMethod;
use tankwave_devices::{instantiate, DeviceSet, UnknownId};
use tankwave_solve::*;

fn tone(amp: f64, freq: f64, phase: f64) -> Waveform {
    Waveform {
        dc: 0.0,
        shape: Some(Shape::Sine {
            amp,
            freq,
            phase,
            offset: 0.0,
            delay: 0.0,
            rise: 0.0,
        }),
    }
}

fn unknown(d: &DeviceSet, name: &str) -> UnknownId {
    d.unknown(name)
        .unwrap_or_else(|| panic!("no unknown {name}"))
}

/// Two voltage sources in series (tones f1, f2, amplitude `amp` each, as
/// cosines) across an ideal junction of saturation current `is`.
fn junction(amp: f64, f1: f64, f2: f64, is: f64) -> B {
    let cos = std::f64::consts::FRAC_PI_2;
    let mut b = B::new();
    b.vsrc("v1", "a", "m", tone(amp, f1, cos), 0.0);
    b.vsrc("v2", "m", "gnd", tone(amp, f2, cos), 0.0);
    b.diode(
        "d1",
        "a",
        "gnd",
        DiodeParams {
            sat_current: is,
            ..DiodeParams::default()
        },
    );
    b
}

fn params(tones: &[f64], order: usize) -> ToneParams {
    let mut p = ToneParams {
        tones: tones.to_vec(),
        order,
        ..ToneParams::default()
    };
    // No junction shunt conductance: the closed forms have none.
    p.balance.junction_leak = 0.0;
    p
}

/// `[(a, m, n, I_m(a)·I_n(a))]` from tests/reference/solve/two_tone_bessel.py.
fn bessel_products() -> Vec<(f64, i32, i32, f64)> {
    let path = concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/../../tests/reference/solve/two_tone_bessel.csv"
    );
    let text = std::fs::read_to_string(path).expect("reference data");
    text.lines()
        .skip(1)
        .map(|l| {
            let f: Vec<&str> = l.split(',').collect();
            (
                f[0].parse().unwrap(),
                f[1].parse().unwrap(),
                f[2].parse().unwrap(),
                f[3].parse().unwrap(),
            )
        })
        .collect()
}

#[test]
fn two_tone_junction_current_is_a_product_of_bessel_functions() {
    // i(t) = IS·e^{a cos ω1t}·e^{a cos ω2t} − IS: the coefficient of
    // e^{j(mω1+nω2)t} is IS·I_m(a)·I_n(a) (A&S eq. 9.6.34; values from
    // scipy.special.iv, tests/reference/solve/two_tone_bessel.py).
    let (f1, f2, is) = (14.0e6, 14.001e6, 1e-12);
    let vt = vt(B::new().c.temperature_k);
    let reference = bessel_products();
    for level in [0.5, 1.0, 2.0] {
        let b = junction(level * vt, f1, f2, is);
        let d = instantiate(&b.c).unwrap();
        let mut p = params(&[f1, f2], 15);
        p.tol.rel_tolerance = 1e-10;
        let s = multitone(&b.c, &d, &p).unwrap();
        eprintln!("a = {level}: {:?}", s.info);
        // The current into the junction is the current out of v2's + terminal
        // into the series pair: minus the branch current of the sources.
        let i = unknown(&d, "I[v1]");
        let dc = is * (bessel_i0sq(&reference, level) - 1.0);
        let mut worst = 0.0f64;
        for &(a, m, n, v) in reference.iter().filter(|r| r.0 == level) {
            for (mm, nn) in [(m, n), (m, -n), (-m, n)] {
                let got = -s.coefficient(&[mm, nn], i).unwrap();
                let expect = if m == 0 && n == 0 { dc } else { is * v };
                let e = (got - Complex64::new(expect, 0.0)).norm();
                worst = worst.max(e / dc);
                // The voltage is pinned, so the current is sampled from an
                // entire function: FFT rounding (~1e-13 of the largest term)
                // and the products beyond order 15 that the box truncation
                // folds in (I_16(2)/I_0(2) < 1e-13) separate them.
                assert!(e <= 1e-8 * dc, "a = {a}, ({mm}, {nn}): {got} vs {expect} A");
            }
        }
        eprintln!("  worst error / DC term: {worst:.2e}");
    }
}

fn bessel_i0sq(reference: &[(f64, i32, i32, f64)], a: f64) -> f64 {
    reference
        .iter()
        .find(|r| r.0 == a && r.1 == 0 && r.2 == 0)
        .map(|r| r.3)
        .unwrap()
}

#[test]
fn third_order_products_follow_the_cubic_law_and_its_three_to_one_slope() {
    // Textbook weak nonlinearity: i = Σ a_k v^k with two tones of amplitude A
    // gives a product at 2f1 − f2 of amplitude (3/4)·a3·A³ (e.g. any
    // communications-circuits text deriving intermodulation from a power
    // series; the law itself is common practice). For the exponential
    // junction a3 = IS/(6·Vt³) at zero bias. The next term of the series
    // raises the product by the factor (1 + 5x²/24 + …), x = A/Vt (from the
    // Bessel series I_1(x)I_2(x) = (x³/16)(1 + 5x²/24 + …), A&S eq. 9.6.10):
    // the tolerance is x²/4, above that correction.
    let (f1, f2, is) = (7.0e6, 7.002e6, 1e-12);
    let vt = vt(B::new().c.temperature_k);
    let a3 = is / (6.0 * vt.powi(3));
    let mut im3 = Vec::new();
    for x in [0.01, 0.02, 0.04] {
        let amp = x * vt;
        let b = junction(amp, f1, f2, is);
        let d = instantiate(&b.c).unwrap();
        let mut p = params(&[f1, f2], 5);
        p.tol.rel_tolerance = 1e-10;
        let s = multitone(&b.c, &d, &p).unwrap();
        let i = unknown(&d, "I[v1]");
        let law = 0.75 * a3 * amp.powi(3);
        for m in [[2, -1], [-1, 2]] {
            let got = s.amplitude(&m, i).unwrap();
            let rel = (got / law - 1.0).abs();
            eprintln!("x = {x}: IM3 {m:?} {got:.6e} A vs law {law:.6e} A (rel {rel:.2e})");
            assert!(rel <= x * x / 4.0, "{got} vs {law}");
        }
        im3.push(s.amplitude(&[2, -1], i).unwrap());
    }
    // 3:1 slope: each doubling of the tones raises IM3 by 3·6.02 dB, less
    // the change of the correction above (below 5·(2x)²/24 ≈ 3e-4 → 3e-3 dB).
    for w in im3.windows(2) {
        let slope = 20.0 * (w[1] / w[0]).log10() / (20.0 * 2f64.log10());
        eprintln!("slope {slope:.5}");
        assert!((slope - 3.0).abs() < 2e-3, "{slope}");
    }
}

/// The pi network of balance_linear.rs (2.9 Ω → 50 Ω at 7.1 MHz) driven by
/// two tones in series.
fn pi_network(f1: f64, f2: f64) -> (B, [ElementId; 2]) {
    let mut b = B::new();
    let v1 = b.vsrc("v1", "in", "m", tone(2.0, f1, 0.0), 0.0);
    let v2 = b.vsrc("v2", "m", "gnd", tone(1.0, f2, 0.3), 0.0);
    b.r("rs", "in", "a", 2.9);
    b.cap("c1", "a", "gnd", 17.0370e-9);
    b.ind("l1", "a", "b", 135.430e-9, 0.0);
    b.cap("c2", "b", "gnd", 4.4832e-9);
    b.r("rl", "b", "gnd", 50.0);
    b.r("rb", "a", "gnd", 1e6);
    (b, [v1, v2])
}

#[test]
fn a_linear_network_matches_the_ac_analysis_at_each_tone() {
    // Each tone of a linear circuit is its own phasor problem: harmonic 1 of
    // each tone equals the AC response times the source phasor
    // (amp·sin(ωt + φ) has the two-sided coefficient amp·e^{jφ}/(2j)).
    // 1e-9 relative is far above the rounding of the LU solves (~1e-14).
    let (f1, f2) = (7.1e6, 7.1e6 + 1e3);
    let (b, vs) = pi_network(f1, f2);
    let d = instantiate(&b.c).unwrap();
    for reduce in [true, false] {
        let mut p = params(&[f1, f2], 3);
        p.balance.reduce = reduce;
        let s = multitone(&b.c, &d, &p).unwrap();
        eprintln!("reduce {reduce}: {:?}", s.info);
        let tones = [([1, 0], f1, 2.0, 0.0, vs[0]), ([0, 1], f2, 1.0, 0.3, vs[1])];
        for (m, f, amp, phase, src) in tones {
            let ac = tankwave_solve::ac(
                &b.c,
                &d,
                &AcParams {
                    from: f,
                    to: f,
                    points: 1,
                    source: Some(src),
                    ..AcParams::default()
                },
            )
            .unwrap();
            let src = Complex64::from_polar(amp, phase) / Complex64::new(0.0, 2.0);
            for (k, name) in ac.names.iter().enumerate() {
                let u = UnknownId::new(k);
                let got = s.coefficient(&m, u).unwrap();
                let expect = ac.x[0][k] * src;
                let scale = expect.norm().max(1e-3 * amp);
                let e = (got - expect).norm() / scale;
                assert!(
                    e < 1e-9,
                    "{name} at {m:?}: {got} vs AC {expect} (rel {e:.2e})"
                );
            }
        }
        // A linear circuit has no mixing products.
        let vb = unknown(&d, "V[b]");
        assert!(s.amplitude(&[2, -1], vb).unwrap() < 1e-12);
    }
}

/// A junction stage with memory: two tones in series behind 50 Ω, a
/// parallel tank at the input node, and the junction returned through a
/// self-bias network (R ‖ C) whose time constant spans many spacing periods.
fn stage_with_memory(f1: f64, f2: f64, amp: f64) -> B {
    let mut b = B::new();
    b.vsrc("v1", "in", "m", tone(amp, f1, 0.0), 0.0);
    b.vsrc("v2", "m", "gnd", tone(amp, f2, 0.7), 0.0);
    b.r("rs", "in", "a", 50.0);
    let f0 = 0.5 * (f1 + f2);
    let l = 1e-6;
    let c = 1.0 / ((2.0 * std::f64::consts::PI * f0).powi(2) * l);
    b.ind("lt", "a", "gnd", l, 0.5);
    b.cap("ct", "a", "gnd", c);
    b.diode(
        "d1",
        "a",
        "k",
        DiodeParams {
            sat_current: 1e-12,
            cj0: 2e-12,
            ..DiodeParams::default()
        },
    );
    b.r("rk", "k", "gnd", 2e3);
    b.cap("ck", "k", "gnd", 10e-9);
    b
}

#[test]
fn commensurate_tones_match_single_tone_balance_at_the_spacing() {
    // Tones at 3Δ and 4Δ make a periodic problem at Δ: every product
    // (m, n) lands on harmonic 3m + 4n of Δ, and the sum of the multi-tone
    // coefficients over each harmonic is the single-tone solution there
    // (the quasi-periodic solution restricted to one line of its torus).
    // The box leaves out products beyond order K per tone and folds them
    // onto kept ones: each harmonic may differ by the products just outside
    // the box, bounded by the 4K kept products on its edge times the
    // reported edge ratio (plus the Newton tolerance), and the difference
    // must shrink as the box grows (spectral convergence).
    let delta = 1e6;
    let (f1, f2) = (3.0 * delta, 4.0 * delta);
    let b = stage_with_memory(f1, f2, 0.3);
    let d = instantiate(&b.c).unwrap();
    let tol = Tolerances {
        rel_tolerance: 1e-9,
        ..Tolerances::default()
    };
    let single = steady(
        &b.c,
        &d,
        &SteadyParams {
            freq: delta,
            harmonics: 128,
            method: SteadyMethod::Balance,
            tol,
            balance: BalanceParams {
                junction_leak: 0.0,
                raise_harmonics: false,
                ..BalanceParams::default()
            },
            ..SteadyParams::default()
        },
    )
    .unwrap();
    eprintln!("single tone: {:?}", single.info.balance);
    let k = unknown(&d, "V[k]");
    let a = unknown(&d, "V[a]");
    let largest = (0..=40)
        .map(|h| coef(single.wave(a), h).norm())
        .fold(0.0f64, f64::max);
    let mut worst_by_order = Vec::new();
    for order in [10, 20] {
        let mut p = params(&[f1, f2], order);
        p.tol = tol;
        let s = multitone(&b.c, &d, &p).unwrap();
        eprintln!("multi-tone K = {order}: {:?}", s.info);
        let bound = (4 * order) as f64 * s.info.edge * largest + 10.0 * tol.rel_tolerance * largest;
        let mut worst = 0.0f64;
        for u in [a, k] {
            let mut sum = vec![Complex64::new(0.0, 0.0); 41];
            for (prod, row) in s.products.iter().zip(&s.x) {
                let h = 3 * prod.orders[0] + 4 * prod.orders[1];
                // each kept product stands for the pair ±m: the pair adds c at
                // h and conj c at −h; a pair at h = 0 (m ≠ 0) adds both to DC
                let c = row[u.index()];
                let dc_pair = h == 0 && prod.orders.iter().any(|m| *m != 0);
                let (h, c) = match h {
                    0 if dc_pair => (0, c + c.conj()),
                    h if h >= 0 => (h, c),
                    h => (-h, c.conj()),
                };
                if let Some(slot) = sum.get_mut(h as usize) {
                    *slot += c;
                }
            }
            for (h, got) in sum.iter().enumerate() {
                let expect = coef(single.wave(u), h);
                let e = (got - expect).norm();
                worst = worst.max(e);
                assert!(
                    e <= bound,
                    "K = {order}, harmonic {h} of {}: {got} vs {expect} (bound {bound:.2e})",
                    d.name(u)
                );
            }
        }
        eprintln!("  worst difference {worst:.2e} V (bound {bound:.2e} V)");
        worst_by_order.push(worst);
    }
    assert!(
        worst_by_order[1] < 1e-2 * worst_by_order[0],
        "{worst_by_order:?}"
    );
}

#[test]
fn closely_spaced_tones_cost_what_widely_spaced_ones_do() {
    // The spacing enters only the frequency of each slot: a spacing of 1e-5
    // of the carrier gives the same system and (at the same drive) a
    // Newton count within a step or two of a spacing of 1e-2.
    let f0 = 14.0e6;
    let mut infos = Vec::new();
    for rel in [1e-2, 1e-5, 1e-7] {
        let (f1, f2) = (f0, f0 * (1.0 + rel));
        let b = stage_with_memory(f1, f2, 0.3);
        let d = instantiate(&b.c).unwrap();
        let s = multitone(&b.c, &d, &params(&[f1, f2], 7)).unwrap();
        eprintln!("spacing {rel:e}: {:?}", s.info);
        assert!(s.info.residual <= s.info.tolerance);
        infos.push(s.info);
    }
    for i in &infos[1..] {
        assert_eq!(i.system_size, infos[0].system_size);
        assert_eq!(i.fft_size, infos[0].fft_size);
        assert!(
            i.iterations <= infos[0].iterations + 3,
            "{i:?} vs {:?}",
            infos[0]
        );
    }
}

#[test]
fn a_source_off_the_tones_is_refused() {
    let b = junction(0.01, 1e6, 1.1e6, 1e-12);
    let d = instantiate(&b.c).unwrap();
    let e = multitone(&b.c, &d, &params(&[1e6, 1.2e6], 3)).unwrap_err();
    assert!(e.to_string().contains("'v2'"), "{e}");
    let e = multitone(&b.c, &d, &params(&[1e6, 1e6], 3)).unwrap_err();
    assert!(e.to_string().contains("same frequency"), "{e}");
    let e = multitone(&b.c, &d, &params(&[1e6, 1.1e6, 1.2e6, 1.3e6, 1.4e6], 1)).unwrap_err();
    assert!(e.to_string().contains("tones"), "{e}");
}

#[test]
fn tones_given_to_a_source_replace_its_sine() {
    // The same drive written as the sources' own sines and as replacement
    // tones gives the same solution (to rounding: one path samples the
    // source, the other places its phasor through the unit excitation).
    let (f1, f2) = (10e6, 10.01e6);
    let amp = 0.02;
    let b = stage_with_memory(f1, f2, amp);
    let d = instantiate(&b.c).unwrap();
    let own = multitone(&b.c, &d, &params(&[f1, f2], 5)).unwrap();
    let mut other = stage_with_memory(f1, f2, amp);
    // v1 carries both tones (v2 is left at zero), the second with v2's phase
    for e in &mut other.c.elements {
        if let tankwave_circuit::ElementKind::VoltageSource { wave, .. } = &mut e.kind {
            if e.name == "v2" {
                wave.shape = None;
            } else {
                wave.shape = Some(Shape::Square {
                    base: 0.0,
                    top: 1.0,
                    start: 0.0,
                    rise: 1e-9,
                    fall: 1e-9,
                    hold: 1e-9,
                    every: 0.0,
                });
            }
        }
    }
    let d2 = instantiate(&other.c).unwrap();
    let v1 = other
        .c
        .elements
        .iter()
        .position(|e| e.name == "v1")
        .unwrap();
    let v1 = ElementId::new(v1);
    let mut p = params(&[f1, f2], 5);
    p.drives = vec![
        ToneDrive {
            source: v1,
            tone: 0,
            amp,
            phase: 0.0,
        },
        ToneDrive {
            source: v1,
            tone: 1,
            amp,
            phase: 0.7,
        },
    ];
    let split = multitone(&other.c, &d2, &p).unwrap();
    for name in ["V[a]", "V[k]"] {
        let (u, u2) = (unknown(&d, name), unknown(&d2, name));
        for m in [[0, 0], [1, 0], [0, 1], [2, -1], [-1, 2], [1, 1]] {
            let (a, b) = (
                own.coefficient(&m, u).unwrap(),
                split.coefficient(&m, u2).unwrap(),
            );
            assert!((a - b).norm() <= 1e-9 * amp, "{name} at {m:?}: {a} vs {b}");
        }
    }
}
