//! Joint efforts on the stack, and torque use: how much of each servo's rating a pose needs.

use crate::arm::{Arm, MAX_JOINTS};

/// One effort per movable joint, in chain order, held on the stack (no allocation): N·m for a
/// revolute joint, N for a prismatic one — or, from [`torque_use`], a share of the rating.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct JointEfforts {
    values: [f64; MAX_JOINTS],
    count: usize,
}

impl JointEfforts {
    /// `count` zeros (at most [`MAX_JOINTS`]; more are cut to it).
    pub fn zeros(count: usize) -> JointEfforts {
        JointEfforts {
            values: [0.0; MAX_JOINTS],
            count: count.min(MAX_JOINTS),
        }
    }

    /// Efforts from a slice; values past [`MAX_JOINTS`] are dropped.
    pub fn from_slice(values: &[f64]) -> JointEfforts {
        let mut efforts = JointEfforts::zeros(values.len());
        efforts.values[..efforts.count].copy_from_slice(&values[..efforts.count]);
        efforts
    }

    /// The efforts, one per joint, base first.
    pub fn as_slice(&self) -> &[f64] {
        &self.values[..self.count]
    }

    /// The efforts, writable.
    pub fn as_mut_slice(&mut self) -> &mut [f64] {
        &mut self.values[..self.count]
    }

    /// Number of joints.
    pub fn len(&self) -> usize {
        self.count
    }

    /// Whether there are no joints at all.
    pub fn is_empty(&self) -> bool {
        self.count == 0
    }

    /// The largest magnitude over the joints (0 when empty).
    pub fn max_abs(&self) -> f64 {
        self.as_slice()
            .iter()
            .fold(0.0, |worst, v| worst.max(v.abs()))
    }
}

/// Torque use of each joint: |effort| / (rated effort × `derating`), a share where 1.0 means
/// the servo gives all of its derated rating.
///
/// `efforts` are in N·m (revolute) or N (prismatic), as [`gravity_torques`](crate::gravity_torques)
/// and [`inverse_dynamics`](crate::inverse_dynamics) give them; the rated effort is the servo's
/// stall torque through its drive ([`Joint::rated_effort`](crate::Joint::rated_effort)).
/// `derating` is the share of the stall torque one is willing to use, in (0, 1] (0.5 is a common
/// choice for hobby servos). One value per joint of `efforts`, pairing them with the arm's joints
/// in order; efforts past the arm's joint count are left out.
///
/// A `derating` that is not a positive finite number leaves no usable rating: every joint with
/// any effort reports infinity, and a joint with none reports 0.
///
/// See [`gravity_torques`](crate::gravity_torques) for an example.
pub fn torque_use(arm: &Arm, efforts: &JointEfforts, derating: f64) -> JointEfforts {
    let mut shares = JointEfforts::zeros(efforts.len().min(arm.joint_count()));
    for (share, (joint, effort)) in shares
        .as_mut_slice()
        .iter_mut()
        .zip(arm.joints().iter().zip(efforts.as_slice()))
    {
        let rated = joint.rated_effort(derating);
        let needed = effort.abs();
        *share = if needed == 0.0 {
            0.0
        } else if rated.is_finite() && rated > 0.0 {
            needed / rated
        } else {
            f64::INFINITY
        };
    }
    shares
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn from_slice_keeps_at_most_max_joints() {
        let efforts = JointEfforts::from_slice(&[1.0; MAX_JOINTS + 3]);
        assert_eq!(efforts.len(), MAX_JOINTS);
        let small = JointEfforts::from_slice(&[1.0, -3.0]);
        assert_eq!(small.as_slice(), &[1.0, -3.0]);
        assert_eq!(small.max_abs(), 3.0);
    }
}
