//! The command line: `check`, `pose`, `reach`, `envelope`.
//!
//! Naming scheme: `args.rs` declares every option (clap derive); one file per subcommand
//! (`check.rs`, `pose.rs`, `reach.rs`, `envelope.rs`); `report.rs` prints results as text or
//! JSON and loads the scene for a subcommand; `svg.rs` draws an envelope map.
//!
//! Exit status: 0 on success, 1 when the scene has problems or a target cannot be reached, 2
//! when the input cannot be read (missing file, not JSON, not a scene, newer version, bad
//! arguments).

mod args;
mod check;
mod envelope;
mod pose;
mod reach;
mod report;
mod svg;

pub use args::{Cli, Command, View};

use clap::Parser;
use std::process::ExitCode;

/// How a subcommand ended; its number is the process exit status.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Outcome {
    /// 0: done.
    Done,
    /// 1: the scene has problems, or a target cannot be reached.
    Refused,
    /// 2: the input cannot be read.
    Unreadable,
}

impl Outcome {
    /// The process exit status: 0, 1 or 2.
    pub fn code(self) -> u8 {
        match self {
            Outcome::Done => 0,
            Outcome::Refused => 1,
            Outcome::Unreadable => 2,
        }
    }
}

/// Parses the process arguments and runs the subcommand; the exit code says how it went.
pub fn run() -> ExitCode {
    let cli = Cli::parse();
    ExitCode::from(execute(&cli.command).code())
}

/// Runs one subcommand, printing to standard output (results) and standard error (failures
/// in text mode).
pub fn execute(command: &Command) -> Outcome {
    match command {
        Command::Check { file, json } => check::run(file, *json),
        Command::Pose { file, joints, json } => pose::run(file, joints, *json),
        Command::Reach {
            file,
            to,
            near,
            json,
        } => reach::run(file, to, near.as_deref(), *json),
        Command::Envelope {
            file,
            view,
            at,
            cells,
            json,
            svg,
        } => envelope::run(file, *view, *at, *cells, *json, svg.as_deref()),
    }
}
