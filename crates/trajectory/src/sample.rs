//! Setpoints from a plan at a fixed rate, for streaming and for plots.

use crate::sequence::{SequenceError, SequencePlan};
use crate::sync::MAX_JOINTS;

/// Lowest sample rate, Hz.
pub const MIN_SAMPLE_RATE_HZ: f64 = 50.0;
/// Highest sample rate, Hz.
pub const MAX_SAMPLE_RATE_HZ: f64 = 1000.0;

/// Joint positions at one instant.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Sample {
    /// Time, s from the start of the sequence.
    pub time: f64,
    /// Joint positions, rad; the first [`SequencePlan::joint_count`] are used, the rest are 0.
    pub positions: [f64; MAX_JOINTS],
}

/// Iterator over a plan's setpoints at a fixed rate, from time 0 to the end of the plan
/// inclusive (the last sample is at the plan's duration).
#[derive(Debug, Clone)]
pub struct Sampler<'a> {
    plan: &'a SequencePlan,
    period: f64,
    next: u64,
    count: u64,
}

impl SequencePlan {
    /// Setpoints every `1/rate_hz` s from 0 to the end of the plan, the end included.
    ///
    /// # Errors
    /// [`SequenceError::RateOutOfRange`] unless 50 ≤ `rate_hz` ≤ 1000.
    pub fn sampler(&self, rate_hz: f64) -> Result<Sampler<'_>, SequenceError> {
        if !(MIN_SAMPLE_RATE_HZ..=MAX_SAMPLE_RATE_HZ).contains(&rate_hz) {
            return Err(SequenceError::RateOutOfRange { rate_hz });
        }
        let period = 1.0 / rate_hz;
        let steps = (self.duration() / period).ceil();
        // A plan longer than u64 samples cannot exist in practice; saturate anyway.
        let count = if steps.is_finite() && steps >= 0.0 {
            (steps as u64).saturating_add(1)
        } else {
            1
        };
        Ok(Sampler {
            plan: self,
            period,
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
        let time = (self.next as f64 * self.period).min(self.plan.duration());
        self.next += 1;
        let mut positions = [0.0; MAX_JOINTS];
        self.plan.positions_at(time, &mut positions);
        Some(Sample { time, positions })
    }

    fn size_hint(&self) -> (usize, Option<usize>) {
        let left = usize::try_from(self.count - self.next).unwrap_or(usize::MAX);
        (left, Some(left))
    }
}
