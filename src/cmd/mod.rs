//! One module per subcommand. Each exposes its clap arguments and a `run`
//! that returns the process exit code.

pub mod check;
pub mod common;
pub mod design;
pub mod editor;
pub mod fit;
pub mod lint;
pub mod run;
pub mod study;
pub mod upgrade;
pub mod visual;
pub mod watch;
