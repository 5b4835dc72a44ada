//! Topology checks on an elaborated circuit.
//!
//! - every node needs a DC path to ground (through resistors, inductors,
//!   voltage sources, diodes or bipolar junctions; capacitors and current
//!   sources give none): otherwise `no-dc-path`, or `current-cutset` when a
//!   current source drives the cut-off part;
//! - no loop of ideal voltage sources (rs = 0) and/or ideal inductors
//!   (no series resistance): `source-loop`, naming the loop;
//! - a node touched by only one element is a warning (`dangling-node`).

use crate::elaborate::Cx;
use crate::ir::{Circuit, ElementKind, NodeId};
use crate::touchstone::Form;
use std::collections::{BTreeMap, VecDeque};

/// Union–find over node indices (0 = ground).
struct Dsu {
    parent: Vec<usize>,
}

impl Dsu {
    fn new(n: usize) -> Dsu {
        Dsu {
            parent: (0..n).collect(),
        }
    }
    fn find(&mut self, mut x: usize) -> usize {
        while self.parent[x] != x {
            self.parent[x] = self.parent[self.parent[x]];
            x = self.parent[x];
        }
        x
    }
    /// Join; false if already joined.
    fn union(&mut self, a: usize, b: usize) -> bool {
        let (ra, rb) = (self.find(a), self.find(b));
        if ra == rb {
            return false;
        }
        self.parent[ra] = rb;
        true
    }
}

fn idx(n: NodeId) -> usize {
    n.index().map(|i| i + 1).unwrap_or(0)
}

/// DC-conducting terminal pairs of an element.
fn dc_edges(k: &ElementKind) -> Vec<(usize, usize)> {
    match k {
        ElementKind::Resistor { a, b, .. } | ElementKind::Inductor { a, b, .. } => {
            vec![(idx(*a), idx(*b))]
        }
        ElementKind::VoltageSource { p, n, .. } => vec![(idx(*p), idx(*n))],
        ElementKind::Diode { a, k, .. } => vec![(idx(*a), idx(*k))],
        ElementKind::Bjt { c, b, e, .. } => vec![(idx(*b), idx(*c)), (idx(*b), idx(*e))],
        // A measured network conducts at DC between the ports its DC
        // conductance matrix (Re Y(0)) couples.
        // Held as an impedance matrix, every port carries its current as an
        // unknown: a DC path between its terminals.
        ElementKind::Measured { ports, network } if network.form() == Form::Impedance => {
            ports.iter().map(|(p, n)| (idx(*p), idx(*n))).collect()
        }
        ElementKind::Measured { ports, network } => {
            let np = ports.len();
            let y = network.admittance(0.0).unwrap_or_default();
            let mut out = Vec::new();
            for i in 0..np {
                for j in 0..np {
                    if y.get(i * np + j).is_some_and(|v| v.re != 0.0) {
                        let (pi, ni) = ports[i];
                        let (pj, nj) = ports[j];
                        out.extend([(idx(pi), idx(ni)), (idx(pj), idx(nj)), (idx(pi), idx(pj))]);
                    }
                }
            }
            out
        }
        _ => vec![],
    }
}

/// The branches of an element that fix a voltage with no resistance at DC
/// (their current is an unknown): an ideal voltage source, an inductor
/// without loss, and a port of a measured network held as an impedance
/// matrix whose DC impedance is zero (a short).
fn ideal_branches(k: &ElementKind) -> Vec<(usize, usize)> {
    match k {
        ElementKind::VoltageSource { p, n, rs, .. } if *rs == 0.0 => vec![(idx(*p), idx(*n))],
        ElementKind::Inductor { a, b, series_r, .. } if *series_r == 0.0 => {
            vec![(idx(*a), idx(*b))]
        }
        ElementKind::Measured { ports, network } if network.form() == Form::Impedance => {
            let np = ports.len();
            let z = network.dc_value().unwrap_or_default();
            ports
                .iter()
                .enumerate()
                .filter(|(i, _)| z.get(i * np + i).is_none_or(|v| *v == 0.0))
                .map(|(_, (p, n))| (idx(*p), idx(*n)))
                .collect()
        }
        _ => vec![],
    }
}

pub(crate) fn check(cx: &mut Cx<'_>, c: &Circuit) {
    let n = c.nodes.len() + 1;
    let name = |i: usize| {
        if i == 0 {
            "gnd".to_string()
        } else {
            c.nodes.get(i - 1).cloned().unwrap_or_default()
        }
    };
    let span_of = |cx: &Cx<'_>, e: usize| cx.elem_spans.get(e).copied().unwrap_or_default();

    // 1. DC paths.
    let mut dsu = Dsu::new(n);
    for e in &c.elements {
        for (a, b) in dc_edges(&e.kind) {
            dsu.union(a, b);
        }
    }
    let g = dsu.find(0);
    let mut comps: BTreeMap<usize, Vec<usize>> = BTreeMap::new();
    for i in 1..n {
        let r = dsu.find(i);
        if r != g {
            comps.entry(r).or_default().push(i);
        }
    }
    if !comps.is_empty() {
        let touches_gnd = c
            .elements
            .iter()
            .any(|e| e.kind.terminals().contains(&NodeId::GROUND));
        let mut reported: Vec<usize> = Vec::new();
        // Current sources feeding a cut-off part first.
        for (ei, e) in c.elements.iter().enumerate() {
            if let ElementKind::CurrentSource { p, n: m, .. } = &e.kind {
                let (rp, rn) = (dsu.find(idx(*p)), dsu.find(idx(*m)));
                for r in [rp, rn] {
                    if r != g && rp != rn && !reported.contains(&r) {
                        reported.push(r);
                        let nodes: Vec<String> = comps
                            .get(&r)
                            .map(|v| v.iter().map(|i| name(*i)).collect())
                            .unwrap_or_default();
                        let sp = span_of(cx, ei);
                        cx.error(
                            "current-cutset",
                            sp,
                            format!("current {} drives node(s) {} that have no DC path to gnd except through current sources or capacitors", e.name, nodes.join(", ")),
                        )
                        .help = Some("a current source needs a resistive or inductive DC path around it; add a resistor in parallel or a path to gnd".into());
                    }
                }
            }
        }
        for (ei, e) in c.elements.iter().enumerate() {
            for t in e.kind.terminals() {
                let r = dsu.find(idx(t));
                if r != g && !reported.contains(&r) {
                    reported.push(r);
                    let nodes: Vec<String> = comps
                        .get(&r)
                        .map(|v| v.iter().map(|i| name(*i)).collect())
                        .unwrap_or_default();
                    let what = if nodes.len() == 1 {
                        format!("node '{}' has", nodes[0])
                    } else {
                        format!("nodes {} have", nodes.join(", "))
                    };
                    let help = if touches_gnd {
                        "only capacitors or current sources reach these nodes; add a DC path to gnd (a bias resistor or an RF choke)"
                    } else {
                        "no element connects to gnd; every circuit needs the ground node 'gnd'"
                    };
                    let sp = span_of(cx, ei);
                    cx.error(
                        "no-dc-path",
                        sp,
                        format!(
                            "{what} no DC path to gnd (first reached by {} {})",
                            e.kind.keyword(),
                            e.name
                        ),
                    )
                    .help = Some(help.into());
                }
            }
        }
    }

    // 2. Loops of ideal voltage sources and inductors.
    let mut dsu = Dsu::new(n);
    let mut adj: Vec<Vec<(usize, usize)>> = vec![Vec::new(); n];
    for (ei, e) in c.elements.iter().enumerate() {
        for (a, b) in ideal_branches(&e.kind) {
            if a == b {
                let sp = span_of(cx, ei);
                cx.error(
                    "source-loop",
                    sp,
                    format!(
                        "{} {} has both terminals on node '{}'",
                        e.kind.keyword(),
                        e.name,
                        name(a)
                    ),
                );
                continue;
            }
            if !dsu.union(a, b) {
                // Find the existing path b -> a to name the loop.
                let mut prev: Vec<Option<(usize, usize)>> = vec![None; n];
                let mut seen = vec![false; n];
                let mut q = VecDeque::from([b]);
                seen[b] = true;
                while let Some(x) = q.pop_front() {
                    if x == a {
                        break;
                    }
                    for &(y, via) in &adj[x] {
                        if !seen[y] {
                            seen[y] = true;
                            prev[y] = Some((x, via));
                            q.push_back(y);
                        }
                    }
                }
                let mut names = vec![e.name.clone()];
                let mut x = a;
                let mut guard = 0;
                while let Some((p, via)) = prev[x] {
                    names.push(c.elements[via].name.clone());
                    x = p;
                    guard += 1;
                    if guard > n {
                        break;
                    }
                }
                let sp = span_of(cx, ei);
                cx.error(
                "source-loop",
                sp,
                format!("{} {} closes a loop of ideal voltage sources and/or inductors: {}", e.kind.keyword(), e.name, names.join(" -> ")),
            )
            .help = Some("the loop current is undefined at DC; add source resistance internal= or inductor loss r=".into());
            } else {
                adj[a].push((b, ei));
                adj[b].push((a, ei));
            }
        }
    }

    // 3. Nodes touched by one element only.
    let mut count: Vec<(usize, Option<usize>)> = vec![(0, None); n];
    for (ei, e) in c.elements.iter().enumerate() {
        let mut ts: Vec<usize> = e.kind.terminals().into_iter().map(idx).collect();
        ts.sort_unstable();
        ts.dedup();
        for t in ts {
            count[t].0 += 1;
            count[t].1.get_or_insert(ei);
        }
    }
    for (i, (k, first)) in count.iter().enumerate().skip(1) {
        if *k == 1 {
            if let Some(ei) = first {
                let sp = span_of(cx, *ei);
                let e = &c.elements[*ei];
                cx.warning(
                    "dangling-node",
                    sp,
                    format!(
                        "node '{}' is connected only to {} {}",
                        name(i),
                        e.kind.keyword(),
                        e.name
                    ),
                );
            }
        }
    }
}
