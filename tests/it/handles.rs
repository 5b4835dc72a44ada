//! The typed handles against the displayed names on every demo stage: for
//! each stage file in netlists/ (and netlists/failing, netlists/studies),
//! every node, branch and internal node found through its handle carries the
//! name the report shows for it, every unknown is reached by exactly one
//! handle, and the unit of each comes from its kind. The names are for
//! display and files only; this is what keeps the two in step.

use std::path::PathBuf;
use tankwave_circuit::{ElementKind, NodeId, Overrides, Unit};
use tankwave_devices::{names, UnknownId, UnknownKind};

fn demo_files() -> Vec<PathBuf> {
    let root = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("netlists");
    let mut files = Vec::new();
    for dir in [root.clone(), root.join("failing"), root.join("studies")] {
        let Ok(entries) = std::fs::read_dir(&dir) else {
            continue;
        };
        for e in entries.flatten() {
            let p = e.path();
            if p.extension().is_some_and(|x| x == "tank") {
                files.push(p);
            }
        }
    }
    files.sort();
    files
}

#[test]
fn handles_and_names_agree_on_every_demo_unknown() {
    let files = demo_files();
    assert!(files.len() >= 3, "the demo stages are found: {files:?}");
    for f in &files {
        let c = tankwave_stage::load(f, &[], &Overrides::default())
            .unwrap_or_else(|e| panic!("{}: {e}", f.display()))
            .circuit;
        let d = tankwave_devices::instantiate(&c).expect("devices");
        let at = |u: Option<UnknownId>| u.map(|u| d.name(u).to_string());
        let mut reached: Vec<UnknownId> = Vec::new();
        assert_eq!(d.voltage_of(NodeId::GROUND), None);
        for (i, name) in c.nodes.iter().enumerate() {
            let n = c.node(name).expect("the node by its name");
            assert_eq!(n, NodeId::node(i));
            let u = d.voltage_of(n);
            assert_eq!(at(u), Some(names::node_voltage(name)), "{}", f.display());
            let u = u.expect("a node has a voltage unknown");
            assert_eq!(d.kind(u).unit(), Unit::Volt);
            assert_eq!(UnknownId::voltage(n), Some(u));
            reached.push(u);
        }
        for (id, el) in c.element_ids() {
            assert_eq!(c.element(&el.name), Some(id));
            let has_branch = matches!(
                el.kind,
                ElementKind::Inductor { .. } | ElementKind::VoltageSource { .. }
            );
            match d.branch_of(id) {
                Some(u) => {
                    assert!(has_branch, "{}: {} has a branch", f.display(), el.name);
                    assert_eq!(d.name(u), names::branch_current(&el.name));
                    assert_eq!(d.kind(u), UnknownKind::Current);
                    assert_eq!(d.kind(u).unit(), Unit::Ampere);
                    reached.push(u);
                }
                None => assert!(!has_branch, "{}: {} lacks its branch", f.display(), el.name),
            }
            let tags = match el.kind {
                ElementKind::Diode { .. } => ["a", "k", ""],
                _ => ["c", "b", "e"],
            };
            for (t, tag) in tags.iter().enumerate().take(el.kind.terminals().len()) {
                if let Some(u) = d.internal_of(id.terminal(t)) {
                    assert_eq!(d.name(u), names::internal_node(&el.name, tag));
                    assert_eq!(d.kind(u), UnknownKind::Voltage);
                    reached.push(u);
                }
            }
            // a transistor's epi junction node and excess-phase states
            for u in d.states_of(id) {
                let (name, kind) = (d.name(u), d.kind(u));
                let known = [
                    (names::internal_node(&el.name, "cj"), UnknownKind::Voltage),
                    (
                        names::internal_state(&el.name, "phase1"),
                        UnknownKind::Current,
                    ),
                    (
                        names::internal_state(&el.name, "phase2"),
                        UnknownKind::Current,
                    ),
                ];
                assert!(
                    known.iter().any(|(n, k)| n == name && *k == kind),
                    "{}: {name}",
                    f.display()
                );
                reached.push(u);
            }
        }
        reached.sort();
        assert_eq!(
            reached,
            d.unknowns().collect::<Vec<_>>(),
            "{}: every unknown is reached by exactly one handle",
            f.display()
        );
        for u in d.unknowns() {
            assert_eq!(d.unknown(d.name(u)), Some(u), "{}", f.display());
        }
    }
}
