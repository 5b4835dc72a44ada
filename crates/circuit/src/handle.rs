//! Typed handles for the parts of an elaborated circuit.
//!
//! Nodes, elements, models and element terminals are referred to by small
//! copyable handles, each its own type, so that a node can never be passed
//! where an element is meant (nor either where a plain count is). Names are
//! kept for display and files only: [`crate::Circuit::node_name`] and
//! `Circuit::elements[id].name` give them, and [`crate::Circuit::node`] /
//! [`crate::Circuit::element`] turn a name a person typed into a handle.
//!
//! A node handle where an element handle is meant does not compile:
//!
//! ```compile_fail
//! use tankwave_circuit::{ElementId, NodeId};
//! fn element_only(_: ElementId) {}
//! element_only(NodeId::node(0));
//! ```
//!
//! nor does a bare number:
//!
//! ```compile_fail
//! use tankwave_circuit::ElementId;
//! fn element_only(_: ElementId) {}
//! element_only(0usize);
//! ```
//!
//! The handles are 32 bits wide: a stage file is at most
//! `tankwave_netlist::limits::LIMITS.max_file_bytes` (64 MiB) long and
//! holds at most `max_elements` elements, so no circuit has as many as
//! 2³² nodes, elements or models.

use std::fmt;

use crate::ir::{Element, Model};

/// A node of a circuit: ground or one of [`crate::Circuit::nodes`].
///
/// Ground orders before every other node.
#[derive(Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, Default)]
pub struct NodeId(u32);

impl NodeId {
    /// Ground (`gnd`), the reference node.
    pub const GROUND: NodeId = NodeId(0);

    /// The node `circuit.nodes[index]`.
    pub const fn node(index: usize) -> NodeId {
        NodeId(to_u32(index) + 1)
    }
    /// Its index in [`crate::Circuit::nodes`], `None` for ground.
    pub fn index(self) -> Option<usize> {
        self.0.checked_sub(1).map(|i| i as usize)
    }
    /// True for ground.
    pub fn is_ground(self) -> bool {
        self.0 == 0
    }
}

impl fmt::Debug for NodeId {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self.index() {
            None => write!(f, "NodeId(gnd)"),
            Some(i) => write!(f, "NodeId({i})"),
        }
    }
}

/// An element of a circuit: an index into [`crate::Circuit::elements`].
/// Serialized as the bare index.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, serde::Serialize)]
#[serde(transparent)]
pub struct ElementId(u32);

impl ElementId {
    /// The element `circuit.elements[index]`.
    pub const fn new(index: usize) -> ElementId {
        ElementId(to_u32(index))
    }
    /// Its index in [`crate::Circuit::elements`].
    pub fn index(self) -> usize {
        self.0 as usize
    }
    /// Terminal `index` (0-based, in the element's terminal order) of this element.
    pub fn terminal(self, index: usize) -> Terminal {
        Terminal {
            element: self,
            index: to_u32(index),
        }
    }
}

/// A model of a circuit: an index into [`crate::Circuit::models`].
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub struct ModelId(u32);

impl ModelId {
    /// The model `circuit.models[index]`.
    pub const fn new(index: usize) -> ModelId {
        ModelId(to_u32(index))
    }
    /// Its index in [`crate::Circuit::models`].
    pub fn index(self) -> usize {
        self.0 as usize
    }
}

/// One terminal of an element: the element and the terminal's place in
/// its terminal order (0-based; [`crate::ElementKind::terminals`]). A
/// device's internal node sits behind a terminal (a transistor's base
/// resistance puts `b'` behind terminal 1).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub struct Terminal {
    element: ElementId,
    index: u32,
}

impl Terminal {
    /// The element.
    pub fn element(self) -> ElementId {
        self.element
    }
    /// The terminal's place in the element's terminal order, 0-based.
    pub fn index(self) -> usize {
        self.index as usize
    }
}

const fn to_u32(index: usize) -> u32 {
    // Unreachable for any circuit elaboration accepts (see the module
    // overview): the file-size and element limits keep every count far
    // below 2³².
    assert!(index < u32::MAX as usize, "circuit handles fit in 32 bits");
    index as u32
}

impl std::ops::Index<ElementId> for Vec<Element> {
    type Output = Element;
    fn index(&self, id: ElementId) -> &Element {
        &self[id.index()]
    }
}

impl std::ops::Index<ModelId> for Vec<Model> {
    type Output = Model;
    fn index(&self, id: ModelId) -> &Model {
        &self[id.index()]
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn node_round_trips_and_ground_sorts_first() {
        assert_eq!(NodeId::GROUND.index(), None);
        assert!(NodeId::GROUND.is_ground());
        assert_eq!(NodeId::node(0).index(), Some(0));
        assert_eq!(NodeId::node(41).index(), Some(41));
        assert!(!NodeId::node(0).is_ground());
        assert!(NodeId::GROUND < NodeId::node(0));
        assert!(NodeId::node(1) < NodeId::node(2));
        assert_eq!(NodeId::default(), NodeId::GROUND);
    }

    #[test]
    fn element_terminal_handles() {
        let e = ElementId::new(7);
        assert_eq!(e.index(), 7);
        let t = e.terminal(2);
        assert_eq!(t.element(), e);
        assert_eq!(t.index(), 2);
        assert_ne!(e.terminal(1), t);
        assert_eq!(ModelId::new(3).index(), 3);
    }
}
