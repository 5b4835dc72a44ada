//! The fit report for a person: per curve RMS and worst error in the
//! curve's unit and in percent, the parameters found, the stages run and
//! the parameters the curves leave open.

use crate::fit::FitResult;
use tankwave_circuit::si::si_prefixed;

/// The report as plain text.
pub fn text(name: &str, r: &FitResult) -> String {
    let mut s = format!("Fit of bipolar model '{name}'\n\nCurves (errors are model − data):\n");
    s.push_str(&format!(
        "  {:<8} {:>6}  {:>12} {:>8}  {:>12} {:>8}  {:>5}  file\n",
        "curve", "points", "RMS", "RMS %", "worst", "worst %", "line"
    ));
    for c in &r.curves {
        let unit = c.kind.measured().unit();
        s.push_str(&format!(
            "  {:<8} {:>6}  {:>12} {:>8.2}  {:>12} {:>8.2}  {:>5}  {}\n",
            c.kind.word(),
            c.points.iter().filter(|q| q.used).count(),
            si_prefixed(c.rms, unit, 3),
            c.rms_rel * 100.0,
            si_prefixed(c.worst, unit, 3),
            c.worst_rel * 100.0,
            c.worst_line,
            c.file
        ));
        if let Some(o) = c.left_out_rms_rel {
            s.push_str(&format!(
                "  {:<8} points left out of the fit: RMS {:.1} %\n",
                "",
                o * 100.0
            ));
        }
    }
    s.push_str("\nParameters fitted:\n");
    s.push_str(&format!(
        "  {:<6} {:<26} {:>14}  {:>9}\n",
        "", "stage file", "value", "std. err."
    ));
    for (n, k) in r.fitted.iter().enumerate() {
        let (b, w) = k.place();
        let se = r.std_err.get(n).copied().unwrap_or(f64::INFINITY);
        let flat = r.undetermined.iter().any(|u| u.knob == *k);
        let se = if se.is_finite() && !flat {
            format!("{:.2} %", se * 100.0)
        } else {
            "—".to_string()
        };
        let mark = if r.at_bound.contains(k) {
            "  (at a bound)"
        } else {
            ""
        };
        let open = if r.undetermined.iter().any(|u| u.knob == *k) {
            "  (not determined, see below)"
        } else {
            ""
        };
        s.push_str(&format!(
            "  {:<6} {:<26} {:>14}  {:>9}{mark}{open}\n",
            k.symbol(),
            format!("{b}.{w}"),
            si_prefixed(k.get(&r.params), k.unit(), 4),
            se
        ));
    }
    if !r.undetermined.is_empty() {
        s.push_str("\nNot determined by these curves:\n");
        for u in &r.undetermined {
            s.push_str(&format!("  {:<6} {}\n", u.knob.symbol(), u.why));
        }
    }
    s.push_str("\nStages:\n");
    for st in &r.stages {
        let names: Vec<&str> = st.knobs.iter().map(|k| k.symbol()).collect();
        s.push_str(&format!(
            "  {:<32} {:<40} {:>5} evaluations, {}\n",
            st.name,
            names.join(" "),
            st.evaluations,
            st.termination
        ));
    }
    for n in &r.notes {
        s.push_str(&format!("\nnote: {n}\n"));
    }
    s
}

/// `&`, `<`, `>` and `"` escaped for HTML text and attributes.
fn escape(s: &str) -> String {
    s.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
}

/// A self-contained HTML page: the text report, then the SVG overlay of
/// each curve (as [`crate::plot::svg`] draws it) inline.
pub fn html(name: &str, r: &FitResult, plots: &[String]) -> String {
    let mut s = String::from("<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">");
    s.push_str(&format!(
        "<title>Fit of {}</title><style>body{{font-family:sans-serif;max-width:60em;margin:2em auto}}pre{{font-size:0.85em}}</style></head><body>\n",
        escape(name)
    ));
    s.push_str(&format!("<h1>Fit of bipolar model {}</h1>\n", escape(name)));
    s.push_str(&format!("<pre>{}</pre>\n", escape(&text(name, r))));
    for (c, svg) in r.curves.iter().zip(plots) {
        s.push_str(&format!(
            "<h2>{}: {}</h2>\n{}\n",
            escape(c.kind.word()),
            escape(c.kind.title()),
            svg
        ));
    }
    s.push_str("</body></html>\n");
    s
}
