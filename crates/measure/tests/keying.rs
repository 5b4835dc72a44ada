//! Keying figures against the outside: the raised-cosine pulse spectrum
//! (time–frequency dual of the raised-cosine spectrum, J. G. Proakis,
//! "Digital Communications", 4th ed., 2001, §9.2 — from memory, the form
//! verified numerically in tests/reference/keying/gen.py), the numpy line
//! spectrum, windowed lines and RBW view written by that script, the 99 %
//! occupied band (ITU Radio Regulations, Article 1, No. 1.153) by its
//! brute-force cumulative sum, Harris's window figures (F. J. Harris, Proc.
//! IEEE 66(1), 1978, table 1 — from memory; scipy's values in windows.csv),
//! and the 10–90 % time of a raised-cosine edge (derived below). Sources are
//! listed in docs/check-values.md ("Keying").

use std::f64::consts::PI;
use std::path::{Path, PathBuf};

use num_complex::Complex64;
use proptest::prelude::*;
use tankwave_measure::keying::{
    necessary_bandwidth_hz, sideband_margin, try_keying_edges, try_sideband_spectrum, KeyingError,
    SidebandMask, SidebandParams, SpectrumWindow, DBC_FLOOR, K_FADING,
};

// The dot train of tests/reference/keying/gen.py (INVENTED demo numbers).
const PERIOD: f64 = 0.096;
const WIDTH: f64 = 0.048;
const EDGE: f64 = 0.005;
const CENTRE: f64 = 0.030;
const N: usize = 4096;
const PHASE: f64 = 0.3;
const RBW_LINES: f64 = 10.0;

fn reference(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("../../tests/reference/keying")
        .join(name)
}

/// Rows of a reference CSV (comment lines and the header skipped), by column name.
fn csv(name: &str) -> (Vec<String>, Vec<Vec<String>>) {
    let text = std::fs::read_to_string(reference(name)).expect("reference CSV");
    let mut lines = text.lines().filter(|l| !l.starts_with('#'));
    let head: Vec<String> = lines
        .next()
        .expect("a header")
        .split(',')
        .map(str::to_string)
        .collect();
    let rows = lines
        .map(|l| l.split(',').map(str::to_string).collect())
        .collect();
    (head, rows)
}

fn col(head: &[String], name: &str) -> usize {
    head.iter().position(|h| h == name).expect("column")
}

fn num(s: &str) -> f64 {
    s.parse().expect("a number")
}

/// The pulse of gen.py: flat top 1, raised-cosine edges of `edge` seconds,
/// half amplitude at ±width/2 from `centre`.
fn pulse(t: f64, width: f64, edge: f64, centre: f64) -> f64 {
    let u = (t - centre).abs();
    let x = ((u - (width / 2.0 - edge / 2.0)) / edge).clamp(0.0, 1.0);
    0.5 * (1.0 + (PI * x).cos())
}

fn train() -> Vec<Complex64> {
    let dt = PERIOD / N as f64;
    (0..N)
        .map(|n| Complex64::from_polar(pulse(n as f64 * dt, WIDTH, EDGE, CENTRE), PHASE))
        .collect()
}

/// |E(f)| = W|sinc(fW)|·|cos(πf t_r)/(1 − 4f²t_r²)| (the limit π/4 where
/// f·t_r = ½), Proakis §9.2 dual — from memory, verified in gen.py.
fn formula(f: f64) -> f64 {
    let x = PI * f * WIDTH;
    let sinc = if x == 0.0 { 1.0 } else { x.sin() / x };
    let den = 1.0 - 4.0 * f * f * EDGE * EDGE;
    let ratio = if den.abs() < 1e-12 {
        PI / 4.0
    } else {
        (PI * f * EDGE).cos() / den
    };
    WIDTH * sinc.abs() * ratio.abs()
}

fn amp(dbc: f64) -> f64 {
    10f64.powf(dbc / 20.0)
}

/// The line spectrum of the sampled raised-cosine dot train equals the
/// formula's lines |E(m/T)|/T (key-down carrier 1). Tolerance: the sampling
/// error, which for N samples of a periodic signal is exactly aliasing,
/// ĉ_m = Σ_q c_{m+qN} (common practice, the DFT of a sampled Fourier
/// series), so |ĉ_m − c_m| ≤ Σ_{q≠0} |c_{m+qN}|, summed here from the
/// formula for |q| ≤ 2000 plus a bound on the rest (|c_k| ≤ (2/T)/(4π f³
/// t_r²) once 4f²t_r² ≥ 2, and Σ_{q>Q} (q − ½)⁻³ ≤ 1/(2(Q − 1)²)); plus
/// 1e-13 for the FFT's rounding (a few ε·log₂N of the carrier, common
/// practice).
#[test]
fn raised_cosine_train_lines_match_the_formula() {
    let s = try_sideband_spectrum(&train(), PERIOD / N as f64, &SidebandParams::default())
        .expect("a spectrum");
    assert!((s.key_down_amplitude - 1.0).abs() < 1e-15);
    assert!((s.line_spacing_hz - 1.0 / PERIOD).abs() < 1e-12);
    let q_max = 2000i64;
    let tail = 2.0 * (2.0 / PERIOD) / (4.0 * PI * EDGE * EDGE) * (PERIOD / N as f64).powi(3)
        / (2.0 * (q_max as f64 - 1.0).powi(2));
    let mut checked = 0;
    for m in -1000i64..=1000 {
        let i = (m + (N / 2) as i64) as usize;
        let got = amp(s.line_dbc[i]);
        let want = formula(m as f64 / PERIOD) / PERIOD;
        let alias: f64 = (1..=q_max)
            .flat_map(|q| [m + q * N as i64, m - q * N as i64])
            .map(|k| formula(k as f64 / PERIOD) / PERIOD)
            .sum::<f64>()
            + tail;
        let tol = alias + 1e-13;
        assert!(
            (got - want).abs() <= tol,
            "line {m}: {got:e} against the formula's {want:e} (tolerance {tol:e})"
        );
        assert!((s.line_offsets_hz[i] - m as f64 / PERIOD).abs() < 1e-9);
        checked += 1;
    }
    assert_eq!(checked, 2001);
    // The first sidebands in dB: the formula at ±1/T, |E|/T = 0.31750 (−9.97 dBc).
    let first = 20.0 * (formula(1.0 / PERIOD) / PERIOD).log10();
    assert!((s.line_dbc[N / 2 + 1] - first).abs() < 1e-6);
    assert!((s.line_dbc[N / 2 - 1] - first).abs() < 1e-6);
}

/// Line by line against numpy's FFT of the same samples (lines.csv): two
/// FFTs of one record differ by rounding only, a few ε·log₂N of the carrier
/// (1e-13, common practice).
#[test]
fn lines_match_numpy_line_by_line() {
    let (head, rows) = csv("lines.csv");
    let (cm, cf, ca) = (
        col(&head, "m"),
        col(&head, "formula_amp"),
        col(&head, "numpy_amp"),
    );
    let s = try_sideband_spectrum(&train(), PERIOD / N as f64, &SidebandParams::default())
        .expect("a spectrum");
    assert!(rows.len() > 1000);
    for r in &rows {
        let m: i64 = r[cm].parse().expect("m");
        let i = (m + (N / 2) as i64) as usize;
        let got = amp(s.line_dbc[i]);
        assert!(
            (got - num(&r[ca])).abs() < 1e-13,
            "line {m}: {got:e} against numpy's {}",
            r[ca]
        );
        // and the script's formula column is our formula
        let f = formula(m as f64 / PERIOD) / PERIOD;
        assert!((f - num(&r[cf])).abs() <= 1e-15 + 1e-12 * f);
    }
}

/// Windowed lines (RBW at the line spacing, so each offset shows its own
/// windowed line, corrected by the coherent gain Σw) against scipy's
/// periodic Hann and Blackman–Harris windows applied by numpy (lines.csv);
/// rounding only (1e-13 of the carrier).
#[test]
fn windowed_lines_match_scipy_windows() {
    let (head, rows) = csv("lines.csv");
    let cm = col(&head, "m");
    for (window, name) in [
        (SpectrumWindow::Hann, "hann_amp"),
        (SpectrumWindow::BlackmanHarris, "blackman_harris_amp"),
    ] {
        let c = col(&head, name);
        let params = SidebandParams {
            window,
            ..SidebandParams::default()
        };
        let s = try_sideband_spectrum(&train(), PERIOD / N as f64, &params).expect("a spectrum");
        assert_eq!(s.offsets_hz.len(), N + 1);
        for r in &rows {
            let m: i64 = r[cm].parse().expect("m");
            let i = (m + (N / 2) as i64) as usize;
            let got = amp(s.dbc[i]);
            assert!(
                (got - num(&r[c])).abs() < 1e-13,
                "{window:?} line {m}: {got:e} against {}",
                r[c]
            );
        }
    }
}

/// The view at RBW = 10 line spacings (a rectangular filter; the lines on
/// its edges at ±5 count half) against numpy's convolution of the line
/// powers with [½, 1 × 9, ½] (lines.csv). The filter's gain for a lone
/// line is 1, so no calibration enters. Rounding only: 1e-12 relative for
/// the sums (of non-negative terms), plus the two FFTs' difference in each
/// of the 11 line amplitudes, δ = 1e-13 as above, which moves the power by
/// at most 2δ·Σ|c| + 11δ² ≤ 2δ·√(11·P) + 11δ² (Cauchy–Schwarz).
#[test]
fn rbw_view_matches_numpy_convolution() {
    let (head, rows) = csv("lines.csv");
    let (cm, cp) = (col(&head, "m"), col(&head, "rbw_power"));
    let params = SidebandParams {
        rbw_hz: Some(RBW_LINES / PERIOD),
        max_offset_hz: Some(600.0 / PERIOD),
        ..SidebandParams::default()
    };
    let s = try_sideband_spectrum(&train(), PERIOD / N as f64, &params).expect("a spectrum");
    assert_eq!(s.offsets_hz.len(), 1201);
    assert!((s.rbw_hz - RBW_LINES / PERIOD).abs() < 1e-12);
    for r in &rows {
        let m: i64 = r[cm].parse().expect("m");
        let i = (m + 600) as usize;
        assert!((s.offsets_hz[i] - m as f64 / PERIOD).abs() < 1e-9);
        let want = num(&r[cp]);
        let got = 10f64.powf(s.dbc[i] / 10.0);
        let d = 1e-13;
        let tol = 1e-12 * want + 2.0 * d * (11.0 * want).sqrt() + 11.0 * d * d;
        assert!(
            (got - want).abs() <= tol,
            "line {m}: {got:e} against numpy's {want:e}"
        );
    }
}

/// The 99 % occupied band of the exact lines equals numpy's brute-force
/// cumulative sum (band.csv) for raised-cosine and square keying, and the
/// square-keyed train occupies more (common practice: hard keying splatters).
/// Both are sums of the same line powers in a different order, so the limits
/// agree to the line (offsets compared to 1e-9 Hz).
#[test]
fn occupied_band_matches_numpy_and_square_keying_is_wider() {
    let (head, rows) = csv("band.csv");
    let (ck, cl, cu) = (
        col(&head, "keying"),
        col(&head, "lower_hz"),
        col(&head, "upper_hz"),
    );
    let dt = PERIOD / N as f64;
    let square: Vec<Complex64> = (0..N)
        .map(|n| {
            let on = (n as f64 * dt - CENTRE).abs() < WIDTH / 2.0;
            Complex64::from_polar(if on { 1.0 } else { 0.0 }, PHASE)
        })
        .collect();
    let mut widths = Vec::new();
    for r in &rows {
        let env = match r[ck].as_str() {
            "raised_cosine" => train(),
            "square" => square.clone(),
            other => panic!("unknown keying {other}"),
        };
        let s = try_sideband_spectrum(&env, dt, &SidebandParams::default()).expect("a spectrum");
        assert!(
            (s.occupied.lower_hz - num(&r[cl])).abs() < 1e-9,
            "{}",
            r[ck]
        );
        assert!(
            (s.occupied.upper_hz - num(&r[cu])).abs() < 1e-9,
            "{}",
            r[ck]
        );
        assert_eq!(s.occupied.fraction, 0.99);
        widths.push((r[ck].clone(), s.occupied.width_hz));
    }
    let w = |k: &str| widths.iter().find(|(n, _)| n == k).expect("row").1;
    assert!(w("square") > w("raised_cosine"));
    // Even the clean keying is wider than the necessary bandwidth B·K (ITU
    // RR Appendix 1) at its speed, B = 1/dot = 1/48 ms = 20.8 Bd, K = 5.
    let bk = necessary_bandwidth_hz(1.0 / WIDTH, K_FADING).expect("B·K");
    assert!(w("raised_cosine") > bk);
}

/// A pure carrier (constant envelope) reads 0 dBc at offset 0 with every
/// window and RBW: the lone-line calibration (coherent gain, or the
/// equivalent noise bandwidth once the filter spans the window's lines).
/// Rounding only: 1e-9 dB.
#[test]
fn pure_carrier_reads_zero_dbc_with_every_window() {
    let n = 256;
    let env = vec![Complex64::from_polar(3.5, -1.0); n];
    let dt = 1e-3;
    for window in SpectrumWindow::ALL {
        for rbw in [
            None,
            Some(1.0),
            Some(3.0 / 0.256),
            Some(10.0 / 0.256),
            Some(1e6),
        ] {
            let params = SidebandParams {
                rbw_hz: rbw,
                window,
                ..SidebandParams::default()
            };
            let s = try_sideband_spectrum(&env, dt, &params).expect("a spectrum");
            let i = s
                .offsets_hz
                .iter()
                .position(|&f| f == 0.0)
                .expect("offset 0");
            assert!(
                s.dbc[i].abs() < 1e-9,
                "{window:?} at RBW {rbw:?}: {} dBc",
                s.dbc[i]
            );
            assert!((s.key_down_amplitude - 3.5).abs() < 1e-12);
            // the exact lines: the carrier alone, nothing else above the floor
            assert!(s.line_dbc[n / 2].abs() < 1e-9);
            assert!(s
                .line_dbc
                .iter()
                .enumerate()
                .all(|(j, &l)| j == n / 2 || l < -250.0));
            assert_eq!(s.occupied.width_hz, 0.0);
        }
    }
}

/// Coherent gain and equivalent noise bandwidth: Harris 1978, table 1
/// (from memory, two decimals: Hann 0.50 and 1.50 bins, 4-term −92 dB
/// Blackman–Harris 0.36 and 2.00 bins; rounding 0.005), and scipy's
/// windows (windows.csv) to rounding (1e-12).
#[test]
fn window_figures_match_harris_and_scipy() {
    let harris = [
        (SpectrumWindow::Rectangular, 1.00, 1.00),
        (SpectrumWindow::Hann, 0.50, 1.50),
        (SpectrumWindow::BlackmanHarris, 0.36, 2.00),
    ];
    for (w, cg, enbw) in harris {
        assert!((w.coherent_gain(4096) - cg).abs() <= 0.005, "{w:?}");
        assert!((w.enbw_bins(4096) - enbw).abs() <= 0.005, "{w:?}");
    }
    let (head, rows) = csv("windows.csv");
    let (cw, cn, cg, ce) = (
        col(&head, "window"),
        col(&head, "n"),
        col(&head, "coherent_gain"),
        col(&head, "enbw_bins"),
    );
    assert_eq!(rows.len(), 6);
    for r in &rows {
        let w = match r[cw].as_str() {
            "rectangular" => SpectrumWindow::Rectangular,
            "hann" => SpectrumWindow::Hann,
            "blackman_harris" => SpectrumWindow::BlackmanHarris,
            other => panic!("unknown window {other}"),
        };
        let n: usize = r[cn].parse().expect("n");
        assert!(
            (w.coherent_gain(n) - num(&r[cg])).abs() < 1e-12,
            "{w:?} {n}"
        );
        assert!((w.enbw_bins(n) - num(&r[ce])).abs() < 1e-12, "{w:?} {n}");
    }
}

/// Rise and fall of a raised-cosine edge e(t) = ½(1 − cos(πt/t_r)):
/// e = 0.1 where cos(πt/t_r) = 0.8, e = 0.9 where it is −0.8, so the
/// 10–90 % time is t_r·(acos(−0.8) − acos(0.8))/π ≈ 0.5903·t_r. The
/// half-amplitude width is W exactly (e = ½ at t_r/2 into each edge).
///
/// Tolerance from linear interpolation: between samples dt apart the chord
/// is within dt²·max|e''|/8 of e, with max|e''| = π²/(2t_r²), and the slope
/// at a 10 % or 90 % crossing is (π/(2t_r))·sin(πt/t_r) ≥ (π/(2t_r))·0.568
/// within one sample of it (sin = 0.6 there, moving at most π·dt/t_r =
/// 0.032), so each crossing is off by at most 0.691·dt²/t_r and an edge
/// time by twice that (common practice: the interpolation error bound).
#[test]
fn raised_cosine_edges_rise_in_0_59_edge_times() {
    let want = EDGE * ((-0.8f64).acos() - 0.8f64.acos()) / PI;
    assert!((want / EDGE - 0.5903).abs() < 5e-5);
    for (dt, offset) in [
        (EDGE / 100.0, 0.0),
        (EDGE / 37.0, 0.3),
        (EDGE / 250.0, 0.77),
    ] {
        let n = (0.1 / dt) as usize;
        let m: Vec<f64> = (0..n)
            .map(|k| pulse((k as f64 + offset) * dt, WIDTH, EDGE, CENTRE))
            .collect();
        let e = try_keying_edges(&m, dt).expect("edges");
        let tol = 2.0 * 0.691 * dt * dt / EDGE + 1e-15;
        assert!(
            (e.rise_s - want).abs() <= tol,
            "rise {} vs {want}",
            e.rise_s
        );
        assert!(
            (e.fall_s - want).abs() <= tol,
            "fall {} vs {want}",
            e.fall_s
        );
        assert!((e.width_s - WIDTH).abs() <= tol, "width {}", e.width_s);
        assert_eq!(e.key_down_amplitude, 1.0);
        assert!(e.overshoot_pct.abs() < 1e-12);
    }
}

/// Overshoot is the peak over the settled level (median of the middle half
/// of key-down), in per cent: a 12 % bump at the start of key-down is 12 %,
/// and the bump does not move the settled level. Linear edges of 10
/// samples: 10–90 % is 8 samples exactly (the chord is the edge).
#[test]
fn overshoot_and_linear_edges() {
    let dt = 1e-4;
    let mut m = vec![0.0; 200];
    for (k, v) in m.iter_mut().enumerate() {
        *v = match k {
            0..=19 => 0.0,
            20..=30 => 2.0 * (k - 20) as f64 / 10.0,
            31..=34 => 2.24,
            35..=120 => 2.0,
            121..=131 => 2.0 * (131 - k) as f64 / 10.0,
            _ => 0.0,
        };
    }
    let e = try_keying_edges(&m, dt).expect("edges");
    assert!((e.key_down_amplitude - 2.0).abs() < 1e-15);
    assert!((e.overshoot_pct - 12.0).abs() < 1e-9);
    assert!((e.rise_s - 8.0 * dt).abs() < 1e-12);
    assert!((e.fall_s - 8.0 * dt).abs() < 1e-12);
    // 50 % crossings at samples 25 and 126
    assert!((e.width_s - 101.0 * dt).abs() < 1e-12);
}

/// Necessary bandwidth of telegraphy B·K: the example of ITU RR Appendix 1
/// (from memory), 25 words per minute, B = 20 Bd, K = 5: 100 Hz.
#[test]
fn necessary_bandwidth_is_b_times_k() {
    assert_eq!(K_FADING, 5.0);
    assert!((necessary_bandwidth_hz(20.0, K_FADING).unwrap() - 100.0).abs() < 1e-12);
    for (b, k) in [
        (0.0, 5.0),
        (-1.0, 5.0),
        (f64::NAN, 5.0),
        (20.0, f64::INFINITY),
        (1e200, 1e200),
    ] {
        assert!(matches!(
            necessary_bandwidth_hz(b, k),
            Err(KeyingError::BadTelegraphy { .. })
        ));
    }
}

/// A mask piecewise-linear in offset, symmetric: the worst margin is found
/// where the spectrum comes nearest its limit, positive passes.
#[test]
fn mask_margin_finds_the_worst_offset() {
    let s = try_sideband_spectrum(&train(), PERIOD / N as f64, &SidebandParams::default())
        .expect("a spectrum");
    // A flat −40 dBc limit from 100 Hz out: the worst line is the strongest
    // line at or beyond 100 Hz.
    let mask = SidebandMask::symmetric(&[(100.0, -40.0)]).expect("a mask");
    let m = sideband_margin(&s, &mask).expect("covered");
    let (worst_f, worst_l) = s
        .offsets_hz
        .iter()
        .zip(&s.dbc)
        .filter(|(f, _)| f.abs() >= 100.0)
        .max_by(|a, b| a.1.total_cmp(b.1))
        .map(|(f, l)| (*f, *l))
        .expect("lines beyond 100 Hz");
    assert_eq!(m.level_dbc, worst_l);
    assert_eq!(m.at_offset_hz.abs(), worst_f.abs());
    assert!((m.worst_margin_db - (-40.0 - worst_l)).abs() < 1e-12);
    assert_eq!(m.pass, m.worst_margin_db >= 0.0);
    assert_eq!(
        m.checked,
        s.offsets_hz.iter().filter(|f| f.abs() >= 100.0).count()
    );
    // Interpolation: halfway between (100 Hz, −20) and (300 Hz, −60) is −40.
    let mask = SidebandMask::symmetric(&[(100.0, -20.0), (300.0, -60.0)]).unwrap();
    assert!((mask.limit_dbc(200.0).unwrap() + 40.0).abs() < 1e-12);
    assert!((mask.limit_dbc(-200.0).unwrap() + 40.0).abs() < 1e-12);
    assert_eq!(mask.limit_dbc(50.0), None);
    assert_eq!(mask.limit_dbc(1e6), Some(-60.0));
    // Two sides: only the upper side constrained near the carrier.
    let mask = SidebandMask::two_sided(&[(500.0, -10.0)], &[(20.0, -10.0)]).unwrap();
    assert_eq!(mask.limit_dbc(-100.0), None);
    assert_eq!(mask.limit_dbc(100.0), Some(-10.0));
    // The first sideband (−9.97 dBc at 10.4 Hz) breaks a −10 dBc limit from 10 Hz.
    let strict = SidebandMask::symmetric(&[(10.0, -10.0)]).unwrap();
    let m = sideband_margin(&s, &strict).unwrap();
    assert!(!m.pass && m.worst_margin_db < 0.0);
}

#[test]
fn bad_masks_are_refused() {
    use KeyingError::*;
    assert!(matches!(
        SidebandMask::symmetric(&[]),
        Err(MaskEmpty { .. })
    ));
    assert!(matches!(
        SidebandMask::symmetric(&[(100.0, -20.0), (100.0, -30.0)]),
        Err(MaskOffset { index: 1, .. })
    ));
    assert!(matches!(
        SidebandMask::symmetric(&[(100.0, -20.0), (50.0, -30.0)]),
        Err(MaskOffset { index: 1, .. })
    ));
    assert!(matches!(
        SidebandMask::symmetric(&[(-1.0, -20.0)]),
        Err(MaskOffset { index: 0, .. })
    ));
    assert!(matches!(
        SidebandMask::symmetric(&[(f64::NAN, -20.0)]),
        Err(MaskOffset { .. })
    ));
    assert!(matches!(
        SidebandMask::symmetric(&[(1.0, f64::NAN)]),
        Err(MaskLevel { .. })
    ));
    assert!(matches!(
        SidebandMask::two_sided(&[(1.0, -3.0)], &[(1.0, f64::INFINITY)]),
        Err(MaskLevel { side: "upper", .. })
    ));
    // A mask beyond every shown offset covers nothing.
    let env = vec![Complex64::new(1.0, 0.0); 16];
    let s = try_sideband_spectrum(&env, 1e-3, &SidebandParams::default()).unwrap();
    let far = SidebandMask::symmetric(&[(1e9, -50.0)]).unwrap();
    assert!(matches!(
        sideband_margin(&s, &far),
        Err(MaskNotCovered { .. })
    ));
}

#[test]
fn bad_records_are_refused_with_their_numbers() {
    use KeyingError::*;
    let p = SidebandParams::default();
    let c = |v: f64| Complex64::new(v, 0.0);
    assert!(matches!(
        try_sideband_spectrum(&[], 1e-3, &p),
        Err(TooFewSamples { samples: 0, .. })
    ));
    assert!(matches!(
        try_keying_edges(&[], 1e-3),
        Err(TooFewSamples { samples: 0, .. })
    ));
    assert!(matches!(
        try_sideband_spectrum(&[c(1.0); 3], 1e-3, &p),
        Err(TooFewSamples { samples: 3, .. })
    ));
    let mut nan = vec![c(1.0); 8];
    nan[5] = Complex64::new(0.0, f64::NAN);
    assert!(matches!(
        try_sideband_spectrum(&nan, 1e-3, &p),
        Err(NotFinite { index: 5, .. })
    ));
    assert!(matches!(
        try_keying_edges(&[0.0, 1.0, f64::INFINITY, 0.0], 1e-3),
        Err(NotFinite { index: 2, .. })
    ));
    assert!(matches!(
        try_keying_edges(&[0.0, 1.0, -1.0, 0.0], 1e-3),
        Err(Negative { index: 2, .. })
    ));
    assert!(matches!(
        try_sideband_spectrum(&[c(0.0); 8], 1e-3, &p),
        Err(NoKeyDown { .. })
    ));
    assert!(matches!(
        try_keying_edges(&[0.0; 8], 1e-3),
        Err(NoKeyDown { .. })
    ));
    for dt in [0.0, -1.0, f64::NAN, f64::INFINITY, 1e-320, 1e306] {
        assert!(
            matches!(
                try_sideband_spectrum(&[c(1.0); 8000], dt, &p),
                Err(BadStep { .. })
            ),
            "dt {dt}"
        );
    }
    for rbw in [0.0, -3.0, f64::NAN, f64::INFINITY] {
        let q = SidebandParams {
            rbw_hz: Some(rbw),
            ..p
        };
        assert!(matches!(
            try_sideband_spectrum(&[c(1.0); 8], 1e-3, &q),
            Err(BadRbw { .. })
        ));
    }
    let q = SidebandParams {
        max_offset_hz: Some(-1.0),
        ..p
    };
    assert!(matches!(
        try_sideband_spectrum(&[c(1.0); 8], 1e-3, &q),
        Err(BadMaxOffset { .. })
    ));
    for a in [0.0, -1.0, f64::NAN] {
        let q = SidebandParams {
            key_down_amplitude: Some(a),
            ..p
        };
        assert!(matches!(
            try_sideband_spectrum(&[c(1.0); 8], 1e-3, &q),
            Err(BadKeyDown { .. })
        ));
    }
    // Edges: a record starting key-down, one ending key-down, a pulse too
    // short for a middle half.
    let keyed_first = [1.0, 1.0, 1.0, 1.0, 1.0, 0.0, 0.0];
    match try_keying_edges(&keyed_first, 1e-3) {
        Err(NoRisingEdge { first, .. }) => assert_eq!(first, 1.0),
        other => panic!("{other:?}"),
    }
    let keyed_last = [0.0, 0.0, 1.0, 1.0, 1.0, 1.0, 1.0];
    match try_keying_edges(&keyed_last, 1e-3) {
        Err(NoFallingEdge { last, .. }) => assert_eq!(last, 1.0),
        other => panic!("{other:?}"),
    }
    assert!(matches!(
        try_keying_edges(&[0.0, 0.0, 1.0, 1.0, 0.0, 0.0], 1e-3),
        Err(KeyDownTooShort { samples: 2, .. })
    ));
    // A ramp that never settles back below 10 % of key-down.
    assert!(matches!(
        try_keying_edges(&[0.0, 1.0, 1.0, 1.0, 1.0, 0.4, 0.3], 1e-3),
        Err(NoFallingEdge { .. })
    ));
    // Errors say what they are about.
    let text = try_keying_edges(&keyed_first, 1e-3)
        .unwrap_err()
        .to_string();
    assert!(text.contains("rising edge"), "{text}");
}

/// The shown levels never fall below the stated floor, and a carrier given
/// from outside is honoured: a record at half the given amplitude reads
/// −6.02 dBc (20·log10(½), common practice).
#[test]
fn floor_and_given_key_down() {
    let env = vec![Complex64::new(0.5, 0.0); 64];
    let q = SidebandParams {
        key_down_amplitude: Some(1.0),
        ..SidebandParams::default()
    };
    let s = try_sideband_spectrum(&env, 1e-3, &q).unwrap();
    assert!((s.dbc[32] - 20.0 * 0.5f64.log10()).abs() < 1e-12);
    assert!(s.dbc.iter().all(|&l| l >= DBC_FLOOR));
    assert!(s.dbc.contains(&DBC_FLOOR));
}

/// Parseval (common practice): the exact lines sum to the mean square of
/// the envelope over |A|², here with a strong line at the record's Nyquist
/// offset N/(2T), which the record cannot place on either side: a[n] =
/// 1 + 0.5·(−1)^n has |c_0|² = 1 and |c_{N/2}|² = 0.25, shown as 0.125
/// (−9.03 dBc) at each end of the span. Rounding only (1e-12).
#[test]
fn lines_keep_the_power_and_split_the_nyquist_line() {
    let n = 32;
    let env: Vec<Complex64> = (0..n)
        .map(|k| Complex64::new(1.0 + 0.5 * if k % 2 == 0 { 1.0 } else { -1.0 }, 0.0))
        .collect();
    let q = SidebandParams {
        key_down_amplitude: Some(1.0),
        ..SidebandParams::default()
    };
    let s = try_sideband_spectrum(&env, 1e-3, &q).unwrap();
    let total: f64 = s.line_dbc.iter().map(|l| 10f64.powf(l / 10.0)).sum();
    assert!((total - 1.25).abs() < 1e-12);
    let split = 10.0 * 0.125f64.log10();
    assert!((s.line_dbc[0] - split).abs() < 1e-9);
    assert!((s.line_dbc[n] - split).abs() < 1e-9);
    assert!((s.line_offsets_hz[n] - 0.5 / 1e-3).abs() < 1e-9);
    // 0.125 of 1.25 (10 %) beyond each end of the carrier: the band spans the record.
    assert_eq!(s.occupied.lower_hz, -500.0);
    assert_eq!(s.occupied.upper_hz, 500.0);
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(256))]

    /// No NaN, infinity or panic on arbitrary finite input; the occupied
    /// band lies inside the record's span ±N/(2T); shown levels at or above
    /// the floor.
    #[test]
    fn arbitrary_envelopes_give_finite_figures(
        parts in prop::collection::vec((-1e6f64..1e6, -1e6f64..1e6), 0..200),
        scale in prop::sample::select(vec![1e-300, 1e-12, 1.0, 1e12, 1e300]),
        dt in 1e-9f64..1.0,
        rbw in prop::option::of(1e-3f64..1e9),
        max_offset in prop::option::of(0.0f64..1e9),
        window in prop::sample::select(SpectrumWindow::ALL.to_vec()),
        mask in prop::collection::vec((-10.0f64..1e6, -400.0f64..100.0), 0..6),
        given in prop::option::of(1e-3f64..1e3),
    ) {
        let env: Vec<Complex64> =
            parts.iter().map(|&(re, im)| Complex64::new(re * scale, im * scale)).collect();
        let params = SidebandParams { rbw_hz: rbw, window, max_offset_hz: max_offset, key_down_amplitude: given.map(|g| g * scale) };
        if let Ok(s) = try_sideband_spectrum(&env, dt, &params) {
            let span = (env.len() / 2) as f64 * s.line_spacing_hz;
            prop_assert!(s.dbc.iter().chain(&s.line_dbc).all(|l| l.is_finite() && *l >= DBC_FLOOR));
            prop_assert!(s.offsets_hz.iter().all(|f| f.is_finite() && f.abs() <= span * (1.0 + 1e-12)));
            prop_assert!(s.occupied.lower_hz >= -span * (1.0 + 1e-12));
            prop_assert!(s.occupied.upper_hz <= span * (1.0 + 1e-12));
            prop_assert!(s.occupied.lower_hz <= s.occupied.upper_hz);
            prop_assert!(s.occupied.width_hz.is_finite() && s.occupied.width_hz >= 0.0);
            prop_assert!(s.key_down_amplitude.is_finite() && s.key_down_amplitude > 0.0);
            if let Ok(m) = SidebandMask::symmetric(&mask) {
                if let Ok(r) = sideband_margin(&s, &m) {
                    prop_assert!(r.worst_margin_db.is_finite());
                    prop_assert!(r.checked >= 1);
                }
            }
        }
        let mag: Vec<f64> = env.iter().map(|a| a.norm()).collect();
        if let Ok(e) = try_keying_edges(&mag, dt) {
            for v in [e.rise_s, e.fall_s, e.width_s, e.overshoot_pct, e.key_down_amplitude] {
                prop_assert!(v.is_finite() && v >= 0.0);
            }
            prop_assert!(e.rise_s <= mag.len() as f64 * dt);
        }
    }
}
