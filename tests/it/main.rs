//! The integration-test binary: the default steady state against an
//! independent reference (`accuracy`), the `tankwave` command end to end (`cli`,
//! `bad_input`), the editor server driven by a scripted client over stdio
//! (`editor`), `run --watch` and `check --watch` (`watch`), agreement of the steady-state methods on every demo stage
//! (`agreement`), the convergence sweep over the class-C demo
//! (`convergence`), what a new user meets first (`first_hour`), a bounded
//! solve of random small circuits (`fuzz_smoke`), the demo outputs against
//! golden files (`golden`), the typed handles against the displayed names on
//! every demo (`handles`),
//! hostile input from strangers (`hostile`), CW keying end to end
//! (`keying`), a fitted measured network in the reports (`measured`), the crate layering and
//! syntax-tree boundary (`layering`), and the README commands as written
//! (`readme`). Data lives under
//! tests/data/.

mod accuracy;
mod agreement;
mod bad_input;
mod cli;
mod convergence;
mod editor;
mod envelope;
mod first_hour;
mod fit;
mod floor;
mod fuzz_smoke;
mod golden;
mod handles;
mod harness;
mod hostile;
mod keying;
mod layering;
mod loadpull;
mod measured;
mod readme;
mod ruggedness;
mod trade;
mod twotone;
mod watch;
