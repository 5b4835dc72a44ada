//! Every resource limit tankwave applies to untrusted input, in one place.
//!
//! Stage files arrive from strangers (pull requests run in CI), so every
//! size a file or a command-line value can choose is bounded here, and each
//! bound is checked where the value is read (with file:line:column from
//! `lint` on) rather than discovered by a solver running out of memory or
//! time. docs/security.md lists these values and why each was chosen; change
//! them here and there together.

/// The resource limits. [`LIMITS`] holds the values in force.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Limits {
    /// Largest stage file (or included file) read, in bytes.
    pub max_file_bytes: u64,
    /// Most bytes read for one stage file: the top file and every include
    /// together (parsing holds tokens and a syntax tree of roughly a hundred
    /// times this).
    pub max_total_bytes: u64,
    /// Most statements in one stage file, its includes counted in.
    pub max_statements: usize,
    /// Most operands in all the expressions of one stage file together, its
    /// includes counted in (bounds the memory of the syntax tree and of
    /// evaluating it).
    pub max_total_terms: usize,
    /// Deepest include nesting (the file named on the command line is depth 1).
    pub max_include_depth: usize,
    /// Most files read for one stage file (the top file and every include,
    /// counted each time it is included).
    pub max_includes: usize,
    /// Most diagnostics collected from one file; reading carries on, but
    /// further problems are only counted.
    pub max_diagnostics_collected: usize,
    /// Most diagnostics drawn on the terminal per file; the rest are
    /// summarised as "and N more".
    pub max_diagnostics_shown: usize,
    /// Deepest nesting in one expression, in parser levels: a bracket (or a
    /// call's argument) counts two levels, a sign or a power one.
    pub max_expression_depth: usize,
    /// Most operands in one expression (operators, powers and call arguments
    /// each add one); a longer expression's tree would be as deep as it is long.
    pub max_expression_terms: usize,
    /// Longest chain of parameters defined through each other.
    pub max_parameter_chain: usize,
    /// Most points of one AC sweep.
    pub max_ac_points: f64,
    /// Most frequency points of one Touchstone file (a measured network).
    pub max_network_points: usize,
    /// Most output steps (stop / step) of one transient analysis.
    pub max_transient_steps: f64,
    /// Most slow-time steps (cycles × period / step) of one keying analysis
    /// (each is one harmonic-balance solve).
    pub max_slow_steps: f64,
    /// Most harmonics of a steady-state analysis.
    pub max_harmonics: f64,
    /// Most time steps per period of a steady-state analysis.
    pub max_steps_per_period: f64,
    /// Most loads one sweep of the output load solves (circles × phases,
    /// or the points of a load-pull grid).
    pub max_loads: f64,
    /// Most elements in one circuit.
    pub max_elements: usize,
    /// Most memory, in bytes, one analysis may be estimated to need (the
    /// dense matrices grow with the square of the unknowns; see
    /// `tankwave_circuit::bounds` for the estimate).
    pub max_analysis_bytes: f64,
    /// Most worker threads per available core (`--threads` above this many
    /// times the cores is refused).
    pub max_threads_per_core: usize,
    /// Characters of a source line shown around the place a diagnostic points at.
    pub snippet_chars: usize,
}

/// The limits in force.
pub const LIMITS: Limits = Limits {
    max_file_bytes: 8 << 20,
    max_total_bytes: 8 << 20,
    max_statements: 50_000,
    max_total_terms: 500_000,
    max_include_depth: 16,
    max_includes: 256,
    max_diagnostics_collected: 1000,
    max_diagnostics_shown: 100,
    max_expression_depth: 128,
    max_expression_terms: 1000,
    max_parameter_chain: 1000,
    max_ac_points: 100_000.0,
    max_network_points: 100_000,
    max_transient_steps: 10_000_000.0,
    max_slow_steps: 50_000.0,
    max_harmonics: 256.0,
    max_steps_per_period: 65_536.0,
    max_loads: 10_000.0,
    max_elements: 20_000,
    max_analysis_bytes: 2.0 * (1u64 << 30) as f64,
    max_threads_per_core: 4,
    snippet_chars: 120,
};

impl Default for Limits {
    fn default() -> Limits {
        LIMITS
    }
}
