//! A short overview of an elaborated stage, for checking a file without
//! solving it: what it declares (nodes, elements by kind, models,
//! analyses, masks, requirements, studies) in a few aligned lines.

use std::collections::BTreeMap;
use std::fmt::Write as _;

use tankwave_circuit::{Analysis, Circuit, ModelKind};

/// The overview of a stage file that elaborated: `FILE: ok`, then the
/// title, temperature, nodes, elements by kind, models, input and output,
/// analyses, masks, requirements, study statements and the number of
/// `warnings`, one per line. `file` is the name as given.
pub fn stage_overview(file: &str, c: &Circuit, warnings: usize) -> String {
    let mut s = String::new();
    let _ = writeln!(s, "{file}: ok");
    if let Some(t) = &c.title {
        let _ = writeln!(s, "  title:        {t}");
    }
    let _ = writeln!(s, "  temperature:  {:.2} degC", c.temperature_k - 273.15);
    let _ = writeln!(s, "  nodes:        {} (plus gnd)", c.nodes.len());
    let mut kinds: BTreeMap<&str, usize> = BTreeMap::new();
    for e in &c.elements {
        *kinds.entry(e.kind.keyword()).or_default() += 1;
    }
    let by_kind: Vec<String> = kinds.iter().map(|(k, n)| format!("{n} {k}")).collect();
    let _ = writeln!(
        s,
        "  elements:     {} ({})",
        c.elements.len(),
        by_kind.join(", ")
    );
    if !c.models.is_empty() {
        let models: Vec<String> = c
            .models
            .iter()
            .map(|m| {
                let k = match m.kind() {
                    ModelKind::Npn => "npn",
                    ModelKind::Pnp => "pnp",
                    ModelKind::Diode => "diode",
                };
                format!("{} ({k})", m.name)
            })
            .collect();
        let _ = writeln!(s, "  models:       {}", models.join(", "));
    }
    let name = |id: Option<tankwave_circuit::ElementId>| {
        id.and_then(|i| c.elements.get(i.index()))
            .map(|e| e.name.as_str())
            .unwrap_or("-")
    };
    let _ = writeln!(s, "  input/output: {} / {}", name(c.input), name(c.output));
    let analyses: Vec<String> = c
        .analyses
        .iter()
        .map(|a| match a {
            Analysis::Bias => "bias".to_string(),
            Analysis::Transient { stop, .. } => {
                format!("transient to {}", crate::format::si(*stop, "s"))
            }
            Analysis::Ac {
                from, to, points, ..
            } => format!(
                "ac {}..{}, {points} points",
                crate::format::si(*from, "Hz"),
                crate::format::si(*to, "Hz")
            ),
            Analysis::Steady {
                freq, harmonics, ..
            } => format!(
                "steady at {}, {harmonics} harmonics",
                crate::format::si(*freq, "Hz")
            ),
            Analysis::Ruggedness { vswr, phases, .. } => {
                format!("ruggedness, {} circles of {phases} loads", vswr.len())
            }
            Analysis::Heat(h) => match h.transmit {
                Some(t) => format!(
                    "heat, {} on the shared heatsink, transmission of {}",
                    h.sink.len(),
                    crate::format::si(t, "s")
                ),
                None => format!("heat, {} on the shared heatsink", h.sink.len()),
            },
            Analysis::TwoTone {
                spacing,
                order,
                levels,
                ..
            } => format!(
                "two-tone, spacing {}, order {order}, {} drive levels",
                crate::format::si(*spacing, "Hz"),
                levels.len().max(1)
            ),
            Analysis::LoadPull(p) => format!(
                "load-pull, {}×{} grid around Γ = {:.3}{:+.3}j against {}",
                p.points,
                p.points,
                p.center.0,
                p.center.1,
                crate::format::si(p.reference, "Ω")
            ),
            Analysis::Keying(k) => format!(
                "keying, {:.4} baud ({:.4} wpm), {}, {} edges {} / {}",
                k.baud(),
                k.wpm(),
                k.keyed_text(),
                k.shape.word(),
                crate::format::si(k.rise, "s"),
                crate::format::si(k.fall, "s")
            ),
        })
        .collect();
    let _ = writeln!(
        s,
        "  analyses:     {}",
        if analyses.is_empty() {
            "none".to_string()
        } else {
            analyses.join("; ")
        }
    );
    let _ = writeln!(s, "  masks:        {}", c.masks.len());
    let _ = writeln!(s, "  requirements: {}", c.requirements.len());
    let st = &c.study;
    if !st.vary.is_empty()
        || !st.tolerances.is_empty()
        || st.montecarlo.is_some()
        || !st.tune.is_empty()
    {
        let mut parts = Vec::new();
        if !st.vary.is_empty() {
            parts.push(format!("{} vary", st.vary.len()));
        }
        if !st.tolerances.is_empty() {
            parts.push(format!("{} tolerance", st.tolerances.len()));
        }
        if let Some(m) = st.montecarlo {
            parts.push(format!("montecarlo {} runs", m.runs));
        }
        if !st.tune.is_empty() {
            parts.push(format!("{} tune", st.tune.len()));
        }
        let _ = writeln!(s, "  study:        {}", parts.join(", "));
    }
    let _ = writeln!(s, "  warnings:     {warnings}");
    s
}

#[cfg(test)]
mod tests {
    use super::*;
    use tankwave_circuit::Overrides;

    #[test]
    fn summary_counts_elements_by_kind() {
        let text = "title \"t\"\nvoltage v1 a gnd dc=1V\nresistor r1 a b 1Ohm\nresistor r2 b gnd 1Ohm\nanalyze bias\n";
        let e = tankwave_circuit::load_str("t.tank", text, &Overrides::default()).expect("valid");
        let s = stage_overview("t.tank", &e.circuit, 0);
        assert!(s.contains("elements:     3 (2 resistor, 1 voltage)"), "{s}");
        assert!(s.contains("nodes:        2"), "{s}");
        assert!(s.contains("analyses:     bias"), "{s}");
    }

    #[test]
    fn analysis_frequencies_carry_an_si_prefix() {
        let text = "title \"t\"\nvoltage v1 a gnd wave=sine(amp=1V, freq=14.2MHz)\nresistor r1 a gnd 50Ohm\nanalyze steady freq=14.2MHz harmonics=8\n";
        let e = tankwave_circuit::load_str("t.tank", text, &Overrides::default()).expect("valid");
        let s = stage_overview("t.tank", &e.circuit, 0);
        assert!(s.contains("steady at 14.2 MHz, 8 harmonics"), "{s}");
        assert!(!s.contains("e7"), "{s}");
    }
}
