//! Bench binary for the editor loop (run: `cargo bench --bench editor
//! --profile dev`).
//!
//! For every demo stage in netlists/, the time from a save to the figures
//! the server shows (the document analysed as on open, the save handled,
//! the solve it starts, the figures placed and the hints built) against a
//! plain `run` of the same file (loaded from disk, every analysis solved,
//! the report text assembled), as a ratio of medians measured in the same
//! run, the two interleaved so that drift of the machine hits both alike.
//! The issue asks for at most 1.2.

use std::path::PathBuf;
use std::time::Instant;

use lsp_server::{Message, Notification};
use serde_json::json;
use tankwave_circuit::Overrides;
use tankwave_editor::{features, figures, Server};
use tankwave_stage::{Scope, SolveOptions};

#[allow(dead_code)] // not every bench uses both helpers
#[path = "support/timing.rs"]
mod timing;

/// A plain `run`: load, solve every analysis, assemble the report text.
fn plain_run(p: &std::path::Path) -> usize {
    let s = tankwave_stage::load(p, &[], &Overrides::default()).expect("demo loads");
    let r = tankwave_stage::solve(&s.circuit, &SolveOptions::scope(Scope::All)).expect("solves");
    let file = p.display().to_string();
    tankwave_report::assemble::results_text(&file, &s.circuit, &r, false).len()
}

/// The editor's way: open, save, solve, figures placed, hints built.
fn editor_save(p: &std::path::Path, text: &str) -> usize {
    let uri = lsp_types::Url::from_file_path(std::fs::canonicalize(p).expect("path")).expect("uri");
    let mut server = Server::new();
    let note = |method: &str, params: serde_json::Value| {
        Message::Notification(Notification::new(method.to_string(), params))
    };
    server.handle(Message::Request(lsp_server::Request::new(
        0.into(),
        "initialize".into(),
        json!({"capabilities": {}}),
    )));
    server.handle(note(
        "textDocument/didOpen",
        json!({"textDocument": {"uri": uri, "languageId": "tankwave", "version": 1, "text": text}}),
    ));
    let out = server.handle(note(
        "textDocument/didSave",
        json!({"textDocument": {"uri": uri}, "text": text}),
    ));
    let mut hints = 0;
    for job in out.solve {
        let circuit = &job.doc.stage.as_ref().expect("elaborates").circuit;
        let solved = figures::solve(circuit, &job.doc.outline, None, &job.cancel);
        server.solved(job.uri.clone(), job.generation, solved);
        let doc = server.document(&job.uri).expect("open");
        assert!(doc.solved.is_some(), "the figures are kept");
        hints += features::inlay_hints(doc).len();
    }
    hints
}

fn main() {
    let root = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("netlists");
    let mut demos: Vec<PathBuf> = std::fs::read_dir(&root)
        .expect("netlists/")
        .filter_map(|e| e.ok().map(|e| e.path()))
        .filter(|p| p.extension().is_some_and(|x| x == "tank"))
        .collect();
    demos.sort();
    let repeats: usize = std::env::var("TANKWAVE_BENCH_REPEATS")
        .ok()
        .and_then(|s| s.parse().ok())
        .unwrap_or(3);
    println!("editor save-to-figures against a plain run (median of {repeats}, interleaved)");
    println!(
        "{:<34} {:>10} {:>10} {:>7}",
        "stage", "run", "editor", "ratio"
    );
    for p in &demos {
        let text = std::fs::read_to_string(p).expect("demo text");
        let (mut a, mut b) = (Vec::new(), Vec::new());
        for _ in 0..repeats {
            let s = Instant::now();
            assert!(plain_run(p) > 0);
            a.push(s.elapsed().as_secs_f64());
            let s = Instant::now();
            assert!(editor_save(p, &text) > 0, "figures shown");
            b.push(s.elapsed().as_secs_f64());
        }
        let (ta, tb) = (timing::median(a), timing::median(b));
        println!(
            "{:<34} {:>8.3} s {:>8.3} s {:>7.3}",
            p.file_name()
                .map(|n| n.to_string_lossy())
                .unwrap_or_default(),
            ta,
            tb,
            tb / ta
        );
    }
}
