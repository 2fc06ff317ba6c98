//! Statics: the effort each joint's servo must give to hold a pose against gravity.

use nalgebra::{Isometry3, Vector3};

use crate::arm::{Arm, JointKind, MAX_JOINTS};
use crate::error::{KinematicsError, check_payload, check_pose};
use crate::fk::{joint_frame, rotate};
use crate::torque_use::JointEfforts;

/// Standard acceleration of free fall, g_n = 9.80665 m/s², exact by definition (3rd CGPM,
/// 1901; ISO 80000-3). Gravity points along the base frame's −Z.
pub const STANDARD_GRAVITY: f64 = 9.80665;

/// The holding effort each joint's servo must give against gravity, with a payload of
/// `payload_mass` kg as a point mass at the tool point.
///
/// `positions` are in rad (revolute) or m (prismatic), one per movable joint in chain order.
/// Efforts are N·m for a revolute joint and N for a prismatic one, signed like the joint: a
/// positive value pushes toward larger positions. Gravity is [`STANDARD_GRAVITY`] along the base
/// frame's −Z. Each body's mass is as [`Arm::body`] gives it (link, next servo, tool); the
/// payload is the argument, not [`Arm::payload_mass`], so a caller can try other loads.
///
/// Runs on the stack in one pass down and one back (no allocation).
///
/// # Errors
/// [`KinematicsError`] if the count is wrong, a position is not finite, or the payload is
/// negative or not finite.
///
/// # Example
/// One horizontal lever holding 120 g, 22 cm out: τ = m·g·r ≈ 0.259 N·m (25.9 N·cm).
/// ```
/// use armwright_kinematics::*;
/// use nalgebra::{Isometry3, Vector3};
/// # let servo = ServoSpec { stall_torque: 1.96, no_load_speed: 6.0, deadband_us: 4.0,
/// #     proportional_band_us: 40.0, backlash: 0.01, mass: 0.05,
/// #     mount_offset: Vector3::zeros(), drive_ratio: 1.0 };
/// # let calibration = Calibration { position_a: -1.57, pulse_a_us: 1000.0, position_b: 1.57,
/// #     pulse_b_us: 2000.0, pulse_min_us: 900.0, pulse_max_us: 2100.0 };
/// let arm = Arm::new(ArmDescription {
///     arm_type: ArmType::Chain(ChainDims::OriginAxis {
///         joints: vec![JointPlacement {
///             kind: JointKind::Revolute,
///             axis: -Vector3::y(), // a positive angle lifts the lever
///             point: Vector3::zeros(),
///         }],
///         tool_home: Isometry3::translation(0.22, 0.0, 0.0),
///     }),
///     joints: vec![JointSpec {
///         name: "lever".into(),
///         min: -1.5,
///         max: 1.5,
///         home: 0.0,
///         servo,
///         calibration,
///         link_mass: MassProperties::zero(),
///     }],
///     tool_mass: MassProperties::zero(),
///     payload_mass: 0.0,
///     gripper: None,
/// })?;
/// let holding = gravity_torques(&arm, &[0.0], 0.120)?;
/// assert!((holding.as_slice()[0] - 0.120 * STANDARD_GRAVITY * 0.22).abs() < 1e-12);
/// // Against a 1.96 N·m servo derated to half its stall torque: about 26 % used.
/// let share = torque_use(&arm, &holding, 0.5);
/// assert!((share.as_slice()[0] - 0.2589 / 0.98).abs() < 1e-3);
/// # Ok::<(), Box<dyn std::error::Error>>(())
/// ```
pub fn gravity_torques(
    arm: &Arm,
    positions: &[f64],
    payload_mass: f64,
) -> Result<JointEfforts, KinematicsError> {
    check_pose(arm.joint_count(), positions)?;
    check_payload(payload_mass)?;
    let count = arm.joint_count();
    let mut axes = [Vector3::zeros(); MAX_JOINTS];
    let mut origins = [Vector3::zeros(); MAX_JOINTS];
    let mut masses = [0.0; MAX_JOINTS];
    // First moment of each body's mass about the base origin, Σ m·c, in kg·m.
    let mut moments = [Vector3::zeros(); MAX_JOINTS];
    let mut current = Isometry3::identity();
    for (index, (joint, &q)) in arm.joints().iter().zip(positions).enumerate() {
        current = joint_frame(&current, joint, q);
        axes[index] = rotate(&current.rotation, joint.axis.as_ref());
        origins[index] = current.translation.vector;
        if let Some(body) = arm.body(index) {
            masses[index] = body.mass;
            moments[index] =
                (current.translation.vector + rotate(&current.rotation, &body.centre)) * body.mass;
        }
    }
    let tool_point = current.translation.vector
        + rotate(&current.rotation, &arm.tool_offset().translation.vector);

    // Walking from the tool back to the base, the mass beyond joint i and its first moment.
    let mut mass_beyond = payload_mass;
    let mut moment_beyond = tool_point * payload_mass;
    let mut efforts = JointEfforts::zeros(count);
    let values = efforts.as_mut_slice();
    for index in (0..count).rev() {
        mass_beyond += masses[index];
        moment_beyond += moments[index];
        let axis = &axes[index];
        values[index] = match arm.joints()[index].kind {
            // τ = a · (r × m·g·ẑ) with r = Σ m(c − p): the moment of the weight beyond the
            // joint about its axis, which the servo must cancel.
            JointKind::Revolute => {
                let r = moment_beyond - origins[index] * mass_beyond;
                STANDARD_GRAVITY * (axis.x * r.y - axis.y * r.x)
            }
            JointKind::Prismatic => STANDARD_GRAVITY * mass_beyond * axis.z,
        };
    }
    Ok(efforts)
}
