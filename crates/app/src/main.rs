//! The `armwright` binary: the command line (the desktop editor comes later).

fn main() -> std::process::ExitCode {
    armwright::cli::run()
}
