//! Curves read off a data sheet: one CSV file per curve kind, with the
//! columns, units and checks of [`CurveKind`].
//!
//! A curve file is plain CSV. Lines starting with `#` are comments; the
//! first other line names the columns, each as `name[unit]` (the unit may
//! carry an SI prefix: `ic[mA]`, `cap[pF]`, `ft[MHz]`); a ratio is written
//! without a unit (`gain`). An optional `weight` column (no unit, ≥ 0,
//! default 1) scales how much a point counts. Columns may come in any
//! order; an unknown, repeated or missing column is an error, and so is a
//! unit of the wrong kind (`ic[V]`). Every error names the file and line.

use crate::error::FitError;

/// Fewest points a curve may have (more than the parameters it sets, so the
/// residual says something about the fit).
pub const MIN_POINTS: usize = 4;

/// Most points a curve may have (bounds the work on untrusted input).
pub const MAX_POINTS: usize = 10_000;

/// Most bytes a curve file may have.
pub const MAX_BYTES: usize = 4 << 20;

/// What a column measures, and so which unit it takes.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Quantity {
    /// A current, in A.
    Current,
    /// A voltage, in V.
    Voltage,
    /// A capacitance, in F.
    Capacitance,
    /// A frequency, in Hz.
    Frequency,
    /// A power, in W.
    Power,
    /// A plain ratio (no unit).
    Ratio,
}

impl Quantity {
    /// The SI unit symbol ("" for a ratio).
    pub fn unit(self) -> &'static str {
        match self {
            Quantity::Current => "A",
            Quantity::Voltage => "V",
            Quantity::Capacitance => "F",
            Quantity::Frequency => "Hz",
            Quantity::Power => "W",
            Quantity::Ratio => "",
        }
    }

    fn what(self) -> &'static str {
        match self {
            Quantity::Current => "a current (A, mA, µA, …)",
            Quantity::Voltage => "a voltage (V, mV, kV)",
            Quantity::Capacitance => "a capacitance (F, nF, pF, …)",
            Quantity::Frequency => "a frequency (Hz, kHz, MHz, GHz)",
            Quantity::Power => "a power (W, mW, kW)",
            Quantity::Ratio => "a ratio, written without a unit",
        }
    }
}

/// The kinds of curve a data sheet gives, each read from its own file.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum CurveKind {
    /// Static forward current gain against collector current: columns
    /// `ic[A]`, `vce[V]`, `gain`.
    Gain,
    /// Base–emitter voltage against collector current: `ic[A]`, `vce[V]`, `vbe[V]`.
    BaseVoltage,
    /// Collector–base (output) capacitance against reverse voltage, emitter
    /// open: `reverse[V]`, `cap[F]`.
    OutputCap,
    /// Emitter–base (input) capacitance against reverse voltage, collector
    /// open: `reverse[V]`, `cap[F]`.
    InputCap,
    /// Transition frequency against collector current: `ic[A]`, `vce[V]`, `ft[Hz]`.
    Transition,
    /// Collector–emitter saturation voltage at a forced base current:
    /// `ic[A]`, `ib[A]`, `vce[V]`.
    Saturation,
    /// Output characteristics, collector current against collector–emitter
    /// voltage at fixed base currents: `vce[V]`, `ib[A]`, `ic[A]` (the
    /// quasi-saturation knee and the avalanche rise).
    Output,
    /// Large-signal output power and collector efficiency against input
    /// power in a test stage: `pin[W]`, `pout[W]`, `efficiency`. Not
    /// fitted: the fitted model is checked against it ([`crate::power`]).
    Power,
}

/// One column a curve kind needs: its name and what it measures.
#[derive(Debug, Clone, Copy)]
pub struct Column {
    /// Column name as written in the header.
    pub name: &'static str,
    /// What it measures.
    pub quantity: Quantity,
}

const fn col(name: &'static str, quantity: Quantity) -> Column {
    Column { name, quantity }
}

impl CurveKind {
    /// Every kind, in the order the fit uses them.
    pub const ALL: [CurveKind; 7] = [
        CurveKind::OutputCap,
        CurveKind::InputCap,
        CurveKind::Gain,
        CurveKind::BaseVoltage,
        CurveKind::Transition,
        CurveKind::Saturation,
        CurveKind::Output,
    ];

    /// Short name used in reports and plot file names.
    pub fn word(self) -> &'static str {
        match self {
            CurveKind::Gain => "gain",
            CurveKind::BaseVoltage => "vbe",
            CurveKind::OutputCap => "cap-bc",
            CurveKind::InputCap => "cap-be",
            CurveKind::Transition => "ft",
            CurveKind::Saturation => "vce-sat",
            CurveKind::Output => "ic-vce",
            CurveKind::Power => "power",
        }
    }

    /// What the curve is, for a person.
    pub fn title(self) -> &'static str {
        match self {
            CurveKind::Gain => "static current gain against collector current",
            CurveKind::BaseVoltage => "base–emitter voltage against collector current",
            CurveKind::OutputCap => "collector–base capacitance against reverse voltage",
            CurveKind::InputCap => "emitter–base capacitance against reverse voltage",
            CurveKind::Transition => "transition frequency against collector current",
            CurveKind::Saturation => "saturation voltage against collector current",
            CurveKind::Output => "collector current against collector–emitter voltage",
            CurveKind::Power => "output power and collector efficiency against input power",
        }
    }

    /// The columns: the two bias columns (the second may be absent) and the
    /// measured one.
    pub fn columns(self) -> (Column, Option<Column>, Column) {
        use Quantity::*;
        match self {
            CurveKind::Gain => (
                col("ic", Current),
                Some(col("vce", Voltage)),
                col("gain", Ratio),
            ),
            CurveKind::BaseVoltage => (
                col("ic", Current),
                Some(col("vce", Voltage)),
                col("vbe", Voltage),
            ),
            CurveKind::OutputCap | CurveKind::InputCap => {
                (col("reverse", Voltage), None, col("cap", Capacitance))
            }
            CurveKind::Transition => (
                col("ic", Current),
                Some(col("vce", Voltage)),
                col("ft", Frequency),
            ),
            CurveKind::Saturation => (
                col("ic", Current),
                Some(col("ib", Current)),
                col("vce", Voltage),
            ),
            CurveKind::Output => (
                col("vce", Voltage),
                Some(col("ib", Current)),
                col("ic", Current),
            ),
            CurveKind::Power => (
                col("pin", Power),
                Some(col("pout", Power)),
                col("efficiency", Ratio),
            ),
        }
    }

    /// The measured quantity.
    pub fn measured(self) -> Quantity {
        self.columns().2.quantity
    }

    /// The header a file of this kind needs, for messages: `ic[A],vce[V],gain`.
    pub fn header_hint(self) -> String {
        let (a, b, y) = self.columns();
        let show = |c: Column| {
            if c.quantity == Quantity::Ratio {
                c.name.to_string()
            } else {
                format!("{}[{}]", c.name, c.quantity.unit())
            }
        };
        let mut s = show(a);
        if let Some(b) = b {
            s.push(',');
            s.push_str(&show(b));
        }
        s.push(',');
        s.push_str(&show(y));
        s
    }
}

/// One point of a curve, in SI units.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Point {
    /// First bias column (ic or reverse voltage).
    pub a: f64,
    /// Second bias column (vce or ib; 0 when the kind has none).
    pub b: f64,
    /// The measured value.
    pub y: f64,
    /// Weight (≥ 0).
    pub w: f64,
    /// Line in the file.
    pub line: usize,
}

/// A curve: its kind, the file it came from and its points.
#[derive(Debug, Clone, PartialEq)]
pub struct Curve {
    /// Kind of curve.
    pub kind: CurveKind,
    /// File name as the user gave it.
    pub file: String,
    /// Points in file order.
    pub points: Vec<Point>,
}

/// SI prefixes accepted in a column unit (BIPM SI Brochure, 9th ed., 2019,
/// table 7; `u` for micro as common practice in plain text).
fn prefix_factor(p: &str) -> Option<f64> {
    Some(match p {
        "" => 1.0,
        "T" => 1e12,
        "G" => 1e9,
        "M" => 1e6,
        "k" => 1e3,
        "m" => 1e-3,
        "u" | "µ" => 1e-6,
        "n" => 1e-9,
        "p" => 1e-12,
        "f" => 1e-15,
        _ => return None,
    })
}

/// Split `name[unit]` into name and unit text.
fn split_header(h: &str) -> (String, Option<String>) {
    let h = h.trim();
    match (h.find('['), h.ends_with(']')) {
        (Some(i), true) => (
            h[..i].trim().to_ascii_lowercase(),
            Some(h[i + 1..h.len() - 1].trim().to_string()),
        ),
        _ => (h.to_ascii_lowercase(), None),
    }
}

/// The factor that turns a value in `unit` into SI for `q`, or why not.
fn unit_factor(q: Quantity, unit: Option<&str>) -> Result<f64, String> {
    match (q, unit) {
        (Quantity::Ratio, None) => Ok(1.0),
        (Quantity::Ratio, Some(u)) if u.is_empty() || u == "1" => Ok(1.0),
        (Quantity::Ratio, Some(u)) => Err(format!("has the unit '{u}' but is {}", q.what())),
        (_, None) => Err(format!(
            "has no unit; it is {}, e.g. [{}]",
            q.what(),
            q.unit()
        )),
        (_, Some(u)) => {
            let base = q.unit();
            let f = u
                .strip_suffix(base)
                .and_then(prefix_factor)
                .ok_or_else(|| format!("has the unit '{u}' but is {}", q.what()))?;
            Ok(f)
        }
    }
}

/// Parse a curve of `kind` from the text of `file`. Nothing else is read.
pub fn parse(kind: CurveKind, file: &str, text: &str) -> Result<Curve, FitError> {
    let err = |line: usize, msg: String| FitError::Input {
        file: file.to_string(),
        line,
        msg,
    };
    if text.len() > MAX_BYTES {
        return Err(err(
            1,
            format!("more than the {MAX_BYTES} byte limit of a curve file"),
        ));
    }
    let mut rdr = csv::ReaderBuilder::new()
        .has_headers(true)
        .comment(Some(b'#'))
        .flexible(true)
        .trim(csv::Trim::All)
        .from_reader(text.as_bytes());
    let headers = rdr
        .headers()
        .map_err(|e| err(e.position().map_or(1, |p| p.line() as usize), e.to_string()))?
        .clone();
    // the csv reader skips empty lines and lines starting with '#'; the
    // line of the k-th record it returns is the k-th line it does not skip
    let lines: Vec<usize> = text
        .split('\n')
        .enumerate()
        .filter(|(_, l)| !(l.is_empty() || *l == "\r" || l.starts_with('#')))
        .map(|(i, _)| i + 1)
        .collect();
    let header_line = lines.first().copied().unwrap_or(1);
    if headers.is_empty() || headers.iter().all(|h| h.is_empty()) {
        return Err(err(
            header_line,
            format!(
                "no header line; a {} file starts with `{}`",
                kind.word(),
                kind.header_hint()
            ),
        ));
    }
    let (ca, cb, cy) = kind.columns();
    let wanted: Vec<Column> = std::iter::once(ca)
        .chain(cb)
        .chain(std::iter::once(cy))
        .collect();
    // index and factor of each wanted column, then the weight column
    let mut found: Vec<Option<(usize, f64)>> = vec![None; wanted.len()];
    let mut weight: Option<usize> = None;
    for (i, h) in headers.iter().enumerate() {
        let (name, unit) = split_header(h);
        if name == "weight" {
            if weight.is_some() {
                return Err(err(
                    header_line,
                    "the column 'weight' is given twice".into(),
                ));
            }
            if let Some(u) = unit.filter(|u| !u.is_empty() && u != "1") {
                return Err(err(
                    header_line,
                    format!("the column 'weight' has the unit '{u}'; a weight has none"),
                ));
            }
            weight = Some(i);
            continue;
        }
        let Some(k) = wanted.iter().position(|c| c.name == name) else {
            return Err(err(
                header_line,
                format!(
                    "unknown column '{}' in a {} file; the columns are `{}` and optionally `weight`",
                    h.trim(),
                    kind.word(),
                    kind.header_hint()
                ),
            ));
        };
        if found[k].is_some() {
            return Err(err(
                header_line,
                format!("the column '{name}' is given twice"),
            ));
        }
        let f = unit_factor(wanted[k].quantity, unit.as_deref())
            .map_err(|m| err(header_line, format!("the column '{name}' {m}")))?;
        found[k] = Some((i, f));
    }
    let mut cols = Vec::with_capacity(wanted.len());
    for (k, c) in wanted.iter().enumerate() {
        match found[k] {
            Some(v) => cols.push(v),
            None => {
                return Err(err(
                    header_line,
                    format!(
                        "the column '{}' is missing; a {} file has the columns `{}`",
                        c.name,
                        kind.word(),
                        kind.header_hint()
                    ),
                ))
            }
        }
    }
    let mut points = Vec::new();
    for (n, rec) in rdr.records().enumerate() {
        let line = lines.get(n + 1).copied().unwrap_or(header_line);
        let rec = rec.map_err(|e| err(line, e.to_string()))?;
        if rec.iter().all(|f| f.is_empty()) {
            continue;
        }
        if points.len() >= MAX_POINTS {
            return Err(err(
                line,
                format!("more than {MAX_POINTS} points in one curve"),
            ));
        }
        let mut vals = Vec::with_capacity(cols.len());
        for (k, &(i, f)) in cols.iter().enumerate() {
            let name = wanted[k].name;
            let Some(s) = rec.get(i).filter(|s| !s.is_empty()) else {
                return Err(err(line, format!("no value in the column '{name}'")));
            };
            let v: f64 = s.parse().map_err(|_| {
                err(
                    line,
                    format!("'{s}' in the column '{name}' is not a number"),
                )
            })?;
            let v = v * f;
            if !v.is_finite() {
                return Err(err(
                    line,
                    format!("'{s}' in the column '{name}' is not a finite number"),
                ));
            }
            vals.push(v);
        }
        let w = match weight {
            None => 1.0,
            Some(i) => {
                let s = rec.get(i).unwrap_or("");
                if s.is_empty() {
                    1.0
                } else {
                    let w: f64 = s
                        .parse()
                        .map_err(|_| err(line, format!("weight '{s}' is not a number")))?;
                    if !(w.is_finite() && w >= 0.0) {
                        return Err(err(
                            line,
                            format!("weight '{s}' must be a finite number ≥ 0"),
                        ));
                    }
                    w
                }
            }
        };
        let (a, b, y) = if cb.is_some() {
            (vals[0], vals[1], vals[2])
        } else {
            (vals[0], 0.0, vals[1])
        };
        check_point(kind, a, b, y).map_err(|m| err(line, m))?;
        points.push(Point { a, b, y, w, line });
    }
    let used = points.iter().filter(|p| p.w > 0.0).count();
    if used < MIN_POINTS {
        return Err(err(
            header_line,
            format!(
                "{used} point(s) with a nonzero weight; a {} curve needs at least {MIN_POINTS}",
                kind.word()
            ),
        ));
    }
    Ok(Curve {
        kind,
        file: file.to_string(),
        points,
    })
}

/// The physical sense of one point.
fn check_point(kind: CurveKind, a: f64, b: f64, y: f64) -> Result<(), String> {
    let (ca, cb, cy) = kind.columns();
    match kind {
        CurveKind::OutputCap | CurveKind::InputCap => {
            if a < 0.0 {
                return Err(format!(
                    "reverse voltage {a} V is negative; give the magnitude of a reverse bias"
                ));
            }
        }
        _ => {
            if a <= 0.0 {
                return Err(format!("{} must be > 0 (give magnitudes)", ca.name));
            }
            if let Some(cb) = cb {
                if b <= 0.0 {
                    return Err(format!("{} must be > 0 (give magnitudes)", cb.name));
                }
            }
        }
    }
    if y <= 0.0 {
        return Err(format!("{} must be > 0 (give magnitudes)", cy.name));
    }
    if kind == CurveKind::Power && y > 1.0 {
        return Err(format!(
            "efficiency {y} is above 1; give it as a fraction (0.6 for 60 %)"
        ));
    }
    if kind == CurveKind::Saturation && b >= a {
        return Err(format!(
            "ib {b} A is not below ic {a} A; a saturation curve forces a base current well below the collector current"
        ));
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn reads_units_prefixes_comments_and_weights() {
        let t = "# a comment\nic[mA], vce[V], gain, weight\n1, 5, 40, 2\n# another\n10,5,60,\n100,5,55,1\n1000,5,30,1\n";
        let c = parse(CurveKind::Gain, "g.csv", t).unwrap();
        assert_eq!(c.points.len(), 4);
        assert!((c.points[0].a - 1e-3).abs() < 1e-18);
        assert_eq!(c.points[0].w, 2.0);
        assert_eq!(c.points[1].w, 1.0);
        assert_eq!(c.points[0].line, 3);
        assert_eq!(c.points[1].line, 5);
    }

    #[test]
    fn a_power_curve_takes_watts_and_an_efficiency_as_a_fraction() {
        let t = "pin[mW],pout[W],efficiency\n50,2,0.3\n100,8,0.5\n150,12,0.55\n200,14,0.57\n";
        let c = parse(CurveKind::Power, "p.csv", t).unwrap();
        assert!((c.points[0].a - 0.05).abs() < 1e-15);
        assert_eq!(c.points[3].y, 0.57);
        let e = parse(
            CurveKind::Power,
            "p.csv",
            "pin[W],pout[W],efficiency\n1,2,55\n",
        )
        .unwrap_err();
        assert!(e.to_string().starts_with("p.csv:2:"), "{e}");
        assert!(e.to_string().contains("as a fraction"), "{e}");
        let e = parse(CurveKind::Power, "p.csv", "pin[V],pout[W],efficiency\n").unwrap_err();
        assert!(e.to_string().contains("'pin' has the unit 'V'"), "{e}");
    }

    #[test]
    fn wrong_unit_missing_column_and_too_few_points_name_the_line() {
        let e = parse(CurveKind::Gain, "g.csv", "\nic[V],vce[V],gain\n1,2,3\n").unwrap_err();
        assert!(e.to_string().starts_with("g.csv:2:"), "{e}");
        assert!(e.to_string().contains("'ic' has the unit 'V'"), "{e}");
        let e = parse(CurveKind::OutputCap, "c.csv", "reverse[V]\n1\n").unwrap_err();
        assert!(e.to_string().contains("'cap' is missing"), "{e}");
        let e = parse(
            CurveKind::OutputCap,
            "c.csv",
            "reverse[V],cap[pF]\n1,10\n2,9\n",
        )
        .unwrap_err();
        assert!(e.to_string().contains("needs at least"), "{e}");
        let e = parse(
            CurveKind::OutputCap,
            "c.csv",
            "reverse[V],cap[pF]\n1,10\n2,x\n",
        )
        .unwrap_err();
        assert!(e.to_string().starts_with("c.csv:3:"), "{e}");
        let e = parse(
            CurveKind::Transition,
            "f.csv",
            "ic[A],vce[V],ft[MHz],colour\n",
        )
        .unwrap_err();
        assert!(e.to_string().contains("unknown column 'colour'"), "{e}");
    }
}
