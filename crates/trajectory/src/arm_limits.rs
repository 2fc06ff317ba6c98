//! The limits a plan takes from the arm: how fast and how hard each servo can move its joint.

use armwright_kinematics::{Arm, MAX_JOINTS, gravity_torques, joint_inertias};

use crate::profile::JointLimits;
use crate::servo_sim::{ServoModel, ServoModelOptions};

/// How limits are taken from the arm, and the user's overrides.
#[derive(Debug, Clone, PartialEq)]
pub struct LimitSettings {
    /// Share of each servo's stall torque a plan may use, (0, 1]. Default 0.8.
    pub derating: f64,
    /// Time over which acceleration builds up to its limit, in s; a joint's jerk limit is its
    /// acceleration limit over this unless [`LimitSettings::jerk_override`] gives one. Default
    /// 0.05 s (a few servo frames; from memory).
    pub jerk_time: f64,
    /// Velocity per joint that replaces the one from the servo (rad/s or m/s).
    pub velocity_override: [Option<f64>; MAX_JOINTS],
    /// Acceleration per joint that replaces the one from the servo (rad/s² or m/s²).
    pub acceleration_override: [Option<f64>; MAX_JOINTS],
    /// Jerk limit per joint that replaces acceleration ÷ `jerk_time` (rad/s³ or m/s³).
    pub jerk_override: [Option<f64>; MAX_JOINTS],
}

impl Default for LimitSettings {
    fn default() -> Self {
        LimitSettings {
            derating: 0.8,
            jerk_time: 0.05,
            velocity_override: [None; MAX_JOINTS],
            acceleration_override: [None; MAX_JOINTS],
            jerk_override: [None; MAX_JOINTS],
        }
    }
}

/// Why no limits could be taken from the arm.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum LimitError {
    /// A servo cannot even hold its joint against gravity at some pose of the sequence.
    #[error(
        "joint {joint} cannot hold waypoint {waypoint}: gravity needs {:.1} N·cm, the derated servo gives {:.1} N·cm",
        .needed * 100.0, .available * 100.0
    )]
    OverTorque {
        /// Joint index.
        joint: usize,
        /// Waypoint index.
        waypoint: usize,
        /// Holding effort needed (N·m or N).
        needed: f64,
        /// Derated stall effort (N·m or N).
        available: f64,
    },
    /// A pose the arm cannot take or a setting out of range.
    #[error("{0}")]
    Input(String),
}

/// Per-joint limits for a sequence through `poses` (rad or m, one pose per waypoint), holding
/// `payload_mass` kg.
///
/// The drive a servo may use is its stall torque × derating; holding the worst gravity load
/// (taken at every waypoint and half-way between neighbours) takes part of it, and the rest is
/// split evenly between speed and acceleration. Velocity: that half-margin × the no-load speed
/// (a DC motor's back-EMF costs drive in proportion to speed). Acceleration: that half-margin ×
/// stall torque over the largest inertia the joint sees, its motor and gears included. Jerk:
/// the joint's `jerk_override`, else acceleration over `jerk_time`. So even at the end of a ramp, at full speed, the position
/// loop asks for no more than the derated drive.
///
/// # Errors
/// [`LimitError::OverTorque`] naming the joint and waypoint where gravity alone needs more than
/// the derated servo gives.
pub fn limits_from_arm(
    arm: &Arm,
    poses: &[Vec<f64>],
    payload_mass: f64,
    settings: &LimitSettings,
    model: &ServoModelOptions,
) -> Result<Vec<JointLimits>, LimitError> {
    if !(settings.derating > 0.0 && settings.derating <= 1.0) {
        return Err(LimitError::Input(format!(
            "derating {} must lie in (0, 1]",
            settings.derating
        )));
    }
    if !(settings.jerk_time > 0.0 && settings.jerk_time.is_finite()) {
        return Err(LimitError::Input(format!(
            "jerk time {} s must be positive",
            settings.jerk_time
        )));
    }
    let n = arm.joint_count();
    let mut worst_gravity = [0.0_f64; MAX_JOINTS];
    let mut worst_inertia = [0.0_f64; MAX_JOINTS];
    let mut look = |pose: &[f64], waypoint: usize| -> Result<(), LimitError> {
        let gravity = gravity_torques(arm, pose, payload_mass)
            .map_err(|e| LimitError::Input(e.to_string()))?;
        let inertias = joint_inertias(arm, pose, payload_mass)
            .map_err(|e| LimitError::Input(e.to_string()))?;
        for (j, joint) in arm.joints().iter().enumerate() {
            let needed = gravity.as_slice()[j].abs();
            let available = joint.rated_effort(settings.derating);
            if needed >= available {
                return Err(LimitError::OverTorque {
                    joint: j,
                    waypoint,
                    needed,
                    available,
                });
            }
            worst_gravity[j] = worst_gravity[j].max(needed);
            worst_inertia[j] = worst_inertia[j].max(inertias.as_slice()[j]);
        }
        Ok(())
    };
    for (index, pose) in poses.iter().enumerate() {
        look(pose, index)?;
        if let Some(next) = poses.get(index + 1) {
            let middle: Vec<f64> = pose.iter().zip(next).map(|(a, b)| 0.5 * (a + b)).collect();
            look(&middle, index + 1)?;
        }
    }
    let mut limits = Vec::with_capacity(n);
    for (j, joint) in arm.joints().iter().enumerate() {
        let servo = ServoModel::of_joint(joint, model);
        let stall = servo.stall_effort;
        // The derated drive left after holding against gravity is shared evenly between
        // speed (back-EMF costs drive in proportion to speed) and acceleration, so that at the
        // end of a ramp, at full speed, the position loop still asks for no more than the
        // derated drive and keeps tracking.
        let margin = (settings.derating - worst_gravity[j] / stall) / 2.0;
        let velocity = settings.velocity_override[j].unwrap_or(servo.no_load_speed * margin);
        let acceleration = settings.acceleration_override[j]
            .unwrap_or(stall * margin / (servo.motor_inertia + worst_inertia[j]));
        let jerk = settings.jerk_override[j].unwrap_or(acceleration / settings.jerk_time);
        limits.push(JointLimits::new(velocity, acceleration, jerk));
    }
    Ok(limits)
}
