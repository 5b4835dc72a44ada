//! The names of the unknowns, written in one place.
//!
//! Every unknown gets a name a person reads in reports, JSON, CSV headers and
//! plot legends, and types on the command line (`--probe`). The names are
//! for display and files only: code finds an unknown through the circuit's
//! handles ([`crate::DeviceSet::voltage_of`], [`crate::DeviceSet::branch_of`],
//! [`crate::DeviceSet::internal_of`]) and takes its unit from its kind
//! ([`crate::UnknownKind::unit`]), never from parsing a name.
//!
//! | unknown | name | example |
//! | --- | --- | --- |
//! | voltage of a node against ground | `V[node]` | `V[coll]` |
//! | current through a branch element (inductor, voltage source), from its first terminal to its second through the element | `I[element]` | `I[rfc]` |
//! | voltage of a device's internal node | `V[element:t']` | `V[q1:b']` |
//! | current into terminal `n` (1-based) of an element, in a steady-state period | `I[element:n]` | `I[q1:1]` |
//! | voltage across a two-terminal element as a waveform (plots), first terminal minus second | `v_element` | `v_rload` |
//!
//! Branch currents follow the passive sign convention (positive into the
//! first terminal), so a supply that delivers power has a negative branch
//! current; the operating-point report shows sources as delivered current
//! and power instead, both positive for a source that supplies the circuit.

/// Name of the voltage of `node` against ground: `V[node]`.
pub fn node_voltage(node: &str) -> String {
    format!("V[{node}]")
}

/// Name of the branch current of `element`: `I[element]`.
pub fn branch_current(element: &str) -> String {
    format!("I[{element}]")
}

/// Name of an internal current-valued state `tag` of `element` (a
/// transistor's excess-phase states): `I[element:tag]`.
pub fn internal_state(element: &str, tag: &str) -> String {
    format!("I[{element}:{tag}]")
}

/// Name of an internal voltage-valued state `tag` of `element` (a
/// measured network's fitted states in impedance form): `V[element:tag]`.
pub fn internal_voltage_state(element: &str, tag: &str) -> String {
    format!("V[{element}:{tag}]")
}

/// Name of the internal node `terminal'` of `element`: `V[element:terminal']`.
pub fn internal_node(element: &str, terminal: &str) -> String {
    format!("V[{element}:{terminal}']")
}

/// Name of the current into terminal `n` (1-based) of `element`: `I[element:n]`.
pub fn terminal_current(element: &str, n: usize) -> String {
    format!("I[{element}:{n}]")
}

/// Name of the voltage waveform across a two-terminal `element` (first
/// terminal minus second), as plots label it: `v_element`. Lower-case `v`
/// marks an instantaneous value, as the transistor waveforms `v_ce`, `v_be`
/// of the same plots (common practice in circuit textbooks: lower case for
/// total instantaneous quantities, upper case for DC).
pub fn element_voltage(element: &str) -> String {
    format!("v_{element}")
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn names() {
        assert_eq!(node_voltage("coll"), "V[coll]");
        assert_eq!(branch_current("rfc"), "I[rfc]");
        assert_eq!(internal_node("q1", "b"), "V[q1:b']");
        assert_eq!(terminal_current("q1", 2), "I[q1:2]");
        assert_eq!(element_voltage("rload"), "v_rload");
    }
}
