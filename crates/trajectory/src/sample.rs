//! The one sampler: a planned task at a fixed rate, as named samples (time, joint positions,
//! gripper state) — what streaming, the setpoint export and the device setpoints all read.

use crate::arm_plan::TaskPlan;
use crate::dry_run::CommandedMotion;
use crate::sequence::SequenceError;

/// Lowest sample rate, Hz.
pub const MIN_SAMPLE_RATE_HZ: f64 = 50.0;
/// Highest sample rate, Hz.
pub const MAX_SAMPLE_RATE_HZ: f64 = 1000.0;

/// The plan at one instant.
#[derive(Debug, Clone, PartialEq)]
pub struct Sample {
    /// Time, s from the start of the plan.
    pub time: f64,
    /// Joint positions, rad (revolute) or m (prismatic), one per joint in chain order.
    pub positions: Vec<f64>,
    /// Whether the gripper is closed: the state of the last waypoint reached.
    pub gripper_closed: bool,
}

/// Iterator over a plan's samples at a fixed rate, from time 0 to the end of the plan inclusive
/// (the last sample is at the plan's duration). Follows the shaping, where the task has it.
#[derive(Debug, Clone)]
pub struct Sampler<'a> {
    plan: &'a TaskPlan,
    rate_hz: f64,
    duration: f64,
    joints: usize,
    next: u64,
    count: u64,
}

impl TaskPlan {
    /// Samples every `1/rate_hz` s from 0 to the end of the plan, the end included.
    ///
    /// # Errors
    /// [`SequenceError::RateOutOfRange`] unless 50 ≤ `rate_hz` ≤ 1000.
    pub fn sampler(&self, rate_hz: f64) -> Result<Sampler<'_>, SequenceError> {
        if !(MIN_SAMPLE_RATE_HZ..=MAX_SAMPLE_RATE_HZ).contains(&rate_hz) {
            return Err(SequenceError::RateOutOfRange { rate_hz });
        }
        let duration = CommandedMotion::duration(self);
        let steps = (duration * rate_hz).ceil();
        // A plan longer than u64 samples cannot exist in practice; saturate anyway.
        let count = if steps.is_finite() && steps >= 0.0 {
            (steps as u64).saturating_add(1)
        } else {
            1
        };
        Ok(Sampler {
            plan: self,
            rate_hz,
            duration,
            joints: self.sequence().joint_count(),
            next: 0,
            count,
        })
    }
}

impl Iterator for Sampler<'_> {
    type Item = Sample;

    fn next(&mut self) -> Option<Sample> {
        if self.next >= self.count {
            return None;
        }
        let time = (self.next as f64 / self.rate_hz).min(self.duration);
        self.next += 1;
        let mut positions = vec![0.0; self.joints];
        self.plan.positions_at(time, &mut positions);
        Some(Sample {
            time,
            positions,
            gripper_closed: self.plan.gripper_closed_at(time),
        })
    }

    fn size_hint(&self) -> (usize, Option<usize>) {
        let left = usize::try_from(self.count - self.next).unwrap_or(usize::MAX);
        (left, Some(left))
    }
}

impl ExactSizeIterator for Sampler<'_> {}
