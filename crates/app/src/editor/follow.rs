//! Follow and jog: the connected device tracking the edited pose — or the input arm — live,
//! apart from drawing.
//!
//! The user's side ([`FollowSettings`] in the editor state, [`FollowCommand`]s from the follow
//! panel and the jog keys) asks; the device link's worker thread does: it holds a
//! [`FollowRun`] — the trajectory crate's [`Follower`] at the user's speed share, stepped once
//! per link frame, each step turned into a setpoint by the link crate's `device_setpoints` (the
//! one pulse rule) and pushed onto the link's stream, about 100 ms ahead of what the link
//! has written (`AHEAD_TIME`), so the arm lags the edited pose by its own motion and that much.
//! Every frame while following, [`update`] hands the edited pose (dragged, slid,
//! jogged, jumped to a waypoint, or the timeline's cursor) to the worker as the new target —
//! or, following the input arm ([`FollowSource::InputArm`]), the pose the device's analog
//! inputs give (`capture.rs`). While it follows the input arm the run watches the readings:
//! when none has come for [`READINGS_SILENCE`] it brings the arm to rest, the device holds,
//! and the editor says why and turns follow off.
//!
//! The emergency stop works as everywhere: the link drops the queue and latches, the run ends,
//! and follow turns off. Turning follow off brings the arm to rest as soon as its limits allow
//! and the device holds that pose. `armwright jog` drives the same [`FollowRun`] from a terminal.

use std::time::Duration;

use armwright_kinematics::Arm;
use armwright_link::{DeviceInfo, Link, LinkError, LinkState, device_setpoints};
use armwright_trajectory::{FollowJoint, Follower, Sample, limits_from_arm};

use super::arm_context::ArmContext;
use super::message::{Level, Message, Report};
use crate::scene::{GripperState, Scene};
use crate::task::{limit_settings_of, servo_model_of};

/// How far ahead of what the link has written a follow run keeps setpoints queued, s: enough
/// to ride out a busy host for 100 ms (two to five frames at the usual rates; the arm lags
/// the edited pose by this much more).
const AHEAD_TIME: f64 = 0.1;

/// The speed share follow starts at, % (low, so a first follow is slow).
pub const DEFAULT_FOLLOW_SHARE_PCT: f64 = 10.0;

/// The range of the follow speed share, %.
pub const FOLLOW_SHARE_RANGE_PCT: (f64, f64) = (1.0, 100.0);

/// How long a run following the input arm waits for the next analog readings before it holds:
/// ten readings lines at the editor's 20 a second (`device::EDITOR_READINGS_HZ`), twice the
/// time the link waits before it calls a silent device lost (our choice). It is counted in the
/// device's own acknowledged setpoints (this long of link frames), not on the host's clock, so
/// a busy host that reads nothing for a while does not take it for lost readings.
pub const READINGS_SILENCE: Duration = Duration::from_millis(500);

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

/// The follower's joints for `arm` in `scene`: the limits a plan takes (the scene's derating and
/// joint limits, gravity at `pose` and at home), each servo's no-load speed and joint travel.
///
/// # Errors
/// A sentence naming the joint a servo cannot hold.
pub(crate) fn follow_joints(
    scene: &Scene,
    arm: &Arm,
    pose: &[f64],
) -> Result<Vec<FollowJoint>, String> {
    let poses = [pose.to_vec(), arm.home_pose()];
    let limits = limits_from_arm(
        arm,
        &poses,
        arm.payload_mass(),
        &limit_settings_of(scene),
        &servo_model_of(scene),
    )
    .map_err(|error| format!("cannot follow: {error}"))?;
    FollowJoint::of_arm(arm, &limits).map_err(|error| format!("cannot follow: {error}"))
}

/// Where a follow run stands, as the editor shows it.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum FollowPhase {
    /// No follow run.
    #[default]
    Off,
    /// The device follows the edited pose.
    Following,
    /// Follow was turned off: the arm is coming to rest, then the device holds.
    Leaving,
}

/// What the worker publishes about follow, once a turn.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct FollowView {
    /// Where follow stands.
    pub phase: FollowPhase,
    /// The follower's pose now (rad or m per joint): what the arm is being sent.
    pub positions: Vec<f64>,
    /// The speed share in use, (0, 1].
    pub share: f64,
    /// Follow runs that ended (left, stopped, lost or refused) since the link worker started.
    pub ended: u64,
    /// The run follows the input arm.
    pub inputs: bool,
    /// The run followed the input arm until its readings stopped: it comes to rest and holds.
    pub readings_lost: bool,
}

/// How a follow run ended.
#[derive(Debug, Clone, PartialEq)]
pub(crate) enum FollowEnd {
    /// Follow was left: the arm came to rest and the device holds.
    Left,
    /// The emergency stop ended it; the device holds until reset.
    Stopped,
    /// The link was lost.
    Lost(String),
    /// A setpoint could not be made or pushed.
    Failed(String),
}

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

/// One follow run on an open link: the follower, the arm it converts through, and how far
/// ahead of the link it is.
#[derive(Debug)]
pub(crate) struct FollowRun {
    follower: Follower,
    arm: Arm,
    device: DeviceInfo,
    gripper_closed: bool,
    /// Setpoints pushed in this run.
    pushed: u64,
    /// The link's count of setpoints written when this run started.
    sent_before: u64,
    leaving: bool,
    /// The arm is at rest and the stream was told to finish: hold once the link is idle.
    finishing: bool,
    /// While following the input arm: the link's count of readings received, and its count of
    /// setpoints the device acknowledged when that last changed.
    readings: Option<(u64, u64)>,
    /// The readings stopped: the run is leaving and takes no new target.
    readings_lost: bool,
}

impl FollowRun {
    /// Starts following on `link` at `share` (0, 1] with one follower step per link frame
    /// (`rate_hz`). The follower starts where the device says it is sending; when it cannot
    /// say, or a joint's servo is limp, it starts at `edited` — and the returned note says
    /// that a limp servo jumps to its first pulse.
    ///
    /// # Errors
    /// A sentence saying why: the stop is latched, the link is lost or busy, bad limits.
    pub(crate) fn start(
        link: &Link,
        arm: Arm,
        joints: &[FollowJoint],
        share: f64,
        edited: &[f64],
        gripper_closed: bool,
        rate_hz: f64,
    ) -> Result<(FollowRun, Option<String>), String> {
        let device = link.device();
        // What the device sends now, not what it sent at connect.
        let _ = link.refresh_state();
        let reported = link.device_output().and_then(|output| {
            let pulses = output.pulses()?;
            arm.joints()
                .iter()
                .enumerate()
                .map(|(index, joint)| {
                    let units = *pulses.as_slice().get(index)?;
                    Some(joint.calibration.position(device.us_from_units(units)))
                })
                .collect::<Option<Vec<f64>>>()
        });
        let note = match reported {
            Some(_) => None,
            None => Some(
                "the device cannot say where every joint is (a limp servo): following starts \
                 from the pose it was asked to follow, and a limp servo jumps to its first pulse \
                 at its own top speed"
                    .to_owned(),
            ),
        };
        let start = reported.unwrap_or_else(|| edited.to_vec());
        let follower = Follower::new(joints, &start, share, 1.0 / rate_hz)
            .map_err(|error| format!("cannot follow: {error}"))?;
        link.start_live_stream().map_err(|error| match error {
            LinkError::StopLatched => {
                "cannot follow: the emergency stop is latched; check the arm and reset it".into()
            }
            other => format!("cannot follow: {other}"),
        })?;
        let sent_before = link.stats().frames_sent;
        Ok((
            FollowRun {
                follower,
                arm,
                device,
                gripper_closed,
                pushed: 0,
                sent_before,
                leaving: false,
                finishing: false,
                readings: None,
                readings_lost: false,
            },
            note,
        ))
    }

    /// Follow `pose` (rad or m per joint) with the gripper open or closed. Cancels leaving.
    ///
    /// # Errors
    /// The follower's reason (wrong joint count, a position that is not a number).
    pub(crate) fn set_target(&mut self, pose: &[f64], gripper_closed: bool) -> Result<(), String> {
        if self.readings_lost {
            // Holding for want of readings: a late target from the window moves nothing.
            return Ok(());
        }
        self.follower
            .set_target(pose)
            .map_err(|error| format!("cannot follow that pose: {error}"))?;
        self.gripper_closed = gripper_closed;
        if !self.finishing {
            self.leaving = false;
        }
        Ok(())
    }

    /// A new speed share, (0, 1].
    ///
    /// # Errors
    /// A share outside (0, 1].
    pub(crate) fn set_share(&mut self, share: f64) -> Result<(), String> {
        self.follower
            .set_share(share)
            .map_err(|error| format!("follow: {error}"))
    }

    /// Watch the link's analog readings (`true`: the targets come from the input arm) or stop
    /// watching them; either way a hold for want of readings is lifted, and the next target
    /// carries on.
    pub(crate) fn watch_readings(&mut self, link: &Link, inputs: bool) {
        let stats = link.stats();
        self.readings = inputs.then_some((stats.readings_received, stats.frames_acked));
        self.readings_lost = false;
    }

    /// While following the input arm: when the device acknowledged [`READINGS_SILENCE`] of
    /// setpoints and sent no readings meanwhile, brings the arm to rest (the device then holds)
    /// and returns what to tell the user, once.
    pub(crate) fn check_readings(&mut self, link: &Link) -> Option<Report> {
        let (count, acked_then) = self.readings.as_mut()?;
        let stats = link.stats();
        if stats.readings_received != *count {
            *count = stats.readings_received;
            *acked_then = stats.frames_acked;
            return None;
        }
        let frames = (READINGS_SILENCE.as_secs_f64() / self.follower.period()).ceil() as u64;
        let silent = stats.frames_acked.saturating_sub(*acked_then);
        if self.readings_lost || silent < frames.max(1) {
            return None;
        }
        self.readings_lost = true;
        self.leave();
        Some(Report::Problem(format!(
            "no readings from the input arm for {:.1} s of the device's frames: follow of the \
             input arm stops; the arm comes to rest and the device holds it",
            silent as f64 * self.follower.period()
        )))
    }

    /// Bring the arm to rest as soon as its limits allow, then hold; the run then ends.
    pub(crate) fn leave(&mut self) {
        self.follower.halt();
        self.leaving = true;
    }

    /// The follower's pose now (rad or m per joint).
    pub(crate) fn positions(&self) -> &[f64] {
        self.follower.positions()
    }

    /// Whether the arm is at rest on the pose it follows.
    pub(crate) fn at_rest(&self) -> bool {
        self.follower.at_rest_on_target()
    }

    /// How long the owner may wait before the next [`FollowRun::step`]: a quarter frame.
    pub(crate) fn wait(&self) -> Duration {
        Duration::from_secs_f64(self.follower.period() / 4.0)
    }

    /// What the editor shows of this run.
    pub(crate) fn view(&self, ended: u64) -> FollowView {
        FollowView {
            phase: if self.leaving {
                FollowPhase::Leaving
            } else {
                FollowPhase::Following
            },
            positions: self.follower.positions().to_vec(),
            share: self.follower.share(),
            ended,
            inputs: self.readings.is_some(),
            readings_lost: self.readings_lost,
        }
    }

    /// Pushes follower steps while fewer than `AHEAD_TIME` of setpoints wait on the link. Returns how
    /// the run ended, once it did.
    pub(crate) fn step(&mut self, link: &Link) -> Option<FollowEnd> {
        let stats = link.stats();
        match stats.state {
            LinkState::Stopping | LinkState::Stopped | LinkState::Resetting => {
                return Some(FollowEnd::Stopped);
            }
            LinkState::Lost => {
                return Some(FollowEnd::Lost(
                    stats
                        .loss
                        .map_or_else(|| "no reason given".into(), |loss| loss.to_string()),
                ));
            }
            LinkState::Idle if self.finishing => {
                let _ = link.hold();
                return Some(FollowEnd::Left);
            }
            LinkState::Idle => {
                return Some(FollowEnd::Failed("the link stopped streaming".into()));
            }
            LinkState::Streaming if self.finishing => return None,
            LinkState::Streaming => {}
        }
        let written = stats.frames_sent.saturating_sub(self.sent_before);
        // Within the link's queue of 8 (the editor's and `jog`'s), so a push never waits.
        let ahead = ((AHEAD_TIME / self.follower.period()).ceil() as u64).clamp(2, 7);
        while self.pushed < written + ahead {
            if self.leaving && self.pushed > 0 && self.follower.at_rest_on_target() {
                self.finishing = true;
                if let Err(error) = link.finish_stream() {
                    return Some(FollowEnd::Failed(error.to_string()));
                }
                return None;
            }
            let sample = Sample {
                time: self.pushed as f64 * self.follower.period(),
                positions: self.follower.tick().to_vec(),
                gripper_closed: self.gripper_closed,
            };
            let setpoint = match device_setpoints(&self.arm, [sample], &self.device) {
                Ok(converted) => converted.values.into_iter().next(),
                Err(error) => return Some(FollowEnd::Failed(error.to_string())),
            };
            let Some(values) = setpoint else {
                return Some(FollowEnd::Failed("no setpoint was made".into()));
            };
            match link.push_setpoint(values) {
                Ok(()) => self.pushed += 1,
                Err(LinkError::StopLatched) => return Some(FollowEnd::Stopped),
                Err(LinkError::Lost(loss)) => return Some(FollowEnd::Lost(loss.to_string())),
                Err(other) => return Some(FollowEnd::Failed(other.to_string())),
            }
        }
        None
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
                let watching = running.readings.is_some();
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
