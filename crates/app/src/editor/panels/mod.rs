//! The editor's panels, one per file. Each draws from `&EditorState` and returns a
//! [`Command`](super::command::Command) applied after the frame.
//!
//! Naming scheme: the file is named for what the panel shows: `top_bar.rs` (emergency stop,
//! files, undo), `joint_controls.rs`, `tool_point.rs` (drag feedback, tool angle, branches,
//! torque use), `sequence.rs` (waypoints), `timeline.rs` (plots against time, time cursor,
//! playback), `status_bar.rs` (messages and cautions), `dialogs.rs` (questions shown over the
//! window, never over the emergency stop); the tools panel's tabs `link.rs` (the device:
//! connect, caution, stream, statistics), `retime.rs`, `arm_settings.rs`, `calibration.rs` (step
//! a joint's pulse, record the positions read, the fit, the deadband search, apply), `follow.rs`
//! (the Follow switch, its speed share, jog steps and keys) and `inputs.rs` (the input arm's
//! form, at the foot of the Arm tab).

mod arm_settings;
mod calibration;
mod dialogs;
mod follow;
mod inputs;
mod joint_controls;
mod link;
mod retime;
mod sequence;
mod status_bar;
mod timeline;
mod tool_point;
mod top_bar;

pub use arm_settings::arm_settings;
pub(crate) use calibration::step_keys as calibration_step_keys;
pub use calibration::{MOVED_LABEL, calibration};
pub use dialogs::dialogs;
pub use follow::{
    FOLLOW_INPUT_LABEL, FOLLOW_LABEL, JOG_BACK_KEY, JOG_KEYS, JOG_ON_KEY, follow, jog_keys,
};
pub use inputs::{ADD_INPUT_LABEL, TAKE_LABEL, inputs};
pub use joint_controls::joint_controls;
pub use link::{ACKNOWLEDGE_LABEL, PARK_LABEL, link};
pub use retime::retime;
pub use sequence::sequence;
pub use status_bar::{CAUTION, status_bar};
pub use timeline::{TimelinePlot, timeline};
pub use tool_point::{NUDGE_KEYS, tool_point};
pub use top_bar::{EMERGENCY_STOP_LABEL, top_bar};

/// `count` and its noun, singular for one: "1 waypoint", "8 waypoints".
pub(crate) fn counted(count: usize, one: &str, many: &str) -> String {
    if count == 1 {
        format!("1 {one}")
    } else {
        format!("{count} {many}")
    }
}
