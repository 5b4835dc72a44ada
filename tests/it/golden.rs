//! Outputs of the demo stages against golden files (tests/data/golden/):
//! the terminal report, the JSON document and the CSV spectrum of `tankwave
//! run` on every stage in netlists/ and netlists/failing/, and the exit code.
//! A restructure that changes what a person or a script reads fails here.
//!
//! Text outside numbers must match byte for byte. Numbers may differ only by
//! floating-point rounding across machines and libm builds: by a relative
//! 1e-9, or by one unit in the last digit printed (common practice for
//! comparing printed floating-point output). None of these outputs holds a
//! time of day or an elapsed time.
//!
//! To rewrite the golden files after a deliberate change of output:
//! `TANKWAVE_BLESS=1 cargo test --test it golden`, then review the diff.

use crate::harness::{bin, code, root};

/// The demo stages, relative to the repository root (as a person types them).
const DEMOS: &[&str] = &[
    "netlists/cw-7m1-classb.tank",
    "netlists/driver-3m6-transformer.tank",
    "netlists/ism-13m56-classc.tank",
    "netlists/failing/cw-7m1-nofilter.tank",
    "netlists/loads/ism-13m56-ruggedness.tank",
];

/// The outputs compared: (file suffix, extra arguments of `run`).
const FORMATS: &[(&str, &[&str])] = &[
    ("txt", &[]),
    ("json", &["--format", "json"]),
    ("csv", &["--format", "csv"]),
];

/// One token of an output: a number (its text) or the text between numbers.
#[derive(Debug, PartialEq)]
enum Token<'a> {
    Number(&'a str),
    Text(&'a str),
}

/// Split `s` into numbers (optional sign, digits with an optional point,
/// optional exponent) and the text between them. A sign counts as part of a
/// number only when no letter, digit or point comes right before it.
fn tokens(s: &str) -> Vec<Token<'_>> {
    let b = s.as_bytes();
    let mut out = Vec::new();
    let (mut i, mut text_from) = (0, 0);
    while i < b.len() {
        let prev_word =
            i > 0 && (b[i - 1].is_ascii_alphanumeric() || b[i - 1] == b'.' || b[i - 1] == b'_');
        let signed = (b[i] == b'-' || b[i] == b'+') && b.get(i + 1).is_some_and(u8::is_ascii_digit);
        if prev_word || !(signed || b[i].is_ascii_digit()) {
            i += 1;
            continue;
        }
        let start_digit = if signed { i + 1 } else { i };
        let mut j = start_digit;
        while j < b.len() && (b[j].is_ascii_digit() || b[j] == b'.') {
            j += 1;
        }
        if j < b.len() && (b[j] == b'e' || b[j] == b'E') {
            let mut k = j + 1;
            if k < b.len() && (b[k] == b'+' || b[k] == b'-') {
                k += 1;
            }
            if k < b.len() && b[k].is_ascii_digit() {
                while k < b.len() && b[k].is_ascii_digit() {
                    k += 1;
                }
                j = k;
            }
        }
        if text_from < i {
            out.push(Token::Text(&s[text_from..i]));
        }
        out.push(Token::Number(&s[i..j]));
        i = j;
        text_from = j;
    }
    if text_from < b.len() {
        out.push(Token::Text(&s[text_from..]));
    }
    out
}

/// One unit in the last digit of a printed number.
fn last_digit_unit(t: &str) -> f64 {
    let (mantissa, exp) = match t.find(['e', 'E']) {
        Some(k) => (&t[..k], t[k + 1..].parse::<i32>().unwrap_or(0)),
        None => (t, 0),
    };
    let decimals = mantissa.find('.').map_or(0, |p| mantissa.len() - p - 1) as i32;
    10f64.powi(exp - decimals)
}

/// Whether two printed numbers agree up to rounding (see the module notes).
fn same_number(a: &str, b: &str) -> bool {
    if a == b {
        return true;
    }
    let (Ok(x), Ok(y)) = (a.parse::<f64>(), b.parse::<f64>()) else {
        return false;
    };
    let d = (x - y).abs();
    d <= 1e-9 * x.abs().max(y.abs()) || d <= 1.000001 * last_digit_unit(a).max(last_digit_unit(b))
}

/// The first place where `got` and `want` differ beyond rounding, if any.
fn first_difference(got: &str, want: &str) -> Option<String> {
    let (g, w) = (tokens(got), tokens(want));
    for (k, (a, b)) in g.iter().zip(w.iter()).enumerate() {
        let same = match (a, b) {
            (Token::Number(x), Token::Number(y)) => same_number(x, y),
            _ => a == b,
        };
        if !same {
            return Some(format!("token {k}: got {a:?}, golden {b:?}"));
        }
    }
    (g.len() != w.len()).then(|| format!("{} tokens, golden has {}", g.len(), w.len()))
}

#[test]
fn the_tokeniser_and_the_rounding_rule() {
    assert_eq!(
        tokens("q1 -1.5e3 V, x-2"),
        vec![
            Token::Text("q1 "),
            Token::Number("-1.5e3"),
            Token::Text(" V, x-"),
            Token::Number("2"),
        ]
    );
    assert!(same_number("-1.189369", "-1.189370"));
    assert!(!same_number("-1.189369", "-1.189371"));
    assert!(same_number("0.30000000000000004", "0.3"));
    assert!(!same_number("12.5", "12.7"));
    assert!(first_difference("pout 1.0 W", "pout 1.0 mW").is_some());
}

#[test]
fn demo_outputs_match_the_golden_files() {
    let bless = std::env::var_os("TANKWAVE_BLESS").is_some();
    let dir = root().join("tests/data/golden");
    let mut failures = Vec::new();
    for demo in DEMOS {
        let stem = std::path::Path::new(demo)
            .file_stem()
            .and_then(|s| s.to_str())
            .expect("demo file name");
        for (suffix, args) in FORMATS {
            let out = bin()
                .current_dir(root())
                .args(["--no-caution", "run", demo])
                .args(*args)
                .stdin(std::process::Stdio::null())
                .output()
                .expect("binary runs");
            let got = format!(
                "exit {}\n{}",
                code(&out),
                String::from_utf8_lossy(&out.stdout)
            );
            let path = dir.join(format!("{stem}.{suffix}"));
            if bless {
                std::fs::create_dir_all(&dir).expect("golden directory");
                std::fs::write(&path, &got).expect("golden file written");
                continue;
            }
            let want = std::fs::read_to_string(&path)
                .unwrap_or_else(|e| panic!("{}: {e} (TANKWAVE_BLESS=1 writes it)", path.display()));
            if let Some(d) = first_difference(&got, &want) {
                failures.push(format!("{}: {d}", path.display()));
            }
        }
    }
    assert!(
        failures.is_empty(),
        "outputs changed:\n{}",
        failures.join("\n")
    );
}
