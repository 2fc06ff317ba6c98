//! The arm model: joints with their limits, servos, calibrations and masses, placed by one of
//! the built-in arm types or by a general serial chain.
//!
//! Naming scheme: `joint.rs` (one movable joint), `servo.rs` (the hobby servo driving it),
//! `calibration.rs` (joint position ↔ pulse width), `calibration_fit.rs` (a calibration fitted
//! to measured points), `mass.rs` (mass properties),
//! `arm_type.rs` (the built-in arm types and general chains, and how each places its joints).

mod arm_type;
mod calibration;
mod calibration_fit;
mod joint;
mod mass;
mod servo;

pub use arm_type::{ArmType, ArticulatedDims, ChainDims, DhRow, JointPlacement, ScaraDims};
pub use calibration::{Calibration, DEFAULT_PULSE_UNIT_US, PulseDirection, SentPulse, sent_pulse};
pub use calibration_fit::{
    CalibrationFit, CalibrationFitError, CalibrationFitOptions, CalibrationReading, FitShape,
    fit_calibration,
};
pub use joint::{Joint, JointKind, JointSpec};
pub use mass::MassProperties;
pub use servo::ServoSpec;

use nalgebra::{Isometry3, Vector3};

use crate::fk::ToolChain;

/// Largest number of movable joints an arm may have. Fixed so that hot paths use stack arrays.
pub const MAX_JOINTS: usize = 8;

/// The gripper channel: a servo that opens and closes the jaws. It is not a joint.
#[derive(Debug, Clone, PartialEq)]
pub struct Gripper {
    /// Pulse width that opens the jaws, in µs.
    pub open_pulse_us: f64,
    /// Pulse width that closes the jaws, in µs.
    pub closed_pulse_us: f64,
}

/// Everything needed to build an [`Arm`]: its type with dimensions, and one [`JointSpec`] per
/// movable joint in chain order (base first).
#[derive(Debug, Clone, PartialEq)]
pub struct ArmDescription {
    /// The arm type and its dimensions.
    pub arm_type: ArmType,
    /// One entry per movable joint, base first. Built-in types fix the count and kinds.
    pub joints: Vec<JointSpec>,
    /// Mass properties of the tool (gripper and its servo), in the tool frame, in kg and m.
    pub tool_mass: MassProperties,
    /// The payload held at the tool point, in kg.
    pub payload_mass: f64,
    /// The gripper channel, if the arm has one.
    pub gripper: Option<Gripper>,
}

/// A problem that makes an [`ArmDescription`] unusable. Each names the joint (0-based, chain
/// order) or dimension at fault.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum ArmError {
    /// The arm type needs a fixed number of joints.
    #[error("{arm_type} arm needs {expected} joints, got {got}")]
    JointCount {
        /// Name of the arm type.
        arm_type: &'static str,
        /// Joints the type needs.
        expected: usize,
        /// Joints given.
        got: usize,
    },
    /// No movable joint at all, or more than [`MAX_JOINTS`].
    #[error("a chain needs 1 to {MAX_JOINTS} joints, got {got}")]
    ChainLength {
        /// Joints given.
        got: usize,
    },
    /// A dimension that must be positive (and finite) is not.
    #[error("{what} must be a positive, finite length, got {value} m")]
    Dimension {
        /// Which dimension.
        what: String,
        /// The bad value, in m.
        value: f64,
    },
    /// A joint's field is not a finite number or is out of its allowed range.
    #[error("joint {joint}: {field} {problem}")]
    JointField {
        /// Joint index, 0-based.
        joint: usize,
        /// Field name.
        field: &'static str,
        /// What is wrong, in words.
        problem: String,
    },
    /// A general chain gives a joint axis of zero length.
    #[error("joint {joint}: axis has zero length")]
    ZeroAxis {
        /// Joint index, 0-based.
        joint: usize,
    },
    /// A mass or payload is negative or not finite.
    #[error("{what} must be a finite mass of 0 kg or more, got {value} kg")]
    Mass {
        /// Which mass.
        what: String,
        /// The bad value, in kg.
        value: f64,
    },
}

/// A validated arm model. Lengths in m, angles in rad, masses in kg, torques in N·m; base frame
/// with Z up and X forward.
///
/// Each joint's frame is placed by a fixed `origin` relative to the previous joint's frame (or the
/// base) followed by the joint's own motion about or along its `axis`. The tool point is a fixed
/// transform from the last joint's frame.
#[derive(Debug, Clone, PartialEq)]
pub struct Arm {
    arm_type: ArmType,
    joints: Vec<Joint>,
    tool: Isometry3<f64>,
    /// Mass properties of the body each joint moves, in that joint's frame: the link, the next
    /// joint's servo, and for the last joint the tool. Without payload.
    bodies: Vec<MassProperties>,
    payload_mass: f64,
    gripper: Option<Gripper>,
    /// The joints and tool offset as the tool pose steps through them, worked out once.
    tool_chain: ToolChain,
}

impl Arm {
    /// Builds and checks an arm from its description.
    ///
    /// # Errors
    /// [`ArmError`] naming the first joint or dimension that is unusable.
    pub fn new(description: ArmDescription) -> Result<Arm, ArmError> {
        let ArmDescription {
            arm_type,
            joints: specs,
            tool_mass,
            payload_mass,
            gripper,
        } = description;
        if specs.is_empty() || specs.len() > MAX_JOINTS {
            return Err(ArmError::ChainLength { got: specs.len() });
        }
        let placement = arm_type.place_joints(specs.len())?;
        let mut joints = Vec::with_capacity(specs.len());
        for (index, (spec, (kind, origin, axis))) in
            specs.into_iter().zip(placement.joints).enumerate()
        {
            joints.push(Joint::new(index, spec, kind, origin, axis)?);
        }
        if !(payload_mass.is_finite() && payload_mass >= 0.0) {
            return Err(ArmError::Mass {
                what: "payload".into(),
                value: payload_mass,
            });
        }
        tool_mass.check("tool")?;
        let bodies = body_masses(&joints, &placement.tool, &tool_mass);
        let tool_chain = ToolChain::of(&joints, &placement.tool);
        Ok(Arm {
            arm_type,
            joints,
            tool: placement.tool,
            bodies,
            payload_mass,
            gripper,
            tool_chain,
        })
    }

    /// The precomputed chain [`crate::tool_pose`] runs on.
    pub(crate) fn tool_chain(&self) -> &ToolChain {
        &self.tool_chain
    }

    /// The arm type and its dimensions.
    pub fn arm_type(&self) -> &ArmType {
        &self.arm_type
    }

    /// The movable joints in chain order, base first.
    pub fn joints(&self) -> &[Joint] {
        &self.joints
    }

    /// Number of movable joints (the gripper is not one).
    pub fn joint_count(&self) -> usize {
        self.joints.len()
    }

    /// Fixed transform from the last joint's frame to the tool point, in m.
    pub fn tool_offset(&self) -> &Isometry3<f64> {
        &self.tool
    }

    /// Mass properties of the body moved by joint `index`, in that joint's frame, without
    /// payload: the link, the next joint's servo and (last joint) the tool.
    pub fn body(&self, index: usize) -> Option<&MassProperties> {
        self.bodies.get(index)
    }

    /// The payload held at the tool point, in kg.
    pub fn payload_mass(&self) -> f64 {
        self.payload_mass
    }

    /// The gripper channel, if any.
    pub fn gripper(&self) -> Option<&Gripper> {
        self.gripper.as_ref()
    }

    /// The home pose: each joint's home position (rad or m).
    pub fn home_pose(&self) -> Vec<f64> {
        self.joints.iter().map(|joint| joint.home).collect()
    }

    /// Whether every position lies within its joint's limits (with a tolerance of 1e-9).
    pub fn within_limits(&self, positions: &[f64]) -> bool {
        positions.len() == self.joints.len()
            && self
                .joints
                .iter()
                .zip(positions)
                .all(|(joint, &q)| q >= joint.min - 1e-9 && q <= joint.max + 1e-9)
    }
}

/// Lumps each link with the servo of the next joint (mounted on it at that joint's origin plus
/// its mount offset) and, for the last link, the tool.
fn body_masses(
    joints: &[Joint],
    tool: &Isometry3<f64>,
    tool_mass: &MassProperties,
) -> Vec<MassProperties> {
    let mut bodies: Vec<MassProperties> = joints.iter().map(|joint| joint.link_mass).collect();
    for (index, next) in joints.iter().enumerate().skip(1) {
        let mount: Vector3<f64> = next.origin.translation.vector + next.servo.mount_offset;
        let servo = MassProperties::point(next.servo.mass, mount);
        bodies[index - 1] = bodies[index - 1].combined(&servo);
    }
    if let Some(last) = bodies.last_mut() {
        *last = last.combined(&tool_mass.transformed(tool));
    }
    bodies
}
