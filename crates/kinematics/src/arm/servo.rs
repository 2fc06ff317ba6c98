//! The hobby servo that drives a joint: its ratings and imperfections.

use nalgebra::Vector3;

use super::ArmError;

/// Ratings and imperfections of one hobby servo (a position loop inside the servo, commanded by
/// a pulse width).
///
/// Torque in N·m, speed in rad/s, mass in kg; deadband and proportional band in µs of pulse
/// width; backlash in rad at the servo output.
#[derive(Debug, Clone, PartialEq)]
pub struct ServoSpec {
    /// Torque at which the output stalls, in N·m.
    pub stall_torque: f64,
    /// Output speed with no load, in rad/s.
    pub no_load_speed: f64,
    /// Pulse-width change the servo ignores, in µs.
    pub deadband_us: f64,
    /// Pulse-width error across which the drive rises from zero to full, in µs.
    pub proportional_band_us: f64,
    /// Play between gear and output, in rad (total, not ±).
    pub backlash: f64,
    /// Mass of the servo, in kg. It sits on the link before its joint.
    pub mass: f64,
    /// Where the servo's centre of mass sits relative to its joint's origin, in m, in the frame
    /// of the link before the joint.
    pub mount_offset: Vector3<f64>,
    /// Joint motion per radian of servo output: 1 for a direct revolute drive, the pinion or
    /// lead radius in m/rad for a prismatic joint.
    pub drive_ratio: f64,
}

impl ServoSpec {
    pub(crate) fn check(&self, joint: usize) -> Result<(), ArmError> {
        let positive = [
            ("servo.stall_torque", self.stall_torque),
            ("servo.no_load_speed", self.no_load_speed),
            ("servo.proportional_band_us", self.proportional_band_us),
            ("servo.drive_ratio", self.drive_ratio),
        ];
        for (field, value) in positive {
            if !(value.is_finite() && value > 0.0) {
                return Err(ArmError::JointField {
                    joint,
                    field,
                    problem: format!("must be positive, got {value}"),
                });
            }
        }
        let non_negative = [
            ("servo.deadband_us", self.deadband_us),
            ("servo.backlash", self.backlash),
            ("servo.mass", self.mass),
        ];
        for (field, value) in non_negative {
            if !(value.is_finite() && value >= 0.0) {
                return Err(ArmError::JointField {
                    joint,
                    field,
                    problem: format!("must be 0 or more, got {value}"),
                });
            }
        }
        if !self.mount_offset.iter().all(|v| v.is_finite()) {
            return Err(ArmError::JointField {
                joint,
                field: "servo.mount_offset",
                problem: "is not finite".into(),
            });
        }
        Ok(())
    }
}
