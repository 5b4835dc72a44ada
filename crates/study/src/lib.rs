//! tankwave-study: sweeps, tolerances and Monte Carlo, parallel batch runs
//! with streamed, resumable, sharded records, summaries, and tuning.
//!
//! The crate owns the *what* and *how many* of a study: which variants exist
//! ([`Plan`], [`Variant`]), how they are run in parallel and recorded
//! ([`run_study`], [`Record`], [`resume`], [`merge`]), what they add up to
//! ([`Summary`]) and how tune parameters are searched ([`tune()`]) and
//! mapped around the optimum for plots ([`map_around`]). It is generic
//! over the per-variant work: the caller supplies a closure that elaborates,
//! solves and measures. It must not format for people or print: the CLI
//! owns the terminal (progress arrives through a callback).
//!
//! Modules: [`plan`] (numbering, segments), [`sample`] (reproducible
//! tolerance draws), [`runner`], [`record`] (file format, resume, merge,
//! CSV), [`summary`], [`sensitivity`] (rank correlation of inputs and
//! figures), [`mod@tune`].
//!
//! ```
//! // Percentiles as numpy's default (linear between order statistics):
//! // the 5th percentile of 20, 21, …, 29 is 20 + 0.45 = 20.45.
//! let sorted: Vec<f64> = (20..30).map(f64::from).collect();
//! let p5 = tankwave_study::percentile_sorted(&sorted, 5.0).unwrap();
//! assert!((p5 - 20.45).abs() < 1e-12);
//! ```
#![deny(missing_docs)]

pub mod error;
pub mod plan;
pub mod record;
pub mod runner;
pub mod sample;
pub mod sensitivity;
pub mod summary;
pub mod tune;

pub use error::StudyError;
pub use plan::{factor_key, Axis, AxisTarget, Plan, TolSpec, Variant};
pub use record::{
    input_fingerprint, merge, resume, resume_replaying, write_csv, CsvLayout, CsvSink, DoneSet,
    FileDigest, Header, JsonlSink, MemorySink, MergeInfo, Provenance, Record, RecordReader,
    RecordSink, ResumeInfo, Shard, TeeSink, Verdict, SCHEMA, SCHEMA_VERSION,
};
pub use runner::{run_study, shard_indices, Outcome, Progress, RunInfo, StudyParams, WarmStart};
pub use sensitivity::{spearman, Drivers};
pub use summary::{
    percentile_sorted, FigureStats, RequirementStats, Summary, SummaryBuilder, SummarySink,
};
pub use tune::{
    map_around, round_optimum, tune, Confirmation, ConstraintCheck, Sharpness, TuneContext,
    TuneCurve, TuneFigures, TuneGoal, TuneMap, TuneMapParams, TuneParams, TuneResult, TuneSurface,
};
