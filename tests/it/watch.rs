//! `run --watch` and `check --watch`: the command runs, then runs again
//! after the stage file or a file it includes changes, and goes on after a
//! run that failed. Each test spawns the command, changes files, reads the
//! reports and the status lines, and kills it.

use std::io::{BufRead, BufReader, Read};
use std::path::Path;
use std::process::{Child, Command, Stdio};
use std::sync::mpsc::{channel, Receiver};
use std::sync::{Arc, Mutex};
use std::time::{Duration, Instant};

/// How long one run may take to show (a small linear stage in a debug
/// build; the margin is for a loaded machine).
const WAIT: Duration = Duration::from_secs(60);

struct Watched {
    child: Child,
    status: Receiver<String>,
    out: Arc<Mutex<String>>,
}

impl Watched {
    fn start(args: &[&str], dir: &Path) -> Watched {
        let mut child = Command::new(env!("CARGO_BIN_EXE_tankwave"))
            .args(args)
            .current_dir(dir)
            .stdin(Stdio::null())
            .stdout(Stdio::piped())
            .stderr(Stdio::piped())
            .spawn()
            .expect("starts");
        let err = child.stderr.take().expect("stderr");
        let (tx, status) = channel();
        std::thread::spawn(move || {
            for line in BufReader::new(err).lines().map_while(Result::ok) {
                if line.starts_with("watching ") && tx.send(line).is_err() {
                    return;
                }
            }
        });
        let mut so = child.stdout.take().expect("stdout");
        let out = Arc::new(Mutex::new(String::new()));
        let o = out.clone();
        std::thread::spawn(move || {
            let mut buf = [0u8; 4096];
            while let Ok(n) = so.read(&mut buf) {
                if n == 0 {
                    return;
                }
                o.lock()
                    .expect("lock")
                    .push_str(&String::from_utf8_lossy(&buf[..n]));
            }
        });
        Watched { child, status, out }
    }

    /// The next status line (one per finished run).
    fn next_run(&self) -> String {
        self.status.recv_timeout(WAIT).expect("a run in time")
    }

    /// The standard output read so far, once it contains `needle` (or
    /// after `WAIT`): the status line on standard error can arrive before
    /// the reader of standard output has taken the report the run printed.
    fn stdout_with(&self, needle: &str) -> String {
        let started = Instant::now();
        loop {
            let out = self.out.lock().expect("lock").clone();
            if out.contains(needle) || started.elapsed() > WAIT {
                return out;
            }
            std::thread::sleep(Duration::from_millis(10));
        }
    }
}

impl Drop for Watched {
    fn drop(&mut self) {
        let _ = self.child.kill();
        let _ = self.child.wait();
    }
}

const STAGE: &str = "voltage vdrv src gnd wave=sine(amp=5V, freq=10MHz) internal=50Ohm\n\
    resistor rl src gnd 50Ohm\noutput rl\ninput vdrv\nanalyze steady freq=10MHz harmonics=4\n";

/// Write `text` to `path` so that the change is seen even within the
/// file system's time resolution: the size changes too.
fn rewrite(path: &Path, text: &str) {
    std::fs::write(path, text).expect("write");
}

#[test]
fn run_watch_runs_again_on_change_and_after_errors() {
    let dir = tempfile::tempdir().expect("dir");
    let f = dir.path().join("w.tank");
    rewrite(&f, STAGE);
    let w = Watched::start(&["run", "--watch", "w.tank"], dir.path());
    let first = w.next_run();
    assert!(first.contains("last exit code 0"), "{first}");
    // 5 V open circuit into 50 Ω + 50 Ω: 2.5 V peak across rl, P = V²/(2R)
    // = 62.5 mW (Ohm's law and the mean power of a sinusoid)
    let out = w.stdout_with("62.5 mW");
    assert!(out.contains("62.5 mW"), "{out}");
    rewrite(&f, &format!("{STAGE}resistor broken a gnd 5F\n"));
    let second = w.next_run();
    assert!(second.contains("last exit code 2"), "{second}");
    rewrite(&f, &STAGE.replace("amp=5V", "amp=10V"));
    let third = w.next_run();
    assert!(third.contains("last exit code 0"), "{third}");
    // twice the amplitude, four times the power: 250 mW
    let out = w.stdout_with("250 mW");
    assert!(out.contains("250 mW"), "{out}");
    assert_eq!(out.matches("Steady state at").count(), 2, "{out}");
    let started = Instant::now();
    drop(w);
    assert!(started.elapsed() < WAIT);
}

#[test]
fn check_watch_sees_an_included_file_change() {
    let dir = tempfile::tempdir().expect("dir");
    std::fs::write(dir.path().join("load.tank"), "resistor rl src gnd 50Ohm\n").expect("inc");
    let stage = STAGE.replace("resistor rl src gnd 50Ohm\n", "include \"load.tank\"\n")
        + "require pout >= 50mW\n";
    std::fs::write(dir.path().join("c.tank"), stage).expect("stage");
    let w = Watched::start(&["check", "--watch", "--no-caution", "c.tank"], dir.path());
    let first = w.next_run();
    // 62.5 mW >= 50 mW passes
    assert!(first.contains("last exit code 0"), "{first}");
    // 150 Ω with 50 Ω inside the source: 3.75 V peak, 46.9 mW < 50 mW fails
    std::fs::write(dir.path().join("load.tank"), "resistor rl src gnd 150Ohm\n").expect("inc");
    let second = w.next_run();
    assert!(second.contains("last exit code 1"), "{second}");
}
