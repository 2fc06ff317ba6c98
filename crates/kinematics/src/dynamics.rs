//! Dynamics: the efforts a motion needs (recursive Newton–Euler inverse dynamics) and the
//! inertia each joint's servo sees.
//!
//! The recursion is the classic two-pass form (Featherstone, *Rigid Body Dynamics Algorithms*,
//! 2008, ch. 5; Lynch & Park, *Modern Robotics*, 2017, §8.3), written here with plain vectors in
//! the base frame rather than spatial vectors: an outward pass carries each body's angular
//! velocity and acceleration and the acceleration of its joint origin; an inward pass sums the
//! forces and moments the bodies beyond each joint need, and projects them on the joint's axis.
//! Gravity enters as an upward acceleration of the base, the usual trick.

use nalgebra::{Isometry3, Matrix3, Point3, Vector3};

use crate::arm::{Arm, JointKind, MAX_JOINTS};
use crate::error::{KinematicsError, check_motion, check_payload, check_pose};
use crate::fk::joint_frame;
use crate::gravity::STANDARD_GRAVITY;
use crate::torque_use::JointEfforts;

/// The effort each joint needs to follow the given motion with a payload of `payload_mass` kg
/// at the tool point: inertia, Coriolis and centripetal terms, and gravity.
///
/// `positions` in rad or m, `rates` in rad/s or m/s, `accelerations` in rad/s² or m/s², one of
/// each per movable joint in chain order. Efforts are N·m (revolute) or N (prismatic), signed
/// like the joint. Gravity is [`STANDARD_GRAVITY`] along the base frame's −Z. With zero rates
/// and accelerations the result equals [`gravity_torques`](crate::gravity_torques).
///
/// Runs on the stack in O(n) (no allocation).
///
/// # Errors
/// [`KinematicsError`] if a count is wrong, a value is not finite, or the payload is negative or
/// not finite.
pub fn inverse_dynamics(
    arm: &Arm,
    positions: &[f64],
    rates: &[f64],
    accelerations: &[f64],
    payload_mass: f64,
) -> Result<JointEfforts, KinematicsError> {
    let count = arm.joint_count();
    check_pose(count, positions)?;
    check_motion(count, rates, "rate")?;
    check_motion(count, accelerations, "acceleration")?;
    check_payload(payload_mass)?;
    Ok(newton_euler(
        arm,
        positions,
        rates,
        accelerations,
        payload_mass,
        STANDARD_GRAVITY,
    ))
}

/// The inertia the servo of joint `joint` sees at this pose: the diagonal entry M(q)ᵢᵢ of the
/// joint-space mass matrix, with a payload of `payload_mass` kg at the tool point.
///
/// It is the effort needed per unit acceleration of that joint alone with the arm at rest and
/// without gravity: kg·m² for a revolute joint, kg for a prismatic one, taken at the joint.
/// Through a drive of ratio r ([`ServoSpec::drive_ratio`](crate::ServoSpec::drive_ratio)) the
/// servo's output sees r² times this (kg·m² for a pinion of radius r m). The rest of the arm is
/// taken as held still, as by the other servos.
///
/// # Errors
/// [`KinematicsError`] if the count is wrong, a position is not finite, the payload is negative
/// or not finite, or `joint` is past the last joint ([`KinematicsError::NoSuchJoint`]).
pub fn joint_inertia(
    arm: &Arm,
    positions: &[f64],
    payload_mass: f64,
    joint: usize,
) -> Result<f64, KinematicsError> {
    let count = arm.joint_count();
    check_pose(count, positions)?;
    check_payload(payload_mass)?;
    if joint >= count {
        return Err(KinematicsError::NoSuchJoint { joint, count });
    }
    let rest = [0.0; MAX_JOINTS];
    let mut unit = [0.0; MAX_JOINTS];
    unit[joint] = 1.0;
    let efforts = newton_euler(
        arm,
        positions,
        &rest[..count],
        &unit[..count],
        payload_mass,
        0.0,
    );
    Ok(efforts.as_slice()[joint])
}

/// The inertia every joint sees at once, with the others held still: the diagonal of the
/// joint-space mass matrix, as [`joint_inertia`] gives one entry of it, with a payload of
/// `payload_mass` kg at the tool point. kg·m² for a revolute joint, kg for a prismatic one.
///
/// One pass from the tool back to the base gathers the composite body beyond each joint (mass,
/// centre and inertia in the base frame); a revolute joint then sees that body's inertia about
/// its axis, a prismatic one its mass. Cheaper than one [`joint_inertia`] call per joint.
///
/// # Errors
/// [`KinematicsError`] if the count is wrong, a position is not finite, or the payload is
/// negative or not finite.
pub fn joint_inertias(
    arm: &Arm,
    positions: &[f64],
    payload_mass: f64,
) -> Result<JointEfforts, KinematicsError> {
    let count = arm.joint_count();
    check_pose(count, positions)?;
    check_payload(payload_mass)?;
    let pose = crate::fk::forward(arm, positions)?;
    let tool_point = pose.tool().translation.vector;
    let mut beyond = crate::arm::MassProperties::point(payload_mass, tool_point);
    let mut out = JointEfforts::zeros(count);
    for index in (0..count).rev() {
        if let Some(body) = arm.body(index) {
            beyond = beyond.combined(&body.transformed(&pose.frames()[index]));
        }
        let (axis, point) = pose.joint_axis(arm, index);
        out.as_mut_slice()[index] = match arm.joints()[index].kind {
            JointKind::Revolute => {
                let lever = axis.cross(&(beyond.centre - point));
                axis.dot(&(beyond.inertia * axis)) + beyond.mass * lever.norm_squared()
            }
            JointKind::Prismatic => beyond.mass,
        };
    }
    Ok(out)
}

/// Recursive Newton–Euler with the base accelerating upward at `gravity` m/s². Inputs are
/// already checked.
fn newton_euler(
    arm: &Arm,
    positions: &[f64],
    rates: &[f64],
    accelerations: &[f64],
    payload_mass: f64,
    gravity: f64,
) -> JointEfforts {
    let count = arm.joint_count();
    let zero = Vector3::zeros();
    let mut axes = [zero; MAX_JOINTS];
    let mut origins = [zero; MAX_JOINTS];
    // Net force each body needs (N) and its net moment about its joint origin (N·m).
    let mut forces = [zero; MAX_JOINTS];
    let mut moments = [zero; MAX_JOINTS];

    let mut frame = Isometry3::identity();
    let mut omega = zero; // angular velocity, rad/s
    let mut omega_dot = zero; // angular acceleration, rad/s²
    let mut origin_accel = Vector3::new(0.0, 0.0, gravity); // of the previous joint origin
    let mut previous_origin = zero;
    for index in 0..count {
        let joint = &arm.joints()[index];
        let (q, qd, qdd) = (positions[index], rates[index], accelerations[index]);
        frame = joint_frame(&frame, joint, q);
        let axis = frame.rotation * joint.axis.into_inner();
        let origin = frame.translation.vector;
        // The new origin is a point of the previous body (plus the slide, if prismatic).
        let step = origin - previous_origin;
        let mut accel = origin_accel + omega_dot.cross(&step) + omega.cross(&omega.cross(&step));
        match joint.kind {
            JointKind::Revolute => {
                omega_dot += axis * qdd + omega.cross(&axis) * qd;
                omega += axis * qd;
            }
            JointKind::Prismatic => {
                accel += axis * qdd + omega.cross(&axis) * (2.0 * qd);
            }
        }
        axes[index] = axis;
        origins[index] = origin;
        origin_accel = accel;
        previous_origin = origin;

        let (mass, centre, inertia) = match arm.body(index) {
            Some(body) => {
                let rotation = frame.rotation.to_rotation_matrix();
                let r = rotation.matrix();
                (
                    body.mass,
                    (frame * Point3::from(body.centre)).coords,
                    r * body.inertia * r.transpose(),
                )
            }
            None => (0.0, origin, Matrix3::zeros()),
        };
        let lever = centre - origin;
        let centre_accel = accel + omega_dot.cross(&lever) + omega.cross(&omega.cross(&lever));
        let force = centre_accel * mass;
        forces[index] = force;
        moments[index] =
            inertia * omega_dot + omega.cross(&(inertia * omega)) + lever.cross(&force);
    }
    if count > 0 && payload_mass > 0.0 {
        // The payload is a point mass fixed to the last body at the tool point.
        let last = count - 1;
        let lever = (frame * arm.tool_offset()).translation.vector - origins[last];
        let accel = origin_accel + omega_dot.cross(&lever) + omega.cross(&omega.cross(&lever));
        let force = accel * payload_mass;
        forces[last] += force;
        moments[last] += lever.cross(&force);
    }

    let mut efforts = JointEfforts::zeros(count);
    let values = efforts.as_mut_slice();
    let mut force_beyond = zero;
    let mut moment_beyond = zero; // about the origin of the joint just outside
    let mut outer_origin = zero;
    for index in (0..count).rev() {
        let origin = origins[index];
        moment_beyond =
            moments[index] + moment_beyond + (outer_origin - origin).cross(&force_beyond);
        force_beyond += forces[index];
        outer_origin = origin;
        values[index] = match arm.joints()[index].kind {
            JointKind::Revolute => axes[index].dot(&moment_beyond),
            JointKind::Prismatic => axes[index].dot(&force_beyond),
        };
    }
    efforts
}
