//! Progress and elapsed time on stderr: bars (indicatif) only when stderr
//! is a terminal and `--quiet` is not given; the closing `finished in …`
//! line whenever `--quiet` is not given. The library crates print nothing:
//! they tell a [`tankwave_stage::Observer`] or a callback, and this module
//! draws.

use indicatif::{ProgressBar, ProgressStyle};
use std::io::IsTerminal;
use std::sync::OnceLock;
use std::time::{Duration, Instant};

/// Whether `--quiet` was given (set once, at start-up).
static QUIET: OnceLock<bool> = OnceLock::new();

/// Record `--quiet`.
pub fn set_quiet(quiet: bool) {
    let _ = QUIET.set(quiet);
}

/// Whether `--quiet` was given.
pub fn quiet() -> bool {
    QUIET.get().copied().unwrap_or(false)
}

/// Whether progress bars are drawn: stderr is a terminal and not `--quiet`.
pub fn bars() -> bool {
    !quiet() && std::io::stderr().is_terminal()
}

/// A bar on stderr with `template`, ticking by itself (so a spinner moves
/// while an analysis that cannot say how far it is runs); `None` when bars
/// are not drawn.
pub fn bar(len: u64, template: &str) -> Option<ProgressBar> {
    if !bars() {
        return None;
    }
    let pb = ProgressBar::new(len);
    if let Ok(style) = ProgressStyle::with_template(template) {
        pb.set_style(style.progress_chars("=> "));
    }
    pb.enable_steady_tick(Duration::from_millis(120));
    Some(pb)
}

/// Progress of the analyses of one stage file: which analysis runs (k of
/// n, its kind) and, for a transient, how much of its stop time is done.
pub struct Analyses {
    pb: Option<ProgressBar>,
    file: String,
}

/// Steps of the bar of one analysis.
const STEPS: u64 = 1000;

impl Analyses {
    /// Progress for solving `file` (nothing is drawn unless [`bars`]).
    pub fn new(file: &str) -> Self {
        Analyses {
            pb: bar(
                STEPS,
                "{spinner} {elapsed:>4} {msg} [{bar:30}] {percent:>3}% of this analysis",
            ),
            file: file.to_string(),
        }
    }

    /// Clear the bar (before the report is printed).
    pub fn finish(&self) {
        if let Some(pb) = &self.pb {
            pb.finish_and_clear();
        }
    }
}

impl tankwave_stage::Observer for Analyses {
    fn started(&self, index: usize, count: usize, what: &str) {
        if let Some(pb) = &self.pb {
            pb.set_position(0);
            pb.set_message(format!(
                "{}: analysis {} of {count} ({what})",
                crate::cmd::common::esc(&self.file),
                index + 1
            ));
        }
    }

    fn advanced(&self, fraction: f64) {
        if let Some(pb) = &self.pb {
            pb.set_position((fraction.clamp(0.0, 1.0) * STEPS as f64) as u64);
        }
    }
}

/// The wall-clock time of a command, told at its end.
pub struct Clock(Instant);

impl Clock {
    /// Start timing now.
    pub fn start() -> Self {
        Clock(Instant::now())
    }

    /// Print `finished in <time>` (SI prefix and unit) on stderr, unless `--quiet`.
    pub fn report(&self) {
        if !quiet() {
            eprintln!("{}", finished_line(self.0.elapsed()));
        }
    }
}

/// The closing line of a long command: `finished in 2.31 s`, `finished in 480 ms`.
pub fn finished_line(d: Duration) -> String {
    format!(
        "finished in {}",
        tankwave_measure::units::si_prefixed(d.as_secs_f64(), "s", 3)
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn finished_line_carries_prefix_and_unit() {
        // SI prefixes: BIPM SI Brochure, 9th ed. (2019), table 7
        assert_eq!(
            finished_line(Duration::from_millis(480)),
            "finished in 480 ms"
        );
        assert!(finished_line(Duration::from_millis(2310)).ends_with(" s"));
    }
}
