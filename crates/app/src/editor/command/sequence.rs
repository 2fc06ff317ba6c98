//! Editing the sequence: storing the pose as a waypoint (named and set from the one before
//! it), inserting, deleting, duplicating, reordering and editing waypoints, selecting one and
//! jumping the arm to it. Every change of the scene is one undo step (`command::edit`).

use nalgebra::Vector3;

use super::WaypointField;
use super::history::edit;
use crate::editor::history::EditKey;
use crate::editor::state::{EditorState, Level};
use crate::editor::waypoint_name::relative_name;
use crate::scene::{MoveKind, Waypoint, pose_from_file_units};

/// Stores the pose as a waypoint after the selected one (at the end when none is).
pub(super) fn store(state: &mut EditorState) {
    let at = state
        .selected_waypoint
        .map_or(state.scene.waypoints.len(), |index| index + 1);
    add_waypoint(state, at);
}

/// Stores the pose as a waypoint before the selected one (first when none is).
pub(super) fn insert(state: &mut EditorState) {
    let at = state.selected_waypoint.unwrap_or(0);
    add_waypoint(state, at);
}

/// Deletes waypoint `index`; the one now at its place (or the last) is selected.
pub(super) fn delete(state: &mut EditorState, index: usize) {
    if index < state.scene.waypoints.len() {
        edit(state, None, |state| {
            let removed = state.scene.waypoints.remove(index);
            state.selected_waypoint = if state.scene.waypoints.is_empty() {
                None
            } else {
                Some(index.min(state.scene.waypoints.len() - 1))
            };
            state.say(Level::Info, format!("deleted \"{}\"", removed.name));
        });
    }
}

/// Puts a copy of waypoint `index`, named as a copy, after it.
pub(super) fn duplicate(state: &mut EditorState, index: usize) {
    if let Some(original) = state.scene.waypoints.get(index).cloned() {
        let name = unique_name(state, &format!("{} (copy)", original.name));
        let copy = Waypoint {
            name: name.clone(),
            ..original
        };
        edit(state, None, |state| {
            state.scene.waypoints.insert(index + 1, copy);
            state.selected_waypoint = Some(index + 1);
        });
        state.say(Level::Info, format!("stored \"{name}\""));
    }
}

/// Removes every waypoint (one undo step); the arm is kept.
pub(super) fn clear(state: &mut EditorState) {
    if !state.scene.waypoints.is_empty() {
        let count = state.scene.waypoints.len();
        edit(state, None, |state| {
            state.scene.waypoints.clear();
            state.selected_waypoint = None;
        });
        state.say(
            Level::Info,
            format!(
                "new sequence: {} removed (undo brings them back); the arm is kept",
                match count {
                    1 => "1 waypoint".to_string(),
                    count => format!("{count} waypoints"),
                }
            ),
        );
    }
}

/// Moves waypoint `from` to place `to`.
pub(super) fn move_to(state: &mut EditorState, from: usize, to: usize) {
    let count = state.scene.waypoints.len();
    if from < count && to < count && from != to {
        edit(state, None, |state| {
            let waypoint = state.scene.waypoints.remove(from);
            state.scene.waypoints.insert(to, waypoint);
            state.selected_waypoint = Some(to);
        });
    }
}

/// Changes one setting of waypoint `index`; repeated changes of one field are one undo step.
pub(super) fn edit_field(state: &mut EditorState, index: usize, field: WaypointField) {
    if index < state.scene.waypoints.len() && field_is_valid(&field) {
        let key = EditKey::Waypoint {
            waypoint: index,
            field: field.key(),
        };
        edit(state, Some(key), |state| {
            let waypoint = &mut state.scene.waypoints[index];
            match field {
                WaypointField::Name(name) => waypoint.name = name,
                WaypointField::MoveKind(kind) => waypoint.move_kind = kind,
                WaypointField::Profile(profile) => waypoint.profile = profile,
                WaypointField::SpeedSharePct(pct) => waypoint.speed_share_pct = pct,
                WaypointField::DwellMs(ms) => waypoint.dwell_ms = ms,
                WaypointField::Arrival(arrival) => waypoint.arrival = arrival,
                WaypointField::Gripper(gripper) => waypoint.gripper = gripper,
            }
        });
    }
}

/// Puts the arm's pose and gripper into waypoint `index`.
pub(super) fn update_pose(state: &mut EditorState, index: usize) {
    if index < state.scene.waypoints.len() {
        let values = state.pose_in_file_units();
        let gripper = state.gripper;
        edit(state, None, |state| {
            let waypoint = &mut state.scene.waypoints[index];
            waypoint.joints_deg_or_mm = values;
            waypoint.gripper = gripper;
        });
    }
}

/// Selects waypoint `index`.
pub(super) fn select(state: &mut EditorState, index: usize) {
    if index < state.scene.waypoints.len() {
        state.selected_waypoint = Some(index);
        state.document.history.break_merge();
    }
}

/// Selects waypoint `index` and puts the arm at its pose and gripper.
pub(super) fn jump_to(state: &mut EditorState, index: usize) {
    let Some(waypoint) = state.scene.waypoints.get(index) else {
        return;
    };
    state.selected_waypoint = Some(index);
    state.document.history.break_merge();
    if waypoint.joints_deg_or_mm.len() != state.joint_count() {
        let message = format!(
            "\"{}\" has {} joint positions, the arm has {} joints",
            waypoint.name,
            waypoint.joints_deg_or_mm.len(),
            state.joint_count()
        );
        state.say(Level::Error, message);
        return;
    }
    let gripper = waypoint.gripper;
    state.pose = pose_from_file_units(&state.scene.arm, &waypoint.joints_deg_or_mm);
    state.gripper = gripper;
    state.readout.forget_drag();
    state.pose_changed();
}

/// Whether a number typed into a waypoint setting is one the scene file accepts.
fn field_is_valid(field: &WaypointField) -> bool {
    match field {
        WaypointField::SpeedSharePct(pct) => pct.is_finite() && *pct > 0.0 && *pct <= 100.0,
        WaypointField::DwellMs(ms) => ms.is_finite() && *ms >= 0.0,
        _ => true,
    }
}

/// How close two tool points must be across (x and y), in m, for a move between them to count
/// as straight up or down (0.5 mm).
const VERTICAL_ACROSS: f64 = 0.5e-3;

/// Stores the current pose at `at`. The new waypoint takes the settings of the one before it
/// (move, profile, speed share, dwell, arrival); one stored straight above or below the one
/// before it is a straight move, named for it ("20 mm below grip spacer 1", counted from what
/// the one before describes rather than stacked on its name: `waypoint_name.rs`), and one that
/// leaves such a vertical approach sideways is a joint move; one that only changes the gripper
/// is named for that ("grip spacer 1, gripper closed").
fn add_waypoint(state: &mut EditorState, at: usize) {
    let at = at.min(state.scene.waypoints.len());
    let pose = state.pose_in_file_units();
    let previous = at
        .checked_sub(1)
        .and_then(|index| state.scene.waypoints.get(index));
    let mut waypoint = match previous {
        Some(previous) => Waypoint {
            gripper: state.gripper,
            ..previous.clone()
        },
        None => Waypoint {
            gripper: state.gripper,
            ..Waypoint::default()
        },
    };
    waypoint.joints_deg_or_mm = pose.clone();
    let mut name = None;
    let here = state.tool_point();
    let there = previous.and_then(|previous| waypoint_tool_point(state, previous));
    if let (Some(previous), Some(here), Some(there)) = (previous, here, there) {
        match vertical_rise_mm(here, there) {
            Some(rise_mm) if rise_mm.abs() >= 0.5 => {
                waypoint.move_kind = MoveKind::Straight;
                name = Some(relative_name(
                    &previous.name,
                    previous.gripper,
                    rise_mm,
                    state.gripper,
                ));
            }
            Some(_) if previous.gripper != state.gripper => {
                name = Some(relative_name(
                    &previous.name,
                    previous.gripper,
                    0.0,
                    state.gripper,
                ));
            }
            Some(_) => {}
            None => {
                // Leaving a vertical approach or retreat sideways: a joint move.
                let before = at
                    .checked_sub(2)
                    .and_then(|index| state.scene.waypoints.get(index))
                    .and_then(|before| waypoint_tool_point(state, before));
                if before
                    .and_then(|before| vertical_rise_mm(there, before))
                    .is_some_and(|rise_mm| rise_mm.abs() >= 0.5)
                {
                    waypoint.move_kind = MoveKind::Joint;
                }
            }
        }
    }
    let name = match name {
        Some(name) => unique_name(state, &name),
        None => fresh_name(state),
    };
    waypoint.name = name.clone();
    edit(state, None, |state| {
        state.scene.waypoints.insert(at, waypoint);
        state.selected_waypoint = Some(at);
    });
    state.say(Level::Info, format!("stored \"{name}\""));
}

/// The tool point of a waypoint's pose, in m, when the arm and its joint count allow.
fn waypoint_tool_point(state: &EditorState, waypoint: &Waypoint) -> Option<Vector3<f64>> {
    let arm = state.arm()?;
    if waypoint.joints_deg_or_mm.len() != state.joint_count() {
        return None;
    }
    let pose = pose_from_file_units(&state.scene.arm, &waypoint.joints_deg_or_mm);
    armwright_kinematics::tool_pose(arm, &pose)
        .ok()
        .map(|pose| pose.translation.vector)
}

/// How far `here` is above `there` (negative: below), in mm, when it is straight above or below
/// it (within [`VERTICAL_ACROSS`] across); `None` otherwise.
fn vertical_rise_mm(here: Vector3<f64>, there: Vector3<f64>) -> Option<f64> {
    let across = (here.x - there.x).hypot(here.y - there.y);
    (across <= VERTICAL_ACROSS).then(|| (here.z - there.z) * 1e3)
}

/// `name`, or `name (2)`, `name (3)`… when a waypoint already has it.
fn unique_name(state: &EditorState, name: &str) -> String {
    let taken = |candidate: &str| state.scene.waypoints.iter().any(|w| w.name == candidate);
    if !taken(name) {
        return name.to_string();
    }
    (2..)
        .map(|n| format!("{name} ({n})"))
        .find(|candidate| !taken(candidate))
        .unwrap_or_default()
}

/// "point N" with the smallest N not yet used.
fn fresh_name(state: &EditorState) -> String {
    (state.scene.waypoints.len() + 1..)
        .map(|n| format!("point {n}"))
        .find(|name| state.scene.waypoints.iter().all(|w| &w.name != name))
        .unwrap_or_default()
}
