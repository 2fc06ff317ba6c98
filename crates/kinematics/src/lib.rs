//! Arm model, forward and inverse kinematics, gravity torques, reach and accuracy for small
//! servo-driven arms.
//!
//! Conventions: lengths in m, angles in rad, masses in kg, torques in N·m, forces in N; the base
//! frame has Z up and X forward. Pulse widths, deadband and proportional band are in µs and say
//! so in their names. Joint positions are rad for a revolute joint and m for a prismatic one,
//! one per movable joint in chain order; the gripper is not a joint.
#![warn(missing_docs)]

mod accuracy; // tool-point accuracy budget from servo deadband and backlash
mod arm; // the arm model: joints, servos, calibrations, masses, arm types
mod collision; // links as capsules, workspace obstacles, signed distances of one pose
mod dynamics; // recursive Newton–Euler inverse dynamics and the inertia each joint sees
mod envelope; // reach envelope and torque-utilisation maps over a grid in a plane
mod error; // the error shared by every pose-taking function
mod fk; // joint positions → link frames and tool-point pose
mod gravity; // holding torque against gravity, with payload
mod ik; // tool-point target → joint positions, closed form and damped least squares
mod jacobian; // tool-point and space Jacobians
mod payload; // the heaviest tool-point payload within the derated torque, held or moving
mod torque_use; // per-joint efforts and the share of each servo's rating they use

pub use crate::accuracy::{AccuracyBudget, accuracy_budget, joint_uncertainty};
pub use crate::arm::{
    Arm, ArmDescription, ArmError, ArmType, ArticulatedDims, Calibration, CalibrationFit,
    CalibrationFitError, CalibrationFitOptions, CalibrationReading, ChainDims,
    DEFAULT_PULSE_UNIT_US, DhRow, FitShape, Gripper, Joint, JointKind, JointPlacement, JointSpec,
    MAX_JOINTS, MassProperties, PulseDirection, ScaraDims, SentPulse, ServoSpec, fit_calibration,
    sent_pulse,
};
pub use crate::collision::*; // ArmShape, Obstacle, pair_distance, pose_proximities and their types
pub use crate::dynamics::{inverse_dynamics, joint_inertia, joint_inertias};
pub use crate::envelope::{MapExtent, MapOptions, MapView, ReachMap, reach_map};
pub use crate::error::KinematicsError;
pub use crate::fk::{ChainPose, ToolAngles, forward, tool_pose};
pub use crate::gravity::{STANDARD_GRAVITY, gravity_torques};
pub use crate::ik::{
    Branch, IkError, IkOptions, IkSolutions, IkTarget, IkTask, solve_ik, solve_ik_frame,
    solve_ik_free_angles,
};
pub use crate::jacobian::{Jacobian, space_jacobian, tool_jacobian};
pub use crate::payload::{PayloadLimit, max_payload, max_payload_in_motion};
pub use crate::torque_use::{JointEfforts, torque_use};
