//! Property tests: any bytes, and random mutations of a valid stage file,
//! end in either a circuit or diagnostics — never a panic, never a NaN.

use proptest::prelude::*;
use tankwave_circuit::{elaborate, Circuit, ElementKind, Overrides};
use tankwave_netlist::parse_bytes;

const VALID: &str = include_str!("data/class_c.tank");

/// Pieces that mutations insert: tokens of the language and troublemakers.
const PIECES: &[&str] = &[
    "(",
    ")",
    "{",
    "}",
    "[",
    "]",
    "=",
    ",",
    "-",
    "/",
    "^",
    "*",
    "+",
    "\n",
    " ",
    "#",
    "\"",
    "<=",
    ">=",
    "0",
    "1e308",
    "1e-320",
    "-0",
    "10nF",
    "5%",
    "dBm",
    "degC",
    "µ",
    "Ω",
    "gnd",
    "q1",
    "vcc",
    "f0",
    "pcarrier",
    "pi",
    "let",
    "resistor",
    "include",
    "mask",
    "require",
    "harmonics",
    "from",
    "to",
    "below",
    "at_most",
    "looser(",
    "stricter(",
    "part",
    "transport {",
    "npn",
    "k=2",
    "q=0",
    "wave=sine(",
    "table(",
    "square(",
    "0s: 1V,",
    "(1/0)",
    "sqrt(-1)",
    "ln(0)",
    "\u{0}",
    "\u{FEFF}",
    "é",
    "\r\n",
];

fn check_outcome(bytes: &[u8]) {
    let parsed = parse_bytes("fuzz.tank", bytes);
    match elaborate(&parsed, &Overrides::default()) {
        Ok(e) => assert_finite(&e.circuit),
        Err(d) => {
            assert!(!d.is_empty());
            assert!(d.iter().any(|d| d.is_error()));
            for x in &d {
                assert!(
                    tankwave_netlist::diag::is_known_code(x.code),
                    "undocumented code {}",
                    x.code
                );
            }
        }
    }
}

fn assert_finite(c: &Circuit) {
    for v in c.params.values() {
        assert!(v.is_finite());
    }
    for e in &c.elements {
        match &e.kind {
            ElementKind::Resistor { r: v, .. } | ElementKind::Capacitor { c: v, .. } => {
                assert!(v.is_finite() && *v > 0.0)
            }
            ElementKind::Inductor { l, series_r, .. } => {
                assert!(l.is_finite() && series_r.is_finite())
            }
            ElementKind::Coupling { k, .. } => assert!(k.abs() <= 1.0),
            ElementKind::VoltageSource { wave, rs, .. } => {
                assert!(wave.dc.is_finite() && rs.is_finite())
            }
            ElementKind::CurrentSource { wave, .. } => assert!(wave.dc.is_finite()),
            ElementKind::Diode { area, .. } | ElementKind::Bjt { area, .. } => {
                assert!(area.is_finite())
            }
            ElementKind::Measured { network, .. } => {
                assert!(network.freqs.iter().all(|f| f.is_finite()));
                assert!(network
                    .values
                    .iter()
                    .all(|y| y.re.is_finite() && y.im.is_finite()));
            }
        }
    }
}

#[derive(Debug, Clone)]
enum Mutation {
    Delete(usize, usize),
    Insert(usize, usize),
    Duplicate(usize, usize),
    Byte(usize, u8),
}

fn mutation() -> impl Strategy<Value = Mutation> {
    prop_oneof![
        (any::<usize>(), 1usize..12).prop_map(|(p, n)| Mutation::Delete(p, n)),
        (any::<usize>(), 0..PIECES.len()).prop_map(|(p, i)| Mutation::Insert(p, i)),
        (any::<usize>(), 1usize..80).prop_map(|(p, n)| Mutation::Duplicate(p, n)),
        (any::<usize>(), any::<u8>()).prop_map(|(p, b)| Mutation::Byte(p, b)),
    ]
}

fn apply(text: &[u8], muts: &[Mutation]) -> Vec<u8> {
    let mut v = text.to_vec();
    for m in muts {
        let len = v.len().max(1);
        match *m {
            Mutation::Delete(p, n) => {
                let p = p % len;
                let e = (p + n).min(v.len());
                if p < e {
                    v.drain(p..e);
                }
            }
            Mutation::Insert(p, i) => {
                let p = p % (v.len() + 1);
                let piece = PIECES[i].as_bytes();
                v.splice(p..p, piece.iter().copied());
            }
            Mutation::Duplicate(p, n) => {
                let p = p % len;
                let e = (p + n).min(v.len());
                let chunk: Vec<u8> = v.get(p..e).map(|s| s.to_vec()).unwrap_or_default();
                v.splice(p..p, chunk);
            }
            Mutation::Byte(p, b) => {
                if !v.is_empty() {
                    let p = p % v.len();
                    v[p] = b;
                }
            }
        }
    }
    v
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 256, ..ProptestConfig::default() })]

    #[test]
    fn random_bytes_never_panic(bytes in proptest::collection::vec(any::<u8>(), 0..400)) {
        check_outcome(&bytes);
    }

    #[test]
    fn random_text_from_language_pieces_never_panics(idx in proptest::collection::vec(0..PIECES.len(), 0..80)) {
        let s: String = idx.iter().map(|i| PIECES[*i]).collect::<Vec<_>>().join(" ");
        check_outcome(s.as_bytes());
    }

    #[test]
    fn mutated_valid_file_never_panics(muts in proptest::collection::vec(mutation(), 1..6)) {
        check_outcome(&apply(VALID.as_bytes(), &muts));
    }
}

#[test]
fn deep_nesting_is_an_error_not_a_crash() {
    for text in [
        format!("let x = {}1{}\n", "(".repeat(100_000), ")".repeat(100_000)),
        format!("let x = ({}1)\n", "-".repeat(100_000)),
        format!("let x = {}1\n", "-(".repeat(50_000)),
        format!(
            "mask m {{ all {}below 3dB{} }}\n",
            "looser(".repeat(50_000),
            ")".repeat(50_000)
        ),
    ] {
        let parsed = parse_bytes("deep.tank", text.as_bytes());
        assert!(
            parsed.diagnostics.iter().any(|d| d.code == "syntax"),
            "deep nesting reported"
        );
        check_outcome(text.as_bytes());
    }
}

#[test]
fn the_unmutated_file_is_valid() {
    // The mutation test starts from a file that elaborates (so mutations probe near-valid input).
    let parsed = parse_bytes("class_c.tank", VALID.as_bytes());
    assert!(elaborate(&parsed, &Overrides::default()).is_ok());
}
