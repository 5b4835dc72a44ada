//! The parallel runner: every variant of a plan (or of one shard of it)
//! through a caller-supplied work function, records streamed to a sink.
//!
//! The runner knows nothing about circuits: the caller's `work` closure turns
//! a [`Variant`] into an [`Outcome`] (the CLI elaborates, solves and measures).
//! Work is scheduled by segment (see [`crate::plan`]): a rayon pool of the
//! requested size takes segments; inside a segment variants run in order,
//! each given the warm-start payload the previous successful variant of the
//! segment returned. As soon as a variant finishes, its record is written
//! to the sink (which flushes) under a lock, so the runner holds at most one
//! record per worker thread: memory is flat in the number of variants (the
//! resume set is one bit per variant).
//!
//! Determinism: a variant's warm start depends only on the plan and the
//! chain length, never on the thread count or on which shard or resume ran
//! it (after a resume, the already-recorded members of a cut segment are
//! run again, without being recorded, to rebuild the same warm starts). So a
//! deterministic work function gives the same records for any thread count,
//! sharding or resume; only their order in the file changes.
//!
//! A failing variant (an `Err` from the work, a panic in it, or a non-finite
//! figure) is recorded with its error and the study goes on. Only a sink
//! failure (e.g. a full disk) stops the study.

use std::collections::BTreeMap;
use std::panic::{catch_unwind, AssertUnwindSafe};
use std::sync::atomic::{AtomicU64, Ordering};
use std::sync::Mutex;

use rayon::prelude::*;

use crate::record::{DoneSet, Record, RecordSink, Shard, Verdict};
use crate::{Plan, StudyError, Variant};

/// An opaque warm-start payload (e.g. a solution vector) handed from one
/// variant to the next in its segment.
pub type WarmStart = Vec<f64>;

/// What the work function returns for a variant that ran.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Outcome {
    /// Measured figures, name → value. Every value must be finite.
    pub metrics: BTreeMap<String, f64>,
    /// Requirement verdicts, requirement text → verdict (finite margins).
    pub verdicts: BTreeMap<String, Verdict>,
    /// Payload for the next variant of the segment, if any.
    pub warm: Option<WarmStart>,
}

/// Options of [`run_study`].
#[derive(Debug, Clone, PartialEq)]
pub struct StudyParams {
    /// Worker threads (`None` = one per core).
    pub threads: Option<usize>,
    /// Run only this share of the segments (segment s belongs to shard s mod n).
    pub shard: Option<Shard>,
    /// Warm-start chain length: at most this many neighbouring variants of a
    /// grid line run in order, each warm-started from the one before
    /// (1 = every variant starts cold). Default 4.
    pub chain: u64,
    /// Variants already recorded (from [`crate::resume`]); they are not recorded again.
    pub done: Option<DoneSet>,
}

impl Default for StudyParams {
    fn default() -> Self {
        StudyParams {
            threads: None,
            shard: None,
            chain: 4,
            done: None,
        }
    }
}

/// One step of progress, given to the progress callback after each record.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Progress {
    /// Records written so far in this run.
    pub done: u64,
    /// Records this run will write in all.
    pub total: u64,
    /// The variant just recorded.
    pub index: u64,
    /// It failed.
    pub failed: bool,
}

/// What a run did.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct RunInfo {
    /// Variants recorded in this run.
    pub recorded: u64,
    /// Of those, failed ones.
    pub failed: u64,
    /// Variants of this shard skipped because already recorded.
    pub skipped: u64,
    /// Variants run again only to rebuild warm starts after a resume.
    pub rerun_for_warm_start: u64,
    /// Segments in this shard.
    pub segments: u64,
    /// Worker threads used.
    pub threads: usize,
}

/// The variants of `plan` that `shard` runs, in index order (for tests and
/// for reporting a shard's size).
pub fn shard_indices(
    plan: &Plan,
    chain: u64,
    shard: Option<Shard>,
) -> Result<Vec<u64>, StudyError> {
    let mut v = Vec::new();
    for s in 0..plan.segment_count(chain)? {
        if shard.is_none_or(|sh| s % sh.count == sh.index) {
            v.extend(plan.segment(s, chain)?);
        }
    }
    v.sort_unstable();
    Ok(v)
}

fn panic_message(p: &(dyn std::any::Any + Send)) -> String {
    if let Some(s) = p.downcast_ref::<&str>() {
        s.to_string()
    } else if let Some(s) = p.downcast_ref::<String>() {
        s.clone()
    } else {
        "unknown panic".to_string()
    }
}

/// Run `work` on one variant and turn the outcome into a record (errors,
/// panics and non-finite figures become error records).
fn evaluate<W>(variant: &Variant, warm: Option<&WarmStart>, work: &W) -> (Record, Option<WarmStart>)
where
    W: Fn(&Variant, Option<&WarmStart>) -> Result<Outcome, String> + Sync,
{
    let result = catch_unwind(AssertUnwindSafe(|| work(variant, warm)))
        .unwrap_or_else(|p| Err(format!("the work panicked: {}", panic_message(&*p))));
    let mut rec = Record {
        index: variant.index,
        values: variant.values.clone(),
        metrics: BTreeMap::new(),
        verdicts: BTreeMap::new(),
        error: None,
    };
    match result {
        Err(e) => {
            rec.error = Some(e);
            (rec, None)
        }
        Ok(o) => {
            let bad_metric = o.metrics.iter().find(|(_, v)| !v.is_finite());
            let bad_margin = o.verdicts.iter().find(|(_, v)| !v.margin.is_finite());
            if let Some((k, v)) = bad_metric {
                rec.error = Some(format!("figure {k} is {v}, not a finite number"));
                (rec, None)
            } else if let Some((k, v)) = bad_margin {
                rec.error = Some(format!(
                    "requirement {k} has margin {}, not a finite number",
                    v.margin
                ));
                (rec, None)
            } else {
                rec.metrics = o.metrics;
                rec.verdicts = o.verdicts;
                (rec, o.warm)
            }
        }
    }
}

/// Run the variants of `plan` selected by `params` through `work`, writing
/// one record per variant to `sink` as each completes, and calling
/// `progress` after each record (from worker threads; keep it cheap).
pub fn run_study<W, S>(
    plan: &Plan,
    params: &StudyParams,
    work: W,
    sink: &mut S,
    progress: &(dyn Fn(Progress) + Sync),
) -> Result<RunInfo, StudyError>
where
    W: Fn(&Variant, Option<&WarmStart>) -> Result<Outcome, String> + Sync,
    S: RecordSink,
{
    let chain = params.chain;
    let segments = plan.segment_count(chain)?;
    if let Some(sh) = params.shard {
        Shard::new(sh.index, sh.count)?;
    }
    let in_shard = |s: u64| params.shard.is_none_or(|sh| s % sh.count == sh.index);
    let done = params.done.as_ref();
    let is_done = |i: u64| done.is_some_and(|d| d.contains(i));

    // Count what this run records (one pass over the indices, no storage).
    let mut total = 0u64;
    let mut skipped = 0u64;
    let mut own_segments = 0u64;
    for s in (0..segments).filter(|&s| in_shard(s)) {
        own_segments += 1;
        for i in plan.segment(s, chain)? {
            if is_done(i) {
                skipped += 1;
            } else {
                total += 1;
            }
        }
    }

    let threads = params.threads.unwrap_or(0);
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(threads)
        .build()
        .map_err(|e| StudyError::Pool {
            threads,
            message: e.to_string(),
        })?;
    let used_threads = pool.current_num_threads();
    let sink = Mutex::new(sink);
    let written = AtomicU64::new(0);
    let failed = AtomicU64::new(0);
    let rerun = AtomicU64::new(0);

    let run_segment = |s: u64| -> Result<(), StudyError> {
        let members: Vec<u64> = plan.segment(s, chain)?.collect();
        // Run up to the last member that still needs a record; earlier recorded
        // members run only if a later one needs their warm start.
        let Some(last) = members.iter().rposition(|&i| !is_done(i)) else {
            return Ok(());
        };
        let mut warm: Option<WarmStart> = None;
        for &i in members.iter().take(last + 1) {
            let record_it = !is_done(i);
            if !record_it && chain == 1 {
                continue;
            }
            let variant = plan.variant(i)?;
            let (rec, next) = evaluate(&variant, warm.as_ref(), &work);
            if next.is_some() {
                warm = next;
            }
            if !record_it {
                rerun.fetch_add(1, Ordering::Relaxed);
                continue;
            }
            let is_failed = rec.error.is_some();
            {
                let mut guard = sink.lock().map_err(|_| StudyError::Io {
                    what: "writing a record".to_string(),
                    source: std::io::Error::other("the record sink was poisoned by a panic"),
                })?;
                guard.record(&rec)?;
            }
            if is_failed {
                failed.fetch_add(1, Ordering::Relaxed);
            }
            let n = written.fetch_add(1, Ordering::Relaxed) + 1;
            progress(Progress {
                done: n,
                total,
                index: i,
                failed: is_failed,
            });
        }
        Ok(())
    };

    pool.install(|| {
        // Segments are handed out in index order (par_bridge pulls them one at a
        // time), so an interrupted run leaves mostly a prefix of the study done.
        (0..segments)
            .filter(|&s| in_shard(s))
            .par_bridge()
            .try_for_each(run_segment)
    })?;

    Ok(RunInfo {
        recorded: written.load(Ordering::Relaxed),
        failed: failed.load(Ordering::Relaxed),
        skipped,
        rerun_for_warm_start: rerun.load(Ordering::Relaxed),
        segments: own_segments,
        threads: used_threads,
    })
}
