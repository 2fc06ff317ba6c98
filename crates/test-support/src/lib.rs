//! What the workspace's tests and benchmarks share across crates, so none of them reaches into
//! another crate's `tests/` folder: the invented arms ([`arms`], [`invented_arm`]), the seeded
//! generators ([`seeded`]), where the sample scenes are ([`samples`]), the fixtures of the
//! outside-reference checks ([`reference`](mod@reference)) and the one rule for a check that
//! needs an outside tool ([`outside_tool`]).
//!
//! Test code only: every crate takes it as a dev-dependency, and it is never published.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

pub mod arms;
pub mod invented_arm;
pub mod outside_tool;
pub mod reference;
pub mod samples;
pub mod seeded;

use std::path::PathBuf;

/// The workspace's root folder (two levels above this crate).
pub fn workspace_root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../..")
}
