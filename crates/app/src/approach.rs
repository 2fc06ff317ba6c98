//! How every stream starts and may end, for `armwright stream` and the editor's link alike:
//! where the device holds the arm (its reported output, through each joint's calibration,
//! [`armwright_link::device_pose`]), or — when a channel is limp or the device cannot say — the
//! rest pose (each joint's home) the arm is woken at and held in for the scene's wake pause;
//! then the approach to waypoint 1 at the scene's approach speed share
//! ([`armwright_trajectory::plan_approach`]), the plan, and optionally the park move back to
//! the rest pose; all sampled on one clock ([`armwright_trajectory::streamed_samples`]) and
//! turned into setpoints by [`armwright_link::device_setpoints`].

use armwright_kinematics::Arm;
use armwright_link::{ChannelOutput, DeviceInfo, DeviceSetpoints, device_pose, device_setpoints};
use armwright_trajectory::{
    Approach, ApproachStart, CommandedMotion, PlanError, TaskPlan, plan_approach, plan_park,
    streamed_samples, wake_order,
};

use crate::scene::Scene;

use crate::task::task_of;

/// Where a stream starts from.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum StartFrom {
    /// The device holds every channel the arm uses: the approach starts at its pulses.
    Held,
    /// A channel the arm uses is limp, so where its servo is nobody knows: the arm is woken at
    /// the rest pose (its first pulse: a limp servo runs there at its own top speed) and held
    /// there for the wake pause before the approach.
    Limp,
    /// The device cannot say what it sends (protocol 1): woken at the rest pose as when limp.
    Unknown,
}

impl StartFrom {
    /// Whether the arm is woken at the rest pose first.
    pub fn wakes(self) -> bool {
        self != StartFrom::Held
    }

    /// A plain sentence for the user, before anything is sent, for a stream that wakes a limp
    /// arm as `wake` says.
    pub fn describe_waking(self, wake: WakeMode) -> String {
        let why = match self {
            StartFrom::Held => {
                return "the device holds the arm: the stream starts with a slow approach from \
                        there to the first waypoint"
                    .to_owned();
            }
            StartFrom::Limp => "a servo is limp, so the arm's pose is unknown",
            StartFrom::Unknown => {
                "the device cannot say what it sends (protocol 1), so the arm's pose is unknown"
            }
        };
        let how = match wake {
            WakeMode::Together => {
                "all joints are woken together at the rest pose (a limp servo jumps to its first \
                 pulse at its own top speed), held there for the wake pause"
            }
            WakeMode::OneAtATime => {
                "the joints are woken one at a time at the rest pose, the slowest first, each \
                 after the wake pause (a limp servo jumps to its first pulse at its own top \
                 speed)"
            }
        };
        format!("{why}: {how}, then approach the first waypoint slowly")
    }
}

/// What a plan or dry run made with no device connected says about the approach: it is planned
/// from what the device reports when the stream starts.
pub fn approach_note(scene: &Scene) -> String {
    format!(
        "a stream starts with an approach to the first waypoint, planned from what the device \
         reports at stream time at {} % speed share (timing.approach_speed_share_pct); a limp arm \
         is first woken at its rest pose (each joint's home) and held {:.0} ms \
         (timing.wake_pause_ms)",
        scene.timing.approach_speed_share_pct, scene.timing.wake_pause_ms
    )
}

/// The rest pose: each joint's home, rad or m, chain order.
pub fn rest_pose(arm: &Arm) -> Vec<f64> {
    arm.joints().iter().map(|joint| joint.home).collect()
}

/// Where the approach starts for a device that reports `output` (`None`: it cannot say), and
/// why: the pose it holds, or the rest pose held for the scene's wake pause.
pub fn approach_start(
    scene: &Scene,
    arm: &Arm,
    output: Option<&ChannelOutput>,
    device: &DeviceInfo,
) -> (ApproachStart, StartFrom) {
    let first_closed = scene
        .waypoints
        .first()
        .is_some_and(|w| w.gripper == crate::scene::GripperState::Closed);
    match output.map(|output| device_pose(arm, output, device)) {
        Some(Some(pose)) => (
            ApproachStart {
                positions: pose.positions,
                gripper_closed: pose.gripper_closed,
                hold: 0.0,
            },
            StartFrom::Held,
        ),
        held_or_not => (
            ApproachStart {
                positions: rest_pose(arm),
                gripper_closed: first_closed,
                hold: scene.timing.wake_pause_ms / 1e3,
            },
            if held_or_not.is_some() {
                StartFrom::Limp
            } else {
                StartFrom::Unknown
            },
        ),
    }
}

/// The approach from `start` to the scene's first waypoint, at the scene's approach speed
/// share.
///
/// # Errors
/// [`PlanError`] when the move cannot be planned (a servo that cannot hold its load there).
pub fn approach_of(scene: &Scene, arm: &Arm, start: &ApproachStart) -> Result<Approach, PlanError> {
    let share = scene.timing.approach_speed_share_pct / 100.0;
    plan_approach(arm, &task_of(scene, arm), start, share)
}

/// A whole stream: the setpoints and the parts they come from.
#[derive(Debug, Clone)]
pub struct StreamPlan {
    /// Every setpoint: approach (with the wake hold), plan, then the park move if asked for.
    pub setpoints: DeviceSetpoints,
    /// Where it starts from.
    pub from: StartFrom,
    /// The pose the approach starts at (held or rest), rad or m.
    pub start: ApproachStart,
    /// The approach, its wake hold included.
    pub approach: Approach,
    /// Setpoints of the approach (and its hold) before the first waypoint's.
    pub approach_frames: usize,
    /// The move to the rest pose after the last waypoint, when asked for.
    pub park: Option<Approach>,
    /// The plan's own duration, s.
    pub plan_s: f64,
    /// When a limp arm is woken one joint at a time: the order and the frames between.
    pub wake: Option<WakeSteps>,
}

/// How a stream wakes a limp arm: all channels together at the rest pose, or one at a time.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum WakeMode {
    /// Every channel gets its first pulse in the first frame (a device that cannot leave a
    /// channel without a pulse in a setpoint).
    #[default]
    Together,
    /// One channel at a time, the slowest joint first, then the next after the wake pause
    /// (a device that plays planned setpoints, `PROTOCOL.md` §3).
    OneAtATime,
}

/// Waking one channel at a time: channel `order[k]` gets its first pulse in frame
/// `k × pause_frames`; channels not in `order` (not wired to the arm) with the last one.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct WakeSteps {
    /// Device channels in wake order: the joints, slowest servo first
    /// ([`armwright_trajectory::wake_order`]), then the gripper.
    pub order: Vec<usize>,
    /// Frames from one channel's first pulse to the next one's (the wake pause, at least 1).
    pub pause_frames: usize,
}

impl StreamPlan {
    /// Setpoint `index` as it is sent: while waking one at a time, the channels not yet woken
    /// have no pulse (`None`); otherwise every channel at its width.
    pub fn frame(&self, index: usize) -> Option<ChannelOutput> {
        let values = self.setpoints.values.get(index)?;
        let driven = ChannelOutput::driven(values);
        let Some(wake) = &self.wake else {
            return Some(driven);
        };
        let woken = index / wake.pause_frames.max(1) + 1;
        if woken >= wake.order.len() {
            return Some(driven);
        }
        let mut frame: Vec<Option<u16>> = vec![None; values.len()];
        for &channel in &wake.order[..woken] {
            if let Some(slot) = frame.get_mut(channel) {
                *slot = values.as_slice().get(channel).copied();
            }
        }
        ChannelOutput::from_slice(&frame)
    }

    /// When each channel of the wake order gets its first pulse, s from the stream's start:
    /// (channel, time); empty unless waking one at a time.
    pub fn wake_times(&self, rate_hz: f64) -> Vec<(usize, f64)> {
        self.wake.as_ref().map_or_else(Vec::new, |wake| {
            wake.order
                .iter()
                .enumerate()
                .map(|(k, &channel)| (channel, (k * wake.pause_frames) as f64 / rate_hz))
                .collect()
        })
    }

    /// The whole stream's duration: approach, plan and park, s.
    pub fn cycle_s(&self) -> f64 {
        self.approach.duration() + self.plan_s + self.park.as_ref().map_or(0.0, Approach::duration)
    }

    /// The channels of `arm` whose first setpoint differs from what the device reported
    /// (`output`) by more than one pulse unit, as (channel, reported µs, first setpoint µs): a
    /// held pulse outside the joint's calibrated range, brought inside it at once, or a gripper
    /// held between open and closed, sent to the nearer end. Empty when the arm was woken (its
    /// first pulse is the rest pose by design).
    pub fn start_jumps(
        &self,
        arm: &Arm,
        output: Option<&ChannelOutput>,
        device: &DeviceInfo,
    ) -> Vec<(usize, f64, f64)> {
        let (Some(output), Some(first), false) =
            (output, self.setpoints.values.first(), self.from.wakes())
        else {
            return Vec::new();
        };
        let last = first.len().saturating_sub(1);
        let gripper = arm.gripper().map(|_| last);
        (0..arm.joint_count())
            .chain(gripper)
            .filter_map(|channel| {
                let reported = (*output.as_slice().get(channel)?)?;
                let sent = *first.as_slice().get(channel)?;
                (reported.abs_diff(sent) > 1).then(|| {
                    (
                        channel,
                        device.us_from_units(reported),
                        device.us_from_units(sent),
                    )
                })
            })
            .collect()
    }
}

/// The wake order of `arm` on the device's channels: its joints (joint `i` on channel `i`),
/// slowest servo first, then the gripper on the last channel.
pub fn wake_channels(arm: &Arm, device: &DeviceInfo) -> Vec<usize> {
    let mut order = wake_order(arm);
    if arm.gripper().is_some() {
        order.push(usize::from(device.channel_count).saturating_sub(1));
    }
    order
}

/// Where the approach starts for a device that reports `output` (as [`approach_start`]), for
/// a stream at `rate_hz` that wakes a limp arm as `wake` says: with [`WakeMode::OneAtATime`]
/// the rest pose is held for the wake pause once per channel woken, and the steps say in which
/// order; `None` when the arm is held or woken together. What a stream sends
/// ([`stream_plan_waking`]) and the approach the timeline draws both start here.
pub fn approach_start_waking(
    scene: &Scene,
    arm: &Arm,
    output: Option<&ChannelOutput>,
    device: &DeviceInfo,
    rate_hz: f64,
    wake: WakeMode,
) -> (ApproachStart, StartFrom, Option<WakeSteps>) {
    let (mut start, from) = approach_start(scene, arm, output, device);
    let wake = (from.wakes() && wake == WakeMode::OneAtATime).then(|| {
        let pause_frames = ((scene.timing.wake_pause_ms / 1e3 * rate_hz).round() as usize).max(1);
        WakeSteps {
            order: wake_channels(arm, device),
            pause_frames,
        }
    });
    if let Some(wake) = &wake {
        // Each channel's pause, the last one's included, before the approach moves.
        start.hold = (wake.order.len() * wake.pause_frames) as f64 / rate_hz;
    }
    (start, from, wake)
}

/// Plans the stream of `plan` (the scene's, from [`crate::task::plan_of`]) to a device that
/// reports `output`: approach (after waking at the rest pose when the pose is unknown), plan,
/// and with `park` the move to the rest pose, as setpoints at `rate_hz`. A limp arm is woken
/// as `wake` says: with [`WakeMode::OneAtATime`] the rest pose is held for the wake pause once
/// per channel woken ([`StreamPlan::frame`] leaves the channels not yet woken without a
/// pulse).
///
/// # Errors
/// A message saying which part could not be planned or turned into setpoints.
#[allow(clippy::too_many_arguments)] // the stream's inputs, each named; grouping them adds a type used once
pub fn stream_plan_waking(
    scene: &Scene,
    arm: &Arm,
    plan: &TaskPlan,
    output: Option<&ChannelOutput>,
    device: &DeviceInfo,
    rate_hz: f64,
    park: bool,
    wake: WakeMode,
) -> Result<StreamPlan, String> {
    let (start, from, wake) = approach_start_waking(scene, arm, output, device, rate_hz, wake);
    let approach = approach_of(scene, arm, &start)
        .map_err(|error| format!("cannot plan the approach: {error}"))?;
    let park = if park {
        let share = scene.timing.approach_speed_share_pct / 100.0;
        Some(
            plan_park(arm, &task_of(scene, arm), &rest_pose(arm), share)
                .map_err(|error| format!("cannot plan the park move: {error}"))?,
        )
    } else {
        None
    };
    let samples = streamed_samples(Some(&approach), plan, park.as_ref(), rate_hz)
        .map_err(|error| format!("rate: {error}"))?;
    let approach_frames = approach
        .plan()
        .sampler(rate_hz)
        .map_err(|error| format!("rate: {error}"))?
        .len()
        .saturating_sub(1);
    let setpoints = device_setpoints(arm, samples, device).map_err(|error| error.to_string())?;
    Ok(StreamPlan {
        setpoints,
        from,
        start,
        approach,
        approach_frames,
        park,
        plan_s: CommandedMotion::duration(plan),
        wake,
    })
}
