//! Bipolar power transistor (Gummel–Poon type). Skeleton: signatures first,
//! equations follow in the next commits.

use crate::contract::{Device, EvalCtx, EvalInfo, Idx, Stamp};
use tankwave_circuit::BjtParams;

/// Unknown indices of a transistor: external terminals and internal nodes.
/// An internal node equals its external node when that resistance is zero.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct BjtNodes {
    /// External collector.
    pub c: Idx,
    /// External base.
    pub b: Idx,
    /// External emitter.
    pub e: Idx,
    /// Internal collector (behind `r_collector`).
    pub ci: Idx,
    /// Internal base (behind `r_base`).
    pub bi: Idx,
    /// Internal emitter (behind `r_emitter`).
    pub ei: Idx,
}

/// An instantiated bipolar transistor.
#[derive(Debug, Clone)]
pub struct Bjt {
    element: usize,
    nodes: BjtNodes,
    terminals: [Idx; 3],
}

impl Bjt {
    /// Which internal nodes this model needs: (collector, base, emitter), true
    /// where the corresponding ohmic resistance is positive.
    pub fn internal_nodes_needed(p: &BjtParams) -> [bool; 3] {
        [p.r_collector > 0.0, p.r_base > 0.0, p.r_emitter > 0.0]
    }

    /// Build from model parameters, an area factor and the device temperature (K).
    pub fn new(element: usize, nodes: BjtNodes, p: &BjtParams, area: f64, temp_k: f64) -> Bjt {
        let _ = (p, area, temp_k);
        Bjt {
            element,
            nodes,
            terminals: [nodes.c, nodes.b, nodes.e],
        }
    }
}

impl Device for Bjt {
    fn element(&self) -> usize {
        self.element
    }
    fn terminals(&self) -> &[Idx] {
        &self.terminals
    }
    fn is_linear(&self) -> bool {
        false
    }
    fn state_len(&self) -> usize {
        2
    }
    fn eval(
        &self,
        _x: &[f64],
        _ctx: &EvalCtx,
        _state: &mut [f64],
        _out: &mut dyn Stamp,
    ) -> EvalInfo {
        let _ = self.nodes;
        EvalInfo::default()
    }
}
