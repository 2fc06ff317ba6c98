//! Follow and jog: the connected device tracking the edited pose — or the input arm — live,
//! apart from drawing.
//!
//! The user's side ([`FollowSettings`] in the editor state, [`FollowCommand`]s from the follow
//! panel and the jog keys) asks; the device link's worker thread does: it holds a
//! [`FollowRun`] (`follow_run.rs`, the same run `armwright jog` drives from a terminal) — the
//! trajectory crate's follower at the user's speed share, stepped once per link frame, each
//! step turned into a setpoint by the one pulse rule and pushed onto the link's stream about
//! 100 ms ahead of what the link has written, so the arm lags the edited pose by its own motion
//! and that much. Every frame while following, [`update`] hands the edited pose (dragged, slid,
//! jogged, jumped to a waypoint, or the timeline's cursor) to the worker as the new target —
//! or, following the input arm ([`FollowSource::InputArm`]), the pose the device's analog
//! inputs give (`capture.rs`). While it follows the input arm the run watches the readings:
//! when none has come for [`READINGS_SILENCE`](crate::follow_run::READINGS_SILENCE) it brings
//! the arm to rest, the device holds, and the editor says why and turns follow off.
//!
//! The emergency stop works as everywhere: the link drops the queue and latches, the run ends,
//! and follow turns off. Turning follow off brings the arm to rest as soon as its limits allow
//! and the device holds that pose.

use armwright_kinematics::Arm;
use armwright_link::Link;
use armwright_trajectory::FollowJoint;

use super::arm_context::ArmContext;
use super::message::{Level, Message, Report};
pub(crate) use crate::follow_run::FollowRun;
use crate::follow_run::{FollowEnd, follow_joints};
pub use crate::follow_run::{FollowPhase, FollowView};
use crate::scene::GripperState;

/// The speed share follow starts at, % (low, so a first follow is slow).
pub const DEFAULT_FOLLOW_SHARE_PCT: f64 = 10.0;

/// The range of the follow speed share, %.
pub const FOLLOW_SHARE_RANGE_PCT: (f64, f64) = (1.0, 100.0);

/// Shown when follow of the input arm is asked for with no input arm to follow.
pub const NO_INPUT_ARM_TO_FOLLOW: &str = "no input arm to follow: connect a device that sends \
                                          analog readings (protocol 3) and map its inputs to \
                                          joints in the scene's \"inputs\" (Arm tab, \"Input \
                                          arm\")";

/// Shown when a jog key or button is pressed while the device follows the input arm. Jogging
/// then moves nothing: the edited pose is not what the arm follows, and switching follow back
/// to it would send the arm on a move nobody asked for, from the input arm's pose to the edited
/// one (so the keys are refused rather than turned into a switch).
pub const JOG_WHILE_FOLLOWING_INPUTS: &str = "jog keys move nothing while the device follows \
                                              the input arm (move the input arm instead); turn \
                                              on \"Follow the edited pose\" to jog";

/// What the device follows.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum FollowSource {
    /// The edited pose: dragged, slid, jogged, a waypoint's, the timeline's cursor.
    #[default]
    EditedPose,
    /// The input arm: the pose the device's analog inputs give through the scene's `inputs`.
    InputArm,
}

/// What the user set for follow and jog; part of the editor state, not saved with the scene.
#[derive(Debug, Clone, PartialEq)]
pub struct FollowSettings {
    /// The follow switch: the user wants the device to follow the edited pose or the input
    /// arm. Off when the editor opens.
    pub on: bool,
    /// What the device follows while `on`.
    pub source: FollowSource,
    /// Share of each joint's limits follow may use, %.
    pub share_pct: f64,
    /// The joint the joint-jog keys move, index in chain order.
    pub jog_joint: usize,
    /// One joint-jog step: degrees for a revolute joint, mm for a sliding one.
    pub joint_step: f64,
    /// One tool-point jog step while following, mm (the nudge keys; × 10 with Shift).
    pub tool_step_mm: f64,
    /// The pose and gripper last handed to the worker as the target.
    sent: Option<(Vec<f64>, bool)>,
    /// Follow runs the worker reported ended, as last seen.
    ended_seen: u64,
    /// The worker was asked to leave the run it shows.
    leave_sent: bool,
    /// The run was holding for want of readings, as last seen.
    readings_lost_seen: bool,
}

impl Default for FollowSettings {
    /// Off, 10 %, joint 0, 1° (or 1 mm) and 1 mm steps.
    fn default() -> FollowSettings {
        FollowSettings {
            on: false,
            source: FollowSource::EditedPose,
            share_pct: DEFAULT_FOLLOW_SHARE_PCT,
            jog_joint: 0,
            joint_step: 1.0,
            tool_step_mm: 1.0,
            sent: None,
            ended_seen: 0,
            leave_sent: false,
            readings_lost_seen: false,
        }
    }
}

/// What the follow panel and the jog keys ask for.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum FollowCommand {
    /// Turn follow of the edited pose on or off (on while following the input arm: follow the
    /// edited pose instead).
    Switch(bool),
    /// Turn follow of the input arm on or off (on while following the edited pose: follow the
    /// input arm instead).
    InputArm(bool),
    /// Set the follow speed share, %.
    SharePct(f64),
    /// Choose the joint the joint-jog keys move.
    JogJoint(usize),
    /// Set the joint-jog step (degrees, or mm for a sliding joint).
    JointStep(f64),
    /// Set the tool-point jog step, mm.
    ToolStepMm(f64),
    /// Move the chosen joint by this many steps (negative: back).
    Jog(f64),
}

/// Applies a follow command to the session's settings `follow`, reading the editor `around`
/// them; turning follow on or off and a new share are for the device link's worker, in `asks`,
/// messages go to `said`. A jog returns the pose the editor takes.
pub(crate) fn apply(
    follow: &mut FollowSettings,
    around: &ArmContext<'_>,
    command: FollowCommand,
    said: &mut Vec<Message>,
    asks: &mut Vec<FollowAction>,
) -> Option<Vec<f64>> {
    match command {
        FollowCommand::Switch(true) => {
            switch_on(follow, around, FollowSource::EditedPose, said, asks)
        }
        FollowCommand::InputArm(true) if around.input_pose.is_none() => {
            said.push(Message::new(Level::Warning, NO_INPUT_ARM_TO_FOLLOW));
        }
        FollowCommand::InputArm(true) => {
            switch_on(follow, around, FollowSource::InputArm, said, asks)
        }
        FollowCommand::Switch(false) | FollowCommand::InputArm(false) => follow.on = false,
        FollowCommand::SharePct(pct) => {
            if pct.is_finite() {
                let (low, high) = FOLLOW_SHARE_RANGE_PCT;
                follow.share_pct = pct.clamp(low, high);
                if follow.on {
                    asks.push(FollowAction::Share(follow.share_pct / 100.0));
                }
            }
        }
        FollowCommand::JogJoint(joint) => {
            if joint < around.pose.len() {
                follow.jog_joint = joint;
            }
        }
        FollowCommand::JointStep(step) => {
            if step.is_finite() {
                follow.joint_step = step.clamp(0.01, 90.0);
            }
        }
        FollowCommand::ToolStepMm(step) => {
            if step.is_finite() {
                follow.tool_step_mm = step.clamp(0.01, 100.0);
            }
        }
        // Refused (and said) before it gets here: `EditorState::refuse_jog`.
        FollowCommand::Jog(_) if jog_refused(follow) => {}
        FollowCommand::Jog(steps) => {
            let joint = follow.jog_joint;
            if let Some(&now) = around.pose.get(joint)
                && steps.is_finite()
            {
                // Degrees → rad for a revolute joint, mm → m for a sliding one.
                let step = if around.is_prismatic(joint) {
                    follow.joint_step * 1e-3
                } else {
                    follow.joint_step.to_radians()
                };
                let mut pose = around.pose.to_vec();
                pose[joint] = around.clamp_to_limits(joint, now + steps * step);
                return Some(pose);
            }
        }
    }
    None
}

/// Whether jogging is refused: the device follows the input arm, so the jog keys (joint and tool
/// point) and buttons must not move the edited pose.
pub fn jog_refused(follow: &FollowSettings) -> bool {
    follow.on && follow.source == FollowSource::InputArm
}

/// Turns follow of `source` on: starts a run, or — already following the other source — asks
/// the run to follow this one (a start request to a running run changes what it watches).
fn switch_on(
    follow: &mut FollowSettings,
    around: &ArmContext<'_>,
    source: FollowSource,
    said: &mut Vec<Message>,
    asks: &mut Vec<FollowAction>,
) {
    if follow.on && follow.source == source {
        return;
    }
    match start_action(follow, around, source) {
        Err(reason) => said.push(Message::new(Level::Warning, reason)),
        Ok(action) => {
            follow.on = true;
            follow.source = source;
            follow.sent = None;
            follow.leave_sent = false;
            asks.push(action);
        }
    }
}

/// The worker's start request from the settings and the editor around them, or why follow
/// cannot start.
fn start_action(
    follow: &FollowSettings,
    around: &ArmContext<'_>,
    source: FollowSource,
) -> Result<FollowAction, String> {
    if !around.caution_acknowledged {
        return Err("read and acknowledge the caution before the device follows".into());
    }
    if around.stop_latched() {
        return Err("the emergency stop is latched: check the arm and reset the stop first".into());
    }
    let arm = around
        .arm
        .ok_or("cannot follow: the scene's arm cannot be built")?;
    let joints = follow_joints(around.scene, arm, around.pose)?;
    let (edited, inputs) = match (source, input_target(around)) {
        (FollowSource::InputArm, Some(pose)) => (pose, true),
        (FollowSource::InputArm, None) => return Err(NO_INPUT_ARM_TO_FOLLOW.into()),
        (FollowSource::EditedPose, _) => (around.pose.to_vec(), false),
    };
    Ok(FollowAction::Start {
        arm: Box::new(arm.clone()),
        joints,
        share: follow.share_pct / 100.0,
        edited,
        gripper_closed: around.gripper == GripperState::Closed,
        inputs,
    })
}

/// The input arm's pose as a follow target: each joint within its limits, as a capture stores
/// it; `None` without an input arm.
fn input_target(around: &ArmContext<'_>) -> Option<Vec<f64>> {
    let pose = around.input_pose?;
    Some(
        pose.iter()
            .enumerate()
            .map(|(joint, &position)| around.clamp_to_limits(joint, position))
            .collect(),
    )
}

/// Every frame, with the worker's follow `view`: what to ask of the worker — the edited pose
/// (or the input arm's) as the target while following, or to leave a run it shows once follow
/// is off. Turns follow off when the worker ended the run (stop, lost link, refusal), when it
/// holds for want of readings, or when a stop is latched.
pub(crate) fn update(
    follow: &mut FollowSettings,
    around: &ArmContext<'_>,
    view: &FollowView,
) -> Option<FollowAction> {
    if view.ended > follow.ended_seen {
        follow.ended_seen = view.ended;
        follow.on = false;
    }
    if follow.on && around.stop_latched() {
        follow.on = false;
    }
    if view.readings_lost
        && !follow.readings_lost_seen
        && follow.on
        && follow.source == FollowSource::InputArm
    {
        // The run holds already (its message says why): the switch shows it. Only as the run
        // starts holding, so turning follow on again while it comes to rest is not undone.
        follow.on = false;
        follow.leave_sent = true;
    }
    follow.readings_lost_seen = view.readings_lost;
    if !follow.on {
        follow.sent = None;
        if view.phase == FollowPhase::Following && !follow.leave_sent {
            follow.leave_sent = true;
            return Some(FollowAction::Leave);
        }
        return None;
    }
    let pose = match follow.source {
        FollowSource::EditedPose => around.pose.to_vec(),
        // No input arm this frame (readings not mapped yet): the target stays.
        FollowSource::InputArm => input_target(around)?,
    };
    let wanted = (pose, around.gripper == GripperState::Closed);
    if follow.sent.as_ref() == Some(&wanted) {
        return None;
    }
    let action = FollowAction::Target {
        pose: wanted.0.clone(),
        gripper_closed: wanted.1,
    };
    follow.sent = Some(wanted);
    Some(action)
}

/// Before "Store pose" while the device follows: what the arm is doing — the follower's pose
/// now in the worker's `view`, for `joints` joints — for the edited pose to become, so that
/// pose is what is stored; `None` when not following.
pub(crate) fn arm_pose(
    follow: &FollowSettings,
    view: &FollowView,
    joints: usize,
) -> Option<Vec<f64>> {
    (follow.on && view.phase == FollowPhase::Following && view.positions.len() == joints)
        .then(|| view.positions.clone())
}

/// What the editor asks of the device link's worker about follow.
#[derive(Debug, Clone, PartialEq)]
pub enum FollowAction {
    /// Start following.
    Start {
        /// The arm the setpoints are made for.
        arm: Box<Arm>,
        /// The follower's joints: limits at 100 %, servo speeds, travel.
        joints: Vec<FollowJoint>,
        /// Speed share, (0, 1].
        share: f64,
        /// Where to start when the device cannot say where it is (a limp servo): the edited
        /// pose, or the input arm's when following it; rad or m.
        edited: Vec<f64>,
        /// Whether the gripper is closed.
        gripper_closed: bool,
        /// The targets come from the input arm: hold when its readings stop
        /// (`READINGS_SILENCE`, 0.5 s). A start request to a running run sets this (and the share)
        /// and carries on.
        inputs: bool,
    },
    /// Follow this pose now (rad or m per joint).
    Target {
        /// The pose.
        pose: Vec<f64>,
        /// Whether the gripper is closed.
        gripper_closed: bool,
    },
    /// A new speed share, (0, 1].
    Share(f64),
    /// Come to rest and hold; follow ends.
    Leave,
}

/// The editor's words for a follow run's end.
impl FollowEnd {
    /// The editor's message for this end.
    pub(crate) fn report(&self) -> Report {
        match self {
            FollowEnd::Left => {
                Report::Info("follow is off: the arm came to rest and the device holds".into())
            }
            FollowEnd::Stopped => Report::Problem("follow ended by the emergency stop".into()),
            FollowEnd::Lost(why) => Report::Problem(format!("follow ended: link lost: {why}")),
            FollowEnd::Failed(why) => Report::Problem(format!("follow ended: {why}")),
        }
    }
}

/// The editor's side of a follow run's readings watch.
impl FollowRun {
    /// While following the input arm: when its readings stopped, brings the arm to rest (the
    /// device then holds) and returns the problem to tell the user, once
    /// ([`FollowRun::readings_stopped`]).
    pub(crate) fn check_readings(&mut self, link: &Link) -> Option<Report> {
        self.readings_stopped(link).map(Report::Problem)
    }
}

/// The worker's side of a follow request: starts, retargets, reshares or leaves the run in
/// `run` on `link`. Returns what to tell the user, and whether a run ended (was refused).
pub(crate) fn handle(
    run: &mut Option<FollowRun>,
    action: FollowAction,
    link: &Link,
    rate_hz: f64,
) -> (Option<Report>, bool) {
    match action {
        FollowAction::Start {
            arm,
            joints,
            share,
            edited,
            gripper_closed,
            inputs,
        } => {
            let what = if inputs {
                "the input arm"
            } else {
                "the edited pose"
            };
            if let Some(running) = run {
                // Turned off and on again while coming to rest, or the other source chosen:
                // carry on following.
                let _ = running.set_share(share);
                let watching = running.watches_readings();
                running.watch_readings(link, inputs);
                let report = (watching != inputs)
                    .then(|| Report::Info(format!("the device follows {what} now")));
                return (report, false);
            }
            match FollowRun::start(link, *arm, &joints, share, &edited, gripper_closed, rate_hz) {
                Ok((mut started, note)) => {
                    started.watch_readings(link, inputs);
                    *run = Some(started);
                    let text = format!(
                        "the device follows {what} at {:.0} % of the joints' limits",
                        share * 100.0
                    );
                    let report = match note {
                        Some(note) => Report::Problem(format!("{text}; {note}")),
                        None => Report::Info(text),
                    };
                    (Some(report), false)
                }
                Err(reason) => (Some(Report::Problem(reason)), true),
            }
        }
        FollowAction::Target {
            pose,
            gripper_closed,
        } => match run {
            Some(running) => match running.set_target(&pose, gripper_closed) {
                Ok(()) => (None, false),
                Err(reason) => (Some(Report::Problem(reason)), false),
            },
            None => (None, false),
        },
        FollowAction::Share(share) => match run {
            Some(running) => (running.set_share(share).err().map(Report::Problem), false),
            None => (None, false),
        },
        FollowAction::Leave => {
            if let Some(running) = run {
                running.leave();
            }
            (None, false)
        }
    }
}
