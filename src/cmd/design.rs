//! `tankwave design ...`: closed-form design helpers on the command line.
//!
//! Four subcommands over the tankwave-design crate: `loadline`, `match`,
//! `lowpass` and `choke`. Values take SI prefixes and units as in stage files
//! (`12.5V`, `7.1MHz`, `200pF`, `0.1dB`); a unit that does not fit the option
//! is refused. Output is a readable table on stdout (written by
//! `tankwave_design::render`), or JSON with `--format json`. Networks are
//! checked by tankwave's own AC analysis unless `--no-verify` is given.
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
    let end = super::common::number_prefix_len(s);
    if end == 0 {
        return Err(format!("{option}: '{s}' does not start with a number"));
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

/// The fragment names from the options, with `default_prefix` for elements.
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

/// Why a design command gave no (or no clean) result: bad input (exit 2),
/// or a verification that failed or disagreed (exit 3).
enum Fail {
    /// Bad input: the message.
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

/// A JSON document as pretty text with a final newline.
fn json(v: serde_json::Value) -> Result<String, Fail> {
    serde_json::to_string_pretty(&v)
        .map(|s| s + "\n")
        .map_err(|e| Fail::Input(format!("cannot write JSON: {e}")))
}

/// `design loadline`: the load line as a table or JSON.
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
    Ok(design::loadline_text(&ll))
}

/// The output of a network design with its verification (if run): JSON
/// with both, or the design's table followed by the verification table; a
/// verification that disagrees is an error that still carries the output.
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
            t.push_str(&design::verification_text(v));
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

/// `design match`: a matching network, verified unless `--no-verify`.
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
    let s = design::match_text(&d, power);
    finish(to_json!(&d)?, v, format, s)
}

/// `design lowpass`: a low-pass ladder, verified unless `--no-verify`.
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
    let s = design::lowpass_text(&d, params.power);
    finish(to_json!(&d)?, v, format, s)
}

/// `design choke`: feed choke and blocking capacitor as a table or JSON.
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
    Ok(design::choke_text(&d))
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
