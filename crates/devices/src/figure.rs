//! The operating-point figures a device reports ([`crate::Device::op_info`]),
//! as a closed set: each has one ASCII key (for JSON and CSV) and one SI
//! unit, declared here once. How a person reads them (labels, sections) is
//! the report crate's business.
//!
//! Sign conventions: a passive element's voltage is first terminal minus
//! second, its current flows from the first terminal to the second through
//! it; a source's delivered current and power are positive when it supplies
//! the circuit; a transistor's terminal currents are positive into the
//! terminal.

/// One operating-point figure of a device.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum OpFigure {
    /// Voltage across the element, first terminal minus second, V.
    Voltage,
    /// Current through the element, first terminal to second, A.
    Current,
    /// Power the element absorbs, W.
    Power,
    /// Charge on a capacitor, C.
    Charge,
    /// Flux linkage of an inductor, Wb.
    Flux,
    /// The open-circuit voltage of a voltage source (its waveform's value), V.
    SetVoltage,
    /// Current a source delivers to the circuit, A: out of the first terminal
    /// of a voltage source, out of the second terminal of a current source
    /// (where its current leaves it); positive when it supplies the circuit.
    DeliveredCurrent,
    /// Power a source delivers to the circuit, W (positive when it supplies the circuit).
    DeliveredPower,
    /// Diode forward voltage across the junction, anode minus cathode, V.
    ForwardVoltage,
    /// Diode junction current, anode to cathode, A.
    JunctionCurrent,
    /// Diode small-signal junction conductance dI/dV, S.
    JunctionConductance,
    /// Diode small-signal junction capacitance dQ/dV, F.
    JunctionCapacitance,
    /// Transistor base–emitter voltage V_BE, V.
    BaseEmitterVoltage,
    /// Transistor base–collector voltage V_BC, V.
    BaseCollectorVoltage,
    /// Transistor collector–emitter voltage V_CE, V.
    CollectorEmitterVoltage,
    /// Collector current I_C into the collector, A.
    CollectorCurrent,
    /// Base current I_B into the base, A.
    BaseCurrent,
    /// Emitter current I_E into the emitter, A.
    EmitterCurrent,
    /// Transconductance g_m = ∂I_C/∂V_BE at fixed V_CE, S.
    Transconductance,
    /// Input conductance g_π = ∂I_B/∂V_BE at fixed V_CE, S.
    InputConductance,
    /// Output conductance g_o = ∂I_C/∂V_CE at fixed V_BE, S.
    OutputConductance,
    /// Base–emitter capacitance C_π = ∂Q_BE/∂V_BE, F.
    BaseEmitterCapacitance,
    /// Base–collector capacitance C_μ = ∂Q_BC/∂V_BC, F.
    BaseCollectorCapacitance,
    /// Power dissipated in a transistor, V_CE·I_C + V_BE·I_B, W.
    Dissipation,
    /// Avalanche multiplication M − 1 of a transistor's collector–base
    /// junction (a part with `avalanche { cb_voltage= }` only).
    Multiplication,
}

impl OpFigure {
    /// Every figure, in the order reports list them.
    pub const ALL: [OpFigure; 25] = [
        OpFigure::Voltage,
        OpFigure::Current,
        OpFigure::Power,
        OpFigure::Charge,
        OpFigure::Flux,
        OpFigure::SetVoltage,
        OpFigure::DeliveredCurrent,
        OpFigure::DeliveredPower,
        OpFigure::ForwardVoltage,
        OpFigure::JunctionCurrent,
        OpFigure::JunctionConductance,
        OpFigure::JunctionCapacitance,
        OpFigure::BaseEmitterVoltage,
        OpFigure::BaseCollectorVoltage,
        OpFigure::CollectorEmitterVoltage,
        OpFigure::CollectorCurrent,
        OpFigure::BaseCurrent,
        OpFigure::EmitterCurrent,
        OpFigure::Transconductance,
        OpFigure::InputConductance,
        OpFigure::OutputConductance,
        OpFigure::BaseEmitterCapacitance,
        OpFigure::BaseCollectorCapacitance,
        OpFigure::Dissipation,
        OpFigure::Multiplication,
    ];

    /// The ASCII key of the figure in JSON and CSV (`g_m`, `g_pi`, `c_pi`, …).
    pub fn key(self) -> &'static str {
        match self {
            OpFigure::Voltage => "voltage",
            OpFigure::Current => "current",
            OpFigure::Power => "power",
            OpFigure::Charge => "charge",
            OpFigure::Flux => "flux",
            OpFigure::SetVoltage => "set_voltage",
            OpFigure::DeliveredCurrent => "delivered_current",
            OpFigure::DeliveredPower => "delivered_power",
            OpFigure::ForwardVoltage => "forward_voltage",
            OpFigure::JunctionCurrent => "junction_current",
            OpFigure::JunctionConductance => "junction_conductance",
            OpFigure::JunctionCapacitance => "junction_capacitance",
            OpFigure::BaseEmitterVoltage => "v_be",
            OpFigure::BaseCollectorVoltage => "v_bc",
            OpFigure::CollectorEmitterVoltage => "v_ce",
            OpFigure::CollectorCurrent => "i_c",
            OpFigure::BaseCurrent => "i_b",
            OpFigure::EmitterCurrent => "i_e",
            OpFigure::Transconductance => "g_m",
            OpFigure::InputConductance => "g_pi",
            OpFigure::OutputConductance => "g_o",
            OpFigure::BaseEmitterCapacitance => "c_pi",
            OpFigure::BaseCollectorCapacitance => "c_mu",
            OpFigure::Dissipation => "dissipation",
            OpFigure::Multiplication => "multiplication",
        }
    }

    /// The SI unit of the figure (SI Brochure, 9th ed., 2019).
    pub fn unit(self) -> &'static str {
        match self {
            OpFigure::Voltage
            | OpFigure::SetVoltage
            | OpFigure::ForwardVoltage
            | OpFigure::BaseEmitterVoltage
            | OpFigure::BaseCollectorVoltage
            | OpFigure::CollectorEmitterVoltage => "V",
            OpFigure::Current
            | OpFigure::DeliveredCurrent
            | OpFigure::JunctionCurrent
            | OpFigure::CollectorCurrent
            | OpFigure::BaseCurrent
            | OpFigure::EmitterCurrent => "A",
            OpFigure::Power | OpFigure::DeliveredPower | OpFigure::Dissipation => "W",
            OpFigure::Charge => "C",
            OpFigure::Multiplication => "",
            OpFigure::Flux => "Wb",
            OpFigure::JunctionConductance
            | OpFigure::Transconductance
            | OpFigure::InputConductance
            | OpFigure::OutputConductance => "S",
            OpFigure::JunctionCapacitance
            | OpFigure::BaseEmitterCapacitance
            | OpFigure::BaseCollectorCapacitance => "F",
        }
    }
}

#[cfg(test)]
mod tests {
    use super::OpFigure;

    /// Keys are distinct, ASCII and usable as JSON keys and CSV headers.
    #[test]
    fn keys_are_distinct_and_ascii() {
        let mut keys: Vec<&str> = OpFigure::ALL.iter().map(|f| f.key()).collect();
        assert!(keys
            .iter()
            .all(|k| k.bytes().all(|b| b.is_ascii_lowercase() || b == b'_')));
        keys.sort_unstable();
        keys.dedup();
        assert_eq!(keys.len(), OpFigure::ALL.len());
    }
}
