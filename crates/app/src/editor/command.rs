//! What a panel asks for, and how it changes the state. Panels return a [`Command`]; the editor
//! applies every command after the frame's drawing, in order.
//!
//! Commands that need the world outside the state (files, the system's file dialog, closing the
//! window) come back from [`apply`] as [`Outside`] for the editor to carry out.

use std::path::PathBuf;

use armwright_kinematics::{IkError, IkOptions, IkTarget, JointKind, solve_ik};
use nalgebra::Vector3;

use armwright_link::ResetConfirmation;

use super::arm_form::{ArmField, ArmTypeChoice, with_arm_type};
use super::calibration::{self, CalibrationCommand};
use super::device::LinkAction;
use super::estop::{StopLink, StopRequest};
use super::history::{EditKey, Snapshot};
use super::playback::{self, PlaybackCommand};
use super::retime_job::RetimeRun;
use super::state::{
    BranchChoice, Dialog, EditorState, Level, ReachStatus, StopSource, StopState, ToolsTab,
};
use super::waypoint_name::relative_name;
use crate::scene::{
    Arrival, Device, GripperState, MoveKind, ProfileKind, Scene, Waypoint, pose_from_file_units,
    position_to_file_unit, validate,
};
use crate::task::RetimeSettings;

/// A revolute joint turning more than this in one drag step counts as a jump to another branch,
/// in rad (60°): the nearest solution near a singular pose can be far away.
const BRANCH_JUMP: f64 = std::f64::consts::FRAC_PI_3;

/// A prismatic joint sliding more than this in one drag step counts as a jump, in m.
const SLIDE_JUMP: f64 = 0.05;

/// One change of one waypoint's settings.
#[derive(Debug, Clone, PartialEq)]
pub enum WaypointField {
    /// The waypoint's name.
    Name(String),
    /// How the arm gets there.
    MoveKind(MoveKind),
    /// The velocity profile.
    Profile(ProfileKind),
    /// Share of each joint's limits the move may use, in %.
    SpeedSharePct(f64),
    /// Pause at the waypoint, in ms.
    DwellMs(f64),
    /// Stop or pass through.
    Arrival(Arrival),
    /// Gripper open or closed.
    Gripper(GripperState),
}

impl WaypointField {
    fn key(&self) -> &'static str {
        match self {
            WaypointField::Name(_) => "name",
            WaypointField::MoveKind(_) => "move kind",
            WaypointField::Profile(_) => "profile",
            WaypointField::SpeedSharePct(_) => "speed share",
            WaypointField::DwellMs(_) => "dwell",
            WaypointField::Arrival(_) => "arrival",
            WaypointField::Gripper(_) => "gripper",
        }
    }
}

/// Something a panel asks the editor to do.
#[must_use]
#[derive(Debug, Clone, PartialEq)]
pub enum Command {
    /// Nothing.
    None,
    /// Several commands, applied in order.
    Many(Vec<Command>),
    /// Set one joint, in rad (revolute) or m (prismatic); clamped to its limits.
    SetJoint {
        /// Joint index, 0-based.
        joint: usize,
        /// New position, rad or m.
        position: f64,
    },
    /// Open or close the gripper.
    SetGripper(GripperState),
    /// Set the tool angle held while dragging, in rad.
    SetToolAngle(f64),
    /// Move the tool point to this target (base frame, m), solving the inverse kinematics on
    /// the current branch.
    DragToolPoint {
        /// The target, in m.
        target: [f64; 3],
    },
    /// Switch to one of the other branches offered after the last drag.
    ChooseBranch(usize),
    /// Store the current pose as a new waypoint after the selected one (or at the end).
    StoreWaypoint,
    /// Store the current pose as a new waypoint before the selected one (or at the start).
    InsertWaypoint,
    /// Delete a waypoint.
    DeleteWaypoint(usize),
    /// Store a copy of a waypoint right after it.
    DuplicateWaypoint(usize),
    /// Empty the sequence to teach a new one, keeping the arm and the timing (one undo step).
    NewSequence,
    /// Move a waypoint from one place in the sequence to another.
    MoveWaypoint {
        /// Its index now.
        from: usize,
        /// Its index afterwards.
        to: usize,
    },
    /// Replace the scene's description (free text for people); typing merges into one undo
    /// step.
    SetDescription(String),
    /// Change one setting of one waypoint.
    EditWaypoint {
        /// The waypoint's index.
        index: usize,
        /// What changes.
        field: WaypointField,
    },
    /// Replace a waypoint's pose with the current pose.
    UpdateWaypointPose(usize),
    /// Select a waypoint.
    SelectWaypoint(usize),
    /// Select a waypoint and move the arm to its pose.
    JumpToWaypoint(usize),
    /// Undo the last edit.
    Undo,
    /// Redo the last undone edit.
    Redo,
    /// Stop the arm now and latch the stop.
    EmergencyStop(StopSource),
    /// Ask before clearing the stop latch.
    RequestStopReset,
    /// Clear the stop latch (after the user confirmed).
    ConfirmStopReset,
    /// Show this tab of the tools panel.
    ShowToolsTab(ToolsTab),
    /// Pick the device the link panel connects to.
    ChooseDevice(Device),
    /// The user read and acknowledged the streaming caution.
    AcknowledgeCaution,
    /// End each stream at the rest pose (park) or not.
    ParkAfterStream(bool),
    /// Ask the device link to do something (on its worker thread).
    Link(LinkAction),
    /// Show a dialog.
    ShowDialog(Dialog),
    /// Close the dialog.
    CloseDialog,
    /// Change the typed path of the open or save-as dialog.
    SetDialogPath(String),
    /// Open the scene at this path (on a worker thread).
    OpenPath(PathBuf),
    /// Save to the scene's file, or ask for one.
    Save,
    /// Save to this path (on a worker thread), closing the window afterwards if asked.
    SaveToPath {
        /// The file.
        path: PathBuf,
        /// Close the window once saved.
        then_close: bool,
    },
    /// Pick a file with the system's dialog (on a worker thread) for the open dialog.
    BrowseForOpen,
    /// Pick a file with the system's dialog (on a worker thread) for the save-as dialog.
    BrowseForSave,
    /// Close the window, dropping unsaved changes.
    CloseWithoutSaving,
    /// Take the recovery copy as the scene.
    Recover,
    /// Throw the recovery copy away.
    DiscardRecovery,
    /// Set the retime target's largest overshoot, in mm (above 0).
    SetRetimeOvershoot(f64),
    /// Set the retime target's torque share, in % of stall torque (above 0, at most 100).
    SetRetimeTorqueShare(f64),
    /// Retime the sequence for the target (on a worker thread).
    StartRetime,
    /// Stop the running retime after its current dry run.
    CancelRetime,
    /// Put the finished retime's timing into the scene, as one undo step.
    ApplyRetime,
    /// Drop the finished retime's result.
    DiscardRetime,
    /// Text typed into one field of the arm settings: kept as typed, applied to the arm when the
    /// scene with it is valid.
    EditArmField {
        /// The field.
        field: ArmField,
        /// The whole text now in it.
        text: String,
    },
    /// The user left an arm settings field: the next edit starts a new undo step.
    FinishArmField,
    /// Switch the arm's type (one undo step), or say why not when taught data would be lost.
    ChangeArmType(ArmTypeChoice),
    /// Move the timeline's cursor, play, pause, change speed or what the plot shows: a preview
    /// that changes no scene and records no undo step.
    Playback(PlaybackCommand),
    /// Something for the calibration panel: step the joint's pulse, record a point, look for
    /// the deadband, apply the fit (one undo step).
    Calibration(CalibrationCommand),
    /// Follow and jog (`follow.rs`).
    Follow(super::follow::FollowCommand),
}

impl Command {
    /// This command, then `next`.
    pub fn then(self, next: Command) -> Command {
        match (self, next) {
            (Command::None, next) => next,
            (this, Command::None) => this,
            (Command::Many(mut list), next) => {
                list.push(next);
                Command::Many(list)
            }
            (this, next) => Command::Many(vec![this, next]),
        }
    }
}

/// What [`apply`] leaves for the editor to do outside the state.
#[derive(Debug, Clone, PartialEq)]
pub enum Outside {
    /// Read this scene file.
    Open(PathBuf),
    /// Write the scene to this file.
    Save {
        /// The file.
        path: PathBuf,
        /// Close the window once saved.
        then_close: bool,
    },
    /// Run the system's file dialog to pick a file to open.
    BrowseForOpen,
    /// Run the system's file dialog to pick a file to save to.
    BrowseForSave,
    /// Close the window now.
    Close,
    /// Load the recovery copy.
    Recover,
    /// Delete the recovery copy.
    DiscardRecovery,
    /// Hand this to the device link.
    Link(LinkAction),
    /// Retime this scene on a worker thread.
    StartRetime {
        /// The scene as it was when asked.
        scene: Box<Scene>,
        /// The target.
        settings: RetimeSettings,
    },
    /// Ask the running retime to stop.
    CancelRetime,
}

/// Applies one command to the state. A stop request goes to `stop_link` at once, tagged with
/// `frame`. Anything that needs files or the window comes back in `outside`.
pub fn apply(
    state: &mut EditorState,
    command: Command,
    stop_link: &mut dyn StopLink,
    frame: u64,
    outside: &mut Vec<Outside>,
) {
    match command {
        Command::None => {}
        Command::Many(list) => {
            for command in list {
                apply(state, command, stop_link, frame, outside);
            }
        }
        Command::EmergencyStop(source) => {
            stop_link.send_stop(StopRequest { source, frame });
            state.stop = StopState::Latched { source, frame };
            let how = match source {
                StopSource::Button => "button",
                StopSource::Key => "key",
            };
            state.say(
                Level::Warning,
                format!("emergency stop sent ({how}); latched until reset"),
            );
        }
        Command::RequestStopReset => {
            if matches!(state.stop, StopState::Latched { .. }) {
                state.dialog = Some(Dialog::ConfirmStopReset);
            }
        }
        Command::ConfirmStopReset => {
            // Built only here, in answer to the confirmation question.
            stop_link.confirm_reset(ResetConfirmation::confirmed_by_person());
            state.stop = StopState::Clear;
            state.dialog = None;
            state.say(Level::Info, "emergency stop reset");
        }
        Command::ShowToolsTab(tab) => state.tools_tab = tab,
        Command::ChooseDevice(device) => state.link_device = device,
        Command::AcknowledgeCaution => {
            state.caution_acknowledged = true;
            state.say(
                Level::Info,
                "streaming caution acknowledged for this session",
            );
        }
        Command::ParkAfterStream(park) => state.park_after_stream = park,
        Command::Link(action) => link_action(state, action, outside),
        Command::SetJoint { joint, position } => {
            if joint < state.pose.len() && position.is_finite() {
                state.pose[joint] = state.clamp_to_limits(joint, position);
                state.branch = None;
                state.branch_choices.clear();
                state.reach = ReachStatus::Idle;
                state.pose_changed();
            }
        }
        Command::SetGripper(gripper) => state.gripper = gripper,
        Command::SetToolAngle(angle) => {
            if angle.is_finite() {
                state.tool_angle = wrap_angle(angle);
            }
        }
        Command::DragToolPoint { target } => drag_tool_point(state, target),
        Command::ChooseBranch(index) => {
            if let Some(choice) = state.branch_choices.get(index).cloned()
                && choice.positions.len() == state.pose.len()
            {
                state.pose = choice.positions;
                state.branch = Some(choice.label.clone());
                state.branch_choices.clear();
                state.reach = ReachStatus::Reached;
                state.pose_changed();
                state.say(
                    Level::Info,
                    format!("switched to branch \"{}\"", choice.label),
                );
            }
        }
        Command::StoreWaypoint => {
            let at = state
                .selected_waypoint
                .map_or(state.scene.waypoints.len(), |index| index + 1);
            add_waypoint(state, at);
        }
        Command::InsertWaypoint => {
            let at = state.selected_waypoint.unwrap_or(0);
            add_waypoint(state, at);
        }
        Command::DeleteWaypoint(index) => {
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
        Command::DuplicateWaypoint(index) => {
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
        Command::NewSequence => {
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
        Command::MoveWaypoint { from, to } => {
            let count = state.scene.waypoints.len();
            if from < count && to < count && from != to {
                edit(state, None, |state| {
                    let waypoint = state.scene.waypoints.remove(from);
                    state.scene.waypoints.insert(to, waypoint);
                    state.selected_waypoint = Some(to);
                });
            }
        }
        Command::EditWaypoint { index, field } => {
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
        Command::SetDescription(text) => {
            edit(state, Some(EditKey::Description), |state| {
                state.scene.description = text;
            });
        }
        Command::UpdateWaypointPose(index) => {
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
        Command::SelectWaypoint(index) => {
            if index < state.scene.waypoints.len() {
                state.selected_waypoint = Some(index);
                state.history.break_merge();
            }
        }
        Command::JumpToWaypoint(index) => jump_to_waypoint(state, index),
        Command::Undo => {
            let current = snapshot(state);
            match state.history.undo(current) {
                Some(previous) => restore(state, previous),
                None => state.say(Level::Info, "nothing to undo"),
            }
        }
        Command::Redo => {
            let current = snapshot(state);
            match state.history.redo(current) {
                Some(next) => restore(state, next),
                None => state.say(Level::Info, "nothing to redo"),
            }
        }
        Command::ShowDialog(dialog) => state.dialog = Some(dialog),
        Command::CloseDialog => state.dialog = None,
        Command::SetDialogPath(text) => {
            if let Some(Dialog::Open { path } | Dialog::SaveAs { path, .. }) = &mut state.dialog {
                *path = text;
            }
        }
        Command::OpenPath(path) => {
            state.dialog = None;
            outside.push(Outside::Open(path));
        }
        Command::Save => match state.file_path.clone() {
            Some(path) => outside.push(Outside::Save {
                path,
                then_close: false,
            }),
            None => {
                state.dialog = Some(Dialog::SaveAs {
                    path: String::new(),
                    then_close: false,
                })
            }
        },
        Command::SaveToPath { path, then_close } => {
            state.dialog = None;
            outside.push(Outside::Save { path, then_close });
        }
        Command::BrowseForOpen => outside.push(Outside::BrowseForOpen),
        Command::BrowseForSave => outside.push(Outside::BrowseForSave),
        Command::CloseWithoutSaving => {
            state.dialog = None;
            outside.push(Outside::Close);
        }
        Command::Recover => {
            state.dialog = None;
            outside.push(Outside::Recover);
        }
        Command::DiscardRecovery => {
            state.dialog = None;
            outside.push(Outside::DiscardRecovery);
        }
        Command::SetRetimeOvershoot(mm) => {
            if mm.is_finite() && mm > 0.0 {
                state.retime.max_overshoot_mm = mm;
            }
        }
        Command::SetRetimeTorqueShare(pct) => {
            if pct.is_finite() && pct > 0.0 && pct <= 100.0 {
                state.retime.torque_share_pct = pct;
            }
        }
        Command::StartRetime => start_retime(state, outside),
        Command::CancelRetime => {
            if let RetimeRun::Running { cancelling, .. } = &mut state.retime.run {
                *cancelling = true;
                outside.push(Outside::CancelRetime);
            }
        }
        Command::ApplyRetime => apply_retime(state),
        Command::DiscardRetime => {
            if matches!(state.retime.run, RetimeRun::Finished(_)) {
                state.retime.run = RetimeRun::Idle;
                state.say(Level::Info, "discarded the retimed timing");
            }
        }
        Command::EditArmField { field, text } => {
            if let Some(arm) = state.arm_form.type_text(field, text, &state.scene) {
                edit(state, Some(EditKey::Arm(field)), |state| {
                    state.scene.arm = arm
                });
                state.arm_changed();
            }
        }
        Command::FinishArmField => state.history.break_merge(),
        Command::ChangeArmType(choice) => {
            match with_arm_type(&state.scene, choice) {
                Some(Ok((scene, message))) => {
                    let same_kinds = scene.arm.shape.joint_kinds().get(..4)
                        == state.scene.arm.shape.joint_kinds().get(..4);
                    edit(state, None, |state| state.scene = scene);
                    if !same_kinds {
                        // Positions of the old joints mean nothing on the new ones: start at home.
                        state.pose.clear();
                    }
                    state.arm_changed();
                    state.arm_form.arm_replaced(&state.scene);
                    state.say(Level::Info, message);
                }
                Some(Err(refusal)) => state.say(Level::Warning, refusal),
                None => {}
            }
        }
        Command::Playback(command) => playback::apply(state, command),
        Command::Calibration(command) => calibration::apply(state, command, outside),
        Command::Follow(command) => super::follow::apply(state, command, outside),
    }
}

/// Passes a link action on, unless it would move the arm while that is not allowed: streaming
/// needs the caution acknowledged and no stop latched.
fn link_action(state: &mut EditorState, action: LinkAction, outside: &mut Vec<Outside>) {
    let moves = matches!(
        action,
        LinkAction::Stream { .. } | LinkAction::Resume | LinkAction::HoldChannel(_)
    );
    if moves && !state.caution_acknowledged {
        state.say(
            Level::Warning,
            "read and acknowledge the caution in the link panel before streaming",
        );
    } else if moves && matches!(state.stop, StopState::Latched { .. }) {
        state.say(
            Level::Warning,
            "the emergency stop is latched: check the arm and reset the stop before streaming",
        );
    } else {
        outside.push(Outside::Link(action));
    }
}

/// Starts a retime of the scene as it is, when it is valid and nothing is running.
fn start_retime(state: &mut EditorState, outside: &mut Vec<Outside>) {
    if state.retime.run.is_running() {
        return;
    }
    let refusal = if state.arm.is_none() {
        Some("cannot retime: the arm cannot be built".to_string())
    } else if state.scene.waypoints.len() < 2 {
        Some("cannot retime: the sequence needs at least two waypoints".to_string())
    } else {
        let problems = validate(&state.scene);
        problems.first().map(|first| match problems.len() {
            1 => format!("cannot retime: the scene has a problem at {first}"),
            count => format!("cannot retime: the scene has {count} problems, the first at {first}"),
        })
    };
    if let Some(reason) = refusal {
        state.retime.run = RetimeRun::Failed { reason };
        return;
    }
    state.retime.run = RetimeRun::Running {
        progress: 0.0,
        base: Box::new(state.scene.clone()),
        cancelling: false,
    };
    outside.push(Outside::StartRetime {
        scene: Box::new(state.scene.clone()),
        settings: state.retime.settings(),
    });
}

/// Writes a finished retime's timing into the scene as one undo step, unless the scene changed
/// since the retime started.
fn apply_retime(state: &mut EditorState) {
    let RetimeRun::Finished(report) = &state.retime.run else {
        return;
    };
    if report.base != state.scene {
        state.say(
            Level::Warning,
            "the scene changed since this retime started: its result is stale; retime again",
        );
        return;
    }
    let retimed = report.retimed.clone();
    let message = format!(
        "applied the retimed timing: cycle {:.2} s, was {:.2} s (one undo step)",
        report.after.cycle_time_s, report.before.cycle_time_s
    );
    edit(state, None, |state| state.scene = retimed);
    // The torque share became the scene's derating: torque use at the pose follows it.
    state.pose_changed();
    state.retime.run = RetimeRun::Idle;
    state.say(Level::Info, message);
}

/// Whether a number typed into a waypoint setting is one the scene file accepts.
fn field_is_valid(field: &WaypointField) -> bool {
    match field {
        WaypointField::SpeedSharePct(pct) => pct.is_finite() && *pct > 0.0 && *pct <= 100.0,
        WaypointField::DwellMs(ms) => ms.is_finite() && *ms >= 0.0,
        _ => true,
    }
}

/// An angle wrapped into (−π, π], in rad.
fn wrap_angle(angle: f64) -> f64 {
    let wrapped = angle.rem_euclid(std::f64::consts::TAU);
    if wrapped > std::f64::consts::PI {
        wrapped - std::f64::consts::TAU
    } else {
        wrapped
    }
}

fn snapshot(state: &EditorState) -> Snapshot {
    Snapshot {
        scene: state.scene.clone(),
        selected_waypoint: state.selected_waypoint,
    }
}

fn restore(state: &mut EditorState, snapshot: Snapshot) {
    let arm_changed = snapshot.scene.arm != state.scene.arm;
    let timing_changed = snapshot.scene.timing != state.scene.timing;
    state.scene = snapshot.scene;
    state.selected_waypoint = snapshot.selected_waypoint;
    if arm_changed {
        state.arm_changed();
        state.arm_form.arm_replaced(&state.scene);
    } else if timing_changed {
        state.pose_changed();
    }
    state.scene_changed();
}

/// Runs an edit of the scene as one undo step (merging with the previous step when `key` is the
/// same as its key).
pub(super) fn edit(
    state: &mut EditorState,
    key: Option<EditKey>,
    change: impl FnOnce(&mut EditorState),
) {
    let before = snapshot(state);
    change(state);
    if state.scene != before.scene {
        state.history.record(before, key);
        state.scene_changed();
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

fn jump_to_waypoint(state: &mut EditorState, index: usize) {
    let Some(waypoint) = state.scene.waypoints.get(index) else {
        return;
    };
    state.selected_waypoint = Some(index);
    state.history.break_merge();
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
    state.branch = None;
    state.branch_choices.clear();
    state.reach = ReachStatus::Idle;
    state.pose_changed();
}

fn drag_tool_point(state: &mut EditorState, target: [f64; 3]) {
    let Some(arm) = state.arm.as_ref() else {
        return;
    };
    let ik_target =
        IkTarget::at(Vector3::new(target[0], target[1], target[2])).with_angle(state.tool_angle);
    match solve_ik(arm, &ik_target, &state.pose, &IkOptions::default()) {
        Ok(solutions) => {
            let branches = solutions.as_slice();
            let chosen = match &state.branch {
                Some(label) => branches.iter().find(|branch| branch.label() == label),
                None => Some(solutions.nearest(&state.pose)),
            };
            let kinds: Vec<JointKind> = (0..state.pose.len())
                .map(|joint| state.joint_kind(joint))
                .collect();
            let continuous =
                chosen.filter(|branch| !jumps(&kinds, &state.pose, branch.positions()));
            state.branch_choices = branches
                .iter()
                .filter(|branch| Some(branch.label()) != continuous.map(|c| c.label()))
                .map(|branch| BranchChoice {
                    label: branch.label().to_string(),
                    positions: branch.positions().to_vec(),
                })
                .collect();
            match continuous {
                Some(branch) => {
                    state.pose = branch.positions().to_vec();
                    state.branch = Some(branch.label().to_string());
                    state.reach = ReachStatus::Reached;
                    let angle = state.tool_angle;
                    state.pose_changed();
                    // Keep the angle the user set, not the one read back (they agree up to
                    // rounding, and reading back would let it creep).
                    state.tool_angle = angle;
                }
                None => state.reach = ReachStatus::OtherBranchOnly,
            }
        }
        Err(IkError::OutOfReach { short_by }) => {
            state.reach = ReachStatus::OutOfReach {
                short_by_mm: short_by * 1e3,
            };
        }
        Err(IkError::BeyondLimit {
            joint,
            position,
            by,
        }) => {
            let kind = state.scene.arm.shape.joint_kinds();
            let kind = kind
                .get(joint)
                .copied()
                .unwrap_or(crate::scene::JointKindDoc::Revolute);
            state.reach = ReachStatus::AtJointLimit {
                joint,
                needed: position_to_file_unit(kind, position),
                past_by: position_to_file_unit(kind, by),
            };
        }
        Err(error) => {
            state.reach = ReachStatus::NotSolved {
                reason: error.to_string(),
            };
        }
    }
}

/// Whether going from `from` to `to` moves a joint by more than one drag step can.
fn jumps(kinds: &[JointKind], from: &[f64], to: &[f64]) -> bool {
    kinds
        .iter()
        .zip(from.iter().zip(to))
        .any(|(kind, (a, b))| match kind {
            JointKind::Revolute => (a - b).abs() > BRANCH_JUMP,
            JointKind::Prismatic => (a - b).abs() > SLIDE_JUMP,
        })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::editor::estop::ChannelStopLink;
    use crate::editor::sample::sample_scene;

    fn run(state: &mut EditorState, command: Command) -> Vec<Outside> {
        let (mut link, _requests) = ChannelStopLink::new();
        let mut outside = Vec::new();
        apply(state, command, &mut link, 7, &mut outside);
        outside
    }

    #[test]
    fn repeated_edits_of_one_field_are_one_undo_step() {
        let mut state = EditorState::new(sample_scene(), None);
        for dwell in [100.0, 200.0, 300.0] {
            let _ = run(
                &mut state,
                Command::EditWaypoint {
                    index: 1,
                    field: WaypointField::DwellMs(dwell),
                },
            );
        }
        assert_eq!(state.scene.waypoints[1].dwell_ms, 300.0);
        let _ = run(&mut state, Command::Undo);
        assert_eq!(
            state.scene.waypoints[1].dwell_ms,
            sample_scene().waypoints[1].dwell_ms
        );
        assert!(!state.can_undo());
        assert!(!state.is_dirty());
    }

    #[test]
    fn a_speed_share_outside_the_file_rules_is_refused() {
        let mut state = EditorState::new(sample_scene(), None);
        let _ = run(
            &mut state,
            Command::EditWaypoint {
                index: 0,
                field: WaypointField::SpeedSharePct(0.0),
            },
        );
        assert_eq!(state.scene, sample_scene());
    }

    #[test]
    fn storing_puts_the_pose_after_the_selected_waypoint() {
        let mut state = EditorState::new(sample_scene(), None);
        let _ = run(&mut state, Command::SelectWaypoint(1));
        let _ = run(
            &mut state,
            Command::SetJoint {
                joint: 0,
                position: 0.2,
            },
        );
        let _ = run(&mut state, Command::StoreWaypoint);
        assert_eq!(state.selected_waypoint, Some(2));
        let stored = &state.scene.waypoints[2];
        assert!((stored.joints_deg_or_mm[0] - 0.2f64.to_degrees()).abs() < 1e-9);
        assert_eq!(
            state.scene.waypoints.len(),
            sample_scene().waypoints.len() + 1
        );
    }

    #[test]
    fn a_new_waypoint_follows_the_one_before_it() {
        let mut state = EditorState::new(sample_scene(), None);
        let _ = run(&mut state, Command::NewSequence);
        assert!(state.scene.waypoints.is_empty());
        assert_eq!(state.scene.arm, sample_scene().arm, "the arm is kept");
        let _ = run(&mut state, Command::StoreWaypoint);
        let _ = run(
            &mut state,
            Command::EditWaypoint {
                index: 0,
                field: WaypointField::SpeedSharePct(35.0),
            },
        );
        let _ = run(
            &mut state,
            Command::EditWaypoint {
                index: 0,
                field: WaypointField::DwellMs(120.0),
            },
        );
        let first = state.scene.waypoints[0].clone();
        // 20 mm straight down from it.
        let at = state.tool_point().expect("tool point");
        let _ = run(
            &mut state,
            Command::DragToolPoint {
                target: [at.x, at.y, at.z - 0.02],
            },
        );
        assert_eq!(state.reach, ReachStatus::Reached);
        let _ = run(&mut state, Command::StoreWaypoint);
        let second = state.scene.waypoints[1].clone();
        assert_eq!(second.move_kind, MoveKind::Straight);
        assert_eq!(second.name, format!("20 mm below {}", first.name));
        assert_eq!(
            (
                second.speed_share_pct,
                second.dwell_ms,
                second.profile,
                second.arrival
            ),
            (
                first.speed_share_pct,
                first.dwell_ms,
                first.profile,
                first.arrival
            )
        );
        // Only the gripper changes: named for it.
        let _ = run(&mut state, Command::SetGripper(GripperState::Closed));
        let _ = run(&mut state, Command::StoreWaypoint);
        assert_eq!(
            state.scene.waypoints[2].name,
            format!("{}, gripper closed", second.name)
        );
        // Sideways: a joint move, a plain name.
        let at = state.tool_point().expect("tool point");
        let _ = run(
            &mut state,
            Command::DragToolPoint {
                target: [at.x + 0.02, at.y, at.z],
            },
        );
        let _ = run(&mut state, Command::StoreWaypoint);
        assert!(state.scene.waypoints[3].name.starts_with("point "));
        // Duplicate: a copy right after, with a name of its own.
        let _ = run(&mut state, Command::DuplicateWaypoint(1));
        assert_eq!(state.scene.waypoints.len(), 5);
        assert_eq!(
            state.scene.waypoints[2].name,
            format!("{} (copy)", second.name)
        );
        assert_eq!(
            state.scene.waypoints[2].joints_deg_or_mm,
            second.joints_deg_or_mm
        );
        assert_eq!(state.selected_waypoint, Some(2));
        // One undo step each (new sequence, five stores and a duplicate, two settings): the
        // sample comes back whole.
        for _ in 0..9 {
            let _ = run(&mut state, Command::Undo);
        }
        assert!(!state.can_undo());
        assert_eq!(state.scene, sample_scene());
    }

    #[test]
    fn a_joint_is_held_inside_its_limits() {
        let mut state = EditorState::new(sample_scene(), None);
        let _ = run(
            &mut state,
            Command::SetJoint {
                joint: 0,
                position: 10.0,
            },
        );
        let max = state.arm().map(|arm| arm.joints()[0].max);
        assert_eq!(Some(state.pose[0]), max);
    }

    #[test]
    fn the_other_branch_is_taken_only_when_chosen() {
        // Wide limits so the elbow can bend either way.
        let mut scene = sample_scene();
        for joint in &mut scene.arm.joints[1..] {
            joint.min = -175.0;
            joint.max = 175.0;
        }
        let mut state = EditorState::new(scene, None);
        assert!(state.arm().is_some());
        let start = state.tool_point().expect("tool point");
        let target = [start.x + 0.005, start.y, start.z];
        let _ = run(&mut state, Command::DragToolPoint { target });
        assert_eq!(state.reach, ReachStatus::Reached);
        let branch = state.branch.clone().expect("a branch");
        let Some(other) = state.branch_choices.first().cloned() else {
            panic!("with wide limits the elbow can bend the other way");
        };
        assert_ne!(other.label, branch);
        let _ = run(&mut state, Command::ChooseBranch(0));
        assert_eq!(state.branch.as_deref(), Some(other.label.as_str()));
        assert_eq!(state.pose, other.positions);
    }

    #[test]
    fn a_target_behind_the_base_names_the_joint_at_its_limit() {
        // The sample's base turns ±90°: straight behind it needs 180° (or a shoulder bent over
        // backwards, past its own limit).
        let mut state = EditorState::new(sample_scene(), None);
        let pose = state.pose.clone();
        let height = state.tool_point().expect("tool point").z;
        let _ = run(
            &mut state,
            Command::DragToolPoint {
                target: [-0.15, 0.0, height],
            },
        );
        let ReachStatus::AtJointLimit { joint, past_by, .. } = state.reach.clone() else {
            panic!("{:?}", state.reach);
        };
        assert!(past_by > 0.0);
        assert_eq!(state.pose, pose, "the arm stays where it was");
        let problems = state.reach_problems();
        assert!(
            problems[0].starts_with(&format!("AT JOINT LIMIT: {}", state.joint_label(joint))),
            "{problems:?}"
        );
    }

    #[test]
    fn a_stop_is_sent_with_its_frame_and_latched() {
        let mut state = EditorState::new(sample_scene(), None);
        let (mut link, requests) = ChannelStopLink::new();
        let mut outside = Vec::new();
        apply(
            &mut state,
            Command::EmergencyStop(StopSource::Key),
            &mut link,
            42,
            &mut outside,
        );
        assert_eq!(
            requests.try_recv().ok(),
            Some(StopRequest {
                source: StopSource::Key,
                frame: 42
            })
        );
        assert_eq!(
            state.stop,
            StopState::Latched {
                source: StopSource::Key,
                frame: 42
            }
        );
        // A reset without the question is not possible from a panel: it opens the question.
        apply(
            &mut state,
            Command::RequestStopReset,
            &mut link,
            43,
            &mut outside,
        );
        assert_eq!(state.dialog, Some(Dialog::ConfirmStopReset));
        assert!(matches!(state.stop, StopState::Latched { .. }));
    }

    #[test]
    fn angles_wrap_into_half_open_turn() {
        assert!((wrap_angle(3.0 * std::f64::consts::PI) - std::f64::consts::PI).abs() < 1e-12);
        assert!((wrap_angle(-0.5) + 0.5).abs() < 1e-12);
    }

    #[test]
    fn a_small_step_is_not_a_jump_but_a_flip_is() {
        let kinds = [JointKind::Revolute, JointKind::Prismatic];
        assert!(!jumps(&kinds, &[0.0, 0.0], &[0.1, 0.01]));
        assert!(jumps(&kinds, &[0.0, 0.0], &[2.0, 0.0]));
        assert!(jumps(&kinds, &[0.0, 0.0], &[0.0, 0.2]));
    }

    #[test]
    fn streaming_waits_for_the_caution_and_for_a_cleared_stop() {
        let mut state = EditorState::new(sample_scene(), None);
        let stream = LinkAction::Stream { park: false };
        assert!(run(&mut state, Command::Link(stream.clone())).is_empty());
        assert!(
            state
                .messages
                .last()
                .is_some_and(|m| m.text.contains("caution"))
        );
        let _ = run(&mut state, Command::AcknowledgeCaution);
        assert_eq!(
            run(&mut state, Command::Link(stream.clone())),
            vec![Outside::Link(stream)]
        );
        let _ = run(&mut state, Command::EmergencyStop(StopSource::Button));
        assert!(run(&mut state, Command::Link(LinkAction::Resume)).is_empty());
        assert!(
            state
                .messages
                .last()
                .is_some_and(|m| m.text.contains("latched"))
        );
        // Connecting and pausing do not move the arm, so they go through.
        assert_eq!(
            run(&mut state, Command::Link(LinkAction::Pause)),
            vec![Outside::Link(LinkAction::Pause)]
        );
    }

    #[test]
    fn the_confirmed_reset_reaches_the_stop_link() {
        struct Resets(usize);
        impl StopLink for Resets {
            fn send_stop(&mut self, _request: StopRequest) {}
            fn confirm_reset(&mut self, _confirmation: ResetConfirmation) {
                self.0 += 1;
            }
        }
        let mut state = EditorState::new(sample_scene(), None);
        let mut link = Resets(0);
        let mut outside = Vec::new();
        apply(
            &mut state,
            Command::EmergencyStop(StopSource::Key),
            &mut link,
            1,
            &mut outside,
        );
        apply(
            &mut state,
            Command::RequestStopReset,
            &mut link,
            2,
            &mut outside,
        );
        assert_eq!(link.0, 0, "asking is not resetting");
        apply(
            &mut state,
            Command::ConfirmStopReset,
            &mut link,
            3,
            &mut outside,
        );
        assert_eq!(link.0, 1);
        assert_eq!(state.stop, StopState::Clear);
    }
}
