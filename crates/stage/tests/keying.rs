//! `analyze keying` through the stage layer: the quasi-static AM–AM curve
//! at full drive against the single-tone steady state, a linear stage whose
//! output envelope is the drive envelope scaled, and the self-biased demo
//! with a short and a long base-leak memory (quasi-static enough, and not).

mod common;

use tankwave_circuit::keying::KeyingSpec;
use tankwave_circuit::{Analysis, Circuit};
use tankwave_stage::keying::{keying, transfer_curve, QUASI_ENOUGH};
use tankwave_stage::{solve, Scope, SolveOptions};

fn spec(c: &Circuit) -> KeyingSpec {
    c.analyses
        .iter()
        .find_map(|a| match a {
            Analysis::Keying(k) => Some(k.clone()),
            _ => None,
        })
        .expect("analyze keying")
}

/// The keyed demo (netlists/keying/cw-7m1-keyed.tank) inlined, with the
/// base-leak capacitor `cbl` and its keying line replaced by `keying`.
fn demo(cbl: &str, keying: &str) -> Circuit {
    let text = common::inline("keying/cw-7m1-keyed.tank", |p| p, &[], false, "");
    let text = common::edit(text, "let cbl_c = 47nF", &format!("let cbl_c = {cbl}"));
    let text = common::edit(text, "analyze keying wpm=25 rise=5ms", keying);
    common::circuit(&text)
}

/// AM–AM at full drive is the single-tone steady state of the same
/// circuit, so they agree to the steady state's accuracy target
/// (power_error = 1e-4 of the output power, the default of `method=auto`,
/// docs/analyses.md). This check chose KEYING_HARMONICS: with 16 harmonics
/// the class-C demo's output power was 6.7e-4 low.
#[test]
fn am_am_at_full_drive_is_the_single_tone_steady_state() {
    let c = demo("47nF", "analyze keying wpm=25 rise=5ms");
    let r = solve(&c, &SolveOptions::scope(Scope::Requirements)).expect("steady state");
    let p1 = r
        .steady
        .expect("steady")
        .metrics
        .output
        .expect("output")
        .p1_w;
    let curve = transfer_curve(&c, &spec(&c), 4).expect("AM-AM");
    let full = curve.last().unwrap();
    assert_eq!(full.drive, 1.0);
    assert!(
        (full.pout_w - p1).abs() <= 1e-4 * p1,
        "AM-AM {} W against steady {} W",
        full.pout_w,
        p1
    );
    // the curve rises with the drive (a class-C stage: no output below the
    // turn-on of the junction, then growing)
    assert!(curve.windows(2).all(|w| w[1].pout_w >= w[0].pout_w));
}

/// A resistive divider is linear and has no memory: the output phasor is
/// the drive envelope times the full-drive phasor, exactly, by envelope
/// following as by the quasi-static path (to the Newton tolerance of each
/// slow step, 1e-6 relative: docs/analyses.md).
#[test]
fn a_linear_stage_passes_the_envelope_unchanged() {
    let text = "voltage vdrv src gnd wave=sine(amp=10V, freq=7MHz) internal=50Ohm\n\
        resistor rload src gnd 50Ohm\noutput rload\ninput vdrv\n\
        analyze steady freq=7MHz harmonics=4\n\
        analyze keying wpm=40 rise=3ms cycles=1\n";
    let c = common::circuit(text);
    let devices = tankwave_devices::instantiate(&c).unwrap();
    let k = keying(&c, &devices, &spec(&c), None).expect("keying");
    let full = k.key_down();
    // 10 V behind 50 ohm into 50 ohm: 5 V peak, X1 = 2.5 V two-sided
    assert!((full.norm() - 2.5).abs() < 1e-6 * 2.5, "{full}");
    for (i, (d, q)) in k.dynamic.iter().zip(&k.quasi).enumerate() {
        let want = full * k.drive[i];
        assert!(
            (d - want).norm() <= 1e-6 * full.norm(),
            "sample {i}: {d} vs {want}"
        );
        assert!(
            (q - want).norm() <= 1e-6 * full.norm(),
            "sample {i}: {q} vs {want}"
        );
    }
    assert!(k.departure <= 2e-6);
}

/// The self-biased demo: with the base leak's time constant 4.7 µs (short
/// against 5 ms edges) the quasi-static envelope is the dynamic one within
/// QUASI_ENOUGH; with 4.7 ms (comparable to the edges) the bias lags the
/// drive and the two differ by far more. The dynamic path's agreement with
/// a plain transient of a keyed self-biased stage is checked in
/// crates/solve/tests/envelope.rs and tests/it/envelope.rs.
#[test]
fn base_leak_memory_decides_whether_quasi_static_is_enough() {
    let short = demo("47nF", "analyze keying wpm=25 rise=5ms cycles=1");
    let devices = tankwave_devices::instantiate(&short).unwrap();
    let k = keying(&short, &devices, &spec(&short), None).expect("short memory");
    assert!(k.departure <= QUASI_ENOUGH, "departure {}", k.departure);

    let long = demo("47uF", "analyze keying wpm=25 rise=5ms cycles=1");
    let devices = tankwave_devices::instantiate(&long).unwrap();
    let k = keying(&long, &devices, &spec(&long), None).expect("long memory");
    assert!(
        k.departure > 10.0 * QUASI_ENOUGH,
        "departure {}",
        k.departure
    );
}

/// A raised-cosine-keyed linear stage against the analytic spectrum of a
/// pulse with raised-cosine edges, |E(f)| = W·|sinc(fW)|·|cos(πfT)/(1 −
/// 4f²T²)| (W the width at half amplitude, T the full edge; the source and
/// its numerical check: docs/check-values.md, "Keying"). The divider's
/// output envelope is the drive envelope times the key-down phasor, so the
/// dot train's lines are |E(m/P)|/P (P the period, Fourier series of a
/// periodic pulse — common practice) in amplitude relative to the key-down
/// carrier. Lines read from N = P/h samples differ from these by the
/// aliased lines m + qN, q ≠ 0 (the sum of |E((m+qN)/P)|/P over
/// |q| ≤ 50 is the bound, the rest smaller still as |E| falls like f⁻³),
/// plus 1e-9 for rounding; the divider is linear, so each slow step's
/// Newton iteration is exact to rounding.
#[test]
fn a_raised_cosine_keyed_linear_stage_has_the_analytic_sidebands() {
    let text = "voltage vdrv src gnd wave=sine(amp=10V, freq=7MHz) internal=50Ohm\n\
        resistor rload src gnd 50Ohm\noutput rload\ninput vdrv\n\
        analyze steady freq=7MHz harmonics=4\n\
        analyze keying wpm=40 rise=3ms cycles=1 span=2kHz\n";
    let c = common::circuit(text);
    let s = spec(&c);
    let devices = tankwave_devices::instantiate(&c).unwrap();
    let k = keying(&c, &devices, &s, None).expect("keying");
    let f = &k.figures;
    let period = 2.0 * s.unit;
    let w = s.unit;
    let t = tankwave_circuit::keying::EdgeShape::RaisedCosine.full_edge(s.rise);
    let e = |freq: f64| -> f64 {
        let x = std::f64::consts::PI * freq * w;
        let sinc = if x == 0.0 { 1.0 } else { x.sin() / x };
        let d = 1.0 - 4.0 * freq * freq * t * t;
        let edge = if d.abs() < 1e-12 {
            std::f64::consts::FRAC_PI_4
        } else {
            (std::f64::consts::PI * freq * t).cos() / d
        };
        (w * sinc * edge).abs()
    };
    let n = k.dynamic.len() as f64;
    let mut checked = 0;
    for (off, dbc) in f.sideband_offsets_hz.iter().zip(&f.sideband_dbc) {
        let want = e(*off) / period;
        let alias: f64 = (1..=50)
            .flat_map(|q| [q as f64, -(q as f64)])
            .map(|q| e(off + q * n / period) / period)
            .sum();
        let got = 10f64.powf(dbc / 20.0);
        assert!(
            (got - want).abs() <= alias + 1e-9,
            "offset {off} Hz: {got} against {want} (aliasing bound {alias})"
        );
        checked += 1;
    }
    assert!(checked > 100, "{checked} lines checked");
    // the carrier line of a 50 % dot train: half the amplitude, −6.02 dBc
    let zero = f
        .sideband_offsets_hz
        .iter()
        .position(|o| o.abs() < 1e-9)
        .unwrap();
    assert!((f.sideband_dbc[zero] + 6.0206).abs() < 1e-3);
}
