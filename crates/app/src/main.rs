//! The `armwright` binary: the desktop editor (no arguments, or `edit [FILE]`) and the command
//! line.

fn main() -> std::process::ExitCode {
    let args: Vec<std::ffi::OsString> = std::env::args_os().skip(1).collect();
    if let Some(code) = armwright::editor::run_from_args(&args) {
        return code;
    }
    armwright::cli::run()
}
