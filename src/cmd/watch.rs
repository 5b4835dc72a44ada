//! `--watch` for `run` and `check`: run the command, then wait until the
//! stage file or any file it includes changes (modification time, size or
//! existence, polled), clear the terminal and run it again, whatever the
//! last run's outcome, until interrupted.

use std::io::{IsTerminal, Write};
use std::path::PathBuf;
use std::time::{Duration, SystemTime};

/// How often the files are looked at.
const POLL: Duration = Duration::from_millis(200);

/// What a file looked like: its modification time and size, or nothing.
type Seen = Vec<(PathBuf, Option<(SystemTime, u64)>)>;

fn look(files: &[PathBuf]) -> Seen {
    files
        .iter()
        .map(|f| {
            let m = std::fs::metadata(f)
                .ok()
                .map(|m| (m.modified().unwrap_or(SystemTime::UNIX_EPOCH), m.len()));
            (f.clone(), m)
        })
        .collect()
}

/// The files a run of `stages` reads: each stage file and its includes.
fn inputs(stages: &[PathBuf]) -> Vec<PathBuf> {
    let mut v: Vec<PathBuf> = stages
        .iter()
        .flat_map(|s| super::common::input_files(s))
        .collect();
    v.sort();
    v.dedup();
    v
}

/// Run `once` now and again after every change to `stages` or their
/// includes; never returns (the command ends when interrupted).
pub fn watch(stages: &[PathBuf], mut once: impl FnMut() -> i32) -> i32 {
    let names: Vec<String> = stages
        .iter()
        .map(|p| super::common::esc(&p.display().to_string()).into_owned())
        .collect();
    loop {
        // the files are listed before the run, so that a change made while
        // it runs is seen after it
        let files = inputs(stages);
        let seen = look(&files);
        if std::io::stdout().is_terminal() {
            // clear the screen and move the cursor home (ECMA-48: ED 2, CUP)
            print!("\x1b[2J\x1b[H");
        }
        let code = once();
        let _ = std::io::stdout().flush();
        eprintln!(
            "watching {} ({} file(s)); last exit code {code}; Ctrl-C to stop",
            names.join(", "),
            files.len()
        );
        loop {
            std::thread::sleep(POLL);
            // a new include changes the stage file itself, so the list of
            // the last run is enough to notice every change
            if look(&files) != seen {
                break;
            }
        }
    }
}
