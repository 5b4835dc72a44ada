//! Typed errors of the study crate, each carrying the numbers that explain it.

use thiserror::Error;

/// Everything that can go wrong while planning, running, storing, summarising or tuning a study.
#[derive(Debug, Error)]
pub enum StudyError {
    /// A `vary` gives no values (an empty list or zero points).
    #[error("vary {target}: no values to sweep")]
    EmptySweep {
        /// The swept name.
        target: String,
    },
    /// A sweep value is not a finite number.
    #[error("vary {target}: value #{position} is {value}, not a finite number")]
    NonFiniteSweepValue {
        /// The swept name.
        target: String,
        /// 0-based position in the sweep.
        position: usize,
        /// The offending value.
        value: f64,
    },
    /// A logarithmic sweep with a bound that is not positive.
    #[error("vary {target}: a log sweep needs positive bounds, got {from} to {to}")]
    LogSweepNotPositive {
        /// The swept name.
        target: String,
        /// First value.
        from: f64,
        /// Last value.
        to: f64,
    },
    /// Two statements of the study write the same record key.
    #[error("{name} is varied or toleranced twice")]
    DuplicateName {
        /// The repeated name.
        name: String,
    },
    /// A tolerance refers to an element id outside the circuit.
    #[error(
        "tolerance #{position} names element id {element}, but the circuit has {count} elements"
    )]
    UnknownElement {
        /// 0-based position of the tolerance statement.
        position: usize,
        /// The element id.
        element: usize,
        /// Number of elements in the circuit.
        count: usize,
    },
    /// A tolerance fraction outside [0, 1).
    #[error("tolerance on {element}: {fraction} is outside 0 <= fraction < 1 (0% to below 100%)")]
    BadTolerance {
        /// Element name.
        element: String,
        /// The fraction given.
        fraction: f64,
    },
    /// The grid times the Monte Carlo runs does not fit in 64 bits.
    #[error("the study has more than 2^64 variants ({grid} grid points x {runs} runs)")]
    TooManyVariants {
        /// Product of the sweep lengths, saturated.
        grid: u64,
        /// Monte Carlo runs per grid point.
        runs: u64,
    },
    /// A variant index beyond the plan.
    #[error("variant {index} does not exist: the study has {total} variants")]
    IndexOutOfRange {
        /// The requested index.
        index: u64,
        /// Number of variants.
        total: u64,
    },
    /// A shard specification that is not `i/n` with 0 <= i < n.
    #[error("shard {index}/{count}: need count >= 1 and 0 <= index < count")]
    BadShard {
        /// Shard index.
        index: u64,
        /// Shard count.
        count: u64,
    },
    /// A warm-start chain length of zero.
    #[error("chain length must be at least 1 (1 = no warm starts), got {chain}")]
    BadChain {
        /// The value given.
        chain: u64,
    },
    /// The worker pool could not be built.
    #[error("could not start {threads} worker threads: {message}")]
    Pool {
        /// Requested threads (0 = one per core).
        threads: usize,
        /// The pool's message.
        message: String,
    },
    /// Reading or writing records failed.
    #[error("{what}: {source}")]
    Io {
        /// What was being done.
        what: String,
        /// The underlying error.
        #[source]
        source: std::io::Error,
    },
    /// A line of a record file is not a valid record.
    #[error("{file}, line {line}: {message}")]
    BadLine {
        /// The file (or "input #k").
        file: String,
        /// 1-based line.
        line: u64,
        /// What is wrong.
        message: String,
    },
    /// A record file was written for another plan, schema or shard layout.
    #[error("{file}: header {field} is {found}, expected {expected}")]
    HeaderMismatch {
        /// The file.
        file: String,
        /// The header field.
        field: &'static str,
        /// The value wanted.
        expected: String,
        /// The value found.
        found: String,
    },
    /// A record file was made from other inputs or settings than this run or
    /// the first file of a merge (see [`crate::Provenance`]).
    #[error("{file} was made with a different {setting}: {found} there, {expected} here; records made from different inputs cannot be joined")]
    ProvenanceMismatch {
        /// The file.
        file: String,
        /// Which setting differs (`--set c1`, `stage file x.tank`, …).
        setting: String,
        /// The value wanted.
        expected: String,
        /// The value found.
        found: String,
    },
    /// Two inputs give different records for one variant.
    #[error("variant {index} has two different records ({first} and {second})")]
    Conflict {
        /// The variant.
        index: u64,
        /// Where the first came from.
        first: String,
        /// Where the second came from.
        second: String,
    },
    /// Summary statistics were asked of no data or of a bad percentile.
    #[error("percentile {p} is outside 0..=100")]
    BadPercentile {
        /// The percentile asked for.
        p: f64,
    },
    /// Tuning was asked with nothing to tune.
    #[error("nothing to tune: no tune statement")]
    NothingToTune,
    /// A tune range that is empty, reversed or not finite.
    #[error("tune {param}: range {from} to {to} must be finite with from < to")]
    BadTuneRange {
        /// Parameter.
        param: String,
        /// Lower bound.
        from: f64,
        /// Upper bound.
        to: f64,
    },
    /// A tuning start point outside its range.
    #[error("tune {param}: start {start} is outside {from} to {to}")]
    BadTuneStart {
        /// Parameter.
        param: String,
        /// The start value.
        start: f64,
        /// Lower bound.
        from: f64,
        /// Upper bound.
        to: f64,
    },
    /// The objective failed or gave a non-finite figure where the tuner needs one.
    #[error("tuning objective at {at}: {message}")]
    Objective {
        /// The parameter values, written out.
        at: String,
        /// The objective's message.
        message: String,
    },
    /// The optimiser itself stopped with an error.
    #[error("optimiser: {0}")]
    Optimiser(String),
    /// Options of the map around the optimum that cannot give a grid.
    #[error(
        "map around the optimum: {points} points per parameter and span {span} \
         (need 2 to {max_points} points, or 0 for the default, and 0 < span <= 1)"
    )]
    BadTuneMap {
        /// Points per parameter asked for.
        points: usize,
        /// Window width asked for, as a fraction of each range.
        span: f64,
        /// Most points per parameter allowed.
        max_points: usize,
    },
    /// The centre of a map around the optimum lies outside its tune range.
    #[error("map around the optimum: {param} = {value} is outside its range {from} to {to}")]
    MapCentre {
        /// Parameter.
        param: String,
        /// The centre value given.
        value: f64,
        /// Lower bound.
        from: f64,
        /// Upper bound.
        to: f64,
    },
}
