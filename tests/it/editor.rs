//! `tankwave serve-editor` driven over stdio by a scripted client, as an
//! editor would drive it (Language Server Protocol 3.17: initialize,
//! didOpen, didChange, hover, definition, completion, didSave and the
//! figures as inlay hints, shutdown, exit), each answer checked; positions
//! are in the protocol's UTF-16 units on lines holding µ, Ω, a character
//! outside the basic plane and a byte-order mark. Then hostile bytes: the
//! server answers and goes on.

use serde_json::{json, Value};
use std::io::{BufRead, BufReader, Write};
use std::process::{Child, ChildStdin, Command, Stdio};
use std::sync::mpsc::{channel, Receiver};
use std::time::{Duration, Instant};

/// How long any one answer may take (a debug build solving a small stage
/// answers in well under a second; the margin is for a loaded machine).
const WAIT: Duration = Duration::from_secs(60);

struct Client {
    child: Child,
    stdin: ChildStdin,
    from: Receiver<Value>,
    next: i64,
    /// Notifications and server requests seen while waiting for answers.
    seen: Vec<Value>,
}

fn read_frame(r: &mut impl BufRead) -> Option<Value> {
    let mut len = None;
    loop {
        let mut line = String::new();
        if r.read_line(&mut line).ok()? == 0 {
            return None;
        }
        let line = line.trim_end();
        if line.is_empty() {
            break;
        }
        if let Some(v) = line.strip_prefix("Content-Length:") {
            len = v.trim().parse::<usize>().ok();
        }
    }
    let mut body = vec![0; len?];
    r.read_exact(&mut body).ok()?;
    serde_json::from_slice(&body).ok()
}

impl Client {
    fn start(dir: &std::path::Path) -> Client {
        let mut child = Command::new(env!("CARGO_BIN_EXE_tankwave"))
            .arg("serve-editor")
            .current_dir(dir)
            .stdin(Stdio::piped())
            .stdout(Stdio::piped())
            .stderr(Stdio::null())
            .spawn()
            .expect("server starts");
        let stdin = child.stdin.take().expect("stdin");
        let stdout = child.stdout.take().expect("stdout");
        let (tx, from) = channel();
        std::thread::spawn(move || {
            let mut r = BufReader::new(stdout);
            while let Some(v) = read_frame(&mut r) {
                if tx.send(v).is_err() {
                    return;
                }
            }
        });
        Client {
            child,
            stdin,
            from,
            next: 0,
            seen: Vec::new(),
        }
    }

    fn raw(&mut self, bytes: &[u8]) {
        self.stdin.write_all(bytes).expect("write");
        self.stdin.flush().expect("flush");
    }

    fn send(&mut self, v: Value) {
        let body = v.to_string();
        self.raw(format!("Content-Length: {}\r\n\r\n{body}", body.len()).as_bytes());
    }

    fn notify(&mut self, method: &str, params: Value) {
        self.send(json!({"jsonrpc": "2.0", "method": method, "params": params}));
    }

    /// Send a request and wait for its answer (other messages are kept in
    /// `seen`).
    fn request(&mut self, method: &str, params: Value) -> Value {
        self.next += 1;
        let id = self.next;
        self.send(json!({"jsonrpc": "2.0", "id": id, "method": method, "params": params}));
        let end = Instant::now() + WAIT;
        loop {
            let left = end.saturating_duration_since(Instant::now());
            let v = self.from.recv_timeout(left).expect("an answer in time");
            if v.get("id") == Some(&json!(id)) && v.get("method").is_none() {
                return v;
            }
            self.seen.push(v);
        }
    }

    /// Wait for a message from the server that `pick` accepts.
    fn wait_for(&mut self, what: &str, pick: impl Fn(&Value) -> bool) -> Value {
        if let Some(i) = self.seen.iter().position(&pick) {
            return self.seen.remove(i);
        }
        let end = Instant::now() + WAIT;
        loop {
            let left = end.saturating_duration_since(Instant::now());
            let v = self
                .from
                .recv_timeout(left)
                .unwrap_or_else(|_| panic!("no {what} in time; seen {:?}", self.seen));
            if pick(&v) {
                return v;
            }
            self.seen.push(v);
        }
    }

    fn diagnostics(&mut self) -> Vec<Value> {
        let v = self.wait_for("diagnostics", |v| {
            v["method"] == "textDocument/publishDiagnostics"
        });
        v["params"]["diagnostics"]
            .as_array()
            .cloned()
            .unwrap_or_default()
    }
}

fn pos(line: u32, character: u32) -> Value {
    json!({"line": line, "character": character})
}

/// The stage: a byte-order mark, µ and Ω in values, a character outside
/// the basic plane in the title, and a part in an included file.
const PARTS: &str = "part dq diode {\n  junction { sat_current=1fA }\n}\n";
const STAGE: &str = "\u{feff}title \"µ 𝄞 test\"\ninclude \"parts.tank\"\nlet f0 = 13.56MHz\n\
voltage vdrv src gnd wave=sine(amp=5V, freq=f0) internal=50Ω\ninductor l1 src out 4.7µH\n\
capacitor c1 out gnd 10pF\nresistor rl out gnd 50Ω\ndiode d1 out gnd part=dq\noutput rl\n\
input vdrv\nanalyze bias\nanalyze steady freq=f0 harmonics=8\nrequire pout >= 1W\n";

#[test]
fn a_scripted_editor_session() {
    let dir = tempfile::tempdir().expect("temp dir");
    std::fs::write(dir.path().join("parts.tank"), PARTS).expect("parts");
    let file = dir.path().join("stage.tank");
    std::fs::write(&file, STAGE).expect("stage");
    let uri = format!("file://{}", file.display());
    let parts_uri = format!("file://{}", dir.path().join("parts.tank").display());
    let doc = json!({"uri": uri});
    let mut c = Client::start(dir.path());

    let init = c.request(
        "initialize",
        json!({"capabilities": {"workspace": {"inlayHint": {"refreshSupport": true}}}}),
    );
    let caps = &init["result"]["capabilities"];
    assert_eq!(caps["positionEncoding"], "utf-16", "{init}");
    assert_eq!(caps["hoverProvider"], true);
    c.notify("initialized", json!({}));

    // open with an error: a capacitor written in henries on the line after µ
    let bad = STAGE.replace("10pF", "10µH");
    c.notify(
        "textDocument/didOpen",
        json!({"textDocument": {"uri": uri, "languageId": "tankwave", "version": 1, "text": bad}}),
    );
    let d = c.diagnostics();
    let e = d
        .iter()
        .find(|x| x["code"] == "unit-mismatch")
        .unwrap_or_else(|| panic!("unit mismatch in {d:?}"));
    // line 5 "capacitor c1 out gnd 10µH": the value starts at UTF-16 column
    // 21 and "10µH" is 4 units long (µ is one UTF-16 unit, two UTF-8 bytes)
    assert_eq!(e["range"]["start"], pos(5, 21), "{e}");
    assert_eq!(e["range"]["end"], pos(5, 25), "{e}");
    assert_eq!(e["severity"], 1);

    // the fix: no errors
    c.notify(
        "textDocument/didChange",
        json!({"textDocument": {"uri": uri, "version": 2}, "contentChanges": [{"text": STAGE}]}),
    );
    let d = c.diagnostics();
    assert!(d.iter().all(|x| x["severity"] != 1), "{d:?}");

    // hover on 50Ω after the Ω-free prefix of line 3: "voltage vdrv src gnd
    // wave=sine(amp=5V, freq=f0) internal=" is 57 units; the value is shown in SI
    let h = c.request(
        "textDocument/hover",
        json!({"textDocument": doc, "position": pos(3, 58)}),
    );
    let text = h["result"]["contents"]["value"].as_str().unwrap_or("");
    assert!(text.contains("50.00 Ohm"), "{h}");
    // hover on 4.7µH (line 4, column 20): 4.7 µH in henries (SI prefix micro)
    let h = c.request(
        "textDocument/hover",
        json!({"textDocument": doc, "position": pos(4, 20)}),
    );
    let text = h["result"]["contents"]["value"].as_str().unwrap_or("");
    assert!(text.contains("4.700 µH"), "{h}");
    // hover on the use of f0 gives the let's evaluated value
    let h = c.request(
        "textDocument/hover",
        json!({"textDocument": doc, "position": pos(3, 45)}),
    );
    let text = h["result"]["contents"]["value"].as_str().unwrap_or("");
    assert!(text.contains("f0") && text.contains("13.56 MHz"), "{h}");

    // definition of part=dq is in the included file, line 0, column 5
    let line7 = "diode d1 out gnd part=";
    let d = c.request(
        "textDocument/definition",
        json!({"textDocument": doc, "position": pos(7, line7.len() as u32 + 1)}),
    );
    assert_eq!(d["result"]["uri"], parts_uri.as_str(), "{d}");
    assert_eq!(d["result"]["range"]["start"], pos(0, 5), "{d}");
    // on the include line: the included file
    let d = c.request(
        "textDocument/definition",
        json!({"textDocument": doc, "position": pos(1, 3)}),
    );
    assert_eq!(d["result"]["uri"], parts_uri.as_str(), "{d}");
    // definition of f0 in freq=f0: line 2 column 4
    let d = c.request(
        "textDocument/definition",
        json!({"textDocument": doc, "position": pos(11, 20)}),
    );
    assert_eq!(d["result"]["range"]["start"], pos(2, 4), "{d}");

    // completion: analysis kinds after `analyze `, on a new line
    let with_new = format!("{STAGE}analyze ");
    c.notify(
        "textDocument/didChange",
        json!({"textDocument": {"uri": uri, "version": 3}, "contentChanges": [{"text": with_new}]}),
    );
    c.diagnostics();
    let r = c.request(
        "textDocument/completion",
        json!({"textDocument": doc, "position": pos(13, 8)}),
    );
    let labels: Vec<&str> = r["result"]
        .as_array()
        .map(|a| a.iter().filter_map(|i| i["label"].as_str()).collect())
        .unwrap_or_default();
    assert!(labels.contains(&"steady") && labels.contains(&"ac"), "{r}");

    // symbols of the document, in order
    let r = c.request("textDocument/documentSymbol", json!({"textDocument": doc}));
    let names: Vec<&str> = r["result"]
        .as_array()
        .map(|a| a.iter().filter_map(|i| i["name"].as_str()).collect())
        .unwrap_or_default();
    assert_eq!(
        names,
        ["f0", "vdrv", "l1", "c1", "rl", "d1", "bias", "steady", "pout"],
        "{r}"
    );

    // back to the file's text, then save: a solve, then hints
    c.notify(
        "textDocument/didChange",
        json!({"textDocument": {"uri": uri, "version": 4}, "contentChanges": [{"text": STAGE}]}),
    );
    c.diagnostics();
    c.notify(
        "textDocument/didSave",
        json!({"textDocument": doc, "text": STAGE}),
    );
    let refresh = c.wait_for("a hint refresh", |v| {
        v["method"] == "workspace/inlayHint/refresh"
    });
    c.send(json!({"jsonrpc": "2.0", "id": refresh["id"], "result": null}));
    let r = c.request(
        "textDocument/inlayHint",
        json!({"textDocument": doc, "range": {"start": pos(0, 0), "end": pos(13, 0)}}),
    );
    let hints = r["result"].as_array().cloned().unwrap_or_default();
    let on = |line: u32| -> String {
        hints
            .iter()
            .find(|h| h["position"]["line"] == line)
            .and_then(|h| h["label"].as_str())
            .unwrap_or("")
            .to_string()
    };
    assert!(on(11).contains("output power (rl)"), "{r}");
    // 3.70 mW delivered into 50 Ω fails `pout >= 1W`: the same verdict as `run`
    assert!(on(12).contains("FAIL"), "{r}");
    // at the end of the line: "require pout >= 1W" is 18 units
    let h = hints
        .iter()
        .find(|h| h["position"]["line"] == 12)
        .expect("h");
    assert_eq!(h["position"]["character"], 18);
    // the same figures as code lenses over the lines
    let r = c.request("textDocument/codeLens", json!({"textDocument": doc}));
    let lenses = r["result"].as_array().cloned().unwrap_or_default();
    let lens = lenses
        .iter()
        .find(|l| l["range"]["start"]["line"] == 12)
        .unwrap_or_else(|| panic!("a lens on the require line: {r}"));
    assert!(
        lens["command"]["title"]
            .as_str()
            .unwrap_or("")
            .contains("FAIL"),
        "{r}"
    );
    // after the solve, an element's hover has its bias-point figures
    let hv = c.request(
        "textDocument/hover",
        json!({"textDocument": doc, "position": pos(6, 10)}),
    );
    let text = hv["result"]["contents"]["value"].as_str().unwrap_or("");
    assert!(
        text.contains("At the bias point") && text.contains("Caution"),
        "{hv}"
    );

    // an edit drops the figures
    c.notify(
        "textDocument/didChange",
        json!({"textDocument": {"uri": uri, "version": 5}, "contentChanges": [{"text": STAGE}]}),
    );
    c.diagnostics();
    let r = c.request(
        "textDocument/inlayHint",
        json!({"textDocument": doc, "range": {"start": pos(0, 0), "end": pos(13, 0)}}),
    );
    assert_eq!(r["result"], json!([]), "{r}");

    let s = c.request("shutdown", Value::Null);
    assert_eq!(s["result"], Value::Null, "{s}");
    c.notify("exit", Value::Null);
    let status = c.child.wait().expect("server exits");
    assert_eq!(status.code(), Some(0));
}

#[test]
fn hostile_bytes_are_answered_and_the_server_goes_on() {
    let dir = tempfile::tempdir().expect("temp dir");
    let mut c = Client::start(dir.path());
    // a body that is not JSON, a header without a length, a length that is
    // not a number, JSON that is no message
    c.raw(b"Content-Length: 5\r\n\r\n{{{{{");
    c.raw(b"X-Nothing: 1\r\n\r\n");
    c.raw(b"Content-Length: many\r\n\r\n");
    c.send(json!([1, 2, 3]));
    // requests before initialize are refused, not crashed on
    let r = c.request("textDocument/hover", json!({}));
    assert_eq!(r["error"]["code"], -32002, "{r}");
    let init = c.request("initialize", json!({"capabilities": {}}));
    assert!(init["result"]["capabilities"].is_object(), "{init}");
    // parameters of the wrong shape and unknown methods get errors
    let r = c.request("textDocument/hover", json!({"textDocument": 5}));
    assert_eq!(r["error"]["code"], -32602, "{r}");
    let r = c.request("no/such/method", json!(null));
    assert_eq!(r["error"]["code"], -32601, "{r}");
    // a document of hostile text: a diagnostic list, not a crash
    c.notify(
        "textDocument/didOpen",
        json!({"textDocument": {"uri": "file:///nowhere/x.tank", "languageId": "t", "version": 1,
            "text": "let a = ((((((((((1\n\u{0}\u{1b}]0;x\u{7}\nresistor"}}),
    );
    assert!(!c.diagnostics().is_empty());
    // a position far past the text
    let r = c.request(
        "textDocument/hover",
        json!({"textDocument": {"uri": "file:///nowhere/x.tank"}, "position": pos(4_000_000_000, 4_000_000_000)}),
    );
    assert!(r.get("error").is_none(), "{r}");
    let s = c.request("shutdown", Value::Null);
    assert_eq!(s["result"], Value::Null);
    c.notify("exit", Value::Null);
    assert_eq!(c.child.wait().expect("exit").code(), Some(0));
}

/// Every one-mistake file of tests/data/bad/: the server reports each
/// problem `check` (and so `lint`) reports in the file itself at the same
/// line and column (1-based there, 0-based in the protocol; the files'
/// characters are all in the basic plane, where a character is one UTF-16
/// unit; a byte-order mark is a character the protocol counts and the
/// command line does not), with the same code and message.
#[test]
fn every_bad_file_gets_the_places_and_codes_lint_gives() {
    let dir = crate::harness::data("bad");
    let mut files: Vec<std::path::PathBuf> = std::fs::read_dir(&dir)
        .expect("tests/data/bad")
        .filter_map(|e| e.ok().map(|e| e.path()))
        .filter(|p| p.extension().is_some_and(|x| x == "tank"))
        .collect();
    files.sort();
    assert!(files.len() > 20, "the bad files");
    let mut args = vec!["--no-caution", "check", "--format", "json"];
    let names: Vec<String> = files.iter().map(|f| f.display().to_string()).collect();
    args.extend(names.iter().map(String::as_str));
    let o = crate::harness::run(&args);
    let doc: Value = serde_json::from_slice(&o.stdout).expect("check JSON");
    let mut c = Client::start(&dir);
    c.request("initialize", json!({"capabilities": {}}));
    let mut compared = 0;
    for entry in doc["files"].as_array().expect("files") {
        let file = entry["file"].as_str().expect("file");
        // a client sends text: a file that is not UTF-8 is not one it can open
        let Ok(text) = std::fs::read_to_string(file) else {
            continue;
        };
        let uri = format!("file://{file}");
        c.notify(
            "textDocument/didOpen",
            json!({"textDocument": {"uri": uri, "languageId": "tankwave", "version": 1, "text": text}}),
        );
        let got = c.wait_for("its diagnostics", |v| {
            v["method"] == "textDocument/publishDiagnostics" && v["params"]["uri"] == uri.as_str()
        });
        let got = got["params"]["diagnostics"]
            .as_array()
            .cloned()
            .unwrap_or_default();
        let bom = u64::from(text.starts_with('\u{feff}'));
        for want in entry["diagnostics"].as_array().into_iter().flatten() {
            if want["file"] != file || want["line"].as_u64().unwrap_or(0) == 0 {
                continue;
            }
            let line = want["line"].as_u64().expect("line") - 1;
            let col =
                want["column"].as_u64().expect("column") - 1 + if line == 0 { bom } else { 0 };
            let hit = got.iter().any(|g| {
                g["range"]["start"] == json!({"line": line, "character": col})
                    && g["code"] == want["code"]
                    && g["message"]
                        .as_str()
                        .is_some_and(|m| m.starts_with(want["message"].as_str().unwrap_or("?")))
            });
            assert!(hit, "{file}: {want} not among {got:?}");
            compared += 1;
        }
    }
    assert!(compared > 20, "only {compared} diagnostics compared");
    c.request("shutdown", Value::Null);
    c.notify("exit", Value::Null);
    assert_eq!(c.child.wait().expect("exit").code(), Some(0));
}
