//! The one rule for a test that needs an outside tool (the AVR compiler and simulator, the Python
//! reference libraries, a virtual screen): when the tool is missing the check is skipped and
//! says so where `cargo test` shows it. The notice is written straight to standard error, past
//! the test harness's output capture (which takes only `print!`/`eprint!`), so a line
//! `SKIPPED: … did not run` stands among the test results although the test passes.
//! `ARMWRIGHT_STRICT=1` (CI) turns a missing tool into a failure.

use std::io::Write;

/// Whether `ARMWRIGHT_STRICT=1`: a missing tool fails the test.
pub fn strict() -> bool {
    std::env::var("ARMWRIGHT_STRICT").is_ok_and(|v| v == "1")
}

/// Called when `check` cannot run because of `why` (what is missing and where to get it).
/// Returns after writing the skip notice where `cargo test` shows it (the caller then skips the
/// check); under `ARMWRIGHT_STRICT=1` fails the test instead.
pub fn cannot_run(check: &str, why: &str) {
    if strict() {
        panic!("ARMWRIGHT_STRICT=1 and {check} cannot run: {why}");
    }
    // Past the harness's capture on purpose: a skipped check must be seen.
    let mut stderr = std::io::stderr().lock();
    let _ = writeln!(
        stderr,
        "SKIPPED: {check} did not run: {why}. Install what it needs (README.md, \"Install \
         notes\"); ARMWRIGHT_STRICT=1 makes this a failure."
    );
}
