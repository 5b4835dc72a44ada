//! `tankwave design ...`: closed-form design helpers on the command line.
//!
//! Four subcommands over the tankwave-design crate: `loadline`, `match`,
//! `lowpass` and `choke`. Values take SI prefixes and units as in stage files
//! (`12.5V`, `7.1MHz`, `200pF`, `0.1dB`); a unit that does not fit the option
//! is refused. Output is a readable table on stdout, or JSON with
//! `--format json`. Networks are checked by tankwave's own AC analysis
//! unless `--no-verify` is given.
//!
//! Exit codes: 0 done; 2 bad input (message on stderr); 3 the verification by
//! AC analysis failed to run or disagreed with the design.

use clap::{Args, Subcommand, ValueEnum};
use tankwave_design as design;
use tankwave_netlist::units::{split_suffix, to_si, Slot};

use super::common::{BAD_INPUT, OK, SOLVER};

/// Any serialisable result as a JSON value (a macro, so the root crate needs
/// no direct serde dependency).
macro_rules! to_json {
    ($v:expr) => {
        serde_json::to_value($v).map_err(|e| Fail::Input(format!("cannot write JSON: {e}")))
    };
}

/// Arguments of `tankwave design`.
#[derive(Args, Debug)]
pub struct DesignArgs {
    /// What to design.
    #[command(subcommand)]
    pub what: DesignCommand,
    /// Output format.
    #[arg(long, value_enum, default_value_t = Format::Table, global = true)]
    pub format: Format,
}

/// Output formats.
#[derive(ValueEnum, Debug, Clone, Copy, PartialEq, Eq)]
pub enum Format {
    /// Aligned text for people.
    Table,
    /// One JSON document.
    Json,
}

/// The design helpers.
#[derive(Subcommand, Debug)]
pub enum DesignCommand {
    /// Collector load line: R = (Vcc - Vsat)^2 / (2 Po), peak voltage and current.
    Loadline(LoadlineArgs),
    /// Lossless low-pass matching network (L, pi or T) from one resistance to another.
    Match(MatchArgs),
    /// Butterworth or Chebyshev low-pass LC ladder.
    Lowpass(LowpassArgs),
    /// Feed choke and DC blocking capacitor sizing.
    Choke(ChokeArgs),
}

/// `design loadline`.
#[derive(Args, Debug)]
pub struct LoadlineArgs {
    /// Supply voltage Vcc (e.g. 12.5V).
    #[arg(long)]
    pub supply: String,
    /// Output power at the fundamental (e.g. 25W or 44dBm).
    #[arg(long)]
    pub power: String,
    /// Collector saturation voltage (e.g. 1V).
    #[arg(long)]
    pub vsat: String,
    /// Full conduction angle of the collector current pulses (180deg = class B).
    #[arg(long, default_value = "180deg")]
    pub conduction: String,
}

/// Matching network shapes.
#[derive(ValueEnum, Debug, Clone, Copy, PartialEq, Eq)]
pub enum ShapeArg {
    /// Shunt C, series L, shunt C.
    Pi,
    /// One L-section (Q set by the ratio).
    L,
    /// Series L, shunt C, series L.
    T,
}

/// Names of the nodes and elements in the fragment.
#[derive(Args, Debug)]
pub struct NamingArgs {
    /// Input (source-side) node name.
    #[arg(long = "input-node", default_value = "in")]
    pub input: String,
    /// Output (load-side) node name.
    #[arg(long = "output-node", default_value = "out")]
    pub output: String,
    /// Prefix of element and internal node names (elements lPREFIX1, cPREFIX1, ...).
    #[arg(long)]
    pub prefix: Option<String>,
}

/// `design match`.
#[derive(Args, Debug)]
pub struct MatchArgs {
    /// Source-side resistance R1, e.g. the collector load line (2.9 or 2.9Ohm).
    #[arg(long)]
    pub from: String,
    /// Load-side resistance R2 (e.g. 50).
    #[arg(long)]
    pub to: String,
    /// Design frequency f0 (e.g. 7.1MHz).
    #[arg(long)]
    pub freq: String,
    /// Network shape.
    #[arg(long, value_enum, default_value_t = ShapeArg::Pi)]
    pub shape: ShapeArg,
    /// Loaded Q (pi: of the section at the larger resistance; T: at the smaller). Needed for pi and t.
    #[arg(long)]
    pub q: Option<String>,
    /// Transistor output capacitance to absorb into the first shunt capacitor (e.g. 200pF).
    #[arg(long = "absorb-cout")]
    pub absorb_cout: Option<String>,
    /// Power into the load at f0 (e.g. 25W): adds element voltages and currents.
    #[arg(long)]
    pub power: Option<String>,
    /// Number of harmonics to report (1 = fundamental only).
    #[arg(long, default_value_t = 5)]
    pub harmonics: u32,
    /// Skip the check by AC analysis.
    #[arg(long)]
    pub no_verify: bool,
    /// Fragment names.
    #[command(flatten)]
    pub naming: NamingArgs,
}

/// Filter families.
#[derive(ValueEnum, Debug, Clone, Copy, PartialEq, Eq)]
pub enum KindArg {
    /// Maximally flat.
    Butterworth,
    /// Equal ripple (needs --ripple).
    Chebyshev,
}

/// First ladder element at the source.
#[derive(ValueEnum, Debug, Clone, Copy, PartialEq, Eq)]
pub enum FirstArg {
    /// Shunt capacitor first.
    Shunt,
    /// Series inductor first.
    Series,
}

/// `design lowpass`.
#[derive(Args, Debug)]
pub struct LowpassArgs {
    /// Response family.
    #[arg(long, value_enum)]
    pub kind: KindArg,
    /// Order (number of reactive elements).
    #[arg(long)]
    pub order: usize,
    /// Passband ripple for Chebyshev (e.g. 0.1dB).
    #[arg(long)]
    pub ripple: Option<String>,
    /// Cutoff frequency (e.g. 30MHz).
    #[arg(long)]
    pub cutoff: String,
    /// System impedance R0 (e.g. 50).
    #[arg(long, default_value = "50Ohm")]
    pub impedance: String,
    /// First element at the source.
    #[arg(long, value_enum, default_value_t = FirstArg::Shunt)]
    pub first: FirstArg,
    /// Operating frequency whose harmonics are reported (default: the cutoff).
    #[arg(long)]
    pub fundamental: Option<String>,
    /// Power into the load at the fundamental (e.g. 25W): adds element voltages and currents.
    #[arg(long)]
    pub power: Option<String>,
    /// Number of harmonics to report.
    #[arg(long, default_value_t = 5)]
    pub harmonics: u32,
    /// Skip the check by AC analysis.
    #[arg(long)]
    pub no_verify: bool,
    /// Fragment names.
    #[command(flatten)]
    pub naming: NamingArgs,
}

/// `design choke`.
#[derive(Args, Debug)]
pub struct ChokeArgs {
    /// Operating frequency (e.g. 7MHz).
    #[arg(long)]
    pub freq: String,
    /// Resistance the feed sits across (e.g. the collector load, or 50).
    #[arg(long)]
    pub load: String,
    /// Reactance ratio: X_L >= factor R, X_C <= R / factor.
    #[arg(long, default_value = "10")]
    pub factor: String,
    /// Assumed choke self-capacitance for the resonance estimate.
    #[arg(long = "self-capacitance", default_value = "2pF")]
    pub self_capacitance: String,
}

/// Parse a command-line value for a slot: number, optional SI prefix, optional
/// unit that must fit the slot (stage-file rules).
pub fn quantity(option: &str, text: &str, slot: Slot) -> Result<f64, String> {
    let s = text.trim();
    let b = s.as_bytes();
    let mut end = 0;
    if end < b.len() && (b[end] == b'+' || b[end] == b'-') {
        end += 1;
    }
    let start = end;
    while end < b.len() && (b[end].is_ascii_digit() || b[end] == b'.') {
        end += 1;
    }
    if end == start {
        return Err(format!("{option}: '{s}' does not start with a number"));
    }
    if end < b.len() && (b[end] == b'e' || b[end] == b'E') {
        let mut j = end + 1;
        if j < b.len() && (b[j] == b'+' || b[j] == b'-') {
            j += 1;
        }
        if j < b.len() && b[j].is_ascii_digit() {
            while j < b.len() && b[j].is_ascii_digit() {
                j += 1;
            }
            end = j;
        }
    }
    let num: f64 = s[..end]
        .parse()
        .map_err(|_| format!("{option}: '{}' is not a number", &s[..end]))?;
    let (exp, unit) = split_suffix(s[end..].trim()).map_err(|e| format!("{option}: {e}"))?;
    if let Some(u) = unit {
        if !slot.accepts(u) {
            return Err(format!(
                "{option} needs {}, got {}",
                slot.describe(),
                u.symbol()
            ));
        }
    }
    let v = to_si(num * 10f64.powi(exp), unit);
    if v.is_finite() {
        Ok(v)
    } else {
        Err(format!("{option}: '{s}' is out of range"))
    }
}

fn naming(n: &NamingArgs, default_prefix: &str) -> design::Naming {
    design::Naming {
        prefix: n
            .prefix
            .clone()
            .unwrap_or_else(|| default_prefix.to_string()),
        input: n.input.clone(),
        output: n.output.clone(),
    }
}

/// Run `tankwave design ...` and return the exit code.
pub fn run(args: DesignArgs) -> i32 {
    let out = match &args.what {
        DesignCommand::Loadline(a) => loadline(a, args.format),
        DesignCommand::Match(a) => matching(a, args.format),
        DesignCommand::Lowpass(a) => lowpass(a, args.format),
        DesignCommand::Choke(a) => choke(a, args.format),
    };
    match out {
        Ok(text) => {
            print!("{text}");
            OK
        }
        Err(Fail::Input(m)) => {
            eprintln!("error: {m}");
            BAD_INPUT
        }
        Err(Fail::Verify(m, text)) => {
            print!("{text}");
            eprintln!("error: {m}");
            SOLVER
        }
    }
}

enum Fail {
    Input(String),
    /// Message, and the output to print anyway.
    Verify(String, String),
}

impl From<String> for Fail {
    fn from(s: String) -> Self {
        Fail::Input(s)
    }
}

impl From<design::DesignError> for Fail {
    fn from(e: design::DesignError) -> Self {
        match e {
            design::DesignError::Solver(m) => Fail::Verify(m, String::new()),
            other => Fail::Input(other.to_string()),
        }
    }
}

fn json(v: serde_json::Value) -> Result<String, Fail> {
    serde_json::to_string_pretty(&v)
        .map(|s| s + "\n")
        .map_err(|e| Fail::Input(format!("cannot write JSON: {e}")))
}

/// Two-column table of (label, value) rows.
fn kv(rows: &[(&str, String)]) -> String {
    let w = rows.iter().map(|r| r.0.chars().count()).max().unwrap_or(0);
    let mut s = String::new();
    for (k, v) in rows {
        s.push_str(&format!("  {k:<w$}  {v}\n"));
    }
    s
}

fn si(v: f64, unit: &str) -> String {
    design::format_si(v, unit, 5)
}

fn loadline(a: &LoadlineArgs, format: Format) -> Result<String, Fail> {
    let supply = quantity("--supply", &a.supply, Slot::Voltage)?;
    let power = quantity("--power", &a.power, Slot::Power)?;
    let vsat = quantity("--vsat", &a.vsat, Slot::Voltage)?;
    let conduction = quantity("--conduction", &a.conduction, Slot::Angle)?;
    let ll = design::load_line(
        supply,
        power,
        vsat,
        &design::LoadLineParams {
            conduction_deg: conduction,
        },
    )?;
    if format == Format::Json {
        return json(to_json!(&ll)?);
    }
    let mut s = String::from("Load line\n");
    s.push_str(&kv(&[
        ("supply Vcc", si(ll.supply_v, "V")),
        ("output power Po", si(ll.power_w, "W")),
        ("saturation Vsat", si(ll.vsat_v, "V")),
        ("swing Vm = Vcc - Vsat", si(ll.swing_v, "V")),
        ("load-line resistance R", si(ll.resistance_ohm, "Ohm")),
        ("peak collector voltage", si(ll.vce_peak_v, "V")),
        ("conduction angle", format!("{} deg", ll.conduction_deg)),
        (
            "pulse coefficients a0, a1",
            format!("{:.6}, {:.6}", ll.alpha0, ll.alpha1),
        ),
        ("fundamental current (peak)", si(ll.ic_fundamental_a, "A")),
        ("peak collector current", si(ll.ic_peak_a, "A")),
        ("DC collector current", si(ll.ic_dc_a, "A")),
        ("DC input power", si(ll.dc_power_w, "W")),
        (
            "ideal collector efficiency",
            format!("{:.1} %", 100.0 * ll.efficiency),
        ),
    ]));
    s.push_str("Sources\n");
    for src in &ll.sources {
        s.push_str(&format!("  - {src}\n"));
    }
    Ok(s)
}

fn network_table(net: &design::Network, reactances: Option<&[f64]>) -> String {
    let mut s = String::new();
    s.push_str(&format!(
        "  {:<10} {:<9} {:<7} {:<10} {:<10} {:>12}\n",
        "element", "part", "place", "from", "to", "value"
    ));
    for (i, e) in net.elements.iter().enumerate() {
        let (part, unit) = match e.part {
            design::Part::Inductor => ("inductor", "H"),
            design::Part::Capacitor => ("capacitor", "F"),
        };
        let place = match e.placement {
            design::Placement::Series => "series",
            design::Placement::Shunt => "shunt",
        };
        let x = reactances
            .and_then(|r| r.get(i))
            .map(|x| format!("   X = {x:+.4} ohm"))
            .unwrap_or_default();
        s.push_str(&format!(
            "  {:<10} {:<9} {:<7} {:<10} {:<10} {:>12}{x}\n",
            e.name,
            part,
            place,
            e.node_a,
            e.node_b,
            si(e.value, unit)
        ));
    }
    s
}

fn stress_table(stress: &[design::ElementStress], power: Option<f64>, freq: f64) -> String {
    let Some(p) = power else {
        return String::new();
    };
    let mut s = format!(
        "Element stress at {} into the load, {} (fundamental only; rate parts with margin)\n  {:<10} {:>12} {:>12} {:>12}\n",
        si(p, "W"),
        si(freq, "Hz"),
        "element",
        "V peak",
        "I rms",
        "reactive"
    );
    for e in stress {
        s.push_str(&format!(
            "  {:<10} {:>12} {:>12} {:>12}\n",
            e.name,
            si(e.v_peak, "V"),
            si(e.i_rms, "A"),
            format!("{:.1} var", e.reactive_power_var)
        ));
    }
    s
}

fn verification_table(v: &design::Verification) -> String {
    let mut s = format!(
        "Verification by tankwave AC analysis: {}\n",
        if v.passed { "PASS" } else { "FAIL" }
    );
    s.push_str(&format!(
        "  Zin at f0: {:.6} {:+.6}j ohm (expected {:.6} {:+.6}j; error {:.2e}, limit {:.1e})\n",
        v.zin_measured.re,
        v.zin_measured.im,
        v.zin_expected.re,
        v.zin_expected.im,
        v.zin_error,
        v.params.zin_tolerance
    ));
    s.push_str(&format!(
        "  {:>8} {:>12} {:>14} {:>14} {:>10}\n",
        "harmonic", "freq", "predicted dB", "measured dB", "diff dB"
    ));
    for p in &v.points {
        s.push_str(&format!(
            "  {:>8} {:>12} {:>14.4} {:>14.4} {:>10.2e}\n",
            p.harmonic,
            si(p.freq, "Hz"),
            p.predicted_db,
            p.measured_db,
            p.diff_db
        ));
    }
    s
}

fn finish(
    d: serde_json::Value,
    v: Option<design::Verification>,
    format: Format,
    table: String,
) -> Result<String, Fail> {
    let text = if format == Format::Json {
        let ver = match &v {
            Some(v) => to_json!(v)?,
            None => serde_json::Value::Null,
        };
        json(serde_json::json!({ "design": d, "verification": ver }))?
    } else {
        let mut t = table;
        if let Some(v) = &v {
            t.push_str(&verification_table(v));
        }
        t
    };
    match &v {
        Some(v) if !v.passed => Err(Fail::Verify(
            "the AC analysis disagrees with the design beyond the acceptance limits".into(),
            text,
        )),
        _ => Ok(text),
    }
}

fn matching(a: &MatchArgs, format: Format) -> Result<String, Fail> {
    let r1 = quantity("--from", &a.from, Slot::Resistance)?;
    let r2 = quantity("--to", &a.to, Slot::Resistance)?;
    let f0 = quantity("--freq", &a.freq, Slot::Frequency)?;
    let q = match &a.q {
        Some(t) => Some(quantity("--q", t, Slot::Number)?),
        None => None,
    };
    let shape = match (a.shape, q) {
        (ShapeArg::L, None) => design::MatchShape::L,
        (ShapeArg::L, Some(_)) => {
            return Err(Fail::Input(
                "--q does not apply to the L shape: its Q is fixed by the resistance ratio".into(),
            ))
        }
        (ShapeArg::Pi, Some(q)) => design::MatchShape::Pi { q },
        (ShapeArg::T, Some(q)) => design::MatchShape::T { q },
        (_, None) => {
            return Err(Fail::Input(
                "--q (loaded Q) is needed for the pi and t shapes".into(),
            ))
        }
    };
    let absorb = match &a.absorb_cout {
        Some(t) => Some(quantity("--absorb-cout", t, Slot::Capacitance)?),
        None => None,
    };
    let power = match &a.power {
        Some(t) => Some(quantity("--power", t, Slot::Power)?),
        None => None,
    };
    let params = design::MatchParams {
        absorb_cout: absorb,
        power,
        naming: naming(&a.naming, "m"),
        harmonics: a.harmonics,
    };
    let d = design::design_match(r1, r2, f0, shape, &params)?;
    let v = if a.no_verify {
        None
    } else {
        Some(design::verify_match(
            &d,
            &design::VerifyParams {
                harmonics: a.harmonics,
                ..design::VerifyParams::default()
            },
        )?)
    };
    let mut s = format!(
        "{} match: {} -> {} at {}\n",
        d.shape,
        si(d.r_from, "Ohm"),
        si(d.r_to, "Ohm"),
        si(d.freq, "Hz")
    );
    let qs: Vec<String> = d.section_q.iter().map(|q| format!("{q:.4}")).collect();
    let mut rows = vec![
        ("loaded Q", format!("{:.4}", d.q)),
        ("Q convention", d.q_convention.clone()),
        ("section Qs (source side first)", qs.join(", ")),
    ];
    if let Some(rv) = d.r_virtual {
        rows.push(("virtual resistance Rv", si(rv, "Ohm")));
    }
    if let Some(ab) = d.absorbed {
        rows.push((
            "absorbed output capacitance",
            format!(
                "{} of {} (fit {} externally)",
                si(ab.cout_f, "F"),
                si(ab.required_f, "F"),
                si(ab.external_f, "F")
            ),
        ));
    }
    rows.push((
        "Zin at f0 (chain matrix)",
        format!(
            "{:.6} {:+.6}j ohm",
            d.input_impedance.re, d.input_impedance.im
        ),
    ));
    s.push_str(&kv(&rows));
    s.push_str("Elements (source side first)\n");
    s.push_str(&network_table(&d.network, Some(&d.reactances_ohm)));
    s.push_str(&stress_table(&d.stress, power, d.freq));
    s.push_str("Transducer gain R1 -> R2 (chain matrix)\n");
    for h in &d.harmonics {
        s.push_str(&format!(
            "  harmonic {:>2}  {:>12}  {:>10.3} dB\n",
            h.harmonic,
            si(h.freq, "Hz"),
            h.gain_db
        ));
    }
    s.push_str("Stage-file fragment\n");
    s.push_str(&d.fragment);
    s.push_str("Sources\n");
    for src in &d.sources {
        s.push_str(&format!("  - {src}\n"));
    }
    finish(to_json!(&d)?, v, format, s)
}

fn lowpass(a: &LowpassArgs, format: Format) -> Result<String, Fail> {
    let kind = match (a.kind, &a.ripple) {
        (KindArg::Butterworth, None) => design::FilterKind::Butterworth,
        (KindArg::Butterworth, Some(_)) => {
            return Err(Fail::Input(
                "--ripple applies to the chebyshev kind only".into(),
            ))
        }
        (KindArg::Chebyshev, Some(r)) => design::FilterKind::Chebyshev {
            ripple_db: quantity("--ripple", r, Slot::Db)?,
        },
        (KindArg::Chebyshev, None) => {
            return Err(Fail::Input(
                "--ripple (e.g. 0.1dB) is needed for the chebyshev kind".into(),
            ))
        }
    };
    let cutoff = quantity("--cutoff", &a.cutoff, Slot::Frequency)?;
    let r0 = quantity("--impedance", &a.impedance, Slot::Resistance)?;
    let fundamental = match &a.fundamental {
        Some(t) => Some(quantity("--fundamental", t, Slot::Frequency)?),
        None => None,
    };
    let params = design::LowpassParams {
        first: match a.first {
            FirstArg::Shunt => design::FirstElement::Shunt,
            FirstArg::Series => design::FirstElement::Series,
        },
        fundamental,
        harmonics: a.harmonics,
        power: match &a.power {
            Some(t) => Some(quantity("--power", t, Slot::Power)?),
            None => None,
        },
        naming: naming(&a.naming, "f"),
    };
    let d = design::design_lowpass(kind, a.order, cutoff, r0, &params)?;
    let v = if a.no_verify {
        None
    } else {
        Some(design::verify_lowpass(
            &d,
            &design::VerifyParams {
                harmonics: a.harmonics,
                ..design::VerifyParams::default()
            },
        )?)
    };
    let kind_text = match d.kind {
        design::FilterKind::Butterworth => "Butterworth".to_string(),
        design::FilterKind::Chebyshev { ripple_db } => {
            format!("Chebyshev, {ripple_db} dB ripple")
        }
    };
    let mut s = format!(
        "{kind_text} low-pass, order {}, cutoff {}\n",
        d.order,
        si(d.cutoff, "Hz")
    );
    let g: Vec<String> = d.prototype.g.iter().map(|g| format!("{g:.6}")).collect();
    s.push_str(&kv(&[
        ("prototype g1..gn", g.join(" ")),
        ("g(n+1)", format!("{:.6}", d.prototype.g_load)),
        ("source resistance", si(d.impedance, "Ohm")),
        ("load resistance", si(d.load_resistance, "Ohm")),
    ]));
    if (d.load_resistance - d.impedance).abs() > 1e-9 * d.impedance {
        s.push_str("  note: an even-order Chebyshev ladder needs the unequal load above\n");
    }
    s.push_str("Elements (source side first)\n");
    s.push_str(&network_table(&d.network, None));
    s.push_str(&stress_table(&d.stress, params.power, d.fundamental));
    s.push_str(&format!(
        "Attenuation at harmonics of {}\n  {:>8} {:>12} {:>8} {:>12} {:>12}\n",
        si(d.fundamental, "Hz"),
        "harmonic",
        "freq",
        "f/fc",
        "formula dB",
        "ladder dB"
    ));
    for h in &d.attenuation {
        s.push_str(&format!(
            "  {:>8} {:>12} {:>8.4} {:>12.4} {:>12.4}\n",
            h.harmonic,
            si(h.freq, "Hz"),
            h.omega,
            h.formula_db,
            h.network_db
        ));
    }
    s.push_str("Stage-file fragment\n");
    s.push_str(&d.fragment);
    s.push_str("Sources\n");
    for src in &d.sources {
        s.push_str(&format!("  - {src}\n"));
    }
    finish(to_json!(&d)?, v, format, s)
}

fn choke(a: &ChokeArgs, format: Format) -> Result<String, Fail> {
    let f = quantity("--freq", &a.freq, Slot::Frequency)?;
    let r = quantity("--load", &a.load, Slot::Resistance)?;
    let factor = quantity("--factor", &a.factor, Slot::Number)?;
    let cself = quantity("--self-capacitance", &a.self_capacitance, Slot::Capacitance)?;
    let d = design::design_choke(
        f,
        r,
        &design::ChokeParams {
            factor,
            self_capacitance: cself,
            ..design::ChokeParams::default()
        },
    )?;
    if format == Format::Json {
        return json(to_json!(&d)?);
    }
    let mut s = format!(
        "Feed choke and blocking capacitor at {} for {}\n",
        si(d.freq, "Hz"),
        si(d.load_ohm, "Ohm")
    );
    s.push_str(&kv(&[
        (
            "choke inductance (min)",
            format!(
                "{}  (X_L = {:.1} ohm)",
                si(d.inductance_min_h, "H"),
                d.choke_reactance_ohm
            ),
        ),
        (
            "blocking capacitance (min)",
            format!(
                "{}  (X_C = {:.3} ohm)",
                si(d.capacitance_min_f, "F"),
                d.blocking_reactance_ohm
            ),
        ),
        ("assumed self-capacitance", si(d.self_capacitance_f, "F")),
        (
            "SRF estimate",
            d.srf_estimate_hz
                .map(|f| si(f, "Hz"))
                .unwrap_or_else(|| "none (no self-capacitance assumed)".into()),
        ),
        (
            "X_L at f with self-C (estimate)",
            format!("{:.1} ohm", d.choke_reactance_with_self_c_ohm),
        ),
    ]));
    s.push_str("Warnings\n");
    for w in &d.warnings {
        s.push_str(&format!("  - {w}\n"));
    }
    s.push_str("Sources\n");
    for src in &d.sources {
        s.push_str(&format!("  - {src}\n"));
    }
    Ok(s)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// SI prefixes per BIPM SI Brochure, 9th ed., 2019, table 7.
    #[test]
    fn quantities_with_prefix_and_unit() {
        assert_eq!(quantity("x", "12.5V", Slot::Voltage).unwrap(), 12.5);
        assert!((quantity("x", "7.1MHz", Slot::Frequency).unwrap() - 7.1e6).abs() < 1e-6);
        assert!((quantity("x", "200pF", Slot::Capacitance).unwrap() - 200e-12).abs() < 1e-24);
        assert_eq!(quantity("x", "2.9", Slot::Resistance).unwrap(), 2.9);
        assert!((quantity("x", "0.1dB", Slot::Db).unwrap() - 0.1).abs() < 1e-15);
        assert!(quantity("x", "10nH", Slot::Capacitance).is_err());
        assert!(quantity("x", "abc", Slot::Voltage).is_err());
    }

    fn names() -> NamingArgs {
        NamingArgs {
            input: "in".into(),
            output: "out".into(),
            prefix: None,
        }
    }

    fn pi_args(q: Option<&str>, shape: ShapeArg) -> MatchArgs {
        MatchArgs {
            from: "2.9".into(),
            to: "50Ohm".into(),
            freq: "7.1MHz".into(),
            shape,
            q: q.map(String::from),
            absorb_cout: None,
            power: None,
            harmonics: 5,
            no_verify: false,
            naming: names(),
        }
    }

    /// The pi worked example (C. Bowick, RF Circuit Design, 2nd ed., 2008,
    /// ch. 4, from memory; check values) through the command body, as JSON.
    #[test]
    fn match_json_carries_design_and_verification() {
        let text = match matching(&pi_args(Some("10"), ShapeArg::Pi), Format::Json) {
            Ok(t) => t,
            Err(_) => panic!("the worked example must design and verify"),
        };
        let v: serde_json::Value = serde_json::from_str(&text).unwrap();
        let frag = v["design"]["fragment"].as_str().unwrap();
        assert!(frag.contains("capacitor cm1 in gnd 17.037nF"), "{frag}");
        assert!(frag.contains("inductor lm1 in out 135.43nH"), "{frag}");
        assert_eq!(v["verification"]["passed"], serde_json::Value::Bool(true));
        let g2 = v["design"]["harmonics"][1]["gain_db"].as_f64().unwrap();
        assert!((g2 - -30.554).abs() < 0.0005, "{g2}");
    }

    #[test]
    fn bad_input_is_refused_with_a_message() {
        let is_input = |r: Result<String, Fail>| matches!(r, Err(Fail::Input(_)));
        // The L's Q is fixed by the ratio; pi and t need one; Q below the L's Q.
        assert!(is_input(matching(
            &pi_args(Some("10"), ShapeArg::L),
            Format::Table
        )));
        assert!(is_input(matching(
            &pi_args(None, ShapeArg::T),
            Format::Table
        )));
        assert!(is_input(matching(
            &pi_args(Some("3"), ShapeArg::Pi),
            Format::Table
        )));
        let ll = LoadlineArgs {
            supply: "12V".into(),
            power: "10W".into(),
            vsat: "13V".into(),
            conduction: "180deg".into(),
        };
        assert!(is_input(loadline(&ll, Format::Table)));
        let lp = LowpassArgs {
            kind: KindArg::Chebyshev,
            order: 5,
            ripple: None,
            cutoff: "30MHz".into(),
            impedance: "50".into(),
            first: FirstArg::Shunt,
            fundamental: None,
            power: None,
            harmonics: 5,
            no_verify: true,
            naming: names(),
        };
        assert!(is_input(lowpass(&lp, Format::Table)));
    }
}
