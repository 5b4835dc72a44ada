//! Plots and the HTML report built from hand-made (synthetic) results: every
//! SVG parses as XML, carries its title, axis labels with units and the
//! expected number of series; the HTML report is well-formed and refers to
//! nothing outside itself. Set TW_PLOT_OUT=/some/dir to keep the files.

mod plots_support;

use plots_support::*;
use tankwave_circuit::ElementId;
use tankwave_report::html::{stage_report, AcView, Figure, Provenance, ReportInput, StudySection};
use tankwave_report::plot::{self, PlotParams};

fn params() -> PlotParams {
    PlotParams::for_source("demo-stage.tw")
}

#[test]
fn period_plot_has_four_panels_and_shaded_conduction() {
    let (c, sol) = class_c_stage(150.0);
    let svg = plot::period_plot(&c, &sol, Q1, &params()).expect("plot");
    keep("period_Q1.svg", &svg);
    let doc = parse(&svg);
    assert_eq!(series_labels(&doc), vec!["v_ce", "i_c", "v_be", "v_RL"]);
    let texts = texts(&doc);
    for label in ["time (ns)", "v_ce (V)", "i_c (A)", "v_be (V)", "v_RL (V)"] {
        assert!(
            texts.iter().any(|t| t == label),
            "axis label {label} missing in {texts:?}"
        );
    }
    assert!(
        texts
            .iter()
            .any(|t| t.contains("Q1") && t.contains("demo-stage.tw")),
        "title"
    );
    // one shaded interval per panel (the pulse is centred at t = 0, so it
    // wraps: two rectangles per panel)
    let shades = count_class(&doc, "shade");
    assert_eq!(shades, 4);
}

#[test]
fn conduction_intervals_match_the_measured_angle() {
    // A cosine pulse of conduction angle θ: the shaded time is θ/360 of the
    // period (closed form of the truncated-cosine pulse, i > 0 for |ωt| < θ/2:
    // S. C. Cripps, RF Power Amplifiers for Wireless Communications, 2nd ed.,
    // 2006, ch. 3, from memory, as in the measure tests). The sampled
    // edges are interpolated linearly; with N = 256 samples the chord error
    // at the zero crossing is well under one sample (1.4°), so 0.5° holds.
    for theta in [120.0, 150.0, 200.0] {
        let (_, sol) = class_c_stage(theta);
        let ic = sol.terminal_current(Q1.terminal(0)).unwrap();
        let t = 1.0 / sol.freq;
        let iv = plot::conduction_intervals(ic, t, 0.05);
        let shaded: f64 = iv.iter().map(|(a, b)| b - a).sum::<f64>() / t * 360.0;
        assert!((shaded - theta).abs() < 0.5, "θ = {theta}: shaded {shaded}");
        let measured = tankwave_measure::conduction_angle_deg(ic, 0.05);
        assert!(
            (shaded - measured).abs() < 0.5,
            "measure says {measured}, shaded {shaded}"
        );
        for (a, b) in iv {
            assert!(
                0.0 <= a && a < b && b <= t,
                "interval ({a}, {b}) outside the period {t}"
            );
        }
    }
}

#[test]
fn period_plot_rejects_a_non_transistor_and_bad_shapes() {
    let (c, mut sol) = class_c_stage(150.0);
    assert!(matches!(
        plot::period_plot(&c, &sol, RL, &params()),
        Err(plot::PlotError::NotTransistor { .. })
    ));
    assert!(matches!(
        plot::period_plot(&c, &sol, ElementId::new(99), &params()),
        Err(plot::PlotError::NoElement { index: 99, .. })
    ));
    sol.x[1][3] = f64::NAN;
    assert!(matches!(
        plot::period_plot(&c, &sol, Q1, &params()),
        Err(plot::PlotError::NotFinite { index: 3, .. })
    ));
    sol.x[1].pop();
    assert!(matches!(
        plot::period_plot(&c, &sol, Q1, &params()),
        Err(plot::PlotError::Shape { .. })
    ));
    let all = plot::period_plots(&c, &class_c_stage(150.0).1, &params()).expect("plots");
    assert_eq!(all.len(), 1);
    assert_eq!(all[0].0, "Q1");
}

#[test]
fn spectrum_plot_has_bars_mask_and_worst_margin() {
    let m = metrics();
    let mask = mask_eval();
    let svg = plot::spectrum_plot(
        &m.output.as_ref().unwrap().harmonics,
        Some(&mask),
        &params(),
    )
    .expect("plot");
    keep("spectrum.svg", &svg);
    let doc = parse(&svg);
    assert_eq!(
        series_labels(&doc),
        vec!["measured level", "mask demo-mask"]
    );
    let texts = texts(&doc);
    assert!(texts.iter().any(|t| t == "level (dBc)"));
    assert!(texts.iter().any(|t| t.starts_with("harmonic number n")));
    // worst row is harmonic 3 with margin -2.5 dB (see common::mask_eval)
    assert!(
        texts.iter().any(|t| t == "worst margin -2.5 dB"),
        "{texts:?}"
    );
    // 5 harmonics, each a filled bar and its outline
    let bars = count_in_series(&doc, "measured level", "rect");
    assert_eq!(bars, 10);
    // the failing bar (n = 3) is filled with the darker fill
    let legend = legend_labels(&doc);
    assert!(legend.contains(&"measured, exceeds mask".to_string()));
    // no mask: only the bars
    let svg =
        plot::spectrum_plot(&m.output.as_ref().unwrap().harmonics, None, &params()).expect("plot");
    assert_eq!(series_labels(&parse(&svg)), vec!["measured level"]);
}

/// The value labels over the bars never overprint: with 30 harmonics at
/// nearly equal levels (labels as wide as the bars' spacing) and some below
/// the floor (the long "(below)" labels), no two label boxes, as drawn in
/// the SVG, overlap; most labels still find a place.
#[test]
fn spectrum_labels_do_not_overprint() {
    let levels: Vec<f64> = (1..=30)
        .map(|n| match n {
            1 => 0.0,
            n if n % 7 == 0 => -300.0,
            n => -40.0 - (n % 3) as f64 * 0.7,
        })
        .collect();
    let h: Vec<_> = levels
        .iter()
        .enumerate()
        .map(|(k, d)| plots_support::harmonic(k + 1, *d))
        .collect();
    let svg = plot::spectrum_plot(&h, None, &params()).expect("plot");
    keep("spectrum-crowded.svg", &svg);
    let doc = parse(&svg);
    let labels: Vec<(i32, i32, String)> = doc
        .descendants()
        .filter(|n| n.has_tag_name("text"))
        .filter_map(|n| {
            let t = n.text()?.trim().to_string();
            let value = t.trim_end_matches(" (below)");
            value.parse::<f64>().ok()?;
            // the bar labels, not the axis ticks: ticks are whole tens or harmonic numbers
            if !t.contains('.') && !t.contains("below") {
                return None;
            }
            let x = n.attribute("x")?.parse::<f64>().ok()? as i32;
            let y = n.attribute("y")?.parse::<f64>().ok()? as i32;
            Some((x, y, t))
        })
        .collect();
    assert!(labels.len() >= 20, "{} labels: {labels:?}", labels.len());
    assert!(
        labels.iter().any(|l| l.2.ends_with("(below)")),
        "{labels:?}"
    );
    let boxes: Vec<_> = labels
        .iter()
        .map(|(x, y, t)| plot::label_box(*x, *y, t, 12))
        .collect();
    for (i, a) in boxes.iter().enumerate() {
        for (j, b) in boxes.iter().enumerate().skip(i + 1) {
            let overlap = a.0 < b.2 && b.0 < a.2 && a.1 < b.3 && b.1 < a.3;
            assert!(!overlap, "{:?} overlaps {:?}", labels[i], labels[j]);
        }
    }
}

#[test]
fn startup_plot_has_wave_and_envelopes() {
    let (c, tr) = startup_run();
    let svg = plot::startup_plot(&c, &tr, F0, &params()).expect("plot");
    keep("startup.svg", &svg);
    let doc = parse(&svg);
    assert_eq!(
        series_labels(&doc),
        vec!["v_RL", "upper envelope", "lower envelope"]
    );
    let texts = texts(&doc);
    assert!(texts.iter().any(|t| t == "time (µs)"), "{texts:?}");
    assert!(texts.iter().any(|t| t == "v_RL (V)"));
    assert_eq!(count_class(&doc, "reference"), 1, "the 90 % settling mark");
}

#[test]
fn peak_envelope_follows_an_exponential_rise() {
    // v = A (1 − e^(−t/τ)) sin(ωt) with a rising envelope E(t): in period k
    // the largest sample is at most E(t_max) (|sin| ≤ 1) and at least the
    // sample nearest the sine crest t_s = (k + 1/4)/f0, which is at least
    // E(t_s − T/200)·cos(π/200) with 200 samples per period (the crest is
    // missed by at most half a sample).
    let (a, tau) = (30.0, 2e-6);
    let per = 200.0;
    let n = 40 * 200;
    let time: Vec<f64> = (0..n).map(|k| k as f64 / (per * F0)).collect();
    let env_at = |t: f64| a * (1.0 - (-t / tau).exp());
    let v: Vec<f64> = time
        .iter()
        .map(|t| env_at(*t) * (2.0 * std::f64::consts::PI * F0 * t).sin())
        .collect();
    let env = plot::peak_envelope(&time, &v, F0);
    assert_eq!(env.len(), 40);
    for e in env.iter().skip(1) {
        let ts = (e.period as f64 + 0.25) / F0;
        let lower = env_at(ts - 1.0 / (per * F0)) * (std::f64::consts::PI / per).cos();
        let upper = env_at(e.t_max);
        assert!(
            e.max <= upper * (1.0 + 1e-12),
            "period {}: {} above {}",
            e.period,
            e.max,
            upper
        );
        assert!(
            e.max >= lower,
            "period {}: {} below {}",
            e.period,
            e.max,
            lower
        );
        assert!(
            e.min < 0.0 && e.t_min > e.t_max,
            "the trough follows the crest"
        );
    }
}

#[test]
fn ac_plot_log_and_linear() {
    let ac = ac_result();
    for (scale, name) in [
        (tankwave_circuit::Scale::Log, "ac_log.svg"),
        (tankwave_circuit::Scale::Linear, "ac_lin.svg"),
    ] {
        let svg = plot::ac_plot(&ac, &[0, 1], scale, &params()).expect("plot");
        keep(name, &svg);
        let doc = parse(&svg);
        // each unknown appears in the magnitude and in the phase panel
        assert_eq!(
            series_labels(&doc),
            vec!["V[in]", "V[out]", "V[in]", "V[out]"]
        );
        let texts = texts(&doc);
        assert!(texts.iter().any(|t| t == "magnitude (dB)"));
        assert!(texts.iter().any(|t| t == "phase (deg)"));
        assert!(texts.iter().any(|t| t == "frequency (MHz)"), "{texts:?}");
        assert_eq!(legend_labels(&doc), vec!["V[in]", "V[out]"]);
    }
    let mut bad = ac_result();
    bad.freq[0] = 0.0;
    assert!(matches!(
        plot::ac_plot(&bad, &[0], tankwave_circuit::Scale::Log, &params()),
        Err(plot::PlotError::NotPositive { index: 0, .. })
    ));
}

#[test]
fn sweep_plot_one_curve_per_group() {
    let s = sweep_curves(4, 11);
    let svg = plot::sweep_plot(&s, &params()).expect("plot");
    keep("sweep.svg", &svg);
    let doc = parse(&svg);
    assert_eq!(series_labels(&doc).len(), 4);
    assert_eq!(legend_labels(&doc).len(), 5, "four curves and the limit");
    let texts = texts(&doc);
    assert!(texts.iter().any(|t| t == "C1 (pF)"), "{texts:?}");
    assert!(texts.iter().any(|t| t == "output power (W)"));
    // every series group has its own dash pattern
    let dashes: std::collections::BTreeSet<String> = doc
        .descendants()
        .filter(|n| n.has_tag_name("g") && has_class(n, "series"))
        .map(|n| {
            n.attribute("stroke-dasharray")
                .unwrap_or("none")
                .to_string()
        })
        .collect();
    assert_eq!(dashes.len(), 4);
}

#[test]
fn sweep_grouping_sorts_and_labels() {
    let pts = [(2.0, 10e-12, 5.0), (1.0, 10e-12, 4.0), (1.0, 4.7e-12, 3.0)];
    let c = plot::SweepCurves::group(&pts, "C2", "F");
    assert_eq!(c.len(), 2);
    assert_eq!(c[0].label, "C2 = 4.70 pF");
    assert_eq!(c[1].x, vec![1.0, 2.0]);
    assert_eq!(c[1].y, vec![4.0, 5.0]);
}

#[test]
fn histogram_marks_the_limit_and_failing_bars() {
    let v = normal_values(1000, 20.0, 1.0);
    let spec = plot::HistogramSpec {
        title: "Output power over 1000 Monte Carlo variants".into(),
        name: "output power".into(),
        unit: "W".into(),
        limit: Some(plot::Limit {
            value: 18.5,
            label: "pout >= 18.5 W".into(),
            pass_above: true,
        }),
        bins: None,
    };
    let svg = plot::histogram_plot(&v, &spec, &params()).expect("plot");
    keep("histogram.svg", &svg);
    let doc = parse(&svg);
    assert_eq!(series_labels(&doc), vec!["output power"]);
    let texts = texts(&doc);
    assert!(texts.iter().any(|t| t == "output power (W)"));
    assert!(texts.iter().any(|t| t == "variants per bin"));
    assert_eq!(count_class(&doc, "reference"), 1);
    // the failing count in the subtitle equals a direct count
    let fails = v.iter().filter(|x| **x < 18.5).count();
    assert!(
        texts
            .iter()
            .any(|t| t.contains(&format!("; {fails} of them"))),
        "{texts:?}"
    );
    assert!(plot::histogram_plot(&[f64::NAN], &spec, &params()).is_err());
}

#[test]
fn surface_and_tuning_curve() {
    let s = surface();
    let svg = plot::surface_plot(&s, &params()).expect("plot");
    keep("surface.svg", &svg);
    let doc = parse(&svg);
    // the heat map is one series of nx·ny cells
    assert_eq!(
        count_in_series(&doc, "efficiency", "rect"),
        s.xs.len() * s.ys.len()
    );
    assert_eq!(count_class(&doc, "optimum"), 1);
    let texts = texts(&doc);
    assert!(texts.iter().any(|t| t == "C1 (pF)"));
    assert!(texts.iter().any(|t| t == "C2 (pF)"));
    let mut bad = surface();
    bad.values[2].pop();
    assert!(matches!(
        plot::surface_plot(&bad, &params()),
        Err(plot::PlotError::Shape { .. })
    ));

    // a point without a value (NaN) leaves its cell blank and is counted; the
    // rest is still drawn
    let mut holed = surface();
    holed.values[3][4] = f64::NAN;
    holed.values[5][0] = f64::NAN;
    let svg = plot::surface_plot(&holed, &params()).expect("plot with missing cells");
    let doc = parse(&svg);
    assert_eq!(
        count_in_series(&doc, "efficiency", "rect"),
        s.xs.len() * s.ys.len() - 2
    );
    assert_eq!(count_class(&doc, "missing"), 1);
    let holed_texts = plots_support::texts(&doc);
    assert!(
        holed_texts.iter().any(|t| t.contains("2 blank cells")),
        "{holed_texts:?}"
    );
    let mut none = surface();
    for row in &mut none.values {
        row.iter_mut().for_each(|z| *z = f64::NAN);
    }
    assert!(matches!(
        plot::surface_plot(&none, &params()),
        Err(plot::PlotError::Empty { .. })
    ));
    let mut inf = surface();
    inf.values[1][1] = f64::INFINITY;
    assert!(matches!(
        plot::surface_plot(&inf, &params()),
        Err(plot::PlotError::NotFinite { .. })
    ));

    let xs: Vec<f64> = (0..21).map(|k| 300e-12 + k as f64 * 10e-12).collect();
    let ys: Vec<f64> = xs
        .iter()
        .map(|x| 0.7 - ((x - 400e-12) / 100e-12).powi(2) * 0.1)
        .collect();
    let svg = plot::tuning_curve_plot(
        "Efficiency against C1",
        "C1",
        "F",
        "efficiency",
        "",
        &xs,
        &ys,
        Some(400e-12),
        &params(),
    )
    .expect("plot");
    keep("tuning_curve.svg", &svg);
    let doc = parse(&svg);
    assert_eq!(series_labels(&doc), vec!["efficiency"]);
    assert_eq!(count_class(&doc, "reference"), 1);
}

#[test]
fn palette_varies_lightness_dash_and_marker() {
    // relative luminance (WCAG 2.x definition of sRGB luminance)
    let lum = |(r, g, b): (u8, u8, u8)| {
        let f = |c: u8| {
            let c = c as f64 / 255.0;
            if c <= 0.04045 {
                c / 12.92
            } else {
                ((c + 0.055) / 1.055).powf(2.4)
            }
        };
        0.2126 * f(r) + 0.7152 * f(g) + 0.0722 * f(b)
    };
    let p = plot::PALETTE;
    for w in p.windows(2) {
        let (a, b) = (lum(w[0].color), lum(w[1].color));
        // neighbours differ by a contrast ratio of at least 2 (common practice
        // for telling lines apart in grey)
        let ratio = (a.max(b) + 0.05) / (a.min(b) + 0.05);
        assert!(
            ratio >= 2.0,
            "{:?} vs {:?}: {ratio}",
            w[0].color,
            w[1].color
        );
    }
    let dashes: std::collections::BTreeSet<_> = p.iter().map(|s| s.dash).collect();
    let markers: std::collections::BTreeSet<_> =
        p.iter().map(|s| format!("{:?}", s.marker)).collect();
    assert_eq!(dashes.len(), p.len());
    assert_eq!(markers.len(), p.len());
}

#[test]
fn html_report_is_self_contained_and_well_formed() {
    let (c, sol) = class_c_stage(150.0);
    let m = metrics();
    let masks = [mask_eval()];
    let verdicts = verdicts();
    let (_, tr) = startup_run();
    let ac = ac_result();
    let hist = plot::histogram_plot(
        &normal_values(300, 20.0, 1.0),
        &plot::HistogramSpec {
            title: "pout <b>Monte Carlo</b>".into(),
            name: "output power".into(),
            unit: "W".into(),
            limit: None,
            bins: Some(12),
        },
        &params(),
    )
    .unwrap();
    let studies = [StudySection {
        title: "Monte Carlo & tolerances <300 variants>".into(),
        lines: vec![("yield".into(), "97.0 %".into())],
        table: None,
        figures: vec![Figure {
            caption: "Output power histogram".into(),
            svg: hist,
        }],
    }];
    let unknowns = [0usize, 1];
    let input = ReportInput {
        title: "Demo 7 MHz stage \"A\" <test>".into(),
        file: "demo-stage.tw".into(),
        file_sha256: "0f".repeat(32),
        circuit: Some(&c),
        solution: Some(&sol),
        metrics: Some(&m),
        loads: &[],
        verdicts: &verdicts,
        masks: &masks,
        transient: Some(&tr),
        ac: Some(AcView {
            result: &ac,
            unknowns: &unknowns,
            scale: tankwave_circuit::Scale::Log,
        }),
        studies: &studies,
        load_sweeps: Vec::new(),
        intro: vec!["A study & its <nominal> stage.".into()],
        stage_label: None,
        omit_stage: false,
        provenance: Provenance {
            tool: "tankwave 0.1.0".into(),
            date: "2026-12-02 01:00 UTC".into(),
            options: vec![("harmonics".into(), "9".into())],
        },
        plot: params(),
    };
    let html = stage_report(&input);
    keep("report.html", &html);
    for bad in [
        "http://", "https://", "<script", "src=", "url(", "@import", "<link", "<img", "<iframe",
    ] {
        assert!(!html.contains(bad), "report holds {bad}");
    }
    let doc = roxmltree::Document::parse_with_options(
        &html,
        roxmltree::ParsingOptions {
            allow_dtd: true,
            ..Default::default()
        },
    )
    .expect("report is well-formed XML");
    let text: String = doc
        .descendants()
        .filter(|n| n.is_text())
        .map(|n| n.text().unwrap_or(""))
        .collect();
    // escaped title comes back as the original text
    assert!(text.contains("Demo 7 MHz stage \"A\" <test>"));
    assert!(text.contains(&"0f".repeat(32)));
    assert!(text.contains("licence"), "safety caution");
    assert!(text.contains("tankwave 0.1.0") && text.contains("2026-12-02 01:00 UTC"));
    // figures: one period plot, one spectrum, start-up, AC, the study's histogram
    let svgs = doc.descendants().filter(|n| n.has_tag_name("svg")).count();
    assert_eq!(svgs, 5);
    // the failing requirement shows as FAIL in the verdict table
    let fails = doc
        .descendants()
        .filter(|n| n.has_tag_name("td") && n.attribute("class") == Some("fail"))
        .count();
    assert!(fails >= 1);
    assert!(html.contains("@media print"));
}

#[test]
fn html_report_with_nothing_but_a_name() {
    let input = ReportInput {
        file: "empty.tw".into(),
        ..Default::default()
    };
    let html = stage_report(&input);
    let doc = roxmltree::Document::parse_with_options(
        &html,
        roxmltree::ParsingOptions {
            allow_dtd: true,
            ..Default::default()
        },
    )
    .expect("well-formed");
    assert_eq!(
        doc.descendants().filter(|n| n.has_tag_name("svg")).count(),
        0
    );
    assert!(html.contains("states no requirements"));
}

#[test]
fn study_sections_and_a_study_report() {
    use tankwave_study::{Record, Summary, Verdict};
    // four variants: pout 1, 2, 3 W and one that failed; "pout >= 2W" passes twice
    let rec = |index: u64, pout: Option<f64>| {
        let mut r = Record {
            index,
            values: Default::default(),
            metrics: Default::default(),
            verdicts: Default::default(),
            error: None,
        };
        match pout {
            Some(p) => {
                r.metrics.insert("pout_w".into(), p);
                r.verdicts.insert(
                    "pout >= 2W".into(),
                    Verdict {
                        pass: p >= 2.0,
                        margin: p - 2.0,
                    },
                );
            }
            None => r.error = Some("did not solve".into()),
        }
        r
    };
    let records = [
        rec(0, Some(1.0)),
        rec(1, Some(2.0)),
        rec(2, Some(3.0)),
        rec(3, None),
    ];
    let summary = Summary::from_records(&records, &[50.0]).unwrap();
    let hist = plot::histogram_plot(
        &[1.0, 2.0, 3.0],
        &plot::HistogramSpec {
            title: "pout".into(),
            name: "pout_w".into(),
            unit: "W".into(),
            limit: None,
            bins: Some(3),
        },
        &params(),
    )
    .unwrap();
    let sections = tankwave_report::batch::study_sections(
        &summary,
        &[("pout >= 2W".to_string(), tankwave_measure::Unit::Watt)]
            .into_iter()
            .collect(),
        &Default::default(),
        "Study of demo-stage.tw",
        vec![Figure {
            caption: "Histogram of pout_w".into(),
            svg: hist,
        }],
    );
    assert_eq!(sections.len(), 2);
    let lines: Vec<(&str, &str)> = sections[0]
        .lines
        .iter()
        .map(|(k, v)| (k.as_str(), v.as_str()))
        .collect();
    assert!(lines.contains(&("variants", "4")));
    assert!(lines.contains(&("failed to solve", "1")));
    assert!(lines.contains(&("pass every requirement", "2 of 4")));
    assert!(lines.contains(&("yield", "50.0 %")));
    let req = sections[0].table.as_ref().unwrap();
    // passed, failed, not evaluated, worst variant, worst margin (1 W − 2 W = −1 W)
    assert_eq!(
        req.rows,
        vec![vec!["pout >= 2W", "2", "1", "1", "#0", "-1.000 W"]]
    );
    let stats = sections[1].table.as_ref().unwrap();
    assert_eq!(
        stats.header,
        vec!["figure", "count", "min", "mean", "median", "max", "p50"]
    );
    // mean of 1, 2, 3 is 2; the median of three is the middle one
    assert_eq!(
        stats.rows,
        vec![vec![
            "pout_w", "3", "1.00 W", "2.00 W", "2.00 W", "3.00 W", "2.00 W"
        ]]
    );
    assert_eq!(sections[1].figures.len(), 1);

    // a study report: intro, the study first, labelled stage sections after it
    let (c, sol) = class_c_stage(150.0);
    let m = metrics();
    let verdicts = verdicts();
    let input = ReportInput {
        title: "Demo".into(),
        file: "demo-stage.tw".into(),
        circuit: Some(&c),
        solution: Some(&sol),
        metrics: Some(&m),
        loads: &[],
        verdicts: &verdicts,
        studies: &sections,
        load_sweeps: Vec::new(),
        intro: vec!["4 variants <of a sweep>".into()],
        stage_label: Some("nominal stage".into()),
        ..Default::default()
    };
    let html = stage_report(&input);
    let doc = roxmltree::Document::parse_with_options(
        &html,
        roxmltree::ParsingOptions {
            allow_dtd: true,
            ..Default::default()
        },
    )
    .expect("well-formed");
    let h2: Vec<String> = doc
        .descendants()
        .filter(|n| n.has_tag_name("h2"))
        .map(|n| n.text().unwrap_or("").to_string())
        .collect();
    assert_eq!(h2[0], "Studies", "{h2:?}");
    assert_eq!(h2[1], "Requirements — nominal stage", "{h2:?}");
    assert!(h2.contains(&"Headline figures — nominal stage".to_string()));
    assert!(html.contains("<p>4 variants &lt;of a sweep&gt;</p>"));
    assert!(html.contains("— study report</title>"));
    // left out: no stage sections at all, the study and the caution stay
    let only = ReportInput {
        omit_stage: true,
        ..input.clone()
    };
    let html = stage_report(&only);
    assert!(!html.contains("id=\"verdicts\"") && !html.contains("id=\"figures\""));
    assert!(html.contains("id=\"studies\"") && html.contains("id=\"safety\""));
}
