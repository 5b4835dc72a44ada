//! The verdicts of several stage files checked at once: a verdict table
//! per file for the terminal, one JSON document, and JUnit XML for CI (one
//! test suite per file, one test case per requirement; a file that could
//! not be solved is one test case in error).

use serde_json::{json, Value};
use tankwave_measure::Verdict;

use crate::stage::verdict_text;

/// What checking one file gave.
#[derive(Debug, Clone, PartialEq)]
pub enum FileOutcome {
    /// The file solved: its requirement verdicts.
    Verdicts(Vec<Verdict>),
    /// The file gave no verdicts.
    Error {
        /// The exit code the failure maps to (shown in the outputs).
        code: i32,
        /// What went wrong.
        message: String,
        /// The problems found in the file (bad input), in file order.
        problems: Vec<Problem>,
    },
}

/// One problem found in a stage file, as the outputs carry it.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Problem {
    /// File name.
    pub file: String,
    /// Line (1-based; 0 when the problem has no place).
    pub line: u32,
    /// Column in characters (1-based; 0 when none).
    pub column: u32,
    /// `error` or `warning`.
    pub severity: String,
    /// The diagnostic code (docs/language.md).
    pub code: String,
    /// The message.
    pub message: String,
}

impl Problem {
    /// `file:line:column: severity[code]: message`, control characters escaped.
    pub fn line_text(&self) -> String {
        tankwave_circuit::escape::escape(&format!(
            "{}:{}:{}: {}[{}]: {}",
            self.file, self.line, self.column, self.severity, self.code, self.message
        ))
        .into_owned()
    }
}

/// One checked file: its name as given and its outcome.
#[derive(Debug, Clone, PartialEq)]
pub struct FileCheck {
    /// The file name as given.
    pub file: String,
    /// What checking it gave.
    pub outcome: FileOutcome,
}

/// The verdict table of every file, each followed by `PASS`/`FAIL` and the
/// count of passing requirements (or by the error), and a blank line.
pub fn check_text(files: &[FileCheck]) -> String {
    let mut s = String::new();
    for f in files {
        match &f.outcome {
            FileOutcome::Verdicts(v) => {
                s.push_str(&f.file);
                s.push('\n');
                s.push_str(&verdict_text(v));
                let failed = v.iter().filter(|x| !x.pass).count();
                s.push_str(&format!(
                    "{}: {} of {} requirements pass\n\n",
                    if failed == 0 { "PASS" } else { "FAIL" },
                    v.len() - failed,
                    v.len()
                ));
            }
            FileOutcome::Error { code, message, .. } => {
                s.push_str(&format!("{}\nERROR (exit {code}): {message}\n\n", f.file));
            }
        }
    }
    s
}

/// Every file's verdicts as one JSON document (schema
/// [`crate::SCHEMA_VERSION`]); `tool` names the program and its version.
pub fn check_json(tool: &str, files: &[FileCheck]) -> Value {
    let files: Vec<_> = files
        .iter()
        .map(|f| match &f.outcome {
            FileOutcome::Verdicts(v) => json!({
                "file": f.file,
                "pass": v.iter().all(|x| x.pass),
                "verdicts": crate::format::verdicts_json(v),
            }),
            FileOutcome::Error {
                code,
                message,
                problems,
            } => json!({
                "file": f.file, "pass": false, "error": message, "exit_code": code,
                "diagnostics": serde_json::to_value(problems).unwrap_or(Value::Null),
            }),
        })
        .collect();
    json!({
        "schema": crate::SCHEMA_VERSION,
        "tool": tool,
        "files": files,
    })
}

/// Escape text for XML content and attribute values (the five XML entities).
fn esc(s: &str) -> String {
    s.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
        .replace('\'', "&apos;")
}

/// JUnit XML of the check: a `testsuites` element with the totals, one
/// `testsuite` per file and one `testcase` per requirement (a `failure`
/// for a failing one, its limit, value and margin as output for a passing
/// one); a file that gave no verdicts is one `testcase` with an `error`.
pub fn junit_xml(files: &[FileCheck]) -> String {
    let mut s = String::from("<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n");
    let total: usize = files
        .iter()
        .map(|f| match &f.outcome {
            FileOutcome::Verdicts(v) => v.len(),
            FileOutcome::Error { .. } => 1,
        })
        .sum();
    let failures: usize = files
        .iter()
        .map(|f| match &f.outcome {
            FileOutcome::Verdicts(v) => v.iter().filter(|x| !x.pass).count(),
            FileOutcome::Error { .. } => 0,
        })
        .sum();
    let errors = files
        .iter()
        .filter(|f| matches!(f.outcome, FileOutcome::Error { .. }))
        .count();
    s.push_str(&format!(
        "<testsuites name=\"tankwave check\" tests=\"{total}\" failures=\"{failures}\" errors=\"{errors}\">\n"
    ));
    for f in files {
        let name = &f.file;
        match &f.outcome {
            FileOutcome::Verdicts(v) => {
                let nf = v.iter().filter(|x| !x.pass).count();
                s.push_str(&format!(
                    "  <testsuite name=\"{}\" tests=\"{}\" failures=\"{nf}\" errors=\"0\">\n",
                    esc(name),
                    v.len()
                ));
                for x in v {
                    s.push_str(&format!(
                        "    <testcase classname=\"{}\" name=\"{}\">\n",
                        esc(name),
                        esc(&x.requirement)
                    ));
                    let detail = format!(
                        "limit {}, value {}, margin {}",
                        crate::format::limit_text(x),
                        crate::format::value_text(x),
                        crate::format::margin_text(x)
                    );
                    if x.pass {
                        s.push_str(&format!(
                            "      <system-out>{}</system-out>\n",
                            esc(&detail)
                        ));
                    } else {
                        let msg = match &x.not_measured {
                            Some(r) => format!("not measured: {r}"),
                            None => detail.clone(),
                        };
                        s.push_str(&format!(
                            "      <failure message=\"{}\">{}</failure>\n",
                            esc(&msg),
                            esc(&detail)
                        ));
                    }
                    s.push_str("    </testcase>\n");
                }
                s.push_str("  </testsuite>\n");
            }
            FileOutcome::Error {
                code,
                message,
                problems,
            } => {
                let mut body = format!("exit code {code}");
                for p in problems {
                    body.push('\n');
                    body.push_str(&p.line_text());
                }
                s.push_str(&format!(
                    "  <testsuite name=\"{}\" tests=\"1\" failures=\"0\" errors=\"1\">\n    <testcase classname=\"{}\" name=\"solve\">\n      <error message=\"{}\">{}</error>\n    </testcase>\n  </testsuite>\n",
                    esc(name), esc(name), esc(message), esc(&body)
                ));
            }
        }
    }
    s.push_str("</testsuites>\n");
    s
}

#[cfg(test)]
mod tests {
    use super::*;

    fn verdict(req: &str, pass: bool, not_measured: Option<&str>) -> Verdict {
        Verdict {
            requirement: req.into(),
            line: 1,
            metric: "pout".into(),
            unit: tankwave_measure::Unit::Watt,
            cmp: ">=".into(),
            limit: Some(1.0),
            mask: None,
            value: Some(2.0),
            margin: Some(1.0),
            pass,
            not_measured: not_measured.map(String::from),
            element: None,
            harmonics: Vec::new(),
        }
    }

    fn files() -> Vec<FileCheck> {
        vec![
            FileCheck {
                file: "a&b.tank".into(),
                outcome: FileOutcome::Verdicts(vec![
                    verdict("pout >= 1W", true, None),
                    verdict("gain > 3dB", false, Some("no <input>")),
                ]),
            },
            FileCheck {
                file: "c.tank".into(),
                outcome: FileOutcome::Error {
                    code: 3,
                    message: "singular \"matrix\"".into(),
                    problems: Vec::new(),
                },
            },
        ]
    }

    /// The XML parses (roxmltree, a conforming XML 1.0 parser) and holds the
    /// counts, the escaped names and the messages.
    #[test]
    fn junit_is_well_formed_with_totals() {
        let xml = junit_xml(&files());
        let doc = roxmltree::Document::parse(&xml).expect("well-formed XML");
        let root = doc.root_element();
        assert_eq!(root.attribute("tests"), Some("3"));
        assert_eq!(root.attribute("failures"), Some("1"));
        assert_eq!(root.attribute("errors"), Some("1"));
        let suites: Vec<_> = root.children().filter(|n| n.is_element()).collect();
        assert_eq!(suites[0].attribute("name"), Some("a&b.tank"));
        let failure = doc
            .descendants()
            .find(|n| n.has_tag_name("failure"))
            .expect("one failure");
        assert_eq!(
            failure.attribute("message"),
            Some("not measured: no <input>")
        );
        let error = doc
            .descendants()
            .find(|n| n.has_tag_name("error"))
            .expect("one error");
        assert_eq!(error.attribute("message"), Some("singular \"matrix\""));
        assert_eq!(error.text(), Some("exit code 3"));
    }

    #[test]
    fn text_and_json_per_file() {
        let t = check_text(&files());
        assert!(t.starts_with("a&b.tank\n"), "{t}");
        assert!(t.contains("FAIL: 1 of 2 requirements pass\n\n"), "{t}");
        assert!(
            t.ends_with("c.tank\nERROR (exit 3): singular \"matrix\"\n\n"),
            "{t}"
        );
        let j = check_json("tankwave 0", &files());
        assert_eq!(j["files"][0]["pass"], false);
        assert_eq!(j["files"][1]["exit_code"], 3);
        assert_eq!(j["tool"], "tankwave 0");
    }
}
