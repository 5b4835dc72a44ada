//! How a transistor's base returns to its emitter at d.c., and which
//! collector–emitter rating that makes the one to check.
//!
//! A data sheet rates the collector–emitter voltage for the base open
//! (V_CEO, the part's `vce_max`), returned through a resistor of at most a
//! stated value (V_CER, `vce_resistor_max` at `vce_resistor_at`) and shorted
//! to the emitter (V_CES, `vce_short_max`): the lower the resistance, the
//! more of the avalanche current leaves through it instead of being
//! multiplied by the transistor's gain, and the higher the voltage it
//! withstands (V_CEO < V_CER < V_CES ≤ V_CBO; common practice).
//!
//! **The return.** The least-resistance d.c. path from the base to the
//! emitter through the stage's own network (Dijkstra over the nodes):
//! resistors by their value, inductors by their series resistance, voltage
//! sources by their internal resistance (a supply or bias source is a
//! short at d.c.); capacitors, current sources, diodes, measured networks
//! and other transistors carry no d.c. path here. Parallel paths can only
//! lower the resistance, so the path found is an upper bound, and the
//! rating chosen errs toward the lower, open-base side. A path of at most
//! [`SHORT_OHM`] counts as a short (a base choke or transformer winding).

use tankwave_circuit::{BjtParams, Circuit, ElementKind, NodeId};

/// A d.c. base return of at most this resistance counts as a short, Ω
/// (a choke or transformer winding in the base lead; common practice).
pub const SHORT_OHM: f64 = 1.0;

/// How the base returns to the emitter at d.c.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub enum BaseReturn {
    /// No d.c. path.
    Open,
    /// Through this resistance (the least over the paths), Ω.
    Resistor(f64),
    /// Through at most [`SHORT_OHM`]: the resistance, Ω.
    Short(f64),
}

/// The least-resistance d.c. path between nodes `b` and `e` of `c`.
pub fn base_return(c: &Circuit, b: NodeId, e: NodeId) -> BaseReturn {
    let n = c.nodes.len() + 1;
    let idx = |x: NodeId| x.index().unwrap_or(n - 1);
    let mut adj: Vec<Vec<(usize, f64)>> = vec![Vec::new(); n];
    let mut link = |a: NodeId, z: NodeId, r: f64| {
        if r.is_finite() && r >= 0.0 && a != z {
            let (i, j) = (idx(a), idx(z));
            if i < n && j < n {
                adj[i].push((j, r));
                adj[j].push((i, r));
            }
        }
    };
    for el in &c.elements {
        match &el.kind {
            ElementKind::Resistor { a, b, r, .. } => link(*a, *b, *r),
            ElementKind::Inductor { a, b, series_r, .. } => link(*a, *b, *series_r),
            ElementKind::VoltageSource { p, n, rs, .. } => link(*p, *n, *rs),
            _ => {}
        }
    }
    let (start, goal) = (idx(b), idx(e));
    if start == goal {
        return BaseReturn::Short(0.0);
    }
    // Dijkstra with a binary heap on ordered floats (non-negative weights)
    let mut dist = vec![f64::INFINITY; n];
    let mut heap = std::collections::BinaryHeap::new();
    dist[start] = 0.0;
    heap.push(std::cmp::Reverse((Ordered(0.0), start)));
    while let Some(std::cmp::Reverse((Ordered(d), u))) = heap.pop() {
        if d > dist[u] {
            continue;
        }
        if u == goal {
            break;
        }
        for &(v, w) in &adj[u] {
            let nd = d + w;
            if nd < dist[v] {
                dist[v] = nd;
                heap.push(std::cmp::Reverse((Ordered(nd), v)));
            }
        }
    }
    match dist[goal] {
        r if !r.is_finite() => BaseReturn::Open,
        r if r <= SHORT_OHM => BaseReturn::Short(r),
        r => BaseReturn::Resistor(r),
    }
}

/// A finite, non-negative f64 with a total order, for the heap.
#[derive(Debug, Clone, Copy, PartialEq)]
struct Ordered(f64);
impl Eq for Ordered {}
impl PartialOrd for Ordered {
    fn partial_cmp(&self, o: &Self) -> Option<std::cmp::Ordering> {
        Some(self.cmp(o))
    }
}
impl Ord for Ordered {
    fn cmp(&self, o: &Self) -> std::cmp::Ordering {
        self.0.total_cmp(&o.0)
    }
}

/// Which collector–emitter rating a part's base return selects.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
pub enum VceRating {
    /// The open-base rating, `vce_max` (V_CEO).
    OpenBase,
    /// The rating with a base–emitter resistor, `vce_resistor_max` (V_CER).
    Resistor,
    /// The shorted-base rating, `vce_short_max` (V_CES).
    ShortedBase,
}

/// Why a transistor's collector–emitter voltage is checked against the
/// rating it is: its base return and the rating that selects.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct VceBasis {
    /// How the base returns to the emitter at d.c.
    pub base_return: BaseReturn,
    /// The rating chosen.
    pub rating: VceRating,
    /// The base–emitter resistance the resistor rating is given at, Ω
    /// (∞ when not given).
    pub resistor_at_ohm: f64,
}

/// The collector–emitter rating that applies to a part whose base returns
/// as `ret`, V, and why (`None` when the part gives only the open-base
/// rating, so there was nothing to choose). The shorted-base rating needs a
/// short; the resistor rating a return within the resistance it is given
/// at (a short is within it); anything else falls back to the open base.
pub fn vce_rating(p: &BjtParams, ret: BaseReturn) -> (f64, Option<VceBasis>) {
    if !(p.max_vce_resistor.is_finite() || p.max_vce_short.is_finite()) {
        return (p.max_vce, None);
    }
    let basis = |rating| VceBasis {
        base_return: ret,
        rating,
        resistor_at_ohm: p.vce_resistor_ohm,
    };
    match ret {
        BaseReturn::Short(_) if p.max_vce_short.is_finite() => {
            (p.max_vce_short, Some(basis(VceRating::ShortedBase)))
        }
        BaseReturn::Short(r) | BaseReturn::Resistor(r)
            if p.max_vce_resistor.is_finite() && r <= p.vce_resistor_ohm =>
        {
            (p.max_vce_resistor, Some(basis(VceRating::Resistor)))
        }
        _ => (p.max_vce, Some(basis(VceRating::OpenBase))),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use tankwave_circuit::{Element, Origin, Waveform};

    fn el(kind: ElementKind) -> Element {
        Element {
            name: "x".into(),
            kind,
            origin: Origin::default(),
        }
    }
    fn r(a: usize, b: Option<usize>, ohm: f64) -> Element {
        el(ElementKind::Resistor {
            a: NodeId::node(a),
            b: b.map(NodeId::node).unwrap_or(NodeId::GROUND),
            r: ohm,
            rating_w: None,
            ntc_b: None,
        })
    }
    fn circuit(elements: Vec<Element>) -> Circuit {
        Circuit {
            nodes: vec!["b".into(), "m".into(), "s".into()],
            elements,
            ..Default::default()
        }
    }
    const B: usize = 0;

    /// Series resistances add along the path; of two paths the lesser is
    /// taken (Dijkstra; the parallel value would be lower still, which is
    /// why the classification errs toward the open base); a voltage source
    /// is a short at d.c.; a capacitor carries no d.c. path.
    #[test]
    fn the_least_resistance_path_classifies_the_return() {
        let base = NodeId::node(B);
        let open = circuit(vec![el(ElementKind::Capacitor {
            a: base,
            b: NodeId::GROUND,
            c: 1e-9,
            rating_v: None,
            rating_a: None,
        })]);
        assert_eq!(base_return(&open, base, NodeId::GROUND), BaseReturn::Open);
        // 47 + 100 in series, against a 330 Ω path: 147 Ω
        let two = circuit(vec![
            r(B, Some(1), 47.0),
            r(1, None, 100.0),
            r(B, None, 330.0),
        ]);
        assert_eq!(
            base_return(&two, base, NodeId::GROUND),
            BaseReturn::Resistor(147.0)
        );
        // through a bias supply (0 Ω) and 220 Ω: 220 Ω
        let supply = circuit(vec![
            r(B, Some(2), 220.0),
            el(ElementKind::VoltageSource {
                p: NodeId::node(2),
                n: NodeId::GROUND,
                wave: Waveform {
                    dc: 13.8,
                    shape: None,
                },
                rs: 0.0,
            }),
        ]);
        assert_eq!(
            base_return(&supply, base, NodeId::GROUND),
            BaseReturn::Resistor(220.0)
        );
        // a choke of 0.1 Ω: a short
        let choke = circuit(vec![el(ElementKind::Inductor {
            a: base,
            b: NodeId::GROUND,
            l: 2.2e-6,
            series_r: 0.1,
            rating_a: None,
        })]);
        assert_eq!(
            base_return(&choke, base, NodeId::GROUND),
            BaseReturn::Short(0.1)
        );
    }

    /// The rating chosen from the return: V_CES for a short, V_CER for a
    /// return within its resistance (a short too, when V_CES is not given),
    /// V_CEO otherwise; nothing to choose when only V_CEO is given.
    #[test]
    fn the_return_selects_the_rating() {
        let p = BjtParams {
            max_vce: 36.0,
            max_vce_resistor: 60.0,
            vce_resistor_ohm: 100.0,
            max_vce_short: 65.0,
            ..BjtParams::default()
        };
        let pick = |p: &BjtParams, ret| {
            let (v, b) = vce_rating(p, ret);
            (v, b.map(|b| b.rating))
        };
        assert_eq!(
            pick(&p, BaseReturn::Short(0.1)),
            (65.0, Some(VceRating::ShortedBase))
        );
        assert_eq!(
            pick(&p, BaseReturn::Resistor(10.0)),
            (60.0, Some(VceRating::Resistor))
        );
        assert_eq!(
            pick(&p, BaseReturn::Resistor(100.0)),
            (60.0, Some(VceRating::Resistor))
        );
        assert_eq!(
            pick(&p, BaseReturn::Resistor(220.0)),
            (36.0, Some(VceRating::OpenBase))
        );
        assert_eq!(
            pick(&p, BaseReturn::Open),
            (36.0, Some(VceRating::OpenBase))
        );
        let no_short = BjtParams {
            max_vce_short: f64::INFINITY,
            ..p.clone()
        };
        assert_eq!(
            pick(&no_short, BaseReturn::Short(0.1)),
            (60.0, Some(VceRating::Resistor))
        );
        let only_ceo = BjtParams {
            max_vce: 36.0,
            ..BjtParams::default()
        };
        assert_eq!(pick(&only_ceo, BaseReturn::Short(0.0)), (36.0, None));
    }
}
