//! One follow run on an open link, the same for the editor's Follow and jog keys (on the device
//! link's worker, `editor/follow.rs` asks) and for `armwright jog` (`cli/jog.rs`): the trajectory
//! crate's [`Follower`] at a speed share, stepped once per link frame, each step turned into a
//! setpoint by the link crate's `device_setpoints` (the one pulse rule) and pushed onto the
//! link's stream about 100 ms ahead of what the link has written ([`AHEAD_TIME`]). A run that
//! follows the input arm watches the link's analog readings and holds when they stop
//! ([`READINGS_SILENCE`]). How a run ended is a [`FollowEnd`]; what the editor shows of it is
//! a [`FollowView`].

use std::time::Duration;

use armwright_kinematics::Arm;
use armwright_link::{DeviceInfo, Link, LinkError, LinkState, device_setpoints};
use armwright_trajectory::{FollowJoint, Follower, Sample, limits_from_arm};

use crate::scene::Scene;
use crate::task::{limit_settings_of, servo_model_of};

/// How far ahead of what the link has written a follow run keeps setpoints queued, s: enough
/// to ride out a busy host for 100 ms (two to five frames at the usual rates; the arm lags
/// the edited pose by this much more).
const AHEAD_TIME: f64 = 0.1;

/// How long a run following the input arm waits for the next analog readings before it holds:
/// ten readings lines at the editor's 20 a second (`EDITOR_READINGS_HZ` in `editor/device.rs`), twice the
/// time the link waits before it calls a silent device lost (our choice). It is counted in the
/// device's own acknowledged setpoints (this long of link frames), not on the host's clock, so
/// a busy host that reads nothing for a while does not take it for lost readings.
pub(crate) const READINGS_SILENCE: Duration = Duration::from_millis(500);

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

    /// Whether the run watches the link's analog readings (its targets come from the input arm).
    pub(crate) fn watches_readings(&self) -> bool {
        self.readings.is_some()
    }

    /// While following the input arm: when the device acknowledged [`READINGS_SILENCE`] of
    /// setpoints and sent no readings meanwhile, brings the arm to rest (the device then holds)
    /// and returns the sentence that says so, once.
    pub(crate) fn readings_stopped(&mut self, link: &Link) -> Option<String> {
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
        Some(format!(
            "no readings from the input arm for {:.1} s of the device's frames: follow of the \
             input arm stops; the arm comes to rest and the device holds it",
            silent as f64 * self.follower.period()
        ))
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
            inputs: self.watches_readings(),
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
