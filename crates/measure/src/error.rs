//! Typed errors of the measurement crate, each carrying the numbers that explain it.

use thiserror::Error;

/// Why a set of period samples cannot be measured.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum MeasureError {
    /// The number of samples per period is not a power of two.
    #[error("{samples} samples per period is not a power of two")]
    SamplesNotPowerOfTwo {
        /// Samples given.
        samples: usize,
    },
    /// Too few samples for the requested harmonics (need N > 2K).
    #[error(
        "{samples} samples per period cannot carry {harmonics} harmonics (need more than {need})"
    )]
    TooFewSamples {
        /// Samples given (N).
        samples: usize,
        /// Harmonics asked for (K).
        harmonics: usize,
        /// 2K: N must exceed this.
        need: usize,
    },
    /// No harmonics were asked for (K = 0).
    #[error("at least one harmonic is needed, got 0")]
    NoHarmonics,
    /// The fundamental frequency is not a finite positive number.
    #[error("fundamental frequency {freq} Hz is not finite and positive")]
    BadFrequency {
        /// The frequency given, Hz.
        freq: f64,
    },
    /// The voltage table does not have one row per circuit node.
    #[error("{got} node-voltage rows for a circuit with {expected} nodes")]
    NodeCount {
        /// Rows expected (circuit nodes).
        expected: usize,
        /// Rows given.
        got: usize,
    },
    /// The current table does not have one entry per circuit element.
    #[error("{got} element current entries for a circuit with {expected} elements")]
    ElementCount {
        /// Entries expected (circuit elements).
        expected: usize,
        /// Entries given.
        got: usize,
    },
    /// An element's current entry has the wrong number of terminals.
    #[error("element {element} has {expected} terminals but {got} current rows were given")]
    TerminalCount {
        /// Element name.
        element: String,
        /// Terminals of the element.
        expected: usize,
        /// Rows given.
        got: usize,
    },
    /// A waveform has a different length from the first node's.
    #[error("{what} has {got} samples, expected {expected}")]
    Length {
        /// Which waveform (node or element terminal).
        what: String,
        /// Samples expected.
        expected: usize,
        /// Samples given.
        got: usize,
    },
    /// A sample is NaN or infinite.
    #[error("{what} sample {index} is not finite ({value})")]
    NotFinite {
        /// Which waveform.
        what: String,
        /// Sample index.
        index: usize,
        /// The value.
        value: f64,
    },
    /// A node index in the circuit points past the voltage table.
    #[error("element {element} refers to node index {node}, but only {nodes} nodes exist")]
    NodeIndex {
        /// Element name.
        element: String,
        /// The node index.
        node: usize,
        /// Nodes available.
        nodes: usize,
    },
    /// The circuit has no nodes, elements or samples to measure.
    #[error("nothing to measure: the period has no samples")]
    Empty,
    /// The solution breaks the energy balance: more power leaves at the
    /// output than the supplies and the drive deliver (so the power-added
    /// efficiency would exceed 100 %). The solution cannot be a steady state.
    #[error(
        "energy balance broken: output power {pout_w:e} W exceeds supply power {pdc_w:e} W \
         plus drive power {pin_w:e} W beyond the tolerance {tol_w:e} W; the periodic \
         solution is not a true steady state (try more steps per period or harmonics)"
    )]
    EnergyBalance {
        /// Output power at the fundamental, W.
        pout_w: f64,
        /// Supply power, W.
        pdc_w: f64,
        /// Drive input power, W.
        pin_w: f64,
        /// The tolerance allowed, W.
        tol_w: f64,
    },
}
