//! Arm model, forward and inverse kinematics, gravity torques, reach and accuracy for small
//! servo-driven arms.
//!
//! Conventions: lengths in m, angles in rad, masses in kg, torques in N·m, forces in N; the base
//! frame has Z up and X forward. Pulse widths, deadband and proportional band are in µs and say
//! so in their names. Joint positions are rad for a revolute joint and m for a prismatic one,
//! one per movable joint in chain order; the gripper is not a joint.
#![warn(missing_docs)]

mod arm; // the arm model: joints, servos, calibrations, masses, arm types
mod error; // the error shared by every pose-taking function
mod fk; // joint positions → link frames and tool-point pose
mod jacobian; // tool-point and space Jacobians

pub use crate::arm::{
    Arm, ArmDescription, ArmError, ArmType, ArticulatedDims, Calibration, ChainDims, DhRow,
    Gripper, Joint, JointKind, JointPlacement, JointSpec, MAX_JOINTS, MassProperties,
    PulseDirection, ScaraDims, ServoSpec,
};
pub use crate::error::KinematicsError;
pub use crate::fk::{ChainPose, ToolAngles, forward, tool_pose};
pub use crate::jacobian::{Jacobian, space_jacobian, tool_jacobian};
