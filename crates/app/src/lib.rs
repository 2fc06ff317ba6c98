//! Armwright's scene document and command line, shared by the `armwright` binary.
//!
//! The scene file is our own JSON format (`*.armwright.json`): every number carries its unit in
//! its key (`_mm`, `_deg`, `_g`, `_ncm`, `_us`, `_ms`, `_pct`). [`scene`] reads, checks, migrates
//! and saves it and turns its arm into an [`armwright_kinematics::Arm`]; [`cli`] is the command
//! line on top.
#![warn(missing_docs)]

pub mod approach; // how every stream starts (wake, approach) and may end (park), as setpoints
pub(crate) mod calibration_fit; // a calibration fit in the scene's units, for calibrate and the editor
pub mod cli; // the `armwright` subcommands (listed by `armwright --help`)
pub mod editor; // the desktop editor: views, joints, sequence, files, emergency stop
pub(crate) mod follow_run; // one follow run on an open link, for the editor's Follow and jog
pub mod input_fit; // an analog input's fit judged: slope, residuals, what is poor about it
pub(crate) mod link_capacity; // whether a scene's setpoint rate fits its serial link
pub mod placement; // placement success per pick and place, with the scene's tolerances
pub(crate) mod pose_report; // the readout of one pose: tool point, torques, payload, pulses
pub mod scene; // the scene document: types, load, validate, migrate, save, unit conversion
pub mod task; // the scene's sequence as a trajectory task: plan, dry run, retime
pub mod workcell; // the scene's workspace and arm as collision geometry, grips and carries
