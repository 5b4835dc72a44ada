//! The protocol loop: Language Server Protocol messages (JSON-RPC 2.0 with
//! `Content-Length` framing, LSP 3.17 "Base Protocol") read from any byte
//! stream and answered on another; the binary hands it stdin and stdout.
//!
//! Nothing a client sends can stop the loop but `exit` or the end of the
//! input: a header without a length, a length past the cap, a body that is
//! not JSON or not a message, unknown methods and parameters of the wrong
//! shape are each answered with an error (or skipped, for notifications)
//! and the loop goes on.
//!
//! Saving a document starts a solve of its text in a thread of its own;
//! the next edit of that document (or closing it) stops that solve at its
//! next analysis and its figures are never shown. A finished solve's
//! figures become inlay hints (and code lenses) on the `analyze` and
//! `require` lines, and the client is asked to fetch them again.

use std::collections::HashMap;
use std::io::{BufRead, BufReader, Read, Write};
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::mpsc;
use std::sync::Arc;

use lsp_server::{ErrorCode, Message, Notification, Request, RequestId, Response};
use lsp_types::notification::Notification as _;
use lsp_types::request::Request as _;
use lsp_types::{notification as note, request as req, Url};
use serde_json::Value;

use crate::document::Document;
use crate::features;
use crate::figures::{self, Solved};

/// Largest message body read: a full document is sent in one message, so
/// this is the stage-file size limit with room for JSON escaping.
pub const MAX_MESSAGE_BYTES: usize = 4 * tankwave_circuit::LIMITS.max_file_bytes as usize + 65536;

/// Longest header line read before the line is given up on.
const MAX_HEADER_LINE: usize = 8192;

/// Why the loop ended abnormally.
#[derive(Debug)]
pub enum ServeError {
    /// Writing to the client failed.
    Write(std::io::Error),
}

impl std::fmt::Display for ServeError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            ServeError::Write(e) => write!(f, "writing to the editor failed: {e}"),
        }
    }
}

impl std::error::Error for ServeError {}

/// How the loop ended.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Ended {
    /// `exit` after `shutdown`, as the protocol asks.
    Clean,
    /// `exit` without `shutdown`, or the input ended first.
    Abrupt,
}

/// One thing read from the client.
#[derive(Debug)]
pub enum Incoming {
    /// A message.
    Message(Message),
    /// Bytes that are not a message, with why.
    Malformed(String),
}

/// Read one framed message from `r`: `Ok(None)` at the end of the input.
/// Never reads a body longer than [`MAX_MESSAGE_BYTES`] into memory (a
/// longer one is skipped and reported).
pub fn read_message(r: &mut impl BufRead) -> std::io::Result<Option<Incoming>> {
    let mut length: Option<usize> = None;
    let mut bad_header: Option<String> = None;
    let mut saw_any = false;
    loop {
        let mut line = Vec::new();
        let n = r
            .by_ref()
            .take(MAX_HEADER_LINE as u64)
            .read_until(b'\n', &mut line)?;
        if n == 0 {
            return Ok(if saw_any {
                Some(Incoming::Malformed(
                    "the input ended inside a header".into(),
                ))
            } else {
                None
            });
        }
        saw_any = true;
        if !line.ends_with(b"\n") && n >= MAX_HEADER_LINE {
            // skip the rest of an overlong line
            let mut sink = Vec::new();
            r.read_until(b'\n', &mut sink)?;
            bad_header = Some("a header line is too long".into());
            continue;
        }
        let text = String::from_utf8_lossy(&line);
        let text = text.trim_end_matches(['\r', '\n']);
        if text.is_empty() {
            break;
        }
        match text.split_once(':') {
            Some((k, v)) if k.trim().eq_ignore_ascii_case("content-length") => {
                match v.trim().parse::<usize>() {
                    Ok(n) => length = Some(n),
                    Err(_) => bad_header = Some(format!("bad Content-Length '{}'", v.trim())),
                }
            }
            Some(_) => {}
            None => bad_header = Some(format!("not a header line: '{}'", clip(text))),
        }
    }
    let Some(len) = length else {
        return Ok(Some(Incoming::Malformed(
            bad_header.unwrap_or_else(|| "a message without Content-Length".into()),
        )));
    };
    if len > MAX_MESSAGE_BYTES {
        let skipped = std::io::copy(&mut r.by_ref().take(len as u64), &mut std::io::sink())?;
        return Ok(Some(Incoming::Malformed(format!(
            "a message of {len} bytes is longer than the {MAX_MESSAGE_BYTES} byte limit \
             ({skipped} bytes skipped)"
        ))));
    }
    let mut body = Vec::new();
    r.by_ref().take(len as u64).read_to_end(&mut body)?;
    if body.len() < len {
        return Ok(Some(Incoming::Malformed(
            "the input ended inside a message".into(),
        )));
    }
    Ok(Some(match serde_json::from_slice::<Message>(&body) {
        Ok(m) => Incoming::Message(m),
        Err(e) => Incoming::Malformed(format!("not a protocol message: {e}")),
    }))
}

fn clip(s: &str) -> String {
    s.chars().take(60).collect()
}

/// What the loop waits on: the client's messages and finished solves.
enum Event {
    In(Incoming),
    End,
    Solved {
        uri: Url,
        generation: u64,
        solved: Option<Box<Solved>>,
    },
}

/// A solve to start (returned by [`Server::handle`], started by the loop).
pub struct SolveJob {
    /// The document.
    pub uri: Url,
    /// The document's generation the solve belongs to.
    pub generation: u64,
    /// The document as saved.
    pub doc: Document,
    /// Set to stop the solve.
    pub cancel: Arc<AtomicBool>,
}

/// How the server works.
#[derive(Debug, Clone, Default)]
pub struct ServeParams {
    /// Directories includes may also come from (the command line's
    /// `--include-root`), besides each file's default roots.
    pub include_roots: Vec<std::path::PathBuf>,
    /// Bounds on each solve after a save (`None`: every analysis as the
    /// file declares it, as `run` solves it; the fuzz target bounds them).
    pub caps: Option<tankwave_stage::Caps>,
}

/// The server's state: open documents, solves in flight, the protocol phase.
#[derive(Default)]
pub struct Server {
    params: ServeParams,
    docs: HashMap<Url, Document>,
    generation: HashMap<Url, u64>,
    running: HashMap<Url, Arc<AtomicBool>>,
    initialized: bool,
    shutting_down: bool,
    exit: Option<Ended>,
    refresh: bool,
    lens_refresh: bool,
    caution_shown: bool,
    next_id: i32,
}

/// What handling one message gives: messages to send and solves to start.
#[derive(Default)]
pub struct Outcome {
    /// Messages for the client.
    pub send: Vec<Message>,
    /// Solves to start.
    pub solve: Vec<SolveJob>,
}

fn error(id: RequestId, code: ErrorCode, message: impl Into<String>) -> Message {
    Message::Response(Response::new_err(id, code as i32, message.into()))
}

fn ok(id: RequestId, v: impl serde::Serialize) -> Message {
    Message::Response(Response::new_ok(id, v))
}

fn notify(method: &str, v: impl serde::Serialize) -> Message {
    Message::Notification(Notification::new(method.to_string(), v))
}

impl Server {
    /// A server before `initialize`, with the default [`ServeParams`].
    pub fn new() -> Server {
        Server::default()
    }

    /// A server before `initialize` that works as `params` say.
    pub fn with_params(params: ServeParams) -> Server {
        Server {
            params,
            ..Server::default()
        }
    }

    /// How this server works.
    pub fn params(&self) -> &ServeParams {
        &self.params
    }

    /// How the loop should end, once `exit` was received.
    pub fn exit(&self) -> Option<Ended> {
        self.exit
    }

    /// The open document `uri`, if any.
    pub fn document(&self, uri: &Url) -> Option<&Document> {
        self.docs.get(uri)
    }

    /// Handle one message.
    pub fn handle(&mut self, msg: Message) -> Outcome {
        let mut out = Outcome::default();
        match msg {
            Message::Request(r) => {
                out.send.push(self.request(r));
            }
            Message::Notification(n) => self.notification(n, &mut out),
            Message::Response(_) => {}
        }
        out
    }

    fn request(&mut self, r: Request) -> Message {
        let id = r.id.clone();
        if r.method == req::Initialize::METHOD {
            if self.initialized {
                return error(
                    id,
                    ErrorCode::InvalidRequest,
                    "initialize was already received",
                );
            }
            let params: lsp_types::InitializeParams = match serde_json::from_value(r.params) {
                Ok(p) => p,
                Err(e) => return error(id, ErrorCode::InvalidParams, e.to_string()),
            };
            let workspace = params.capabilities.workspace.unwrap_or_default();
            self.refresh = workspace
                .inlay_hint
                .and_then(|i| i.refresh_support)
                .unwrap_or(false);
            self.lens_refresh = workspace
                .code_lens
                .and_then(|i| i.refresh_support)
                .unwrap_or(false);
            self.initialized = true;
            return ok(id, initialize_result());
        }
        if !self.initialized {
            return error(id, ErrorCode::ServerNotInitialized, "initialize first");
        }
        if self.shutting_down {
            return error(id, ErrorCode::InvalidRequest, "the server is shutting down");
        }
        match r.method.as_str() {
            req::Shutdown::METHOD => {
                self.shutting_down = true;
                self.stop_all();
                ok(id, Value::Null)
            }
            req::HoverRequest::METHOD => self.at::<lsp_types::HoverParams, _>(
                id,
                r.params,
                |d, p| features::hover(d, p.text_document_position_params.position),
                |p| p.text_document_position_params.text_document.uri.clone(),
            ),
            req::GotoDefinition::METHOD => self.at::<lsp_types::GotoDefinitionParams, _>(
                id,
                r.params,
                |d, p| {
                    features::definition(d, p.text_document_position_params.position)
                        .map(lsp_types::GotoDefinitionResponse::Scalar)
                },
                |p| p.text_document_position_params.text_document.uri.clone(),
            ),
            req::Completion::METHOD => self.at::<lsp_types::CompletionParams, _>(
                id,
                r.params,
                |d, p| {
                    Some(lsp_types::CompletionResponse::Array(features::completion(
                        d,
                        p.text_document_position.position,
                    )))
                },
                |p| p.text_document_position.text_document.uri.clone(),
            ),
            req::DocumentSymbolRequest::METHOD => self.at::<lsp_types::DocumentSymbolParams, _>(
                id,
                r.params,
                |d, _| {
                    Some(lsp_types::DocumentSymbolResponse::Nested(
                        features::symbols(d),
                    ))
                },
                |p| p.text_document.uri.clone(),
            ),
            req::CodeLensRequest::METHOD => self.at::<lsp_types::CodeLensParams, _>(
                id,
                r.params,
                |d, _| Some(features::code_lenses(d)),
                |p| p.text_document.uri.clone(),
            ),
            req::InlayHintRequest::METHOD => self.at::<lsp_types::InlayHintParams, _>(
                id,
                r.params,
                |d, _| Some(features::inlay_hints(d)),
                |p| p.text_document.uri.clone(),
            ),
            other => error(
                id,
                ErrorCode::MethodNotFound,
                format!("'{}' is not handled", clip(other)),
            ),
        }
    }

    /// Answer a request about one document: its parameters read, the
    /// document found (a null result for one not open).
    fn at<P, R>(
        &self,
        id: RequestId,
        params: Value,
        answer: impl Fn(&Document, &P) -> Option<R>,
        uri: impl Fn(&P) -> Url,
    ) -> Message
    where
        P: serde::de::DeserializeOwned,
        R: serde::Serialize,
    {
        let p: P = match serde_json::from_value(params) {
            Ok(p) => p,
            Err(e) => return error(id, ErrorCode::InvalidParams, e.to_string()),
        };
        match self.docs.get(&uri(&p)) {
            Some(d) => ok(id, answer(d, &p)),
            None => ok(id, Value::Null),
        }
    }

    fn notification(&mut self, n: Notification, out: &mut Outcome) {
        if n.method == note::Exit::METHOD {
            self.exit = Some(if self.shutting_down {
                Ended::Clean
            } else {
                Ended::Abrupt
            });
            return;
        }
        if !self.initialized || self.shutting_down {
            return;
        }
        match n.method.as_str() {
            note::DidOpenTextDocument::METHOD => {
                if let Ok(p) =
                    serde_json::from_value::<lsp_types::DidOpenTextDocumentParams>(n.params)
                {
                    let uri = p.text_document.uri;
                    self.replace(uri, p.text_document.text, out);
                }
            }
            note::DidChangeTextDocument::METHOD => {
                if let Ok(p) =
                    serde_json::from_value::<lsp_types::DidChangeTextDocumentParams>(n.params)
                {
                    let uri = p.text_document.uri;
                    let Some(d) = self.docs.get(&uri) else {
                        return;
                    };
                    let mut text = d.text.clone();
                    for c in p.content_changes {
                        match c.range {
                            None => text = c.text,
                            Some(r) => {
                                let ix = crate::position::LineIndex::new(&text);
                                let a = ix.offset(&text, r.start);
                                let b = ix.offset(&text, r.end).max(a);
                                text.replace_range(a..b, &c.text);
                            }
                        }
                    }
                    self.replace(uri, text, out);
                }
            }
            note::DidSaveTextDocument::METHOD => {
                if let Ok(p) =
                    serde_json::from_value::<lsp_types::DidSaveTextDocumentParams>(n.params)
                {
                    let uri = p.text_document.uri;
                    if let Some(t) = p.text {
                        if self.docs.get(&uri).is_some_and(|d| d.text != t) {
                            self.replace(uri.clone(), t, out);
                        }
                    }
                    self.start_solve(uri, out);
                }
            }
            note::DidCloseTextDocument::METHOD => {
                if let Ok(p) =
                    serde_json::from_value::<lsp_types::DidCloseTextDocumentParams>(n.params)
                {
                    let uri = p.text_document.uri;
                    self.stop(&uri);
                    self.docs.remove(&uri);
                    self.generation.remove(&uri);
                    out.send.push(diagnostics(uri, Vec::new()));
                }
            }
            _ => {}
        }
    }

    /// Stop every solve in flight (the loop is ending).
    fn stop_all(&mut self) {
        for c in self.running.values() {
            c.store(true, Ordering::Relaxed);
        }
        self.running.clear();
    }

    /// Stop the solve of `uri` in flight, if any, and move its generation on.
    fn stop(&mut self, uri: &Url) {
        if let Some(c) = self.running.remove(uri) {
            c.store(true, Ordering::Relaxed);
        }
        *self.generation.entry(uri.clone()).or_default() += 1;
    }

    /// A new text for `uri`: the solve in flight stopped, the text analysed,
    /// its diagnostics published.
    fn replace(&mut self, uri: Url, text: String, out: &mut Outcome) {
        self.stop(&uri);
        let doc = Document::with_roots(uri.clone(), text, &self.params.include_roots);
        out.send
            .push(diagnostics(uri.clone(), doc.lsp_diagnostics()));
        self.docs.insert(uri, doc);
    }

    fn start_solve(&mut self, uri: Url, out: &mut Outcome) {
        let Some(doc) = self.docs.get(&uri) else {
            return;
        };
        // nothing to solve, already solved, or being solved (an edit would
        // have stopped that solve and removed it from `running`)
        if doc.stage.is_none() || doc.solved.is_some() || self.running.contains_key(&uri) {
            return;
        }
        let doc = doc.clone();
        self.stop(&uri);
        let cancel = Arc::new(AtomicBool::new(false));
        self.running.insert(uri.clone(), cancel.clone());
        let generation = self.generation.get(&uri).copied().unwrap_or(0);
        out.solve.push(SolveJob {
            uri,
            generation,
            doc,
            cancel,
        });
    }

    /// A solve ended: its figures kept (if the document has not changed
    /// since) and the client asked to fetch the hints again.
    pub fn solved(&mut self, uri: Url, generation: u64, solved: Option<Solved>) -> Vec<Message> {
        let mut send = Vec::new();
        let (Some(s), Some(doc)) = (solved, self.docs.get_mut(&uri)) else {
            return send;
        };
        if self.generation.get(&uri).copied().unwrap_or(0) != generation {
            return send;
        }
        self.running.remove(&uri);
        doc.solved = Some(Arc::new(s));
        if !self.caution_shown {
            self.caution_shown = true;
            send.push(notify(
                note::ShowMessage::METHOD,
                lsp_types::ShowMessageParams {
                    typ: lsp_types::MessageType::WARNING,
                    message: tankwave_report::stage::SAFETY_NOTE.to_string(),
                },
            ));
        }
        let asks = [
            (self.refresh, req::InlayHintRefreshRequest::METHOD),
            (self.lens_refresh, req::CodeLensRefresh::METHOD),
        ];
        for (_, method) in asks.into_iter().filter(|(wanted, _)| *wanted) {
            self.next_id += 1;
            send.push(Message::Request(Request::new(
                RequestId::from(format!("refresh-{}", self.next_id)),
                method.to_string(),
                Value::Null,
            )));
        }
        send
    }
}

fn diagnostics(uri: Url, diagnostics: Vec<lsp_types::Diagnostic>) -> Message {
    notify(
        note::PublishDiagnostics::METHOD,
        lsp_types::PublishDiagnosticsParams {
            uri,
            diagnostics,
            version: None,
        },
    )
}

/// What the server offers (LSP 3.17 `ServerCapabilities`).
pub fn initialize_result() -> lsp_types::InitializeResult {
    use lsp_types::*;
    InitializeResult {
        capabilities: ServerCapabilities {
            position_encoding: Some(PositionEncodingKind::UTF16),
            text_document_sync: Some(TextDocumentSyncCapability::Options(
                TextDocumentSyncOptions {
                    open_close: Some(true),
                    change: Some(TextDocumentSyncKind::FULL),
                    save: Some(TextDocumentSyncSaveOptions::SaveOptions(SaveOptions {
                        include_text: Some(true),
                    })),
                    ..Default::default()
                },
            )),
            hover_provider: Some(HoverProviderCapability::Simple(true)),
            definition_provider: Some(OneOf::Left(true)),
            completion_provider: Some(CompletionOptions {
                trigger_characters: Some(vec!["=".into(), " ".into()]),
                ..Default::default()
            }),
            document_symbol_provider: Some(OneOf::Left(true)),
            inlay_hint_provider: Some(OneOf::Left(true)),
            code_lens_provider: Some(CodeLensOptions {
                resolve_provider: Some(false),
            }),
            ..Default::default()
        },
        server_info: Some(ServerInfo {
            name: "tankwave".into(),
            version: Some(env!("CARGO_PKG_VERSION").into()),
        }),
    }
}

fn write(w: &mut impl Write, m: Message) -> Result<(), ServeError> {
    m.write(w).map_err(ServeError::Write)?;
    w.flush().map_err(ServeError::Write)
}

/// Serve one client: messages read from `input`, answers written to
/// `output`, until `exit` or the end of the input.
pub fn serve(
    input: impl Read + Send + 'static,
    mut output: impl Write,
    params: &ServeParams,
) -> Result<Ended, ServeError> {
    let (tx, rx) = mpsc::channel::<Event>();
    let reader_tx = tx.clone();
    let reader = std::thread::spawn(move || {
        let mut r = BufReader::new(input);
        loop {
            match read_message(&mut r) {
                Ok(Some(m)) => {
                    if reader_tx.send(Event::In(m)).is_err() {
                        return;
                    }
                }
                Ok(None) | Err(_) => {
                    let _ = reader_tx.send(Event::End);
                    return;
                }
            }
        }
    });
    let mut server = Server::with_params(params.clone());
    // the solve threads, joined before the loop returns (each stops at its
    // next analysis once cancelled)
    let mut solvers: Vec<std::thread::JoinHandle<()>> = Vec::new();
    let end = |server: &mut Server, solvers: Vec<std::thread::JoinHandle<()>>| {
        server.stop_all();
        for h in solvers {
            let _ = h.join();
        }
    };
    while let Ok(ev) = rx.recv() {
        match ev {
            Event::End => break,
            Event::In(Incoming::Malformed(why)) => write(&mut output, malformed_response(&why))?,
            Event::In(Incoming::Message(m)) => {
                let outcome = server.handle(m);
                for m in outcome.send {
                    write(&mut output, m)?;
                }
                solvers.retain(|h| !h.is_finished());
                for job in outcome.solve {
                    let tx = tx.clone();
                    let caps = server.params().caps;
                    solvers.push(std::thread::spawn(move || {
                        let solved = job.doc.stage.as_ref().and_then(|s| {
                            figures::solve(&s.circuit, &job.doc.outline, caps, &job.cancel)
                        });
                        let solved = solved.map(Box::new);
                        let _ = tx.send(Event::Solved {
                            uri: job.uri,
                            generation: job.generation,
                            solved,
                        });
                    }));
                }
                if let Some(e) = server.exit() {
                    end(&mut server, solvers);
                    // the reader may be blocked on input that never ends
                    // (a terminal); it is joined only when it has finished
                    if reader.is_finished() {
                        let _ = reader.join();
                    }
                    return Ok(e);
                }
            }
            Event::Solved {
                uri,
                generation,
                solved,
            } => {
                for m in server.solved(uri, generation, solved.map(|b| *b)) {
                    write(&mut output, m)?;
                }
            }
        }
    }
    end(&mut server, solvers);
    // the input ended: the reader has returned or is about to
    let _ = reader.join();
    Ok(Ended::Abrupt)
}

/// What the client is told about bytes that were not a message. JSON-RPC
/// would answer with a parse error of id null, which lsp-server's ids cannot
/// hold; a log message carries the reason instead, which every client
/// accepts.
pub fn malformed_response(why: &str) -> Message {
    notify(
        note::LogMessage::METHOD,
        lsp_types::LogMessageParams {
            typ: lsp_types::MessageType::ERROR,
            message: format!("tankwave: ignored a malformed message: {why}"),
        },
    )
}

#[cfg(test)]
mod tests {
    use super::*;
    use serde_json::json;

    fn note(method: &str, params: Value) -> Message {
        Message::Notification(Notification::new(method.to_string(), params))
    }

    const STAGE: &str = "voltage v1 a gnd dc=1V\nresistor r1 a gnd 50Ohm\nanalyze bias\n";

    /// An edit after a save stops that save's solve, and its figures are
    /// never kept; a solve of the current text is.
    #[test]
    fn the_next_edit_cancels_the_solve_of_a_save() {
        let uri = Url::parse("file:///tmp/c.tank").expect("uri");
        let mut s = Server::new();
        s.handle(Message::Request(Request::new(
            0.into(),
            "initialize".into(),
            json!({"capabilities": {}}),
        )));
        let doc = json!({"uri": uri, "languageId": "t", "version": 1, "text": STAGE});
        s.handle(note("textDocument/didOpen", json!({"textDocument": doc})));
        let saved = s.handle(note(
            "textDocument/didSave",
            json!({"textDocument": {"uri": uri}}),
        ));
        let job = saved.solve.into_iter().next().expect("a solve starts");
        assert!(!job.cancel.load(Ordering::Relaxed));
        let edit = json!({"textDocument": {"uri": uri, "version": 2},
            "contentChanges": [{"text": format!("{STAGE}# edited\n")}]});
        s.handle(note("textDocument/didChange", edit));
        assert!(
            job.cancel.load(Ordering::Relaxed),
            "the edit stops the solve"
        );
        // had the solve ended anyway, its figures are dropped
        let c = &job.doc.stage.as_ref().expect("elaborates").circuit;
        let late = figures::solve(c, &job.doc.outline, None, &AtomicBool::new(false));
        assert!(s.solved(uri.clone(), job.generation, late).is_empty());
        assert!(s.document(&uri).expect("open").solved.is_none());
        // a save of the new text is solved and kept
        let saved = s.handle(note(
            "textDocument/didSave",
            json!({"textDocument": {"uri": uri}}),
        ));
        let job = saved.solve.into_iter().next().expect("a solve starts");
        let c = &job.doc.stage.as_ref().expect("elaborates").circuit;
        let done = figures::solve(c, &job.doc.outline, None, &job.cancel);
        s.solved(uri.clone(), job.generation, done);
        let kept = s
            .document(&uri)
            .expect("open")
            .solved
            .clone()
            .expect("kept");
        assert!(kept.lines.iter().any(|(_, t)| t.contains("bias point")));
    }
}
