//! The heaviest payload at the tool point that keeps every joint within its derated torque,
//! holding a pose or following a motion.
//!
//! Gravity and inverse-dynamics efforts are affine in a point payload's mass: each joint's
//! effort is e₀ + m·s, with e₀ the effort without payload and s the effort per kg. So the
//! heaviest payload is, over the joints, the smallest m ≥ 0 at which |e₀ + m·s| reaches the
//! joint's rated effort (stall torque × derating through the drive).

use crate::arm::Arm;
use crate::dynamics::inverse_dynamics;
use crate::error::KinematicsError;
use crate::gravity::gravity_torques;
use crate::torque_use::JointEfforts;

/// The heaviest payload and the joint that sets it.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PayloadLimit {
    /// Heaviest payload at the tool point, in kg: 0 when a joint is over its rating even with
    /// none, infinite when no joint's effort depends on the payload.
    pub mass: f64,
    /// The joint (index, base first) that sets it; `None` when the payload is unlimited.
    pub joint: Option<usize>,
}

/// The heaviest payload (a point mass at the tool point) the arm can hold still at `positions`
/// (rad or m, one per joint) with every joint within `derating` (0, 1] of its stall torque.
///
/// # Errors
/// [`KinematicsError`] if the count is wrong or a position is not finite.
pub fn max_payload(
    arm: &Arm,
    positions: &[f64],
    derating: f64,
) -> Result<PayloadLimit, KinematicsError> {
    let unloaded = gravity_torques(arm, positions, 0.0)?;
    let loaded = gravity_torques(arm, positions, 1.0)?;
    Ok(limit(arm, &unloaded, &loaded, derating))
}

/// The heaviest payload the arm can carry through one instant of a motion: joint `positions`
/// (rad or m), `rates` (rad/s or m/s) and `accelerations` (rad/s² or m/s²), every joint within
/// `derating` (0, 1] of its stall torque, by inverse dynamics.
///
/// # Errors
/// [`KinematicsError`] if a count is wrong or a value is not finite.
pub fn max_payload_in_motion(
    arm: &Arm,
    positions: &[f64],
    rates: &[f64],
    accelerations: &[f64],
    derating: f64,
) -> Result<PayloadLimit, KinematicsError> {
    let unloaded = inverse_dynamics(arm, positions, rates, accelerations, 0.0)?;
    let loaded = inverse_dynamics(arm, positions, rates, accelerations, 1.0)?;
    Ok(limit(arm, &unloaded, &loaded, derating))
}

fn limit(arm: &Arm, unloaded: &JointEfforts, per_kg: &JointEfforts, derating: f64) -> PayloadLimit {
    let mut best = PayloadLimit {
        mass: f64::INFINITY,
        joint: None,
    };
    for (j, joint) in arm.joints().iter().enumerate() {
        let rated = joint.rated_effort(derating);
        let base = unloaded.as_slice()[j];
        let slope = per_kg.as_slice()[j] - base;
        let mass = if rated.is_nan() || rated <= 0.0 || base.abs() > rated {
            0.0
        } else if slope > 0.0 {
            (rated - base) / slope
        } else if slope < 0.0 {
            (rated + base) / -slope
        } else {
            f64::INFINITY
        };
        if mass < best.mass {
            best = PayloadLimit {
                mass,
                joint: Some(j),
            };
        }
    }
    best
}
