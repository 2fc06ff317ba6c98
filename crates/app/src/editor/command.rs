//! What a panel asks for, and how it changes the state. Panels return a [`Command`]; the editor
//! applies every command after the frame's drawing, in order.
//!
//! Commands that need the world outside the state (files, the system's file dialog, closing the
//! window) come back from [`apply`] as [`Outside`] for the editor to carry out.
//!
//! By area, one file each under `command/`, and [`apply`] only dispatches: `stop.rs` the
//! emergency stop and its reset, `dialogs.rs` the dialog and the tools tab, `document.rs` the
//! description and the file work, `history.rs` undo, redo and [`edit`](history::edit) (one undo
//! step), `link.rs` the device link's settings and actions, `pose.rs` moves the edited arm
//! (joints, gripper, tool angle, drag, branch), `sequence.rs` edits the waypoints, `retime.rs`
//! runs the retime tab, `arm.rs` the arm settings form, `calibration.rs`, `follow.rs` and
//! `inputs.rs` hand their commands to their areas.

use std::path::PathBuf;

use super::arm_form::{ArmField, ArmTypeChoice};
use super::calibration::CalibrationCommand;
use super::device::LinkAction;
use super::estop::{StopLink, StopSource};
use super::follow::FollowCommand;
use super::playback::PlaybackCommand;
use super::state::{Dialog, EditorState, ToolsTab};
use crate::scene::{Arrival, Device, GripperState, MoveKind, ProfileKind, Scene};
use crate::task::RetimeSettings;

mod arm;
mod calibration;
mod dialogs;
mod document;
mod follow;
mod history;
mod inputs;
mod link;
mod pose;
mod retime;
mod sequence;
mod stop;

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
    Follow(FollowCommand),
    /// Something for the input arm's form: add or remove an input or a point, type a number,
    /// take a reading (`inputs_form.rs`); a valid result is one undo step.
    Inputs(super::inputs_form::InputsCommand),
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
/// `frame`. Anything that needs files or the window comes back in `outside`. A dispatch table:
/// each area's work is in its file under `command/`.
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
        Command::EmergencyStop(source) => stop::emergency_stop(state, stop_link, source, frame),
        Command::RequestStopReset => stop::request_reset(state),
        Command::ConfirmStopReset => stop::confirm_reset(state, stop_link),
        Command::ShowToolsTab(tab) => dialogs::show_tab(state, tab),
        Command::ChooseDevice(device) => link::choose_device(state, device),
        Command::AcknowledgeCaution => link::acknowledge_caution(state),
        Command::ParkAfterStream(park) => link::park_after_stream(state, park),
        Command::Link(action) => link::action(state, action, outside),
        Command::SetJoint { joint, position } => pose::set_joint(state, joint, position),
        Command::SetGripper(gripper) => pose::set_gripper(state, gripper),
        Command::SetToolAngle(angle) => pose::set_tool_angle(state, angle),
        Command::DragToolPoint { target } => pose::drag_tool_point(state, target),
        Command::ChooseBranch(index) => pose::choose_branch(state, index),
        Command::StoreWaypoint => sequence::store(state),
        Command::InsertWaypoint => sequence::insert(state),
        Command::DeleteWaypoint(index) => sequence::delete(state, index),
        Command::DuplicateWaypoint(index) => sequence::duplicate(state, index),
        Command::NewSequence => sequence::clear(state),
        Command::MoveWaypoint { from, to } => sequence::move_to(state, from, to),
        Command::EditWaypoint { index, field } => sequence::edit_field(state, index, field),
        Command::SetDescription(text) => document::set_description(state, text),
        Command::UpdateWaypointPose(index) => sequence::update_pose(state, index),
        Command::SelectWaypoint(index) => sequence::select(state, index),
        Command::JumpToWaypoint(index) => sequence::jump_to(state, index),
        Command::Undo => history::undo(state),
        Command::Redo => history::redo(state),
        Command::ShowDialog(dialog) => dialogs::show(state, dialog),
        Command::CloseDialog => dialogs::close(state),
        Command::SetDialogPath(text) => dialogs::set_path(state, text),
        Command::OpenPath(path) => document::open(state, path, outside),
        Command::Save => document::save(state, outside),
        Command::SaveToPath { path, then_close } => {
            document::save_to(state, path, then_close, outside)
        }
        Command::BrowseForOpen => outside.push(Outside::BrowseForOpen),
        Command::BrowseForSave => outside.push(Outside::BrowseForSave),
        Command::CloseWithoutSaving => document::close_without_saving(state, outside),
        Command::Recover => document::recover(state, outside),
        Command::DiscardRecovery => document::discard_recovery(state, outside),
        Command::SetRetimeOvershoot(mm) => retime::set_overshoot(state, mm),
        Command::SetRetimeTorqueShare(pct) => retime::set_torque_share(state, pct),
        Command::StartRetime => retime::start(state, outside),
        Command::CancelRetime => retime::cancel(state, outside),
        Command::ApplyRetime => retime::apply_result(state),
        Command::DiscardRetime => retime::discard(state),
        Command::EditArmField { field, text } => arm::edit_field(state, field, text),
        Command::FinishArmField => arm::finish_field(state),
        Command::ChangeArmType(choice) => arm::change_type(state, choice),
        Command::Playback(command) => state.playback_command(command),
        Command::Calibration(command) => calibration::apply(state, command, outside),
        Command::Follow(command) => follow::apply(state, command, outside),
        Command::Inputs(command) => inputs::apply(state, command),
    }
}

#[cfg(test)]
mod tests {
    use armwright_link::ResetConfirmation;

    use super::*;
    use crate::editor::calibration::DeadbandSearch;
    use crate::editor::estop::{ChannelStopLink, StopRequest, StopState};
    use crate::editor::sample::sample_scene;
    use crate::editor::state::ReachStatus;

    fn run(state: &mut EditorState, command: Command) -> Vec<Outside> {
        let (mut link, _requests) = ChannelStopLink::new();
        let mut outside = Vec::new();
        apply(state, command, &mut link, 7, &mut outside);
        outside
    }

    #[test]
    fn calibration_points_are_fitted_and_applied_as_one_undo_step() {
        let mut state = EditorState::new(sample_scene(), None);
        for (pulse, degrees) in [
            (1200.0, -30.5),
            (1400.0, -10.0),
            (1600.0, 10.5),
            (1800.0, 30.0),
        ] {
            state.calibration.held_pulse_us = Some(pulse);
            let typed = CalibrationCommand::TypePosition(format!("{degrees}°"));
            let _ = run(&mut state, Command::Calibration(typed));
            let _ = run(&mut state, Command::Calibration(CalibrationCommand::Record));
        }
        let Some(Ok(fit)) = state.calibration.fit.clone() else {
            panic!("{:?}", state.calibration.fit);
        };
        // Least-squares slope by the closed form (common practice statistics): Sxy / Sxx.
        let xs = [1200.0, 1400.0, 1600.0, 1800.0];
        let ys = [-30.5, -10.0, 10.5, 30.0];
        let (mx, my) = (1500.0, 0.0);
        let sxy: f64 = xs.iter().zip(ys).map(|(x, y)| (x - mx) * (y - my)).sum();
        let sxx: f64 = xs.iter().map(|x| (x - mx) * (x - mx)).sum();
        let per_degree = fit.pulse_per_position_us() * 1f64.to_radians();
        assert!((per_degree - sxx / sxy).abs() < 1e-9, "{per_degree}");
        let before = state.scene.clone();
        state.calibration.deadband = DeadbandSearch::Found {
            widths_us: [5.0, 6.0],
            proposed_us: 5.5,
        };
        let _ = run(&mut state, Command::Calibration(CalibrationCommand::Apply));
        let joint = &state.scene.arm.joints[0];
        assert_eq!(joint.calibration.points[0].pulse_us, 1200);
        assert_eq!(joint.calibration.points[1].pulse_us, 1800);
        assert_eq!(joint.servo.deadband_us, 5.5);
        // The uncertainty is the line's residual standard error √(Σ r² / (n − 2)) (Draper &
        // Smith, Applied Regression Analysis, 3rd ed., §1.4; from memory), r the degrees off
        // the least-squares line, as `armwright calibrate --write` records it.
        let slope = sxy / sxx;
        let squares: f64 = xs
            .iter()
            .zip(ys)
            .map(|(x, y)| (y - my - slope * (x - mx)).powi(2))
            .sum();
        let standard_error = (squares / 2.0).sqrt();
        let recorded = joint.calibration.uncertainty.expect("an uncertainty");
        assert!(
            (recorded - standard_error).abs() <= 0.5e-4,
            "{recorded} vs {standard_error}"
        );
        assert!(
            state
                .messages
                .last()
                .is_some_and(|m| m.text.contains(&format!("uncertainty {recorded}°"))),
            "{:?}",
            state.messages.last()
        );
        assert_ne!(state.scene, before);
        let _ = run(&mut state, Command::Undo);
        assert_eq!(state.scene, before);
        assert!(!state.can_undo());
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
        assert_eq!(state.readout.reach, ReachStatus::Reached);
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
        assert_eq!(state.readout.reach, ReachStatus::Reached);
        let branch = state.readout.branch.clone().expect("a branch");
        let Some(other) = state.readout.branch_choices.first().cloned() else {
            panic!("with wide limits the elbow can bend the other way");
        };
        assert_ne!(other.label, branch);
        let _ = run(&mut state, Command::ChooseBranch(0));
        assert_eq!(state.readout.branch.as_deref(), Some(other.label.as_str()));
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
        let ReachStatus::AtJointLimit { joint, past_by, .. } = state.readout.reach.clone() else {
            panic!("{:?}", state.readout.reach);
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
        assert_eq!(state.view.dialog, Some(Dialog::ConfirmStopReset));
        assert!(matches!(state.stop, StopState::Latched { .. }));
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
