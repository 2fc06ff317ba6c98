//! The command line: `check`, `pose`, `reach`, `envelope`.

/// Parses the process arguments and runs the subcommand; the exit code says how it went.
pub fn run() -> std::process::ExitCode {
    std::process::ExitCode::SUCCESS
}
