//! The integration-test binary: the `tankwave` command end to end (`cli`,
//! `bad_input`), agreement of the steady-state methods on every demo stage
//! (`agreement`), the convergence sweep over the class-C demo
//! (`convergence`), and a bounded solve of random small circuits
//! (`fuzz_smoke`), the demo outputs against golden files (`golden`),
//! hostile input from strangers (`hostile`), the crate layering and
//! syntax-tree boundary (`layering`), and the README commands as written
//! (`readme`). Data lives under
//! tests/data/.

mod agreement;
mod bad_input;
mod cli;
mod convergence;
mod fuzz_smoke;
mod golden;
mod harness;
mod hostile;
mod layering;
mod readme;
mod ruggedness;
mod trade;
