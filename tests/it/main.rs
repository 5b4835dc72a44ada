//! The integration-test binary: the `tankwave` command end to end (`cli`),
//! and the convergence sweep over the class-C demo (`convergence`).
//! Data lives under tests/data/.

mod bad_input;
mod cli;
mod convergence;
mod fuzz_smoke;
mod harness;
