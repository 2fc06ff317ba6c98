//! The scene document: our own versioned JSON format (`*.armwright.json`).
//!
//! Naming scheme: `document.rs` (the types, in the file's units, and each enum's file words),
//! `field.rs` (what a row of the field table holds) and `field_table.rs` (one row per number in
//! the file: key, unit, range, decimals, meaning, label, accessor), `decode.rs` (JSON → types,
//! collecting every problem with its JSON path), `encode.rs` (types → JSON, keys in a fixed
//! order), `migrate.rs` (one step per older version), `validate.rs` (rules across fields),
//! `duplicate_keys.rs` (a key given twice in one object), `outline.rs` (every object of the
//! file with its rows and other keys), `reference.rs` and `schema.rs` (the Markdown reference
//! and the JSON Schema printed from the outline, committed under `docs/`), `units.rs` (the one
//! place that turns file units into the SI arm model), `load.rs` and
//! `save.rs` (files: read without side effects, write atomically), `inputs.rs` (the input arm:
//! each analog input's points fitted, the pose a set of readings gives), `problem.rs` (a located
//! problem and the nearest-name suggestion).
//!
//! What is computed from the document lives outside it: turning the sequence into a trajectory
//! task and planning it is [`crate::task`]'s, the workspace and arm as collision geometry
//! [`crate::workcell`]'s, placement success per pick and place [`crate::placement`]'s; sampling
//! the plan is the trajectory crate's (`TaskPlan::sampler`), turning samples into device
//! setpoints the link crate's (`device_setpoints`).

mod decode;
mod document;
mod duplicate_keys;
mod encode;
pub mod field;
pub mod field_table;
mod inputs;
mod load;
mod migrate;
mod outline;
mod problem;
mod reference;
mod save;
mod schema;
mod units;
mod validate;

pub use document::{
    ArmDoc, ArmShape, ArmTypeWord, Arrival, ArticulatedSize, AxisDoc, BandDoc, BoxDoc,
    CalibrationDoc, CalibrationPoint, ChainConvention, Device, DhRowDoc, FileWords, GripperDoc,
    GripperState, InputDoc, InputPointDoc, JointDoc, JointKindDoc, JointLimitDoc, LinkMassDoc,
    LinkSettings, MoveKind, PlacementDoc, ProfileKind, ScaraSize, Scene, ServoDoc, Shaping, Timing,
    ToolMassDoc, TrayDoc, Waypoint, Workspace,
};
pub(crate) use inputs::fit_input;
pub use inputs::{InputMap, InputPose, input_map_of};
pub use load::{load, load_bytes};
pub use migrate::{CURRENT_VERSION, FORMAT_NAME};
pub use problem::Problem;
pub(crate) use problem::child;
pub use reference::reference_markdown;
pub use save::{as_saved, save, save_text, save_unrounded, to_json, to_json_unrounded};
pub use schema::schema_json;
pub use units::{
    arm_description, build_arm, pose_from_file_units, pose_to_file_units, position_from_file_unit,
    position_to_file_unit, rate_from_file_unit, rate_to_file_unit,
};
pub use validate::{sequence_problems, validate};

use std::path::PathBuf;

/// Why a scene could not be loaded or saved. Each variant carries what locates the problem.
#[derive(Debug, thiserror::Error)]
pub enum SceneError {
    /// The file could not be read.
    #[error("cannot read {}: {source}", .path.display())]
    Read {
        /// The file.
        path: PathBuf,
        /// What the system said.
        source: std::io::Error,
    },
    /// The text is not JSON.
    #[error("not valid JSON at line {line}, column {column}: {message}")]
    Syntax {
        /// 1-based line.
        line: usize,
        /// 1-based column.
        column: usize,
        /// What the parser expected.
        message: String,
    },
    /// The JSON is not an armwright scene (no or another `format`).
    #[error("not an armwright scene: {found}")]
    NotAScene {
        /// What was found instead, in words.
        found: String,
    },
    /// The `version` field is missing.
    #[error("the scene has no \"version\" field; add \"version\": {CURRENT_VERSION}")]
    MissingVersion,
    /// The `version` field is not a whole number from 1 up.
    #[error("\"version\" must be a whole number from 1 up, got {found}")]
    BadVersion {
        /// The value found, as written.
        found: String,
    },
    /// The file was written by a newer program.
    #[error(
        "this scene is format version {found}, newer than this program reads (up to version {supported}); use a newer armwright"
    )]
    NewerVersion {
        /// The file's version.
        found: u64,
        /// The newest version this program reads.
        supported: u64,
    },
    /// The file reads but has problems: every one, each with its JSON path.
    #[error("{} problem(s) in the scene", .problems.len())]
    Problems {
        /// Every problem found.
        problems: Vec<Problem>,
    },
    /// The file could not be written; the existing file (if any) is unchanged.
    #[error("cannot save {}: {source}", .path.display())]
    Write {
        /// The file.
        path: PathBuf,
        /// What the system said.
        source: std::io::Error,
    },
}
