//! Summary statistics on known data.

mod common;

use std::collections::BTreeMap;

use common::*;
use tankwave_study::*;

fn rec(index: u64, y: f64, margin: Option<f64>, error: bool) -> Record {
    let mut r = Record {
        index,
        values: BTreeMap::new(),
        metrics: BTreeMap::new(),
        verdicts: BTreeMap::new(),
        error: None,
    };
    if error {
        r.error = Some("did not converge".to_string());
        return r;
    }
    r.metrics.insert("pout".to_string(), y);
    if let Some(m) = margin {
        r.verdicts.insert(
            "pout >= 25W".to_string(),
            Verdict {
                pass: m >= 0.0,
                margin: m,
            },
        );
    }
    r
}

/// Percentiles against numpy.percentile(method="linear") on random and tied
/// data (reference.json). Both evaluate x[lo] + frac·(x[lo+1] − x[lo]) in
/// binary64 (numpy rearranges the product), so they agree to a few ulp of the
/// data's magnitude: tolerance 1e-13 relative to max |x|.
#[test]
fn percentiles_match_numpy_linear() {
    let r = reference();
    for case in r["percentiles"].as_array().unwrap() {
        let mut data = floats(&case["data"]);
        let ps = floats(&case["p"]);
        let want = floats(&case["values"]);
        data.sort_by(f64::total_cmp);
        let scale = data.iter().fold(1.0f64, |m, x| m.max(x.abs()));
        for (p, w) in ps.iter().zip(&want) {
            let got = percentile_sorted(&data, *p).unwrap();
            assert!(
                (got - w).abs() <= 1e-13 * scale,
                "n={} p={p}: {got} vs {w}",
                data.len()
            );
        }
        // Through Summary as well, with records in shuffled order.
        let recs: Vec<Record> = data
            .iter()
            .enumerate()
            .rev()
            .map(|(i, &y)| rec(i as u64, y, None, false))
            .collect();
        let s = Summary::from_records(&recs, &ps).unwrap();
        let f = &s.figures["pout"];
        for ((p, got), w) in f.percentiles.iter().zip(&want) {
            assert!((got - w).abs() <= 1e-13 * scale, "summary p={p}");
        }
        let mean = case["mean"].as_f64().unwrap();
        assert!((f.mean - mean).abs() <= 1e-13 * scale);
        assert_eq!(f.min, data[0]);
        assert_eq!(f.max, *data.last().unwrap());
        assert_eq!(f.count, data.len() as u64);
    }
    assert!(matches!(
        percentile_sorted(&[1.0], 101.0),
        Err(StudyError::BadPercentile { .. })
    ));
    assert!(percentile_sorted(&[], 50.0).is_err());
    assert!(Summary::from_records(&[], &[-1.0]).is_err());
}

#[test]
fn yield_counts_failures_as_not_passing_and_finds_the_worst_variant() {
    // pout = 20..=29 W for indices 0..10; requirement pout >= 25 W, margin = pout − 25.
    let mut recs: Vec<Record> = (0..10)
        .map(|i| rec(i, 20.0 + i as f64, Some(i as f64 - 5.0), false))
        .collect();
    recs.push(rec(10, 0.0, None, true));
    recs.push(rec(11, 0.0, None, true));
    let s = Summary::from_records(&recs, &[5.0, 95.0]).unwrap();
    assert_eq!(s.variants, 12);
    assert_eq!(s.failed, 2);
    // Passing: indices 5..10 (margin ≥ 0) = 5 of 12 (errors count as failing).
    assert_eq!(s.passed_all, 5);
    assert!((s.yield_fraction - 5.0 / 12.0).abs() < 1e-15);
    let req = &s.requirements["pout >= 25W"];
    assert_eq!(req.evaluated, 10);
    assert_eq!(req.passed, 5);
    assert_eq!(req.worst_index, 0);
    assert_eq!(req.worst_margin, -5.0);
    let f = &s.figures["pout"];
    assert_eq!(f.count, 10);
    assert_eq!(f.median, 24.5);
    // numpy.percentile(20..29, 5) = 20 + 0.45·1 = 20.45 (h = 9·0.05; closed form).
    assert!((f.percentiles[0].1 - 20.45).abs() < 1e-12);
    assert!((f.percentiles[1].1 - 28.55).abs() < 1e-12);
    // Ties for the worst margin go to the lowest index.
    let tie = vec![
        rec(7, 1.0, Some(-1.0), false),
        rec(3, 1.0, Some(-1.0), false),
    ];
    assert_eq!(
        Summary::from_records(&tie, &[]).unwrap().requirements["pout >= 25W"].worst_index,
        3
    );
}

#[test]
fn summary_of_a_run_from_its_record_file() {
    let plan = Plan::new(&mixed_spec(), &ELEMENTS).unwrap();
    let mut sink = JsonlSink::create(Vec::new(), &Header::new(&plan, 2, None)).unwrap();
    run_study(
        &plan,
        &StudyParams {
            chain: 2,
            ..Default::default()
        },
        synthetic,
        &mut sink,
        &|_| {},
    )
    .unwrap();
    let bytes = sink.into_inner();
    let mut reader = RecordReader::open(std::io::Cursor::new(&bytes[..]), "mem")
        .unwrap()
        .unwrap();
    let recs: Vec<Record> = reader.by_ref().map(|r| r.unwrap()).collect();
    let s = Summary::from_records(&recs, &[5.0, 95.0]).unwrap();
    // Streaming from the reader gives the same summary.
    let mut b = SummaryBuilder::new();
    for r in RecordReader::open(std::io::Cursor::new(&bytes[..]), "mem")
        .unwrap()
        .unwrap()
    {
        b.add(&r.unwrap());
    }
    assert_eq!(b.finish(&[5.0, 95.0]).unwrap(), s);
    assert_eq!(s.variants, 60);
    assert_eq!(s.failed, 3);
    let by_hand = recs
        .iter()
        .filter(|r| r.error.is_none() && r.metrics["y"] >= 4.0)
        .count() as u64;
    assert_eq!(s.passed_all, by_hand);
    let worst = &s.requirements["y >= 4"];
    let min_margin = recs
        .iter()
        .filter_map(|r| r.verdicts.get("y >= 4").map(|v| v.margin))
        .fold(f64::INFINITY, f64::min);
    assert_eq!(worst.worst_margin, min_margin);
}

/// Spearman's rank correlation against scipy.stats.spearmanr (reference.json,
/// generated by tests/reference/study/generate.py; docs/check-values.md,
/// "Rank correlation"). Both compute a Pearson correlation of ranks that
/// are exact halves, so they agree to rounding in sums of 40 terms:
/// tolerance 1e-12 absolute on ρ ∈ [−1, 1].
#[test]
fn rank_correlation_matches_scipy_spearmanr() {
    let r = reference();
    let cases = r["spearman"].as_array().unwrap();
    assert!(cases.len() >= 5);
    for case in cases {
        let x = floats(&case["x"]);
        let y = floats(&case["y"]);
        let want = case["rho"].as_f64().unwrap();
        let got = spearman(&x, &y).unwrap();
        assert!(
            (got - want).abs() < 1e-12,
            "{}: {got} vs {want}",
            case["name"]
        );
    }
}

/// The summary names the tolerance that drives a figure and a margin, and
/// leaves out an input that does not (rank correlation below the 5 % noise
/// level of crate::sensitivity).
#[test]
fn summary_ranks_the_inputs_that_drive_figures_and_margins() {
    let mut recs = Vec::new();
    for i in 0..60u64 {
        let c = 0.9 + 0.2 * (i as f64) / 59.0;
        // An unrelated input: a fixed shuffle of the same range.
        let other = 0.9 + 0.2 * (((i * 7) % 60) as f64) / 59.0;
        let pout = 10.0 - 40.0 * (c - 1.0) * (c - 1.0) - 3.0 * (c - 1.0);
        let mut r = rec(i, pout, Some(pout - 9.0), false);
        r.values.insert("c1".into(), c);
        r.values.insert("r2".into(), other);
        recs.push(r);
    }
    let s = Summary::from_records(&recs, &[]).unwrap();
    let d = &s.figure_drivers["pout"];
    assert_eq!(d.inputs[0].0, "c1", "{d:?}");
    assert!(d.inputs[0].1 < -0.5, "{d:?}");
    assert!(d.inputs.iter().all(|(n, _)| n != "r2"), "{d:?}");
    let m = &s.requirement_drivers["pout >= 25W"];
    assert_eq!(m.inputs[0].0, "c1");
    assert_eq!(m.variants, 60);
}
