//! Accuracy budget: how far the tool point may sit from where it was commanded, from each
//! servo's deadband and backlash.

use crate::arm::{Arm, Joint, MAX_JOINTS};
use crate::error::KinematicsError;
use crate::jacobian::tool_jacobian;

/// How far the tool point may sit from its commanded place at one pose, in m, and what each
/// joint contributes.
///
/// Each joint's uncertainty is counted as a ± half-width about its commanded position:
/// half its servo's deadband (the servo ignores pulse-width errors inside a band centred on the
/// command, so it may stop anywhere within ± half of it), turned into rad or m through the
/// joint's calibration, plus half its backlash (the total play, so ± half of it), through the
/// drive. Each joint's share is that uncertainty times the tool point's speed per unit joint
/// rate (the linear rows of the tool Jacobian: small-motion, first order). The spread between
/// two approaches from opposite sides can be twice these figures.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct AccuracyBudget {
    /// Worst case: every joint off by its full uncertainty in the unluckiest direction, the
    /// sum of the per-joint shares, in m.
    pub worst: f64,
    /// Root-sum-square of the per-joint shares (independent errors), in m.
    pub rss: f64,
    /// Each joint's share: tool-point displacement from its uncertainty alone, in m. Entries
    /// past [`AccuracyBudget::joint_count`] are zero.
    pub per_joint: [f64; MAX_JOINTS],
    /// Each joint's own ± uncertainty, in rad (revolute) or m (prismatic). Entries past
    /// [`AccuracyBudget::joint_count`] are zero.
    pub joint_uncertainty: [f64; MAX_JOINTS],
    /// Number of joints the arrays describe.
    pub joint_count: usize,
}

impl AccuracyBudget {
    /// The per-joint shares, in m, one per joint.
    pub fn shares(&self) -> &[f64] {
        &self.per_joint[..self.joint_count]
    }
}

/// A joint's ± position uncertainty from half its servo's deadband (through the calibration)
/// and half its backlash (through the drive), in rad or m.
pub fn joint_uncertainty(joint: &Joint) -> f64 {
    let deadband = joint
        .calibration
        .position_per_us(joint.servo.deadband_us / 2.0);
    let backlash = joint.servo.backlash * joint.servo.drive_ratio / 2.0;
    deadband + backlash
}

/// The accuracy budget of the tool point at a pose; see [`AccuracyBudget`] for what is counted.
///
/// `positions` are in rad (revolute) or m (prismatic), one per movable joint in chain order;
/// every figure out is in m, except the joints' own uncertainties (rad or m).
///
/// # Errors
/// [`KinematicsError`] if the count is wrong or a position is not finite.
pub fn accuracy_budget(arm: &Arm, positions: &[f64]) -> Result<AccuracyBudget, KinematicsError> {
    let jacobian = tool_jacobian(arm, positions)?;
    let mut budget = AccuracyBudget {
        worst: 0.0,
        rss: 0.0,
        per_joint: [0.0; MAX_JOINTS],
        joint_uncertainty: [0.0; MAX_JOINTS],
        joint_count: arm.joint_count(),
    };
    let mut sum_of_squares = 0.0;
    for (index, joint) in arm.joints().iter().enumerate() {
        let uncertainty = joint_uncertainty(joint);
        let speed = jacobian.matrix.fixed_view::<3, 1>(0, index).norm();
        let share = speed * uncertainty;
        budget.joint_uncertainty[index] = uncertainty;
        budget.per_joint[index] = share;
        budget.worst += share;
        sum_of_squares += share * share;
    }
    budget.rss = sum_of_squares.sqrt();
    Ok(budget)
}
