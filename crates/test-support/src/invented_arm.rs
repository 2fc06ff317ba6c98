//! The invented articulated arm the link's tests and benches drive: every joint ±90° on
//! 1000–2000 µs (pulse range 900–2100 µs), the same small servo on each, a gripper on
//! 1200/1800 µs when asked for. The servo and calibration are those of [`crate::arms`].

use std::f64::consts::FRAC_PI_2;

use armwright_kinematics::{
    Arm, ArmDescription, ArmType, ArticulatedDims, Gripper, JointSpec, MassProperties,
};

/// What differs between the tests' arms.
pub struct InventedArm {
    /// Four names make the four-joint type, five the five-joint type.
    pub joints: &'static [&'static str],
    /// The tool's mass (kg) and where it sits.
    pub tool_mass: MassProperties,
    /// Payload while the gripper is closed, in kg.
    pub payload_mass: f64,
    /// Whether the arm has a gripper.
    pub gripper: bool,
}

/// The calibration of every joint: −90° at 1000 µs, +90° at 2000 µs, 900–2100 µs accepted.
pub use crate::arms::calibration;

impl InventedArm {
    /// The arm.
    pub fn build(self) -> Arm {
        let servo = crate::arms::servo(0.055);
        let joint = |name: &&str| JointSpec {
            name: (*name).to_owned(),
            min: -FRAC_PI_2,
            max: FRAC_PI_2,
            home: 0.0,
            servo: servo.clone(),
            calibration: calibration(),
            link_mass: MassProperties::rod_along_x(0.05, 0.1),
        };
        let dims = ArticulatedDims {
            base_height: 0.08,
            upper_arm: 0.12,
            forearm: 0.12,
            wrist_to_tool: 0.06,
        };
        Arm::new(ArmDescription {
            arm_type: match self.joints.len() {
                4 => ArmType::Articulated4(dims),
                _ => ArmType::Articulated5(dims),
            },
            joints: self.joints.iter().map(joint).collect(),
            tool_mass: self.tool_mass,
            payload_mass: self.payload_mass,
            gripper: self.gripper.then_some(Gripper {
                open_pulse_us: 1200.0,
                closed_pulse_us: 1800.0,
            }),
        })
        .expect("a valid invented arm")
    }
}
