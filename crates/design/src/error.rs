//! Typed errors of the design helpers. Every variant carries the numbers that
//! explain it, so a caller can print a message without more context.

use thiserror::Error;

/// Everything a design helper can refuse.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum DesignError {
    /// A quantity that must be a finite number greater than zero was not.
    #[error("{what} must be a finite number greater than zero, got {value}")]
    NotPositive {
        /// Which input.
        what: &'static str,
        /// The value given.
        value: f64,
    },
    /// A quantity that must be finite and not negative was not.
    #[error("{what} must be a finite number not below zero, got {value}")]
    Negative {
        /// Which input.
        what: &'static str,
        /// The value given.
        value: f64,
    },
    /// The saturation voltage leaves no voltage swing.
    #[error("saturation voltage {vsat} V must be below the supply {supply} V")]
    NoSwing {
        /// Supply voltage, V.
        supply: f64,
        /// Saturation voltage, V.
        vsat: f64,
    },
    /// The conduction angle is outside (0°, 360°].
    #[error("conduction angle must be above 0° and at most 360°, got {degrees}°")]
    ConductionAngle {
        /// The angle given, degrees.
        degrees: f64,
    },
    /// The loaded Q is too low for the resistance ratio (the network would
    /// degenerate into an L-section or worse).
    #[error(
        "loaded Q {q} is too low to match {r_from} ohm to {r_to} ohm with this shape: it must exceed {q_min:.6} (the L-network Q √(Rmax/Rmin − 1))"
    )]
    QTooLow {
        /// Requested Q.
        q: f64,
        /// The smallest Q that works (exclusive).
        q_min: f64,
        /// Source-side resistance, Ω.
        r_from: f64,
        /// Load-side resistance, Ω.
        r_to: f64,
    },
    /// An L-network cannot match equal resistances.
    #[error("an L network cannot match equal resistances ({r} ohm to {r} ohm): no transformation is needed")]
    EqualResistances {
        /// The resistance, Ω.
        r: f64,
    },
    /// The output capacitance to absorb is larger than the first shunt capacitor.
    #[error(
        "the output capacitance to absorb ({cout:e} F) exceeds the required first shunt capacitance ({required:e} F); raise Q or pick another shape"
    )]
    CoutTooLarge {
        /// Capacitance to absorb, F.
        cout: f64,
        /// First shunt capacitance the design needs, F.
        required: f64,
    },
    /// Absorbing a capacitance needs a shunt capacitor on the source side.
    #[error("the {shape} network has no shunt capacitor on the source side to absorb an output capacitance into")]
    NoShuntAtSource {
        /// Shape name.
        shape: &'static str,
    },
    /// Filter order out of the supported range.
    #[error("filter order must be between {min} and {max}, got {order}")]
    Order {
        /// The order given.
        order: usize,
        /// Smallest supported.
        min: usize,
        /// Largest supported.
        max: usize,
    },
    /// A first-order shunt-first ladder has no separate output node.
    #[error("a first-order shunt-first ladder is one capacitor across the line with no separate output node; use the series-first form")]
    SingleShunt,
    /// Passband ripple out of the supported range.
    #[error("Chebyshev ripple must be above 0 dB and at most {max} dB, got {ripple_db} dB")]
    Ripple {
        /// The ripple given, dB.
        ripple_db: f64,
        /// Largest supported, dB.
        max: f64,
    },
    /// A node or element name is not a valid stage-file name.
    #[error("'{name}' is not a valid name (letters, digits and _, not starting with a digit)")]
    BadName {
        /// The offending name.
        name: String,
    },
    /// Input and output node names coincide, or one of them is `gnd`.
    #[error("input node '{input}' and output node '{output}' must differ and neither may be gnd")]
    BadPorts {
        /// Input node.
        input: String,
        /// Output node.
        output: String,
    },
    /// A computed figure came out non-finite (guards against NaN in results).
    #[error("computation of {what} gave a non-finite value ({value})")]
    NonFinite {
        /// Which figure.
        what: &'static str,
        /// The value.
        value: f64,
    },
    /// The verification by the circuit solver failed to run.
    #[error("verification by AC analysis failed: {0}")]
    Solver(String),
}

/// Check that `value` is finite and > 0.
pub(crate) fn positive(what: &'static str, value: f64) -> Result<f64, DesignError> {
    if value.is_finite() && value > 0.0 {
        Ok(value)
    } else {
        Err(DesignError::NotPositive { what, value })
    }
}

/// Check that `value` is finite and ≥ 0.
pub(crate) fn non_negative(what: &'static str, value: f64) -> Result<f64, DesignError> {
    if value.is_finite() && value >= 0.0 {
        Ok(value)
    } else {
        Err(DesignError::Negative { what, value })
    }
}

/// Check that a computed figure is finite.
pub(crate) fn finite(what: &'static str, value: f64) -> Result<f64, DesignError> {
    if value.is_finite() {
        Ok(value)
    } else {
        Err(DesignError::NonFinite { what, value })
    }
}
