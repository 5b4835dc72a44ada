//! The fitted model as a `part` block ready to `include` in a stage file
//! (docs/language.md), with a header saying what each curve was fitted to,
//! its residual, and what the curves leave open.

use crate::fit::FitResult;
use crate::knob::Knob;
use tankwave_circuit::si::si_prefixed;

/// Unit written after a number in the stage file for a knob's unit.
fn file_unit(k: Knob) -> &'static str {
    match k.unit() {
        "Ω" => "Ohm",
        u => u,
    }
}

/// A number with seven significant figures, as the stage language reads it.
fn number(v: f64) -> String {
    format!("{v:.6e}")
}

/// The text of the part file: header comments, then `part NAME npn|pnp { … }`.
/// `name` must already be a valid part name (see [`valid_name`]).
pub fn part_text(name: &str, r: &FitResult) -> String {
    let p = &r.params;
    let mut s = String::new();
    s.push_str(&format!(
        "# Bipolar model '{name}' fitted by `tankwave fit` to the curves below\n"
    ));
    s.push_str("# (weighted least squares on relative error; see docs/fit.md).\n");
    for c in &r.curves {
        let unit = c.kind.measured().unit();
        s.push_str(&format!(
            "#   {:<8} {} ({} points): RMS {} ({:.2} %), worst {} ({:.2} %, line {})\n",
            c.kind.word(),
            c.file,
            c.points.iter().filter(|q| q.used).count(),
            si_prefixed(c.rms, unit, 3),
            c.rms_rel * 100.0,
            si_prefixed(c.worst, unit, 3),
            c.worst_rel * 100.0,
            c.worst_line
        ));
        if let Some(o) = c.left_out_rms_rel {
            s.push_str(&format!(
                "#            points left out of the fit: RMS {:.1} % (the model cannot follow them)\n",
                o * 100.0
            ));
        }
    }
    if !r.undetermined.is_empty() {
        s.push_str("# Not determined by these curves (written at the value shown, or left off):\n");
        for u in &r.undetermined {
            let (b, w) = u.knob.place();
            s.push_str(&format!("#   {b}.{w} ({}): {}\n", u.knob.symbol(), u.why));
        }
    }
    for k in &r.at_bound {
        let (b, w) = k.place();
        s.push_str(&format!(
            "# At a bound of the fit: {b}.{w} ({}) = {}\n",
            k.symbol(),
            si_prefixed(k.get(p), k.unit(), 4)
        ));
    }
    let kind = if p.pnp { "pnp" } else { "npn" };
    s.push_str(&format!("part {name} {kind} {{\n"));
    // the block of each knob, in the stage file's block order
    let written = |k: Knob| -> bool {
        match k {
            Knob::Early | Knob::Knee => k.get(p).is_finite(),
            Knob::LeakBe | Knob::LeakBeIdeality => p.leak_be > 0.0,
            Knob::CapBc | Knob::PotentialBc | Knob::GradingBc => p.cj_bc > 0.0,
            Knob::CapBe | Knob::PotentialBe | Knob::GradingBe => p.cj_be > 0.0,
            Knob::Transit | Knob::RCollector | Knob::REpi => k.get(p) > 0.0,
            Knob::EpiGamma => p.r_epi > 0.0,
            Knob::Breakdown => p.bv_cbo.is_finite(),
            Knob::AvalancheExponent => p.bv_cbo.is_finite(),
            _ => true,
        }
    };
    let blocks: [(&str, &[Knob]); 6] = [
        (
            "transport",
            &[
                Knob::SatCurrent,
                Knob::Beta,
                Knob::BetaReverse,
                Knob::Ideality,
                Knob::Early,
                Knob::Knee,
            ],
        ),
        ("leakage", &[Knob::LeakBe, Knob::LeakBeIdeality]),
        (
            "charge",
            &[
                Knob::CapBe,
                Knob::PotentialBe,
                Knob::GradingBe,
                Knob::CapBc,
                Knob::PotentialBc,
                Knob::GradingBc,
                Knob::Transit,
            ],
        ),
        ("resistance", &[Knob::RCollector]),
        ("epi", &[Knob::REpi, Knob::EpiGamma]),
        ("avalanche", &[Knob::Breakdown, Knob::AvalancheExponent]),
    ];
    for (block, knobs) in blocks {
        let mut words: Vec<String> = knobs
            .iter()
            .filter(|k| written(**k))
            .map(|&k| format!("{}={}{}", k.place().1, number(k.get(p)), file_unit(k)))
            .collect();
        if block == "charge" && (p.cj_be > 0.0 || p.cj_bc > 0.0) {
            // required with a capacitance; reverse-bias curves cannot set it
            words.push(format!("linear_from={}", p.linear_from));
        }
        if words.is_empty() {
            continue;
        }
        s.push_str(&format!("  {block} {{\n"));
        for w in words {
            s.push_str(&format!("    {w}\n"));
        }
        s.push_str("  }\n");
    }
    if p.cj_be > 0.0 || p.cj_bc > 0.0 {
        s.push_str("  # linear_from is not set by reverse-bias curves: 0.5 (common practice)\n");
    }
    s.push_str(&format!(
        "  temperature {{ measured_at={:.2}degC }}\n",
        p.t_measured - 273.15
    ));
    s.push_str("}\n");
    s
}

/// Whether `name` can name a part: a letter, then letters, digits or `_`,
/// at most 64 characters.
pub fn valid_name(name: &str) -> bool {
    let mut ch = name.chars();
    matches!(ch.next(), Some(c) if c.is_ascii_alphabetic())
        && name.len() <= 64
        && ch.all(|c| c.is_ascii_alphanumeric() || c == '_')
}
