//! The self-contained HTML report of one stage: one file with inline SVG
//! figures and inline CSS, no scripts and no reference to anything outside
//! the file (no links, fonts, images or style sheets to fetch).
//!
//! The document is written as well-formed XML (every element closed, void
//! elements self-closed, only the five XML entities), so it can be checked
//! with an XML parser and still opens in any browser. All text taken from
//! the input is escaped. A plot that cannot be drawn leaves a short note in
//! its place instead of failing the report.
//!
//! Sections: title and file hash (with optional introductory paragraphs),
//! study summaries, requirement verdicts, headline figures, spectrum against
//! the mask, waveforms, transistor figures and component stress, the safety
//! caution, provenance. Study summaries come first because a study report
//! leads with them; the stage sections after them can be labelled (e.g.
//! "nominal stage") or left out.

use tankwave_circuit::{Circuit, Scale};
use tankwave_measure::{CollectorLoad, MaskEvaluation, Metrics, Verdict};
use tankwave_solve::{AcResult, PeriodicSolution, TransientResult};

use crate::format::{db, fixed, harmonic_level, harmonic_power, row_level, si};
use crate::plot::{self, PlotParams};

/// The caution printed in every HTML report.
pub const SAFETY_CAUTION: &str = "Caution: a transmitter stage works at hazardous radio-frequency \
voltages and currents. Tank and output-network capacitors carry RF voltages several times the supply \
voltage, and touching live RF conductors causes deep RF burns. Radiated fields near antennas, feed \
lines and open circuits can exceed exposure limits. Test into a shielded dummy load with the supply \
disconnected and capacitors discharged before touching anything. Transmit only where your licence \
allows, within its power and frequency limits. Local electrical and RF-exposure codes and licensed \
practice take precedence over anything in this report, which is a simulation and not a safety \
assessment.";

/// An AC sweep to plot: the result, the unknowns to show (indices into
/// `result.names`) and the sweep spacing.
#[derive(Debug, Clone, Copy)]
pub struct AcView<'a> {
    /// The sweep.
    pub result: &'a AcResult,
    /// Unknowns to plot.
    pub unknowns: &'a [usize],
    /// Spacing of the sweep (log spacing gives a log axis).
    pub scale: Scale,
}

/// A ready figure: its caption and SVG text (from the [`crate::plot`] functions).
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Figure {
    /// Caption shown under the figure.
    pub caption: String,
    /// The SVG document, as returned by a plot function.
    pub svg: String,
}

/// A plain table: header and rows of cells (text, escaped on output).
#[derive(Debug, Clone, PartialEq, Default)]
pub struct PlainTable {
    /// Column headings.
    pub header: Vec<String>,
    /// Rows of cells.
    pub rows: Vec<Vec<String>>,
}

/// The summary of one study (sweep, tolerance or Monte Carlo run), given as
/// plain text and figures so this module does not depend on the study crate.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct StudySection {
    /// Heading, e.g. "Monte Carlo, 1000 variants".
    pub title: String,
    /// Key figures as (label, value) lines, e.g. ("yield", "97.1 %").
    pub lines: Vec<(String, String)>,
    /// Statistics of the figures.
    pub table: Option<PlainTable>,
    /// Plots (histograms, sweep curves, tuning surface).
    pub figures: Vec<Figure>,
}

/// Where and how the report was made (all passed in by the caller).
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Provenance {
    /// Tool name and version, e.g. "tankwave 0.1.0".
    pub tool: String,
    /// Date and time of the run, as the caller wants it shown.
    pub date: String,
    /// Options in effect, as (name, value).
    pub options: Vec<(String, String)>,
}

/// Everything a stage report can show; absent parts are left out.
#[derive(Debug, Clone, Default)]
pub struct ReportInput<'a> {
    /// Stage title (the file's `title`, or its name).
    pub title: String,
    /// Stage file name as given.
    pub file: String,
    /// SHA-256 of the stage file bytes, hex.
    pub file_sha256: String,
    /// The elaborated circuit (needed for waveform plots).
    pub circuit: Option<&'a Circuit>,
    /// The periodic steady state.
    pub solution: Option<&'a PeriodicSolution>,
    /// Figures measured from it.
    pub metrics: Option<&'a Metrics>,
    /// The load each transistor's collector sees at the fundamental and
    /// harmonics (empty: no section).
    pub loads: &'a [CollectorLoad],
    /// Requirement verdicts.
    pub verdicts: &'a [Verdict],
    /// Emission masks evaluated against the output.
    pub masks: &'a [MaskEvaluation],
    /// A transient start-up run.
    pub transient: Option<&'a TransientResult>,
    /// An AC sweep.
    pub ac: Option<AcView<'a>>,
    /// Study summaries.
    pub studies: &'a [StudySection],
    /// Sweeps of the output load (ruggedness circles) and two-tone tests,
    /// shown after the collector load as sections of lines, a table and figures.
    pub load_sweeps: Vec<StudySection>,
    /// Paragraphs shown under the file line (e.g. what a study report holds).
    pub intro: Vec<String>,
    /// Appended to the headings of the stage sections (requirements,
    /// headline figures, spectrum, waveforms, stress), e.g. "nominal stage",
    /// when they show one stage out of a study.
    pub stage_label: Option<String>,
    /// Leave the stage sections out (a report of studies only, e.g. when
    /// the nominal stage could not be solved).
    pub omit_stage: bool,
    /// Tool, date, options.
    pub provenance: Provenance,
    /// Plot options (the file name in titles, width, conduction threshold).
    pub plot: PlotParams,
}

/// Escape text for HTML/XML content and attribute values.
pub fn escape(s: &str) -> String {
    let mut o = String::with_capacity(s.len() + 8);
    for c in s.chars() {
        match c {
            '<' => o.push_str("&lt;"),
            '>' => o.push_str("&gt;"),
            '&' => o.push_str("&amp;"),
            '"' => o.push_str("&quot;"),
            '\'' => o.push_str("&#39;"),
            c if (c as u32) < 0x20 && c != '\n' && c != '\t' => o.push(' '),
            c => o.push(c),
        }
    }
    o
}

const CSS: &str = r#"
:root { color-scheme: light; }
body { font-family: sans-serif; color: #1d1d1d; background: #ffffff; margin: 0 auto; max-width: 1000px; padding: 16px 24px 48px; line-height: 1.45; }
h1 { font-size: 1.7em; margin: 0.2em 0 0.1em; }
h2 { font-size: 1.25em; margin-top: 1.8em; border-bottom: 2px solid #14213d; padding-bottom: 2px; }
h3 { font-size: 1.05em; margin-top: 1.2em; }
p.file { margin: 0; font-size: 0.95em; }
code, .hash { font-family: monospace; font-size: 0.92em; word-break: break-all; }
table { border-collapse: collapse; margin: 0.6em 0 1em; font-size: 0.95em; }
th, td { border: 1px solid #b8b8b8; padding: 3px 9px; text-align: left; vertical-align: top; }
th { background: #ece8db; }
td.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
td.pass { font-weight: bold; }
td.fail { font-weight: bold; background: #f3d9c6; }
tr.sub td { font-size: 0.9em; color: #333333; }
.summary { font-size: 1.1em; font-weight: bold; padding: 6px 10px; border: 2px solid #14213d; display: inline-block; }
.summary.fail { background: #f3d9c6; }
figure { margin: 1em 0; }
figure svg { max-width: 100%; height: auto; border: 1px solid #dddddd; }
figcaption { font-size: 0.9em; color: #333333; }
.caution { border: 3px solid #b55a1c; padding: 8px 14px; background: #fbf3ea; }
.note { font-style: italic; }
dl.kv { display: grid; grid-template-columns: max-content auto; gap: 2px 14px; }
dl.kv dt { font-weight: bold; }
dl.kv dd { margin: 0; }
@media print {
  body { max-width: none; padding: 0; font-size: 10.5pt; }
  h2 { page-break-after: avoid; break-after: avoid; }
  figure, table, .caution { page-break-inside: avoid; break-inside: avoid; }
  figure svg { border: none; }
  td.fail, .summary.fail, th, .caution { -webkit-print-color-adjust: exact; print-color-adjust: exact; }
  @page { margin: 15mm; }
}
"#;

/// An SVG from a plot function, made ready for inline use (the namespace
/// declaration is implied inside HTML and dropped so the report holds no URL).
fn inline_svg(svg: &str) -> String {
    svg.replacen(" xmlns=\"http://www.w3.org/2000/svg\"", "", 1)
}

fn figure(out: &mut String, caption: &str, svg: Result<String, plot::PlotError>) {
    match svg {
        Ok(s) => {
            out.push_str("<figure>\n");
            out.push_str(&inline_svg(&s));
            out.push_str(&format!(
                "<figcaption>{}</figcaption>\n</figure>\n",
                escape(caption)
            ));
        }
        Err(e) => out.push_str(&format!(
            "<p class=\"note\">{}: not drawn ({})</p>\n",
            escape(caption),
            escape(&e.to_string())
        )),
    }
}

fn table_open(out: &mut String, header: &[&str]) {
    out.push_str("<table>\n<thead><tr>");
    for h in header {
        out.push_str(&format!("<th>{}</th>", escape(h)));
    }
    out.push_str("</tr></thead>\n<tbody>\n");
}

fn row(out: &mut String, cells: &[(&str, String)]) {
    out.push_str("<tr>");
    for (class, text) in cells {
        if class.is_empty() {
            out.push_str(&format!("<td>{}</td>", escape(text)));
        } else {
            out.push_str(&format!("<td class=\"{class}\">{}</td>", escape(text)));
        }
    }
    out.push_str("</tr>\n");
}

fn table_close(out: &mut String) {
    out.push_str("</tbody>\n</table>\n");
}

/// A section heading, with the stage label appended when there is one.
fn h2(out: &mut String, id: &str, text: &str, label: Option<&str>) {
    let text = match label {
        Some(l) if !l.is_empty() => format!("{text} — {l}"),
        _ => text.to_string(),
    };
    out.push_str(&format!("<h2 id=\"{id}\">{}</h2>\n", escape(&text)));
}

fn verdicts_section(out: &mut String, verdicts: &[Verdict], label: Option<&str>) {
    h2(out, "verdicts", "Requirements", label);
    if verdicts.is_empty() {
        out.push_str("<p>The stage file states no requirements.</p>\n");
        return;
    }
    let failed = verdicts.iter().filter(|v| !v.pass).count();
    out.push_str(&format!(
        "<p class=\"summary{}\">{}</p>\n",
        if failed > 0 { " fail" } else { "" },
        escape(&if failed == 0 {
            format!("All {} requirements pass.", verdicts.len())
        } else {
            format!("{failed} of {} requirements FAIL.", verdicts.len())
        })
    ));
    table_open(
        out,
        &["requirement", "line", "limit", "value", "margin", "verdict"],
    );
    for v in verdicts {
        let value = match (&v.not_measured, crate::stage::located_at(v)) {
            (Some(why), _) => format!("not measured: {why}"),
            (None, Some(at)) => format!("{} (at {at})", crate::format::value_text(v)),
            (None, None) => crate::format::value_text(v),
        };
        row(
            out,
            &[
                ("", v.requirement.clone()),
                (
                    "num",
                    if v.line > 0 {
                        v.line.to_string()
                    } else {
                        String::new()
                    },
                ),
                ("num", crate::format::limit_text(v)),
                ("num", value),
                ("num", crate::format::margin_text(v)),
                (
                    if v.pass { "pass" } else { "fail" },
                    if v.pass { "PASS".into() } else { "FAIL".into() },
                ),
            ],
        );
    }
    table_close(out);
    // the per-harmonic rows of mask requirements, folded (open when one fails)
    for v in verdicts.iter().filter(|v| !v.harmonics.is_empty()) {
        let failing = v.harmonics.iter().filter(|h| !h.pass).count();
        out.push_str(&format!(
            "<details class=\"harmonics\"{}><summary>{}: {} harmonics, {}</summary>\n",
            if failing > 0 { " open=\"open\"" } else { "" },
            escape(&v.requirement),
            v.harmonics.len(),
            if failing > 0 {
                format!("{failing} FAIL")
            } else {
                "every one within its limit".to_string()
            }
        ));
        table_open(out, &["harmonic", "limit", "value", "margin", "verdict"]);
        for h in &v.harmonics {
            out.push_str("<tr>");
            let cells = [
                ("", format!("harmonic {} ({})", h.n, si(h.freq_hz, "Hz"))),
                (
                    "num",
                    h.allowed_dbc
                        .map(|a| db(a, "dBc"))
                        .unwrap_or_else(|| "no limit".into()),
                ),
                ("num", row_level(h)),
                (
                    "num",
                    h.margin_db
                        .map(|m| format!("{m:+.1} dB"))
                        .unwrap_or_default(),
                ),
                (
                    if h.pass { "" } else { "fail" },
                    match (h.pass, h.resolved) {
                        (true, _) => "ok".into(),
                        (false, true) => "FAIL".into(),
                        (false, false) => "FAIL: not resolved".into(),
                    },
                ),
            ];
            for (class, text) in cells {
                if class.is_empty() {
                    out.push_str(&format!("<td>{}</td>", escape(&text)));
                } else {
                    out.push_str(&format!("<td class=\"{class}\">{}</td>", escape(&text)));
                }
            }
            out.push_str("</tr>\n");
        }
        table_close(out);
        out.push_str("</details>\n");
    }
}

fn headline_section(
    out: &mut String,
    m: &Metrics,
    sol: Option<&PeriodicSolution>,
    label: Option<&str>,
) {
    h2(out, "figures", "Headline figures", label);
    if let Some(s) = sol {
        out.push_str(&format!(
            "<p>Periodic steady state at {}: {} harmonics, {} samples per period, {} iterations, relative residual {:.1e} (tolerance {:.0e}).</p>\n",
            escape(&si(s.freq, "Hz")),
            s.harmonics,
            s.samples_per_period,
            s.info.iterations,
            s.info.residual,
            s.info.tolerance
        ));
    }
    table_open(out, &["figure", "value"]);
    for (figure, value) in crate::stage::headline_rows(m) {
        row(out, &[("", figure), ("num", value)]);
    }
    table_close(out);
    if let Some(o) = &m.output {
        out.push_str(&format!("<h3>Harmonics at {}</h3>\n", escape(&o.element)));
        table_open(out, &["n", "frequency", "power", "level"]);
        for h in &o.harmonics {
            row(
                out,
                &[
                    ("num", h.n.to_string()),
                    ("num", si(h.freq_hz, "Hz")),
                    ("num", harmonic_power(h)),
                    ("num", harmonic_level(h, o.floor_dbc)),
                ],
            );
        }
        table_close(out);
    }
}

fn stress_section(out: &mut String, m: &Metrics, label: Option<&str>) {
    if m.transistors.is_empty() && m.stress.is_empty() && m.notes.is_empty() {
        return;
    }
    h2(out, "stress", "Transistors and component stress", label);
    if !m.transistors.is_empty() {
        table_open(
            out,
            &[
                "transistor",
                "conduction",
                "pulses",
                "vce peak",
                "vce min",
                "ic peak",
                "dissipation",
                "junction",
            ],
        );
        for q in &m.transistors {
            row(
                out,
                &[
                    ("", q.element.clone()),
                    ("num", fixed(q.conduction_deg, 0, "deg")),
                    ("num", crate::stage::pulses_cell(q)),
                    ("num", si(q.vce_peak_v, "V")),
                    ("num", si(q.vce_min_v, "V")),
                    ("num", si(q.ic_peak_a, "A")),
                    ("num", si(q.dissipation_w, "W")),
                    (
                        "num",
                        q.tj_k
                            .map(|k| fixed(k - 273.15, 0, "degC"))
                            .unwrap_or_else(|| "no thermal resistance".into()),
                    ),
                ],
            );
        }
        table_close(out);
    }
    if !m.stress.is_empty() {
        table_open(out, &["element", "quantity", "value", "rating", "used"]);
        for r in &m.stress {
            let c = crate::stage::stress_cells(r);
            let over = r.fraction.is_some_and(|f| f > 1.0);
            row(
                out,
                &[
                    ("", r.element.clone()),
                    ("", c.quantity.to_string()),
                    ("num", c.value),
                    ("num", c.rating.unwrap_or_else(|| "not rated".into())),
                    (
                        if over { "fail" } else { "num" },
                        c.used.unwrap_or_default(),
                    ),
                ],
            );
        }
        table_close(out);
        for r in &m.stress {
            if let Some(b) = &r.basis {
                out.push_str(&format!(
                    "<p class=\"note\">{} peak vce rating: {}</p>\n",
                    escape(&r.element),
                    escape(&crate::stage::vce_basis_text(b))
                ));
            }
        }
    }
    for n in &m.notes {
        out.push_str(&format!(
            "<p class=\"note\">{} not measured: {}</p>\n",
            escape(&n.figure),
            escape(&n.reason)
        ));
    }
}

fn loads_section(out: &mut String, loads: &[CollectorLoad], label: Option<&str>) {
    if loads.is_empty() {
        return;
    }
    h2(out, "collector-load", "Load seen by the collector", label);
    out.push_str(
        "<p>Z = −V<sub>ce,n</sub> / I<sub>c,n</sub> at each harmonic: the impedance of the \
         network outside the transistor, seen from its collector (docs/measurements.md).</p>\n",
    );
    table_open(out, &crate::loads::HEADER);
    for r in crate::loads::rows(loads) {
        let cells: Vec<(&str, String)> = r
            .into_iter()
            .enumerate()
            .map(|(k, c)| (if k == 0 { "" } else { "num" }, c))
            .collect();
        row(out, &cells);
    }
    table_close(out);
}

/// A study section (or a sweep of the output load): its title, key lines,
/// table and figures.
fn section(out: &mut String, s: &StudySection) {
    out.push_str(&format!("<h3>{}</h3>\n", escape(&s.title)));
    if !s.lines.is_empty() {
        out.push_str("<dl class=\"kv\">\n");
        for (k, v) in &s.lines {
            out.push_str(&format!("<dt>{}</dt><dd>{}</dd>\n", escape(k), escape(v)));
        }
        out.push_str("</dl>\n");
    }
    if let Some(t) = &s.table {
        let header: Vec<&str> = t.header.iter().map(|h| h.as_str()).collect();
        table_open(out, &header);
        for r in &t.rows {
            let cells: Vec<(&str, String)> = r.iter().map(|c| ("", c.clone())).collect();
            row(out, &cells);
        }
        table_close(out);
    }
    for f in &s.figures {
        figure(out, &f.caption, Ok(f.svg.clone()));
    }
}

/// The whole report as one HTML document.
pub fn stage_report(input: &ReportInput<'_>) -> String {
    let mut out = String::with_capacity(64 * 1024);
    let title = if input.title.is_empty() {
        input.file.clone()
    } else {
        input.title.clone()
    };
    let mut plot_params = input.plot.clone();
    if plot_params.source.is_empty() {
        plot_params.source = input.file.clone();
    }
    out.push_str("<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\"/>\n");
    out.push_str("<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\"/>\n");
    let kind = if input.studies.is_empty() {
        "stage report"
    } else {
        "study report"
    };
    out.push_str(&format!("<title>{} — {kind}</title>\n", escape(&title)));
    out.push_str("<style>");
    out.push_str(CSS);
    out.push_str("</style>\n</head>\n<body>\n");

    out.push_str(&format!("<h1>{}</h1>\n", escape(&title)));
    out.push_str(&format!(
        "<p class=\"file\">Stage file <code>{}</code>, SHA-256 <span class=\"hash\">{}</span></p>\n",
        escape(&input.file),
        escape(if input.file_sha256.is_empty() { "not given" } else { &input.file_sha256 })
    ));

    for para in &input.intro {
        out.push_str(&format!("<p>{}</p>\n", escape(para)));
    }

    if !input.studies.is_empty() {
        out.push_str("<h2 id=\"studies\">Studies</h2>\n");
        for s in input.studies {
            section(&mut out, s);
        }
    }

    if !input.omit_stage {
        let label = input.stage_label.as_deref();
        verdicts_section(&mut out, input.verdicts, label);

        if let Some(m) = input.metrics {
            // the verdict, then the spectrum, then the figures behind them
            if let Some(o) = &m.output {
                h2(&mut out, "spectrum", "Spectrum against the mask", label);
                if input.masks.is_empty() {
                    figure(
                        &mut out,
                        "Output harmonics in dBc (no mask checked).",
                        plot::spectrum_plot(&o.harmonics, None, &plot_params),
                    );
                }
                for mask in input.masks {
                    figure(
                        &mut out,
                        &format!("Output harmonics in dBc against mask {}.", mask.mask),
                        plot::spectrum_plot(&o.harmonics, Some(mask), &plot_params),
                    );
                }
            }
            headline_section(&mut out, m, input.solution, label);
        }

        let have_waves = (input.circuit.is_some() && input.solution.is_some())
            || input.transient.is_some()
            || input.ac.is_some();
        if have_waves {
            h2(&mut out, "waveforms", "Waveforms", label);
        }
        if let (Some(c), Some(s)) = (input.circuit, input.solution) {
            match plot::period_plots(c, s, &plot_params) {
                Ok(list) => {
                    if list.is_empty() && input.transient.is_none() && input.ac.is_none() {
                        out.push_str(
                            "<p class=\"note\">The stage has no bipolar transistor, so there is no period plot.</p>\n",
                        );
                    }
                    for (name, svg) in list {
                        figure(
                            &mut out,
                            &format!(
                                "One steady-state period of {name}; shaded: conduction as counted by the conduction angle."
                            ),
                            Ok(svg),
                        );
                    }
                }
                Err(e) => figure(&mut out, "Steady-state period", Err(e)),
            }
        }
        if let (Some(c), Some(t)) = (input.circuit, input.transient) {
            let f = input
                .solution
                .map(|s| s.freq)
                .or(input.metrics.map(|m| m.freq_hz))
                .unwrap_or(0.0);
            let caption = match plot::startup_settling(c, t, f) {
                Some(ts) => format!(
                    "Start-up transient of the output voltage with its per-period peak \
                     envelope. Settling time: the output reaches 90 % of its final amplitude \
                     at {}.",
                    si(ts, "s")
                ),
                None => "Start-up transient of the output voltage with its per-period peak \
                         envelope (no settling time: no complete period with a swing)."
                    .to_string(),
            };
            figure(
                &mut out,
                &caption,
                plot::startup_plot(c, t, f, &plot_params),
            );
        }
        if let Some(a) = input.ac {
            figure(
                &mut out,
                "AC magnitude and phase.",
                plot::ac_plot(a.result, a.unknowns, a.scale, &plot_params),
            );
        }

        if let Some(m) = input.metrics {
            stress_section(&mut out, m, label);
        }
        loads_section(&mut out, input.loads, label);
        if !input.load_sweeps.is_empty() {
            h2(&mut out, "load-sweeps", "Sweeps of the output load", label);
            for s in &input.load_sweeps {
                section(&mut out, s);
            }
        }
    }

    out.push_str("<h2 id=\"safety\">Safety</h2>\n");
    out.push_str(&format!(
        "<p class=\"caution\">{}</p>\n",
        escape(SAFETY_CAUTION)
    ));

    out.push_str("<h2 id=\"provenance\">Provenance</h2>\n<dl class=\"kv\">\n");
    let p = &input.provenance;
    let kv = |out: &mut String, k: &str, v: &str| {
        out.push_str(&format!("<dt>{}</dt><dd>{}</dd>\n", escape(k), escape(v)));
    };
    kv(
        &mut out,
        "tool",
        if p.tool.is_empty() {
            "not given"
        } else {
            &p.tool
        },
    );
    kv(
        &mut out,
        "date",
        if p.date.is_empty() {
            "not given"
        } else {
            &p.date
        },
    );
    kv(&mut out, "stage file", &input.file);
    kv(&mut out, "SHA-256", &input.file_sha256);
    for (k, v) in &p.options {
        kv(&mut out, &format!("option {k}"), v);
    }
    out.push_str("</dl>\n</body>\n</html>\n");
    out
}
