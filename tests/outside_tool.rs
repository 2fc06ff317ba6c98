//! The one rule for a test that needs an outside tool (the AVR compiler and simulator, the Python
//! reference libraries, a virtual screen): when the tool is missing the test **fails**, naming
//! the tool and how to get it, so `cargo test`'s summary shows that the check did not run.
//! `ARMWRIGHT_ALLOW_SKIP=1` says skipping is wanted: the test then prints `skipped: …` on
//! standard error and passes. `ARMWRIGHT_STRICT=1` (CI) fails even then.
//!
//! Included with `#[path = ".../tests/outside_tool.rs"] mod outside_tool;`.
#![allow(dead_code)]

/// Whether `ARMWRIGHT_STRICT=1`: a missing tool fails whatever else is set.
pub fn strict() -> bool {
    std::env::var("ARMWRIGHT_STRICT").is_ok_and(|v| v == "1")
}

/// Whether `ARMWRIGHT_ALLOW_SKIP=1`: a missing tool skips its check instead of failing it.
pub fn skip_allowed() -> bool {
    std::env::var("ARMWRIGHT_ALLOW_SKIP").is_ok_and(|v| v == "1")
}

/// Called when `check` cannot run because of `why` (what is missing and where to get it).
/// Returns (the caller then skips the check) only under `ARMWRIGHT_ALLOW_SKIP=1` without
/// `ARMWRIGHT_STRICT=1`; fails the test otherwise.
pub fn cannot_run(check: &str, why: &str) {
    if strict() {
        panic!("ARMWRIGHT_STRICT=1 and {check} cannot run: {why}");
    }
    if skip_allowed() {
        eprintln!("skipped: {check} cannot run: {why} (ARMWRIGHT_ALLOW_SKIP=1)");
        return;
    }
    panic!(
        "{check} cannot run: {why}. Install what it needs (README.md, \"Install notes\"), or \
         set ARMWRIGHT_ALLOW_SKIP=1 to skip the checks that need an outside tool."
    );
}
