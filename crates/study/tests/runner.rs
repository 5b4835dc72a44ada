//! The runner: thread-count independence, sharding and merge, resume after a
//! kill, failures recorded, and the records held in flight.

mod common;

use std::io::{BufReader, Cursor};
use std::sync::atomic::{AtomicU64, Ordering};
use std::sync::Mutex;

use common::*;
use tankwave_study::*;

fn run_mem(plan: &Plan, params: &StudyParams) -> (Vec<Record>, RunInfo) {
    let mut sink = MemorySink::default();
    let info = run_study(plan, params, synthetic, &mut sink, &|_| {}).unwrap();
    let mut recs = sink.records;
    recs.sort_by_key(|r| r.index);
    (recs, info)
}

fn params(threads: usize, chain: u64) -> StudyParams {
    StudyParams {
        threads: Some(threads),
        chain,
        ..Default::default()
    }
}

fn read_all(bytes: &[u8]) -> (Header, Vec<Record>) {
    let mut r = RecordReader::open(Cursor::new(bytes), "mem")
        .unwrap()
        .unwrap();
    let h = r.header().unwrap().clone();
    let mut recs: Vec<Record> = r.by_ref().map(|x| x.unwrap()).collect();
    recs.sort_by_key(|x| x.index);
    (h, recs)
}

#[test]
fn same_records_for_one_and_two_threads() {
    let plan = Plan::new(&mixed_spec(), &ELEMENTS).unwrap();
    for chain in [1, 3, 5] {
        let (one, i1) = run_mem(&plan, &params(1, chain));
        let (two, i2) = run_mem(&plan, &params(2, chain));
        assert_eq!(i1.threads, 1);
        assert_eq!(i2.threads, 2);
        assert_eq!(one.len(), 60);
        assert_eq!(one, two, "chain {chain}");
        assert_eq!(i1.recorded, 60);
        assert_eq!(i1.failed, 3); // indices 16, 33, 50
    }
    // Warm starts do reach the work: with chains the figures differ in the
    // last bits from cold starts for some variant (the synthetic Newton
    // iteration stops after 6 steps), which is why chains are fixed by the plan.
    let (cold, _) = run_mem(&plan, &params(2, 1));
    let (warm, _) = run_mem(&plan, &params(2, 5));
    assert_ne!(cold, warm);
}

#[test]
fn failures_and_panics_are_recorded_and_the_study_goes_on() {
    let plan = Plan::new(&mixed_spec(), &ELEMENTS).unwrap();
    let work = |v: &Variant, w: Option<&WarmStart>| {
        if v.index == 5 {
            panic!("boom at five");
        }
        if v.index == 6 {
            let mut o = synthetic(v, w)?;
            o.metrics.insert("bad".to_string(), f64::NAN);
            return Ok(o);
        }
        synthetic(v, w)
    };
    let mut sink = MemorySink::default();
    let info = run_study(&plan, &params(2, 3), work, &mut sink, &|_| {}).unwrap();
    assert_eq!(sink.records.len(), 60);
    let get = |i: u64| sink.records.iter().find(|r| r.index == i).unwrap();
    assert!(get(5).error.as_deref().unwrap().contains("boom at five"));
    assert!(get(6).error.as_deref().unwrap().contains("bad"));
    assert!(get(6).metrics.is_empty());
    assert!(get(16)
        .error
        .as_deref()
        .unwrap()
        .contains("synthetic failure"));
    assert!(get(7).error.is_none());
    assert_eq!(info.failed, 5);
}

#[test]
fn shards_partition_the_study_and_merge_equals_one_run() {
    let plan = Plan::new(&mixed_spec(), &ELEMENTS).unwrap();
    let chain = 2;
    // Unsharded run, to a JSON Lines buffer.
    let header = Header::new(&plan, chain, None);
    let mut whole = JsonlSink::create(Vec::new(), &header).unwrap();
    run_study(&plan, &params(2, chain), synthetic, &mut whole, &|_| {}).unwrap();
    let whole = whole.into_inner();
    let (_, whole_recs) = read_all(&whole);
    // Records read back from the file equal the records in memory, bit for bit.
    let (mem_recs, _) = run_mem(&plan, &params(1, chain));
    assert_eq!(whole_recs, mem_recs);

    let n = 3;
    let mut outputs = Vec::new();
    let mut all_idx = Vec::new();
    for i in 0..n {
        let shard = Shard::new(i, n).unwrap();
        let mut sink =
            JsonlSink::create(Vec::new(), &Header::new(&plan, chain, Some(shard))).unwrap();
        let p = StudyParams {
            shard: Some(shard),
            ..params(2, chain)
        };
        let info = run_study(&plan, &p, synthetic, &mut sink, &|_| {}).unwrap();
        let idx = shard_indices(&plan, chain, Some(shard)).unwrap();
        assert_eq!(info.recorded, idx.len() as u64);
        assert!(!idx.is_empty());
        all_idx.extend(idx);
        outputs.push((format!("shard{i}"), sink.into_inner()));
    }
    all_idx.sort_unstable();
    assert_eq!(all_idx, (0..60).collect::<Vec<_>>());

    let inputs: Vec<_> = outputs
        .iter()
        .map(|(n, b)| (n.clone(), BufReader::new(&b[..])))
        .collect();
    let mut merged = Vec::new();
    let info = merge(inputs, &mut merged).unwrap();
    assert_eq!(info.records, 60);
    assert_eq!(info.missing, 0);
    let (h, merged_recs) = read_all(&merged);
    assert_eq!(h, header);
    assert_eq!(merged_recs, whole_recs);
    // Merged output is sorted: reading it in file order gives indices 0..60.
    let mut r = RecordReader::open(Cursor::new(&merged[..]), "m")
        .unwrap()
        .unwrap();
    let order: Vec<u64> = r.by_ref().map(|x| x.unwrap().index).collect();
    assert_eq!(order, (0..60).collect::<Vec<_>>());

    // Identical duplicates (a shard given twice) are dropped.
    let inputs: Vec<_> = [&outputs[0], &outputs[0], &outputs[1], &outputs[2]]
        .iter()
        .map(|(n, b)| (n.clone(), BufReader::new(&b[..])))
        .collect();
    let mut again = Vec::new();
    let info = merge(inputs, &mut again).unwrap();
    assert_eq!(
        info.duplicates,
        outputs[0].1.iter().filter(|&&c| c == b'\n').count() as u64 - 1
    );
    assert_eq!(again, merged);

    // A conflicting duplicate is an error naming the variant.
    let (_, recs0) = read_all(&outputs[0].1);
    let mut bad = recs0[0].clone();
    bad.metrics.insert("y".to_string(), 1.0e9);
    let mut forged = JsonlSink::create(
        Vec::new(),
        &Header::new(&plan, chain, Some(Shard::new(0, n).unwrap())),
    )
    .unwrap();
    forged.record(&bad).unwrap();
    let forged = forged.into_inner();
    let inputs = vec![
        ("a".to_string(), BufReader::new(&outputs[0].1[..])),
        ("forged".to_string(), BufReader::new(&forged[..])),
    ];
    let e = merge(inputs, &mut Vec::new()).unwrap_err();
    assert!(
        matches!(e, StudyError::Conflict { index, .. } if index == bad.index),
        "{e}"
    );

    // Records of another plan are refused.
    let mut spec = mixed_spec();
    spec.montecarlo = Some(tankwave_circuit::MonteCarlo { runs: 4, seed: 8 });
    let other = Plan::new(&spec, &ELEMENTS).unwrap();
    let foreign = JsonlSink::create(Vec::new(), &Header::new(&other, chain, None))
        .unwrap()
        .into_inner();
    let inputs = vec![
        ("a".to_string(), BufReader::new(&outputs[0].1[..])),
        ("foreign".to_string(), BufReader::new(&foreign[..])),
    ];
    assert!(matches!(
        merge(inputs, &mut Vec::new()),
        Err(StudyError::HeaderMismatch { field: "plan", .. })
    ));
    // Missing shards are counted.
    let inputs = vec![("a".to_string(), BufReader::new(&outputs[0].1[..]))];
    let info = merge(inputs, &mut Vec::new()).unwrap();
    assert_eq!(info.missing, 60 - info.records);
}

#[test]
fn killed_and_resumed_study_has_every_variant_exactly_once() {
    let plan = Plan::new(&mixed_spec(), &ELEMENTS).unwrap();
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("records.jsonl");
    for chain in [1u64, 3] {
        let header = Header::new(&plan, chain, None);
        let full = {
            let mut sink = JsonlSink::create(Vec::new(), &header).unwrap();
            run_study(&plan, &params(2, chain), synthetic, &mut sink, &|_| {}).unwrap();
            sink.into_inner()
        };
        let (_, full_recs) = read_all(&full);
        // Cut at several places, each in the middle of a line (simulating a
        // kill during a write), and also exactly at a line end and inside the header.
        let newlines: Vec<usize> = full
            .iter()
            .enumerate()
            .filter(|(_, &c)| c == b'\n')
            .map(|(i, _)| i)
            .collect();
        let cuts = [
            newlines[0] - 3,
            newlines[0] + 1,
            newlines[5] + 7,
            newlines[22] + 20,
            newlines[41] + 1,
            newlines[59] - 1,
        ];
        for &cut in &cuts {
            std::fs::write(&path, &full[..cut]).unwrap();
            // the complete records already in the file are handed back, in order
            let mut replayed = MemorySink::default();
            let (done, mut sink, info) = resume_replaying(&path, &header, &mut replayed).unwrap();
            let mut before = Vec::new();
            if let Some(mut r) = RecordReader::open(Cursor::new(&full[..cut]), "cut").unwrap() {
                while let Some(rec) = r.next_record().unwrap() {
                    before.push(rec);
                }
            }
            assert_eq!(replayed.records, before, "cut {cut}");
            let complete_records = full[..cut]
                .iter()
                .filter(|&&c| c == b'\n')
                .count()
                .saturating_sub(1) as u64;
            assert_eq!(info.recorded, complete_records, "cut {cut}");
            assert_eq!(info.restarted, cut <= newlines[0]);
            let p = StudyParams {
                done: Some(done),
                ..params(2, chain)
            };
            let run = run_study(&plan, &p, synthetic, &mut sink, &|_| {}).unwrap();
            drop(sink);
            assert_eq!(run.recorded + run.skipped, 60);
            let bytes = std::fs::read(&path).unwrap();
            let mut r = RecordReader::open(Cursor::new(&bytes[..]), "f")
                .unwrap()
                .unwrap();
            let mut idx: Vec<u64> = Vec::new();
            let mut recs = Vec::new();
            for rec in r.by_ref() {
                let rec = rec.unwrap();
                idx.push(rec.index);
                recs.push(rec);
            }
            assert!(!r.truncated());
            idx.sort_unstable();
            assert_eq!(idx, (0..60).collect::<Vec<_>>(), "chain {chain} cut {cut}");
            recs.sort_by_key(|x| x.index);
            // Same figures as an uninterrupted run (warm starts rebuilt).
            assert_eq!(recs, full_recs, "chain {chain} cut {cut}");
        }
        // A header with the caller's input fingerprint refuses a file made from other input.
        std::fs::write(&path, &full).unwrap();
        let edited = Header::new(&plan, chain, None).with_input("stage-hash-2");
        assert!(matches!(
            resume(&path, &edited),
            Err(StudyError::HeaderMismatch { field: "input", .. })
        ));
        // Resuming with another chain length is refused.
        std::fs::write(&path, &full).unwrap();
        let other = Header::new(&plan, chain + 1, None);
        assert!(matches!(
            resume(&path, &other),
            Err(StudyError::HeaderMismatch { field: "chain", .. })
        ));
    }
    // A damaged line that is not the last is an error with its line number.
    std::fs::write(&path, b"").unwrap();
    let header = Header::new(&plan, 1, None);
    drop(resume(&path, &header).unwrap());
    let mut text = std::fs::read(&path).unwrap();
    text.extend_from_slice(b"{\"index\": 1}\nnot json\n{\"index\": 2}\n");
    std::fs::write(&path, &text).unwrap();
    assert!(matches!(
        resume(&path, &header),
        Err(StudyError::BadLine { line: 3, .. })
    ));
}

/// The runner streams: between the work returning a result and the sink
/// storing it, at most one record per worker thread exists.
#[test]
fn runner_holds_at_most_one_record_per_thread() {
    let spec = tankwave_circuit::StudySpec {
        vary: vec![vary_param(
            "x",
            tankwave_circuit::Sweep::Linear {
                from: 1.0,
                to: 2.0,
                points: 500,
            },
        )],
        montecarlo: Some(tankwave_circuit::MonteCarlo { runs: 4, seed: 1 }),
        ..Default::default()
    };
    let plan = Plan::new(&spec, &ELEMENTS).unwrap();
    for threads in [1usize, 2] {
        let produced = AtomicU64::new(0);
        let max_in_flight = AtomicU64::new(0);
        struct Counting<'a> {
            produced: &'a AtomicU64,
            written: u64,
            max: &'a AtomicU64,
        }
        impl RecordSink for Counting<'_> {
            fn record(&mut self, _r: &Record) -> Result<(), StudyError> {
                let in_flight = self.produced.load(Ordering::SeqCst) - self.written;
                self.max.fetch_max(in_flight, Ordering::SeqCst);
                self.written += 1;
                Ok(())
            }
        }
        let mut sink = Counting {
            produced: &produced,
            written: 0,
            max: &max_in_flight,
        };
        let work = |v: &Variant, w: Option<&WarmStart>| {
            let o = synthetic(v, w);
            produced.fetch_add(1, Ordering::SeqCst);
            o
        };
        let progress_calls = Mutex::new(Vec::new());
        let info = run_study(&plan, &params(threads, 4), work, &mut sink, &|p| {
            progress_calls.lock().unwrap().push(p)
        })
        .unwrap();
        assert_eq!(info.recorded, 2000);
        assert_eq!(sink.written, 2000);
        let m = max_in_flight.load(Ordering::SeqCst);
        assert!(
            m >= 1 && m <= threads as u64,
            "threads {threads}: {m} records in flight"
        );
        let calls = progress_calls.into_inner().unwrap();
        assert_eq!(calls.len(), 2000);
        assert!(calls.iter().all(|p| p.total == 2000));
        assert_eq!(calls.iter().map(|p| p.done).max(), Some(2000));
    }
}

#[test]
fn bad_shard_and_chain_are_errors() {
    let plan = Plan::new(&mixed_spec(), &ELEMENTS).unwrap();
    assert!(Shard::new(3, 3).is_err());
    assert_eq!(Shard::parse("1/4"), Some(Shard { index: 1, count: 4 }));
    assert_eq!(Shard::parse("4/4"), None);
    let p = StudyParams {
        shard: Some(Shard { index: 5, count: 2 }),
        ..Default::default()
    };
    assert!(matches!(
        run_study(&plan, &p, synthetic, &mut MemorySink::default(), &|_| {}),
        Err(StudyError::BadShard { .. })
    ));
    assert!(matches!(
        run_study(
            &plan,
            &params(1, 0),
            synthetic,
            &mut MemorySink::default(),
            &|_| {}
        ),
        Err(StudyError::BadChain { .. })
    ));
}

#[test]
fn csv_export_has_one_row_per_record_and_the_union_of_columns() {
    let plan = Plan::new(&mixed_spec(), &ELEMENTS).unwrap();
    let (recs, _) = run_mem(&plan, &params(2, 1));
    let mut out = Vec::new();
    write_csv(&recs, &mut out).unwrap();
    let mut rdr = csv::Reader::from_reader(&out[..]);
    let head: Vec<String> = rdr.headers().unwrap().iter().map(String::from).collect();
    assert_eq!(head.first().map(String::as_str), Some("index"));
    assert!(head.contains(&"vcc".to_string()) && head.contains(&"ctun.factor".to_string()));
    assert!(head.contains(&"y >= 4 margin".to_string()));
    assert_eq!(head.last().map(String::as_str), Some("error"));
    let rows: Vec<_> = rdr.records().map(|r| r.unwrap()).collect();
    assert_eq!(rows.len(), 60);
    let y_col = head.iter().position(|h| h == "y").unwrap();
    let got: f64 = rows[0][y_col].parse().unwrap();
    assert_eq!(got, recs[0].metrics["y"]);
    assert!(rows[16][y_col].is_empty() && !rows[16][head.len() - 1].is_empty());
}

#[test]
fn streamed_csv_and_tee_write_every_record() {
    let plan = Plan::new(&mixed_spec(), &ELEMENTS).unwrap();
    let layout = CsvLayout {
        values: plan.value_keys(),
        metrics: vec!["y".to_string()],
        verdicts: vec!["y >= 4".to_string()],
    };
    assert_eq!(
        plan.value_keys(),
        vec!["ctun.factor", "lt.factor", "rb", "vcc"]
    );
    let csv_sink = CsvSink::create(Vec::new(), layout).unwrap();
    let json_sink = JsonlSink::create(Vec::new(), &Header::new(&plan, 4, None)).unwrap();
    let mut tee = TeeSink(json_sink, csv_sink);
    run_study(&plan, &params(2, 4), synthetic, &mut tee, &|_| {}).unwrap();
    let TeeSink(json_sink, csv_sink) = tee;
    let (_, recs) = read_all(&json_sink.into_inner());
    assert_eq!(recs.len(), 60);
    let bytes = csv_sink_bytes(csv_sink);
    let mut rdr = csv::Reader::from_reader(&bytes[..]);
    let head: Vec<String> = rdr.headers().unwrap().iter().map(String::from).collect();
    assert_eq!(
        head,
        [
            "index",
            "ctun.factor",
            "lt.factor",
            "rb",
            "vcc",
            "y",
            "y >= 4 pass",
            "y >= 4 margin",
            "error"
        ]
    );
    let mut n = 0;
    for row in rdr.records() {
        let row = row.unwrap();
        let i: u64 = row[0].parse().unwrap();
        let r = &recs[i as usize];
        assert_eq!(row[4].parse::<f64>().unwrap(), r.values["vcc"]);
        if r.error.is_none() {
            assert_eq!(row[5].parse::<f64>().unwrap(), r.metrics["y"]);
        } else {
            assert!(row[5].is_empty() && !row[8].is_empty());
        }
        n += 1;
    }
    assert_eq!(n, 60);
}

fn csv_sink_bytes(s: CsvSink<Vec<u8>>) -> Vec<u8> {
    s.into_inner().unwrap()
}
