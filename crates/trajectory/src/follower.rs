//! An online, jerk-limited follower: the connected arm tracking a target pose that may change
//! at any tick, one link frame at a time.
//!
//! Each joint holds a plan from its current state to rest at its target, made of an optional
//! prefix of constant jerk and a time-optimal double-S profile (`profile/double_s.rs`). The
//! follower steps the plans by one frame period per [`Follower::tick`]. When a joint's target
//! (or its speed share) changes, it plans again from the state it is in — position, velocity
//! and acceleration — and keeps the shortest of two candidates that stay within the joint's
//! limits:
//!
//! - *level first*: bring the acceleration to zero at the jerk limit, then the double-S profile
//!   from the velocity reached;
//! - *carry on*: the double-S profile from the state the current acceleration ramp started from
//!   (found by running the ramp backward at the jerk limit), entered part-way, when that profile
//!   passes through the current state — so a joint that is speeding up keeps speeding up.
//!
//! When neither candidate stays within the joint's travel, the joint keeps its plan (which
//! does, and ends at rest) and tries again at the next tick. So every plan held is within the
//! velocity, acceleration and jerk limits and the travel, and a joint at rest given a new
//! target moves to it on the rest-to-rest double-S profile of that step.

use armwright_kinematics::{Arm, MAX_JOINTS};

use crate::profile::{JointLimits, JointMove, JointState, Profile, VelocityChange};
use crate::servo_sim::{ServoModel, ServoModelOptions};

/// The shortest frame period a follower takes, s (1 kHz, the fastest sample rate).
const MIN_PERIOD: f64 = 1e-3;

/// The longest frame period a follower takes, s (1 Hz).
const MAX_PERIOD: f64 = 1.0;

/// A state carried over from one plan to the next matches a candidate plan's start when it is
/// this close, relative to the joint's limits (rounding in the profile's closed forms).
const MATCH_TOLERANCE: f64 = 1e-9;

/// One joint as the follower sees it.
///
/// Positions in rad (m for a sliding joint); limits in rad/s, rad/s², rad/s³ (m/s, …).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FollowJoint {
    /// The joint's limits at a speed share of 100 %, as a plan takes them from the arm
    /// ([`limits_from_arm`](crate::limits_from_arm)).
    pub limits: JointLimits,
    /// The servo's no-load speed at the joint, rad/s (m/s): the fastest the servo can follow.
    /// The follower's velocity cap is the smaller of this and `limits.velocity`, times the share.
    pub servo_speed: f64,
    /// Lowest position the joint may take, rad (m).
    pub min: f64,
    /// Highest position the joint may take, rad (m).
    pub max: f64,
}

impl FollowJoint {
    /// The follower's view of every joint of `arm`: `limits` (one per joint, at 100 %), each
    /// servo's no-load speed at its joint and each joint's travel.
    ///
    /// # Errors
    /// [`FollowError::WrongJointCount`] when `limits` has another length than the arm's joints.
    pub fn of_arm(arm: &Arm, limits: &[JointLimits]) -> Result<Vec<FollowJoint>, FollowError> {
        if limits.len() != arm.joint_count() {
            return Err(FollowError::WrongJointCount {
                expected: arm.joint_count(),
                got: limits.len(),
            });
        }
        let model = ServoModelOptions::default();
        Ok(arm
            .joints()
            .iter()
            .zip(limits)
            .map(|(joint, limits)| FollowJoint {
                limits: *limits,
                servo_speed: ServoModel::of_joint(joint, &model).no_load_speed,
                min: joint.min,
                max: joint.max,
            })
            .collect())
    }

    /// The limits the follower keeps to at `share` (0, 1]: velocity capped at the servo's
    /// no-load speed, then velocity, acceleration and jerk each times `share`, as a sequence's
    /// speed share scales them.
    pub fn limits_at(&self, share: f64) -> JointLimits {
        JointLimits::new(
            self.limits.velocity.min(self.servo_speed) * share,
            self.limits.acceleration * share,
            self.limits.jerk * share,
        )
    }
}

/// Why a follower could not be made or given a target.
#[derive(Debug, Clone, Copy, PartialEq, thiserror::Error)]
pub enum FollowError {
    /// A pose or list of joints with the wrong number of joints.
    #[error("{got} joint positions given, expected {expected}")]
    WrongJointCount {
        /// Joints the follower has.
        expected: usize,
        /// Joints given.
        got: usize,
    },
    /// More joints than a follower takes.
    #[error("a follower takes at most {MAX_JOINTS} joints, got {got}")]
    TooManyJoints {
        /// Joints given.
        got: usize,
    },
    /// A joint's limit, speed or travel is not usable.
    #[error("joint {joint}: {what} is {value}, expected {expected}")]
    BadJoint {
        /// Joint index, from 0.
        joint: usize,
        /// What is wrong.
        what: &'static str,
        /// The value given.
        value: f64,
        /// What was expected.
        expected: &'static str,
    },
    /// A position that is not a finite number.
    #[error("joint {joint}: position {value} is not a finite number")]
    NotFinite {
        /// Joint index, from 0.
        joint: usize,
        /// The value given.
        value: f64,
    },
    /// A joint's limits and position are too large or small to plan in `f64`.
    #[error("joint {joint}: its limits and position are too extreme to plan")]
    OutOfRange {
        /// Joint index, from 0.
        joint: usize,
    },
    /// A speed share outside (0, 1].
    #[error("speed share {0} is outside (0, 1]")]
    BadShare(f64),
    /// A frame period outside 1 ms – 1 s.
    #[error("frame period {0} s is outside 0.001–1 s")]
    BadPeriod(f64),
}

/// One joint's plan: a prefix of constant jerk from `start`, then `profile` entered at
/// `entry` s. Time `elapsed` s since the plan started.
#[derive(Debug, Clone, Copy)]
struct JointPlan {
    start: JointState,
    prefix: f64,
    prefix_jerk: f64,
    profile: Profile,
    entry: f64,
    elapsed: f64,
    limits: JointLimits,
}

impl JointPlan {
    /// At rest at `position`, with `limits`; `None` when the numbers are too extreme to plan.
    fn resting(position: f64, limits: JointLimits) -> Option<JointPlan> {
        let state = JointState {
            position,
            ..JointState::default()
        };
        plan_to(&state, position, limits)
    }

    /// State `t` s after the plan started.
    fn state_at(&self, t: f64) -> JointState {
        if t < self.prefix {
            let JointState {
                position: p,
                velocity: v,
                acceleration: a,
                ..
            } = self.start;
            let j = self.prefix_jerk;
            return JointState {
                position: p + t * (v + t * (0.5 * a + t * j / 6.0)),
                velocity: v + t * (a + 0.5 * j * t),
                acceleration: a + j * t,
                jerk: j,
            };
        }
        self.profile.state_at(t - self.prefix + self.entry)
    }

    /// Where the plan ends at rest, rad.
    fn end(&self) -> f64 {
        self.profile.joint_move().to
    }

    /// Whole duration from the plan's start, s.
    fn duration(&self) -> f64 {
        self.prefix + self.profile.duration() - self.entry
    }

    /// The smallest and largest position along the plan from its start, rad. Velocity is
    /// monotone within the prefix and within each part of the profile, so the extremes lie at
    /// the parts' ends or where the velocity crosses zero inside one.
    fn travel(&self) -> (f64, f64) {
        let times = self.profile.times();
        let first = times.start_change;
        let cruise = first + times.cruise;
        let mut cuts = [0.0; 5];
        cuts[0] = 0.0;
        cuts[1] = self.prefix;
        let to_plan = |profile_time: f64| (profile_time - self.entry).max(0.0) + self.prefix;
        cuts[2] = to_plan(first);
        cuts[3] = to_plan(cruise);
        cuts[4] = self.duration();
        let mut low = f64::INFINITY;
        let mut high = f64::NEG_INFINITY;
        for pair in cuts.windows(2) {
            let (t0, t1) = (pair[0], pair[1].max(pair[0]));
            let s0 = self.state_at(t0);
            let s1 = self.state_at(t1);
            for position in [s0.position, s1.position] {
                low = low.min(position);
                high = high.max(position);
            }
            if s0.velocity * s1.velocity < 0.0 {
                let (mut lo, mut hi) = (t0, t1);
                for _ in 0..60 {
                    let mid = 0.5 * (lo + hi);
                    if self.state_at(mid).velocity * s0.velocity > 0.0 {
                        lo = mid;
                    } else {
                        hi = mid;
                    }
                }
                let turn = self.state_at(0.5 * (lo + hi)).position;
                low = low.min(turn);
                high = high.max(turn);
            }
        }
        (low, high)
    }
}

/// The follower: where each joint is, where it is going, at what speed share.
///
/// Positions in rad (m for a sliding joint), time in s.
///
/// # Example
/// Follow a target with two joints at a 10 % share, one frame of 20 ms per tick:
/// ```
/// use armwright_trajectory::{FollowJoint, Follower, JointLimits};
/// let joint = FollowJoint {
///     limits: JointLimits::new(4.0, 20.0, 400.0),
///     servo_speed: 6.0,
///     min: -1.5,
///     max: 1.5,
/// };
/// let mut follower = Follower::new(&[joint, joint], &[0.0, 0.0], 0.1, 0.02)?;
/// follower.set_target(&[0.3, -0.2])?;
/// while !follower.at_rest_on_target() {
///     let positions = follower.tick();
///     assert!(positions[0] <= 0.3);
/// }
/// assert_eq!(follower.positions(), &[0.3, -0.2]);
/// # Ok::<(), armwright_trajectory::FollowError>(())
/// ```
#[derive(Debug, Clone)]
pub struct Follower {
    joints: Vec<FollowJoint>,
    plans: Vec<JointPlan>,
    targets: Vec<f64>,
    positions: Vec<f64>,
    share: f64,
    period: f64,
}

impl Follower {
    /// A follower of `joints` at rest at `start` (rad or m, one per joint; a position outside
    /// a joint's travel is allowed and the joint only moves back into it), capped at `share`
    /// (0, 1] of each joint's limits, stepping `period` s per tick (the link's frame period).
    ///
    /// # Errors
    /// [`FollowError`] naming the joint whose limits, speed or travel are not usable (limits
    /// and speed positive and finite, `min ≤ max`), a start position that is not finite, a
    /// share outside (0, 1], a period outside 1 ms – 1 s, a start of another length, or more
    /// than [`MAX_JOINTS`] joints.
    pub fn new(
        joints: &[FollowJoint],
        start: &[f64],
        share: f64,
        period: f64,
    ) -> Result<Follower, FollowError> {
        if joints.len() > MAX_JOINTS {
            return Err(FollowError::TooManyJoints { got: joints.len() });
        }
        check_pose(joints.len(), start)?;
        check_share(share)?;
        if !(MIN_PERIOD..=MAX_PERIOD).contains(&period) {
            return Err(FollowError::BadPeriod(period));
        }
        for (index, joint) in joints.iter().enumerate() {
            check_joint(index, joint)?;
        }
        let plans = joints
            .iter()
            .zip(start)
            .enumerate()
            .map(|(joint, (spec, &position))| {
                JointPlan::resting(position, spec.limits_at(share))
                    .ok_or(FollowError::OutOfRange { joint })
            })
            .collect::<Result<_, _>>()?;
        Ok(Follower {
            joints: joints.to_vec(),
            plans,
            targets: start.to_vec(),
            positions: start.to_vec(),
            share,
            period,
        })
    }

    /// Sets the pose to follow (rad or m, one per joint). Each position is limited to its
    /// joint's travel; the joints plan their way there at the next [`Follower::tick`].
    ///
    /// # Errors
    /// [`FollowError::WrongJointCount`] or [`FollowError::NotFinite`]; the target is then
    /// unchanged.
    pub fn set_target(&mut self, target: &[f64]) -> Result<(), FollowError> {
        check_pose(self.joints.len(), target)?;
        for ((slot, &wanted), joint) in self.targets.iter_mut().zip(target).zip(&self.joints) {
            *slot = wanted.clamp(joint.min, joint.max);
        }
        Ok(())
    }

    /// Sets the speed share (0, 1]. A higher share takes effect at once; a lower one as soon
    /// as a joint's velocity and acceleration fit it — a joint moving faster than the new cap
    /// first comes to rest within the limits it had, then goes on at the new share.
    ///
    /// # Errors
    /// [`FollowError::BadShare`]; the share is then unchanged.
    pub fn set_share(&mut self, share: f64) -> Result<(), FollowError> {
        check_share(share)?;
        self.share = share;
        Ok(())
    }

    /// Brings every joint to rest as soon as its limits allow: the target becomes where each
    /// joint can stop (kept within its travel).
    pub fn halt(&mut self) {
        for index in 0..self.joints.len() {
            let plan = &self.plans[index];
            let state = plan.state_at(plan.elapsed);
            let limits = plan.limits;
            let stop = stopping_point(&state, &limits);
            let joint = &self.joints[index];
            self.targets[index] = stop.clamp(joint.min, joint.max);
        }
    }

    /// Steps one frame period: every joint whose target or share changed plans again from
    /// where it is, then every joint moves one period along its plan. Returns the new
    /// positions (rad or m).
    pub fn tick(&mut self) -> &[f64] {
        for index in 0..self.joints.len() {
            self.replan(index);
            let plan = &mut self.plans[index];
            plan.elapsed += self.period;
            self.positions[index] = plan.state_at(plan.elapsed).position;
        }
        &self.positions
    }

    /// The positions after the last tick (rad or m): what the arm is being sent.
    pub fn positions(&self) -> &[f64] {
        &self.positions
    }

    /// Each joint's position, velocity, acceleration and jerk now.
    pub fn states(&self) -> impl Iterator<Item = JointState> + '_ {
        self.plans.iter().map(|plan| plan.state_at(plan.elapsed))
    }

    /// The target each joint is going to (rad or m), within its travel.
    pub fn targets(&self) -> &[f64] {
        &self.targets
    }

    /// The speed share now, (0, 1].
    pub fn share(&self) -> f64 {
        self.share
    }

    /// The frame period, s.
    pub fn period(&self) -> f64 {
        self.period
    }

    /// Whether every joint is at rest on its target.
    pub fn at_rest_on_target(&self) -> bool {
        self.plans
            .iter()
            .zip(&self.targets)
            .all(|(plan, &target)| plan.elapsed >= plan.duration() && plan.end() == target)
    }

    /// Plans joint `index` again when its target or limits changed.
    fn replan(&mut self, index: usize) {
        let joint = self.joints[index];
        let wanted = joint.limits_at(self.share);
        let plan = self.plans[index];
        let target = self.targets[index];
        if plan.end() == target && plan.limits == wanted {
            return;
        }
        let state = plan.state_at(plan.elapsed);
        let fits = state.velocity.abs() <= wanted.velocity * (1.0 + MATCH_TOLERANCE)
            && state.acceleration.abs() <= wanted.acceleration * (1.0 + MATCH_TOLERANCE);
        // Travel the plan may use: the joint's, widened to where it is now (a start outside).
        let low = joint.min.min(state.position);
        let high = joint.max.max(state.position);
        let candidate = if fits {
            plan_to(&state, target, wanted)
        } else {
            // Too fast for a lowered share: come to rest within the limits the plan has.
            let stop = stopping_point(&state, &plan.limits);
            if (plan.end() - stop).abs() <= MATCH_TOLERANCE * (1.0 + stop.abs()) {
                return; // already coming to rest there
            }
            plan_to(&state, stop, plan.limits)
        };
        if let Some(candidate) = candidate {
            let (lowest, highest) = candidate.travel();
            let margin = MATCH_TOLERANCE * (1.0 + joint.max.abs().max(joint.min.abs()));
            if lowest >= low - margin && highest <= high + margin {
                self.plans[index] = candidate;
            }
        }
    }
}

/// The shorter of the two candidate plans (see the module's documentation) from `state` to
/// rest at `target` within `limits`, if either can be made.
fn plan_to(state: &JointState, target: f64, limits: JointLimits) -> Option<JointPlan> {
    let jerk = limits.jerk;
    let vmax = limits.velocity;
    let a = state
        .acceleration
        .clamp(-limits.acceleration, limits.acceleration);
    let v = state.velocity.clamp(-vmax, vmax);
    let p = state.position;
    let ramp = a.abs() / jerk;
    let start = JointState {
        position: p,
        velocity: v,
        acceleration: a,
        jerk: 0.0,
    };
    // Level first: acceleration to zero at the jerk limit, then the profile.
    let level = {
        let v1 = v + 0.5 * a * ramp;
        let p1 = p + ramp * (v + a * ramp / 3.0);
        if v1.abs() <= vmax {
            Profile::double_s(&JointMove::passing(p1, target, v1, 0.0), &limits)
                .ok()
                .map(|profile| JointPlan {
                    start,
                    prefix: ramp,
                    prefix_jerk: -a.signum() * jerk,
                    profile,
                    entry: 0.0,
                    elapsed: 0.0,
                    limits,
                })
        } else {
            None
        }
    };
    if ramp == 0.0 {
        return level;
    }
    // Carry on: the profile from where the acceleration ramp began, entered `ramp` s in.
    let carry = {
        let v0 = v - 0.5 * a * ramp;
        let p0 = p - ramp * (v - a * ramp / 3.0);
        if v0.abs() <= vmax {
            Profile::double_s(&JointMove::passing(p0, target, v0, 0.0), &limits)
                .ok()
                .filter(|profile| {
                    let entered = profile.state_at(ramp);
                    let scale = |limit: f64| MATCH_TOLERANCE * (1.0 + limit);
                    (entered.position - p).abs() <= scale(p.abs() + vmax * ramp)
                        && (entered.velocity - v).abs() <= scale(vmax)
                        && (entered.acceleration - a).abs() <= scale(limits.acceleration)
                        && ramp <= profile.duration()
                })
                .map(|profile| JointPlan {
                    start,
                    prefix: 0.0,
                    prefix_jerk: 0.0,
                    profile,
                    entry: ramp,
                    elapsed: 0.0,
                    limits,
                })
        } else {
            None
        }
    };
    match (level, carry) {
        (Some(level), Some(carry)) => Some(if carry.duration() < level.duration() {
            carry
        } else {
            level
        }),
        (level, carry) => level.or(carry),
    }
}

/// Where a joint in `state` comes to rest soonest within `limits`: acceleration to zero at the
/// jerk limit, then the fastest velocity change to zero, rad.
fn stopping_point(state: &JointState, limits: &JointLimits) -> f64 {
    let a = state.acceleration;
    let v = state.velocity;
    let ramp = a.abs() / limits.jerk;
    let v1 = v + 0.5 * a * ramp;
    let p1 = state.position + ramp * (v + a * ramp / 3.0);
    let change = VelocityChange::fastest(v1.abs(), limits.acceleration, limits.jerk);
    p1 + 0.5 * v1 * change.duration
}

fn check_pose(expected: usize, pose: &[f64]) -> Result<(), FollowError> {
    if pose.len() != expected {
        return Err(FollowError::WrongJointCount {
            expected,
            got: pose.len(),
        });
    }
    match pose.iter().position(|value| !value.is_finite()) {
        Some(joint) => Err(FollowError::NotFinite {
            joint,
            value: pose[joint],
        }),
        None => Ok(()),
    }
}

fn check_share(share: f64) -> Result<(), FollowError> {
    if share > 0.0 && share <= 1.0 {
        Ok(())
    } else {
        Err(FollowError::BadShare(share))
    }
}

fn check_joint(joint: usize, spec: &FollowJoint) -> Result<(), FollowError> {
    let positive = "a positive finite number";
    let checks = [
        ("velocity limit", spec.limits.velocity),
        ("acceleration limit", spec.limits.acceleration),
        ("jerk limit", spec.limits.jerk),
        ("servo speed", spec.servo_speed),
    ];
    for (what, value) in checks {
        if !(value.is_finite() && value > 0.0) {
            return Err(FollowError::BadJoint {
                joint,
                what,
                value,
                expected: positive,
            });
        }
    }
    if !(spec.min.is_finite() && spec.max.is_finite() && spec.min <= spec.max) {
        return Err(FollowError::BadJoint {
            joint,
            what: "lowest position",
            value: spec.min,
            expected: "a finite number at most the highest position",
        });
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn joint() -> FollowJoint {
        FollowJoint {
            limits: JointLimits::new(3.0, 12.0, 240.0),
            servo_speed: 5.0,
            min: -2.0,
            max: 2.0,
        }
    }

    #[test]
    fn the_velocity_cap_is_the_servo_speed_when_the_limits_allow_more() {
        let fast = FollowJoint {
            servo_speed: 2.0,
            ..joint()
        };
        assert_eq!(fast.limits_at(0.5).velocity, 1.0);
        assert_eq!(joint().limits_at(0.5).velocity, 1.5);
    }

    #[test]
    fn stopping_point_of_a_joint_at_rest_is_where_it_is() {
        let state = JointState {
            position: 0.4,
            ..JointState::default()
        };
        assert_eq!(stopping_point(&state, &joint().limits), 0.4);
    }

    #[test]
    fn a_speeding_joint_given_a_further_target_carries_on_speeding() {
        let limits = joint().limits;
        let mut plan = plan_to(&JointState::default(), 1.0, limits).expect("plan");
        plan.elapsed = 0.01; // inside the first jerk ramp (0.05 s long)
        let state = plan.state_at(plan.elapsed);
        let next = plan_to(&state, 1.2, limits).expect("plan");
        assert_eq!(next.prefix, 0.0, "carry on, not level first");
        assert!(next.state_at(0.005).acceleration > state.acceleration);
    }

    #[test]
    fn bad_inputs_name_what_is_wrong() {
        let mut bad = joint();
        bad.limits.jerk = 0.0;
        assert_eq!(
            Follower::new(&[bad], &[0.0], 0.1, 0.02).unwrap_err(),
            FollowError::BadJoint {
                joint: 0,
                what: "jerk limit",
                value: 0.0,
                expected: "a positive finite number"
            }
        );
        assert_eq!(
            Follower::new(&[joint()], &[0.0], 0.0, 0.02).unwrap_err(),
            FollowError::BadShare(0.0)
        );
        let mut follower = Follower::new(&[joint()], &[0.0], 0.1, 0.02).expect("follower");
        assert_eq!(
            follower.set_target(&[f64::NAN]).unwrap_err().to_string(),
            "joint 0: position NaN is not a finite number"
        );
        assert_eq!(
            follower.set_target(&[0.0, 1.0]).unwrap_err().to_string(),
            "2 joint positions given, expected 1"
        );
    }
}
