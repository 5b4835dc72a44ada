//! `analyze keying` and the `offset` rules of masks: what elaborates, with
//! which values, and what is refused with which code; the keying envelope
//! against its definition.

use tankwave_circuit::keying::{EdgeShape, KeyingEnvelope, KeyingSpec, Pattern};
use tankwave_circuit::*;

const STAGE: &str = "voltage vdrv src gnd wave=sine(amp=10V, freq=7MHz) internal=50Ohm\n\
    voltage vdc dc gnd dc=12V\n\
    resistor rdc dc gnd 1kOhm\n\
    resistor rload src gnd 50Ohm\n\
    output rload\ninput vdrv\n\
    analyze steady freq=7MHz harmonics=4\n";

fn load(extra: &str) -> Result<Elaborated, LoadError> {
    load_str("t.tank", &format!("{STAGE}{extra}"), &Overrides::default())
}

fn codes(extra: &str) -> Vec<String> {
    match load(extra) {
        Ok(_) => Vec::new(),
        Err(e) => e
            .diagnostics
            .iter()
            .filter(|d| d.is_error())
            .map(|d| d.code.to_string())
            .collect(),
    }
}

fn spec(extra: &str) -> KeyingSpec {
    let e = load(extra).unwrap_or_else(|e| panic!("{:#?}", e.diagnostics));
    e.circuit
        .analyses
        .iter()
        .find_map(|a| match a {
            Analysis::Keying(k) => Some(k.clone()),
            _ => None,
        })
        .expect("analyze keying")
}

#[test]
fn speed_in_wpm_is_counted_in_paris() {
    // ITU-R M.1677-1 (from memory): PARIS is 50 units, so 1 unit = 1.2 s / wpm
    let k = spec("analyze keying wpm=20\n");
    assert!((k.unit - 0.06).abs() < 1e-15);
    assert!((k.baud() - 50.0 / 3.0).abs() < 1e-12);
    // defaults of the option table: dots, raised cosine, a tenth of a unit, K = 5
    assert_eq!(k.pattern, Pattern::Dots);
    assert_eq!(k.shape, EdgeShape::RaisedCosine);
    assert!((k.rise - 0.006).abs() < 1e-15);
    assert_eq!(k.fall, k.rise);
    assert_eq!(k.k_factor, 5.0);
    assert_eq!(k.cycles, 2);
    // B·K: ITU Radio Regulations Appendix 1, telegraphy, K = 5 for fading circuits
    assert!((k.necessary_bandwidth() - 5.0 * 50.0 / 3.0).abs() < 1e-9);
}

#[test]
fn every_option_is_read() {
    let k = spec(
        "analyze keying baud=10 pattern=paris shape=gaussian rise=4ms fall=6ms source=vdrv \
         cycles=3 step=0.5ms rbw=5Hz span=2kHz k_factor=3\n",
    );
    assert_eq!(k.unit, 0.1);
    assert_eq!(k.pattern, Pattern::Paris);
    assert_eq!(k.shape, EdgeShape::Gaussian);
    assert_eq!((k.rise, k.fall), (0.004, 0.006));
    assert!(k.source.is_some());
    assert_eq!(k.cycles, 3);
    assert_eq!(k.step, Some(0.0005));
    assert_eq!(k.rbw, Some(5.0));
    assert_eq!(k.span, Some(2000.0));
    assert_eq!(k.k_factor, 3.0);
}

#[test]
fn bad_keyings_are_refused_with_their_codes() {
    let has = |extra: &str, code: &str| {
        let c = codes(extra);
        assert!(c.iter().any(|x| x == code), "{extra}: {c:?}");
    };
    has("analyze keying\n", "missing-option");
    has("analyze keying wpm=20 baud=10\n", "missing-option");
    has("analyze keying wpm=1000\n", "bad-value");
    has("analyze keying wpm=0.1\n", "bad-value");
    // rise longer than half a unit (30 ms at 20 wpm)
    has("analyze keying wpm=20 rise=31ms\n", "bad-value");
    has("analyze keying wpm=20 fall=40ms\n", "bad-value");
    // edges shorter than 10 carrier periods (7 MHz: 1.43 us)
    has("analyze keying wpm=20 rise=1us step=1ms\n", "bad-value");
    has("analyze keying wpm=20 cycles=21\n", "bad-value");
    has("analyze keying wpm=20 step=20ms\n", "bad-value");
    has("analyze keying wpm=20 pattern=dashes\n", "unknown-keyword");
    has("analyze keying wpm=20 shape=square\n", "unknown-keyword");
    has("analyze keying wpm=20 source=rload\n", "element-kind");
    // a source without a sine
    has("analyze keying wpm=20 source=vdc\n", "element-kind");
    // too many slow steps: 20 cycles of PARIS at 0.5 wpm in 1 ms steps = 2.4 M
    has(
        "analyze keying wpm=0.5 pattern=paris cycles=20 step=1ms\n",
        "too-large",
    );
}

#[test]
fn offset_rules_belong_to_sidebands() {
    let e = load(
        "mask clicks {\n  offset 100Hz to 1kHz below 30dB\n  offset 1kHz to 10kHz below 50dB\n}\n\
         analyze keying wpm=20\nrequire sidebands <= clicks\nrequire key_rise >= 3ms\n",
    )
    .unwrap_or_else(|e| panic!("{:#?}", e.diagnostics));
    let m = &e.circuit.masks[0];
    assert_eq!(
        m.rules[0].range,
        MaskRange::Offset {
            from: 100.0,
            to: 1000.0
        }
    );
    assert_eq!(e.circuit.requirements[0].metric.figure, Figure::Sidebands);
    assert_eq!(e.circuit.requirements[1].bound, Bound::Value(0.003));
    // a sideband mask takes only <=
    assert!(
        codes("mask clicks { offset 1Hz to 2Hz below 3dB }\nrequire sidebands >= clicks\n")
            .iter()
            .any(|c| c == "syntax")
    );
    // an offset range goes upward
    assert!(!codes("mask clicks { offset 2kHz to 1kHz below 3dB }\n").is_empty());
}

#[test]
fn the_envelope_is_the_rectangle_smoothed_by_the_edge() {
    // a dot train at 25 wpm with 5 ms raised-cosine edges: period 96 ms,
    // key-down from 24 ms to 72 ms at half amplitude
    let k = KeyingSpec::new(
        1.2 / 25.0,
        Pattern::Dots,
        EdgeShape::RaisedCosine,
        5e-3,
        5e-3,
    );
    let env = KeyingEnvelope::new(&k);
    assert_eq!(env.intervals().len(), 1);
    let (s, e) = env.intervals()[0];
    assert!((s - 0.024).abs() < 1e-15 && (e - 0.072).abs() < 1e-15);
    // the edge's full length for a 10-90 % time t: T = pi t / (2 asin 0.8)
    let t_full = EdgeShape::RaisedCosine.full_edge(5e-3);
    for i in 0..=200 {
        let t = i as f64 * 0.096 / 200.0;
        // the convolution of the rectangle with (pi/2T) cos(pi x / T),
        // integrated numerically by the midpoint rule on 20 000 points
        let n = 20_000;
        let h = t_full / n as f64;
        let conv: f64 = (0..n)
            .map(|j| {
                let x = -t_full / 2.0 + (j as f64 + 0.5) * h;
                let inside = (t - x) >= s && (t - x) <= e;
                if inside {
                    std::f64::consts::PI / (2.0 * t_full)
                        * (std::f64::consts::PI * x / t_full).cos()
                        * h
                } else {
                    0.0
                }
            })
            .sum();
        // midpoint rule: error O(h) at the rectangle's jumps, h = 11.8 ns ->
        // below 1e-3 of full amplitude
        assert!(
            (env.at(t) - conv).abs() < 1e-3,
            "t = {t}: {} vs {conv}",
            env.at(t)
        );
    }
    // periodic
    assert!((env.at(0.03) - env.at(0.03 + 0.096 * 3.0)).abs() < 1e-12);
    // PARIS: 22 units key down in 50, so the mean of the envelope is 22/50
    let k = KeyingSpec::new(0.06, Pattern::Paris, EdgeShape::Gaussian, 5e-3, 5e-3);
    let env = KeyingEnvelope::new(&k);
    let n = 50_000;
    let mean: f64 = (0..n)
        .map(|i| env.at(i as f64 * 3.0 / n as f64))
        .sum::<f64>()
        / n as f64;
    // each edge pair integrates to the rectangle exactly (symmetric step
    // responses), so only the sampling error of 60 us steps remains
    assert!((mean - 22.0 / 50.0).abs() < 1e-4, "{mean}");
}

#[test]
fn a_message_is_keyed_in_morse_code() {
    use tankwave_circuit::keying::message_units;
    // ITU-R M.1677-1 (from memory): E is one dot, T one dash; 7 units of
    // word space open the period
    assert_eq!(
        message_units("E").unwrap(),
        [vec![false; 7], vec![true]].concat()
    );
    let t = message_units("t").unwrap();
    assert_eq!(t, [vec![false; 7], vec![true; 3]].concat());
    // the reference word by the message path is the PARIS pattern: 50 units
    assert_eq!(message_units("PARIS").unwrap(), Pattern::Paris.units());
    // two words: 7 units between them; "E E" = 7 + 1 + 7 + 1
    assert_eq!(message_units("E  E").unwrap().len(), 16);
    assert_eq!(message_units("E#"), Err('#'));
    assert_eq!(message_units("   "), Err(' '));
    let k = spec("analyze keying wpm=20 message=\"cq de tw1\"\n");
    assert_eq!(k.message.as_deref(), Some("cq de tw1"));
    let env = KeyingEnvelope::new(&k);
    assert!((env.period() - k.units().len() as f64 * k.unit).abs() < 1e-12);
    // C -.-. Q --.- : 4 + 4 elements; D -.. E . : 3 + 1; T - W .-- 1 .----: 1 + 3 + 5
    assert_eq!(env.intervals().len(), 21);
    let has = |extra: &str, code: &str| {
        let c = codes(extra);
        assert!(c.iter().any(|x| x == code), "{extra}: {c:?}");
    };
    has("analyze keying wpm=20 message=\"CQ #1\"\n", "bad-value");
    has("analyze keying wpm=20 message=\"  \"\n", "bad-value");
    has(
        "analyze keying wpm=20 message=\"E\" pattern=paris\n",
        "syntax",
    );
    has("analyze keying wpm=20 message=5\n", "syntax");
    has("analyze keying wpm=20 rise=3ms pattern=\"E\"\n", "syntax");
    let long = format!("analyze keying wpm=20 message=\"{}\"\n", "E".repeat(201));
    has(&long, "too-large");
}
