//! What the editor holds between frames and what its tests look at: the scene, the arm built
//! from it, the current pose, the selected waypoint, undo and redo, the dirty mark, the file, the
//! messages, the emergency-stop latch and the timeline's playback. No egui types live here.

use std::path::PathBuf;
use std::sync::Arc;

use armwright_kinematics::{
    AccuracyBudget, Arm, ArmType, IkTarget, JointKind, PayloadLimit, accuracy_budget,
    gravity_torques, max_payload, tool_pose, torque_use,
};

use super::arm_context::ArmContext;
use super::arm_form::ArmForm;
use super::calibration::Calibrating;
use super::dry_run_marks::DryRunMarks;
use super::estop::StopState;
use super::follow::FollowSettings;
use super::history::History;
use super::inputs_form::InputsForm;
pub use super::message::{Level, Message};
use super::playback::{CursorPose, Playback, PlaybackCommand, Timeline};
use super::retime_job::RetimeState;
use crate::scene::{Device, GripperState, Scene, build_arm, pose_from_file_units};

/// The editor around one area ([`ArmContext`]), borrowed field by field so that the area's own
/// part of `$state` stays free to change.
macro_rules! around {
    ($state:expr) => {
        ArmContext {
            scene: &$state.scene,
            arm: $state.arm.as_ref(),
            pose: &$state.pose,
            gripper: $state.gripper,
            input_pose: $state.input_pose.as_deref(),
            caution_acknowledged: $state.caution_acknowledged,
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
    /// The scene being edited (in the file's units).
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
    /// The inverse-kinematics branch the arm is on, once known.
    pub branch: Option<String>,
    /// Other branches that reach the last drag target.
    pub branch_choices: Vec<BranchChoice>,
    /// The outcome of the last drag of the tool point.
    pub reach: ReachStatus,
    /// Torque use of each joint holding the current pose against gravity with the payload, as a
    /// share of its derated rating (1.0 = 100 %).
    pub torque_use: Vec<f64>,
    /// The tool point's accuracy budget at the current pose (from servo deadband and backlash).
    pub accuracy: Option<AccuracyBudget>,
    /// The heaviest payload the current pose can hold within the derated stall torque, as
    /// `pose --json` gives it (`max_payload_g`); cheap (two gravity passes), so recomputed on
    /// every pose change.
    pub max_payload: Option<PayloadLimit>,
    /// The selected waypoint, if any.
    pub selected_waypoint: Option<usize>,
    /// Undo and redo steps.
    pub(crate) history: History,
    /// The scene as last loaded or saved, to tell whether there are unsaved changes; `None`
    /// when the scene was never in a file as it is (a recovered copy).
    saved_scene: Option<Scene>,
    /// Whether the scene differs from the file.
    pub dirty: bool,
    /// The scene's file, once it has one.
    pub file_path: Option<PathBuf>,
    /// Status messages, oldest first (the last few are kept).
    pub messages: Vec<Message>,
    /// The emergency-stop latch.
    pub stop: StopState,
    /// The dialog shown over the window, if any.
    pub dialog: Option<Dialog>,
    /// The tab shown in the tools panel.
    pub tools_tab: ToolsTab,
    /// The device the link panel connects to.
    pub link_device: Device,
    /// Whether the streaming caution was acknowledged in this session.
    pub caution_acknowledged: bool,
    /// Whether a stream ends by moving to the rest pose and holding there, as `stream --park`
    /// does (the Link tab's checkbox; kept while the editor runs, not saved).
    pub park_after_stream: bool,
    /// The joint positions of the arm as the connected simulated device moves it (from its
    /// servo model), rad (revolute) or m (prismatic); `None` when no such device is connected.
    pub device_pose: Option<Vec<f64>>,
    /// The input arm's joint positions from the connected device's analog readings through
    /// the scene's `inputs`, rad or m (`editor/capture.rs`); `None` without readings or inputs.
    pub input_pose: Option<Vec<f64>>,
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
    /// The side view's yaw held while the primary pointer button is down (rad), so that a drag
    /// in either view does not turn the side view, its shading or its title under the pointer.
    side_yaw_held: Option<f64>,
}

/// Most messages kept.
const MESSAGES_KEPT: usize = 40;

impl EditorState {
    /// A state editing `scene`, read from `file_path` (if any), at the arm's home pose, or at the
    /// first waypoint when the scene has one.
    pub fn new(scene: Scene, file_path: Option<PathBuf>) -> EditorState {
        let mut state = EditorState {
            saved_scene: Some(scene.clone()),
            retime: RetimeState::for_scene(&scene),
            scene,
            arm: None,
            pose: Vec::new(),
            gripper: GripperState::Open,
            tool_angle: 0.0,
            branch: None,
            branch_choices: Vec::new(),
            reach: ReachStatus::Idle,
            torque_use: Vec::new(),
            accuracy: None,
            max_payload: None,
            selected_waypoint: None,
            history: History::default(),
            dirty: false,
            file_path,
            messages: Vec::new(),
            stop: StopState::Clear,
            dialog: None,
            tools_tab: ToolsTab::default(),
            link_device: Device::Simulated,
            caution_acknowledged: false,
            park_after_stream: false,
            device_pose: None,
            input_pose: None,
            arm_form: ArmForm::default(),
            inputs_form: InputsForm::default(),
            playback: Playback::default(),
            calibration: Calibrating::default(),
            follow: FollowSettings::default(),
            side_yaw_held: None,
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
        let link_device = std::mem::replace(&mut self.link_device, Device::Simulated);
        let device_pose = self.device_pose.take();
        // Follow's settings stay for the session; following the old scene's arm ends.
        let mut follow = std::mem::take(&mut self.follow);
        follow.on = false;
        let (stop, tools_tab, caution_acknowledged, park_after_stream) = (
            self.stop,
            self.tools_tab,
            self.caution_acknowledged,
            self.park_after_stream,
        );
        *self = EditorState::new(scene, file_path);
        self.messages = messages;
        self.stop = stop;
        self.tools_tab = tools_tab;
        self.link_device = link_device;
        self.caution_acknowledged = caution_acknowledged;
        self.park_after_stream = park_after_stream;
        self.device_pose = device_pose;
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
        self.side_yaw_held
            .unwrap_or_else(|| self.side_view_yaw_of_pose())
    }

    /// Holds the side view's yaw where it is while `held` (the primary pointer button is down:
    /// a drag in either view), and lets it follow the pose again when not — the side view
    /// turns when the drag ends. Keys and typed positions move the arm with the button up, so
    /// the view turns with them at once.
    pub fn hold_side_view(&mut self, held: bool) {
        self.side_yaw_held = if held {
            Some(
                self.side_yaw_held
                    .unwrap_or_else(|| self.side_view_yaw_of_pose()),
            )
        } else {
            None
        };
    }

    /// Whether the side view's yaw is held for a drag.
    pub fn side_view_held(&self) -> bool {
        self.side_yaw_held.is_some()
    }

    fn side_view_yaw_of_pose(&self) -> f64 {
        match self.arm.as_ref().map(Arm::arm_type) {
            Some(ArmType::Articulated4(_) | ArmType::Articulated5(_)) => {
                self.pose.first().copied().unwrap_or(0.0)
            }
            _ => match self.tool_point() {
                Some(point) if point.x.hypot(point.y) > 1e-9 => point.y.atan2(point.x),
                _ => 0.0,
            },
        }
    }

    /// Whether there are unsaved changes.
    pub fn is_dirty(&self) -> bool {
        self.dirty
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
        self.history.can_undo()
    }

    /// Whether a redo step is available.
    pub fn can_redo(&self) -> bool {
        self.history.can_redo()
    }

    /// Records that `saved` (the scene as it was when the save started) is now in `path`.
    pub(crate) fn mark_saved(&mut self, path: PathBuf, saved: crate::scene::Scene) {
        // The file holds each number at its field's decimals; unless the scene was edited
        // while saving, the window takes the numbers as the file has them.
        if crate::scene::as_saved(&self.scene) == saved {
            self.scene = saved.clone();
        }
        self.dirty = self.scene != saved;
        self.saved_scene = Some(saved);
        self.file_path = Some(path);
    }

    /// Recomputes the dirty mark after an edit.
    pub(crate) fn scene_changed(&mut self) {
        self.dirty = self.saved_scene.as_ref() != Some(&self.scene);
        if let Some(selected) = self.selected_waypoint
            && selected >= self.scene.waypoints.len()
        {
            self.selected_waypoint = self.scene.waypoints.len().checked_sub(1);
        }
    }

    /// Marks the scene as not in any file as it is (a recovered copy): unsaved until saved.
    pub(crate) fn mark_unsaved(&mut self) {
        self.saved_scene = None;
        self.dirty = true;
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
        self.branch = None;
        self.branch_choices.clear();
        self.reach = ReachStatus::Idle;
        self.pose_changed();
    }

    /// Recomputes what depends on the pose: torque use, the heaviest payload and the held tool
    /// angle.
    pub(crate) fn pose_changed(&mut self) {
        let Some(arm) = self.arm.as_ref() else {
            self.torque_use.clear();
            self.accuracy = None;
            self.max_payload = None;
            return;
        };
        self.accuracy = accuracy_budget(arm, &self.pose).ok();
        let derating = self.scene.timing.torque_derating_pct / 100.0;
        self.max_payload = max_payload(arm, &self.pose, derating).ok();
        self.torque_use = gravity_torques(arm, &self.pose, arm.payload_mass())
            .map(|efforts| torque_use(arm, &efforts, derating).as_slice().to_vec())
            .unwrap_or_default();
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
        self.branch = None;
        self.branch_choices.clear();
        self.reach = ReachStatus::Idle;
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

    /// Index of the joint using the most of its rating, and that share, when any is above 1.0.
    pub fn worst_torque_overload(&self) -> Option<(usize, f64)> {
        self.torque_use
            .iter()
            .copied()
            .enumerate()
            .filter(|(_, share)| *share > 1.0)
            .max_by(|a, b| a.1.total_cmp(&b.1))
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
        match &self.reach {
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
        for (joint, share) in self.torque_use.iter().enumerate() {
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
        let (joint, share) = state.worst_torque_overload().expect("over torque");
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
        assert_eq!(state.accuracy.map(|budget| budget.worst > 0.0), Some(true));
    }

    #[test]
    fn opening_another_scene_keeps_the_park_choice() {
        let mut state = EditorState::new(sample_scene(), None);
        assert!(!state.park_after_stream, "off when the editor opens");
        state.park_after_stream = true;
        state.replace_scene(sample_scene(), None);
        assert!(state.park_after_stream);
    }
}
