//! The approach: the planned, slow move from where the device holds the arm to the task's first
//! waypoint that starts every stream, and the park move from its last waypoint to a rest pose
//! that may end one. Both are two-waypoint tasks planned by [`plan_task`] with the task's own
//! limits, servo model and shaping, at a low speed share, and sampled by the one sampler
//! ([`TaskPlan::sampler`]); [`streamed_samples`] joins them to the task's samples on one clock.

use armwright_kinematics::Arm;

use crate::arm_plan::{PlanError, Task, TaskPlan, TaskWaypoint, plan_task};
use crate::dry_run::CommandedMotion;
use crate::sample::Sample;
use crate::sequence::SequenceError;

/// Where an approach starts: the pose the device holds (or the rest pose it was woken at).
#[derive(Debug, Clone, PartialEq)]
pub struct ApproachStart {
    /// Joint positions, rad (revolute) or m (prismatic), one per joint in chain order.
    pub positions: Vec<f64>,
    /// Whether the gripper is closed at the start; it keeps that state until the approach
    /// arrives, then takes the first waypoint's.
    pub gripper_closed: bool,
    /// How long the start pose is held before the move begins, s (the wake pause after a limp
    /// arm was woken at its rest pose; 0 for an arm already held).
    pub hold: f64,
}

/// A planned approach (or park) move: a two-waypoint task plan and the speed share it used.
#[derive(Debug, Clone, PartialEq)]
pub struct Approach {
    plan: TaskPlan,
    speed_share: f64,
}

impl Approach {
    /// The plan of the move (its hold first, if any), sampled by [`TaskPlan::sampler`].
    pub fn plan(&self) -> &TaskPlan {
        &self.plan
    }

    /// How long it lasts, hold included, s.
    pub fn duration(&self) -> f64 {
        CommandedMotion::duration(&self.plan)
    }

    /// The share (0, 1] of each joint's limits it was planned with.
    pub fn speed_share(&self) -> f64 {
        self.speed_share
    }

    /// Each joint's highest speed along it, rad/s (m/s for a sliding joint): its planning
    /// velocity limit × the speed share. No sample-to-sample step over `dt` s moves a joint
    /// further than this × `dt`.
    pub fn speed_caps(&self) -> Vec<f64> {
        self.plan
            .limits()
            .iter()
            .map(|limits| limits.velocity * self.speed_share)
            .collect()
    }
}

/// Plans the approach from `start` to the first waypoint of `task` on `arm` at `speed_share`
/// of each joint's limits: a joint move with the first waypoint's profile, the task's limits,
/// servo model and shaping.
///
/// # Errors
/// [`PlanError::Sequence`] when `task` has no waypoint, `start` has the wrong joint count or
/// `speed_share` is not in (0, 1]; any other [`PlanError`] of [`plan_task`].
pub fn plan_approach(
    arm: &Arm,
    task: &Task,
    start: &ApproachStart,
    speed_share: f64,
) -> Result<Approach, PlanError> {
    let first = task
        .waypoints
        .first()
        .ok_or(SequenceError::TooFewWaypoints { count: 0 })?;
    let from = TaskWaypoint {
        positions: start.positions.clone(),
        stop: true,
        dwell: start.hold,
        speed_share,
        gripper_closed: start.gripper_closed,
        straight: false,
        shape: first.shape,
    };
    let to = TaskWaypoint {
        stop: true,
        dwell: 0.0,
        speed_share,
        straight: false,
        ..first.clone()
    };
    plan_between(arm, task, from, to, speed_share)
}

/// The order in which to wake the joints of a limp `arm` one at a time: joint indices, the
/// slowest servo first (lowest no-load speed, which is also the one most loaded and slowest to
/// settle), equal speeds in chain order. A limp servo runs to its first pulse at its own top
/// speed, so each joint's jump is seen (and settles) before the next one starts.
pub fn wake_order(arm: &Arm) -> Vec<usize> {
    let mut order: Vec<usize> = (0..arm.joint_count()).collect();
    order.sort_by(|&a, &b| {
        let speed = |j: usize| arm.joints()[j].servo.no_load_speed;
        speed(a).total_cmp(&speed(b)).then(a.cmp(&b))
    });
    order
}

/// Plans the park move from the last waypoint of `task` to `rest` (rad or m, one per joint) at
/// `speed_share`, the gripper keeping the last waypoint's state; the device then holds there.
///
/// # Errors
/// As [`plan_approach`].
pub fn plan_park(
    arm: &Arm,
    task: &Task,
    rest: &[f64],
    speed_share: f64,
) -> Result<Approach, PlanError> {
    let last = task
        .waypoints
        .last()
        .ok_or(SequenceError::TooFewWaypoints { count: 0 })?;
    let from = TaskWaypoint {
        stop: true,
        dwell: 0.0,
        speed_share,
        straight: false,
        ..last.clone()
    };
    let to = TaskWaypoint {
        positions: rest.to_vec(),
        ..from.clone()
    };
    plan_between(arm, task, from, to, speed_share)
}

fn plan_between(
    arm: &Arm,
    task: &Task,
    from: TaskWaypoint,
    to: TaskWaypoint,
    speed_share: f64,
) -> Result<Approach, PlanError> {
    if !(speed_share > 0.0 && speed_share <= 1.0) {
        return Err(SequenceError::BadSpeedShare {
            waypoint: 1,
            value: speed_share,
        }
        .into());
    }
    let move_task = Task {
        waypoints: vec![from, to],
        limits: task.limits.clone(),
        model: task.model.clone(),
        shaping: task.shaping,
    };
    Ok(Approach {
        plan: plan_task(arm, &move_task)?,
        speed_share,
    })
}

/// The samples of a whole stream at `rate_hz`, on one clock from 0: the approach's (its hold
/// included, its arrival left out: the task's first sample is that pose), then the task plan's,
/// then the park move's (its start left out: the task's last sample is that pose). Every part
/// comes from [`TaskPlan::sampler`]; a later part's times are shifted by the frames before it,
/// so consecutive samples stay one period apart except before each part's last sample.
///
/// # Errors
/// [`SequenceError::RateOutOfRange`] unless 50 ≤ `rate_hz` ≤ 1000.
pub fn streamed_samples(
    approach: Option<&Approach>,
    plan: &TaskPlan,
    park: Option<&Approach>,
    rate_hz: f64,
) -> Result<Vec<Sample>, SequenceError> {
    let mut samples = Vec::new();
    if let Some(approach) = approach {
        let sampler = approach.plan.sampler(rate_hz)?;
        let before_arrival = sampler.len().saturating_sub(1);
        samples.extend(sampler.take(before_arrival));
    }
    let shift = samples.len() as f64 / rate_hz;
    samples.extend(plan.sampler(rate_hz)?.map(|sample| Sample {
        time: sample.time + shift,
        ..sample
    }));
    if let Some(park) = park {
        let shift = samples.len() as f64 / rate_hz;
        samples.extend(park.plan.sampler(rate_hz)?.skip(1).map(|sample| Sample {
            // The park's first sample (its start) is left out: its second is one period on.
            time: sample.time + shift - 1.0 / rate_hz,
            ..sample
        }));
    }
    Ok(samples)
}
