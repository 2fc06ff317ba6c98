//! What the editor holds between frames and what its tests look at: the scene, the arm built
//! from it, the current pose, the selected waypoint, the messages, the emergency-stop latch, and
//! the parts grouped by concern — the document around the scene (`state/document.rs`: undo and
//! redo, the dirty mark, the file), the readout of the pose (`state/readout.rs`), the device
//! side of the session (`state/device_side.rs`) and the view (`state/view.rs`) — beside each
//! area's own part (retime, the forms, playback, calibration, follow). No egui types live here.

use std::path::PathBuf;
use std::sync::Arc;

use armwright_kinematics::{Arm, ArmType, IkTarget, JointKind, tool_pose};

use super::arm_context::ArmContext;
use super::arm_form::ArmForm;
use super::calibration::Calibrating;
use super::dry_run_marks::DryRunMarks;
use super::estop::StopState;
use super::follow::FollowSettings;
use super::inputs_form::InputsForm;
pub use super::message::{Level, Message};
use super::playback::{CursorPose, Playback, PlaybackCommand, Timeline};
use super::retime_job::RetimeState;
use crate::scene::{GripperState, Scene, build_arm, pose_from_file_units};

mod device_side;
mod document;
mod readout;
mod view;

pub use device_side::DeviceSide;
pub use document::Document;
pub use readout::PoseReadout;
pub use view::ViewState;

/// The editor around one area ([`ArmContext`]), borrowed field by field so that the area's own
/// part of `$state` stays free to change.
macro_rules! around {
    ($state:expr) => {
        ArmContext {
            scene: &$state.scene,
            arm: $state.arm.as_ref(),
            pose: &$state.pose,
            gripper: $state.gripper,
            input_pose: $state.device.input_pose.as_deref(),
            caution_acknowledged: $state.device.caution_acknowledged,
            stop: $state.stop,
        }
    };
}

/// The tabs of the tools panel on the right.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum ToolsTab {
    /// The device: connect, stream, statistics.
    #[default]
    Link,
    /// Retiming for a target overshoot and torque share.
    Retime,
    /// The arm's settings.
    Arm,
    /// Guided calibration of one joint on the connected device.
    Calibrate,
    /// Follow and jog: the connected device tracking the edited pose.
    Follow,
}

/// Why the last drag of the tool point could or could not move the arm.
#[derive(Debug, Clone, PartialEq)]
pub enum ReachStatus {
    /// No drag yet, or the arm was set some other way.
    Idle,
    /// The target was reached on the current branch.
    Reached,
    /// The target lies outside the reach envelope, by `short_by_mm`.
    OutOfReach {
        /// How far the tool point would have to move to be reachable, in mm.
        short_by_mm: f64,
    },
    /// Every branch needs a joint past its limits.
    AtJointLimit {
        /// Joint index, 0-based.
        joint: usize,
        /// The position it would need, in degrees (revolute) or mm (prismatic).
        needed: f64,
        /// How far past its nearer limit, in degrees or mm.
        past_by: f64,
    },
    /// The target is reachable only on another branch; the arm stays until the user picks one.
    OtherBranchOnly,
    /// The solver gave up or the target was not a number.
    NotSolved {
        /// What the solver said.
        reason: String,
    },
}

/// One inverse-kinematics branch the user may switch to.
#[derive(Debug, Clone, PartialEq)]
pub struct BranchChoice {
    /// Which branch, such as "elbow up, facing".
    pub label: String,
    /// Its joint positions, rad or m.
    pub positions: Vec<f64>,
}

/// A question or form shown over the window. The emergency stop stays usable while one is open.
#[derive(Debug, Clone, PartialEq)]
pub enum Dialog {
    /// Open a scene: a typed path, or one picked with the system's file dialog.
    Open {
        /// The path as typed so far.
        path: String,
    },
    /// Save under a new name: a typed path, or one picked with the system's file dialog.
    SaveAs {
        /// The path as typed so far.
        path: String,
        /// Close the window once saved.
        then_close: bool,
    },
    /// A scene could not be opened; the file was not changed and the current scene is kept.
    LoadError {
        /// The file that was read.
        path: PathBuf,
        /// What is wrong, one line per problem, each naming its field.
        problems: Vec<String>,
    },
    /// The window is closing with unsaved changes.
    UnsavedChanges,
    /// Asks before the emergency-stop latch is cleared.
    ConfirmStopReset,
    /// A recovery copy from an earlier session that did not end cleanly was found.
    Recovery {
        /// The file that copy was made from, if it had one.
        source: Option<PathBuf>,
    },
}

/// Everything the editor keeps between frames that is saved, undone or tested.
#[derive(Debug)]
pub struct EditorState {
    /// The scene being edited (in the file's units). It stays here rather than in
    /// [`Document`]: nearly every panel, view, command and worker reads it, and each area's
    /// commands borrow it beside their own part of the state (`ArmContext`), so it is kept one
    /// step from the state.
    pub scene: Scene,
    /// The arm model built from `scene.arm`; `None` when the scene's arm cannot be built.
    pub(crate) arm: Option<Arm>,
    /// The current pose: one position per joint, rad (revolute) or m (prismatic).
    pub pose: Vec<f64>,
    /// The gripper's current state.
    pub gripper: GripperState,
    /// The tool angle held while dragging, in rad: tool pitch for articulated arms and chains,
    /// tool yaw for the horizontal-jointed arm.
    pub tool_angle: f64,
    /// What the pose gives: the branch, the last drag's outcome, torque use, accuracy, payload.
    pub readout: PoseReadout,
    /// The selected waypoint, if any.
    pub selected_waypoint: Option<usize>,
    /// The document around the scene: undo and redo, the dirty mark, the file.
    pub document: Document,
    /// Status messages, oldest first (the last few are kept).
    pub messages: Vec<Message>,
    /// The emergency-stop latch.
    pub stop: StopState,
    /// The device side of the session: the device, the caution, parking, the device's poses.
    pub device: DeviceSide,
    /// What the window shows around the views: the tools tab, the dialog, the held side view.
    pub view: ViewState,
    /// The retime tab: target, run, result.
    pub retime: RetimeState,
    /// The arm settings form: typed text and its problems.
    pub arm_form: ArmForm,
    /// The input arm's form: the scene's inputs as typed and their problems.
    pub inputs_form: InputsForm,
    /// The timeline: the newest plan and dry run, the time cursor and playback.
    pub playback: Playback,
    /// The calibration panel: the joint, the pulse held, the points read, the fit.
    pub calibration: Calibrating,
    /// Follow and jog settings (the session's, not the scene's).
    pub follow: FollowSettings,
}

/// Most messages kept.
const MESSAGES_KEPT: usize = 40;

impl EditorState {
    /// A state editing `scene`, read from `file_path` (if any), at the arm's home pose, or at the
    /// first waypoint when the scene has one.
    pub fn new(scene: Scene, file_path: Option<PathBuf>) -> EditorState {
        let mut state = EditorState {
            document: Document::new(&scene, file_path),
            retime: RetimeState::for_scene(&scene),
            scene,
            arm: None,
            pose: Vec::new(),
            gripper: GripperState::Open,
            tool_angle: 0.0,
            readout: PoseReadout::default(),
            selected_waypoint: None,
            messages: Vec::new(),
            stop: StopState::Clear,
            device: DeviceSide::default(),
            view: ViewState::default(),
            arm_form: ArmForm::default(),
            inputs_form: InputsForm::default(),
            playback: Playback::default(),
            calibration: Calibrating::default(),
            follow: FollowSettings::default(),
        };
        state.rebuild_arm();
        let start = state
            .scene
            .waypoints
            .first()
            .map(|waypoint| (waypoint.joints_deg_or_mm.clone(), waypoint.gripper));
        match start {
            Some((values, gripper)) if values.len() == state.joint_count() => {
                state.pose = pose_from_file_units(&state.scene.arm, &values);
                state.gripper = gripper;
                state.selected_waypoint = Some(0);
            }
            _ => {
                state.pose = state.arm.as_ref().map(Arm::home_pose).unwrap_or_default();
            }
        }
        state.pose_changed();
        state
    }

    /// Replaces the whole scene (open or recover), keeping the stop latch, the messages and
    /// the session's link state (tab, device, caution, device pose).
    pub(crate) fn replace_scene(&mut self, scene: Scene, file_path: Option<PathBuf>) {
        let messages = std::mem::take(&mut self.messages);
        let device = std::mem::take(&mut self.device).for_another_scene();
        // Follow's settings stay for the session; following the old scene's arm ends.
        let mut follow = std::mem::take(&mut self.follow);
        follow.on = false;
        let (stop, tools_tab) = (self.stop, self.view.tools_tab);
        *self = EditorState::new(scene, file_path);
        self.messages = messages;
        self.stop = stop;
        self.view.tools_tab = tools_tab;
        self.device = device;
        self.follow = follow;
    }

    /// The arm model, when the scene's arm could be built.
    pub fn arm(&self) -> Option<&Arm> {
        self.arm.as_ref()
    }

    /// Number of movable joints in the scene's arm.
    pub fn joint_count(&self) -> usize {
        self.scene.arm.joints.len()
    }

    /// Whether the joint at `index` slides (mm) rather than turns (degrees).
    pub fn is_prismatic(&self, index: usize) -> bool {
        self.context().is_prismatic(index)
    }

    /// What an area's commands read of the editor around them (`editor/arm_context.rs`).
    pub(crate) fn context(&self) -> ArmContext<'_> {
        around!(self)
    }

    /// The calibration panel's part of the state to change, and the editor around it.
    pub(crate) fn calibration_parts(&mut self) -> (ArmContext<'_>, &mut Calibrating) {
        let around = around!(self);
        (around, &mut self.calibration)
    }

    /// Follow's settings to change, and the editor around them.
    /// When jogging is refused ([`super::follow::jog_refused`]), says why (once while it is
    /// the newest message, so held keys do not fill the status bar) and returns `true`.
    pub(crate) fn refuse_jog(&mut self) -> bool {
        if !super::follow::jog_refused(&self.follow) {
            return false;
        }
        let text = super::follow::JOG_WHILE_FOLLOWING_INPUTS;
        if self
            .messages
            .last()
            .is_none_or(|message| message.text != text)
        {
            self.say(Level::Warning, text);
        }
        true
    }

    pub(crate) fn follow_parts(&mut self) -> (ArmContext<'_>, &mut FollowSettings) {
        let around = around!(self);
        (around, &mut self.follow)
    }

    /// The current pose in the file's units: degrees (revolute) or mm (prismatic).
    pub fn pose_in_file_units(&self) -> Vec<f64> {
        crate::scene::pose_to_file_units(&self.scene.arm, &self.pose)
    }

    /// The tool point of the current pose in the base frame, in m.
    pub fn tool_point(&self) -> Option<nalgebra::Vector3<f64>> {
        let arm = self.arm.as_ref()?;
        tool_pose(arm, &self.pose)
            .ok()
            .map(|pose| pose.translation.vector)
    }

    /// The yaw of the side view's vertical plane, in rad: the one held during a drag (see
    /// [`EditorState::hold_side_view`]), else the base joint for articulated arms, otherwise the
    /// direction of the tool point from the base axis (0 on the axis).
    pub fn side_view_yaw(&self) -> f64 {
        self.view
            .side_yaw_held()
            .unwrap_or_else(|| self.side_view_yaw_of_pose())
    }

    /// Holds the side view's yaw where it is while `held` (the primary pointer button is down:
    /// a drag in either view), and lets it follow the pose again when not — the side view
    /// turns when the drag ends. Keys and typed positions move the arm with the button up, so
    /// the view turns with them at once.
    pub fn hold_side_view(&mut self, held: bool) {
        let (arm, pose) = (self.arm.as_ref(), &self.pose);
        self.view
            .hold_side_yaw(held, || side_view_yaw_of(arm, pose));
    }

    /// Whether the side view's yaw is held for a drag.
    pub fn side_view_held(&self) -> bool {
        self.view.side_yaw_held().is_some()
    }

    fn side_view_yaw_of_pose(&self) -> f64 {
        side_view_yaw_of(self.arm.as_ref(), &self.pose)
    }

    /// Whether there are unsaved changes.
    pub fn is_dirty(&self) -> bool {
        self.document.dirty
    }

    /// Adds a status message.
    pub fn say(&mut self, level: Level, text: impl Into<String>) {
        self.say_all([Message::new(level, text)]);
    }

    /// Adds status messages, in order.
    pub(crate) fn say_all(&mut self, messages: impl IntoIterator<Item = Message>) {
        self.messages.extend(messages);
        if self.messages.len() > MESSAGES_KEPT {
            let extra = self.messages.len() - MESSAGES_KEPT;
            self.messages.drain(..extra);
        }
    }

    /// Whether an undo step is available.
    pub fn can_undo(&self) -> bool {
        self.document.history.can_undo()
    }

    /// Whether a redo step is available.
    pub fn can_redo(&self) -> bool {
        self.document.history.can_redo()
    }

    /// Records that `saved` (the scene as it was when the save started) is now in `path`.
    pub(crate) fn mark_saved(&mut self, path: PathBuf, saved: crate::scene::Scene) {
        // The file holds each number at its field's decimals; unless the scene was edited
        // while saving, the window takes the numbers as the file has them.
        if crate::scene::as_saved(&self.scene) == saved {
            self.scene = saved.clone();
        }
        self.document.saved(path, saved, &self.scene);
    }

    /// Recomputes the dirty mark after an edit.
    pub(crate) fn scene_changed(&mut self) {
        self.document.compare(&self.scene);
        if let Some(selected) = self.selected_waypoint
            && selected >= self.scene.waypoints.len()
        {
            self.selected_waypoint = self.scene.waypoints.len().checked_sub(1);
        }
    }

    /// Marks the scene as not in any file as it is (a recovered copy): unsaved until saved.
    pub(crate) fn mark_unsaved(&mut self) {
        self.document.unsaved();
    }

    /// Rebuilds the arm model from the scene's arm.
    pub(crate) fn rebuild_arm(&mut self) {
        match build_arm(&self.scene.arm) {
            Ok(arm) => self.arm = Some(arm),
            Err(problem) => {
                self.arm = None;
                self.say(Level::Error, format!("the arm cannot be built: {problem}"));
            }
        }
    }

    /// After the scene's arm changed: rebuilds the arm model, keeps the pose (one position per
    /// joint, new joints at home, each inside its limits) and recomputes what depends on it.
    pub(crate) fn arm_changed(&mut self) {
        self.rebuild_arm();
        let count = self.joint_count();
        let home = self.arm.as_ref().map(Arm::home_pose).unwrap_or_default();
        self.pose.truncate(count);
        while self.pose.len() < count {
            self.pose
                .push(home.get(self.pose.len()).copied().unwrap_or(0.0));
        }
        for joint in 0..count {
            self.pose[joint] = self.clamp_to_limits(joint, self.pose[joint]);
        }
        self.readout.forget_drag();
        self.pose_changed();
    }

    /// Recomputes what depends on the pose: torque use, the heaviest payload and the held tool
    /// angle.
    pub(crate) fn pose_changed(&mut self) {
        let derating = self.scene.timing.torque_derating_pct / 100.0;
        self.readout
            .recompute(self.arm.as_ref(), &self.pose, derating);
        let Some(arm) = self.arm.as_ref() else {
            return;
        };
        if let Ok(target) = IkTarget::of_pose(arm, &self.pose)
            && let Some(angle) = target.angle
        {
            self.tool_angle = angle;
        }
    }

    /// Applies one timeline command (`editor/playback.rs`). Changes no scene, records no undo
    /// step; a moved cursor puts the arm at its pose.
    pub(crate) fn playback_command(&mut self, command: PlaybackCommand) {
        let moved = self
            .playback
            .apply(command, self.joint_count(), self.pose.len());
        self.arm_to_cursor(moved);
    }

    /// Advances playback to egui time `now` (s), moving the arm. Returns whether it is still
    /// playing (the window should keep repainting).
    pub(crate) fn advance_playback(&mut self, now: f64) -> bool {
        let moved = self.playback.advance(now, self.pose.len());
        self.arm_to_cursor(moved);
        self.playback.playing
    }

    /// Takes a new plan and dry run for the timeline; an arm left at the cursor follows it.
    pub(crate) fn accept_timeline(&mut self, timeline: Arc<Timeline>) {
        let moved = self.playback.accept(timeline, &self.pose);
        self.arm_to_cursor(moved);
    }

    /// The contacts and unsettled stops of the newest dry run, when it is of the scene as it
    /// is now (none while a new one runs, so that no mark points at a waypoint that moved).
    pub fn dry_run_found(&self) -> Option<&DryRunMarks> {
        self.playback.found()
    }

    /// Puts the arm where the timeline's cursor put it: a preview, no undo step.
    fn arm_to_cursor(&mut self, moved: Option<CursorPose>) {
        let Some(CursorPose { positions, gripper }) = moved else {
            return;
        };
        self.gripper = gripper;
        self.move_arm_to(positions);
    }

    /// Puts the arm at `positions` (rad or m, one per joint), set some other way than by a drag:
    /// no branch known, no drag outcome.
    pub(crate) fn move_arm_to(&mut self, positions: Vec<f64>) {
        self.pose = positions;
        self.readout.forget_drag();
        self.pose_changed();
    }

    /// Clamps a position (rad or m) into the joint's limits.
    pub(crate) fn clamp_to_limits(&self, joint: usize, position: f64) -> f64 {
        self.context().clamp_to_limits(joint, position)
    }

    /// The joint's kind in the arm model (revolute when unknown).
    pub(crate) fn joint_kind(&self, joint: usize) -> JointKind {
        self.context().joint_kind(joint)
    }

    /// A joint's name for messages: `joint 2 "elbow"`.
    pub fn joint_label(&self, joint: usize) -> String {
        self.context().joint_label(joint)
    }

    /// What keeps the tool point where the user wants it, in words, worst first: out of reach,
    /// at a joint limit (which joint), another branch needed, over torque (which joint, how
    /// much). Empty when all is well.
    pub fn reach_problems(&self) -> Vec<String> {
        let mut problems = Vec::new();
        match &self.readout.reach {
            ReachStatus::Idle | ReachStatus::Reached => {}
            ReachStatus::OutOfReach { short_by_mm } => {
                problems.push(format!("OUT OF REACH by {short_by_mm:.1} mm"));
            }
            ReachStatus::AtJointLimit {
                joint,
                needed,
                past_by,
            } => {
                let unit = if self.is_prismatic(*joint) {
                    "mm"
                } else {
                    "°"
                };
                problems.push(format!(
                    "AT JOINT LIMIT: {} would need {needed:.1}{unit}, {past_by:.1}{unit} past its limit",
                    self.joint_label(*joint)
                ));
            }
            ReachStatus::OtherBranchOnly => problems.push(
                "only another branch reaches there: the arm stays; pick a branch to switch".into(),
            ),
            ReachStatus::NotSolved { reason } => problems.push(format!("NOT SOLVED: {reason}")),
        }
        for (joint, share) in self.readout.torque_use.iter().enumerate() {
            if *share > 1.0 {
                problems.push(format!(
                    "OVER TORQUE: {} at {:.0} % of rated",
                    self.joint_label(joint),
                    share * 100.0
                ));
            }
        }
        problems
    }
}

/// The yaw of the side view's plane for `pose` on `arm`, in rad: the base joint for articulated
/// arms, otherwise the direction of the tool point from the base axis (0 on the axis).
fn side_view_yaw_of(arm: Option<&Arm>, pose: &[f64]) -> f64 {
    match arm.map(Arm::arm_type) {
        Some(ArmType::Articulated4(_) | ArmType::Articulated5(_)) => {
            pose.first().copied().unwrap_or(0.0)
        }
        _ => match arm.and_then(|arm| tool_pose(arm, pose).ok()) {
            Some(tool) => {
                let point = tool.translation.vector;
                if point.x.hypot(point.y) > 1e-9 {
                    point.y.atan2(point.x)
                } else {
                    0.0
                }
            }
            None => 0.0,
        },
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::editor::sample::sample_scene;

    #[test]
    fn a_weak_servo_is_named_over_torque_with_its_share() {
        let mut scene = sample_scene();
        // A servo with a hundredth of its torque cannot hold the shoulder.
        let stall = crate::scene::field_table::servo::STALL_TORQUE;
        let servo = &mut scene.arm.joints[1].servo;
        let weak = stall.value(servo).expect("a stall torque") / 100.0;
        stall.set_value(servo, weak).expect("a number");
        let state = EditorState::new(scene, None);
        let (joint, share) = state.readout.worst_torque_overload().expect("over torque");
        assert_eq!(joint, 1);
        let problems = state.reach_problems();
        let line = format!(
            "OVER TORQUE: joint 2 \"{}\" at {:.0} % of rated",
            state.scene.arm.joints[1].name,
            share * 100.0
        );
        assert!(problems.contains(&line), "{problems:?}");
    }

    #[test]
    fn a_new_state_starts_at_the_first_waypoint_and_clean() {
        let scene = sample_scene();
        let first = scene.waypoints[0].joints_deg_or_mm.clone();
        let state = EditorState::new(scene, None);
        assert_eq!(state.selected_waypoint, Some(0));
        let back = state.pose_in_file_units();
        assert!(first.iter().zip(&back).all(|(a, b)| (a - b).abs() < 1e-9));
        assert!(!state.is_dirty());
        assert_eq!(
            state.readout.accuracy.map(|budget| budget.worst > 0.0),
            Some(true)
        );
    }

    #[test]
    fn opening_another_scene_keeps_the_park_choice() {
        let mut state = EditorState::new(sample_scene(), None);
        assert!(!state.device.park_after_stream, "off when the editor opens");
        state.device.park_after_stream = true;
        state.replace_scene(sample_scene(), None);
        assert!(state.device.park_after_stream);
    }
}
