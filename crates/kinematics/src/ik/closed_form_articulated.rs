//! Closed form for the vertical articulated arms (4 joints: base yaw, shoulder, elbow, wrist
//! pitch; 5 joints: plus wrist roll).
//!
//! The base turns the arm's vertical plane onto the target; in that plane the wrist pitch axis
//! sits `wrist_to_tool` back from the tool point along the approach axis, and shoulder and
//! elbow form a planar two-link arm reaching it.
//!
//! Branches: the base either faces the target or is turned half a turn over it, reaching back
//! over the base axis. Turned over, the in-plane pitch becomes π − pitch (the approach axis must
//! still point the same way in space) and the wrist roll shifts by π (Rz(ψ+π)·Ry(p−π)·Rx(ρ+π) =
//! Rz(ψ)·Ry(−p)·Rx(ρ)). In each, "elbow up" puts the elbow above the line from shoulder to wrist
//! when the wrist lies on the base's side the arm faces: elbow angle ≤ 0 facing, ≥ 0 turned
//! over. On the base axis the base yaw is taken from the near pose.

use std::f64::consts::PI;

use nalgebra::{Isometry3, UnitQuaternion, Vector3};

use super::{BranchCollector, IkError, IkSolutions, IkTarget, outward_yaw, planar_two_link};
use crate::arm::{Arm, ArticulatedDims};
use crate::fk::tool_pose;

/// Every in-limit branch for the target; `target.angle` is the tool pitch and `target.roll` the
/// wrist roll (rad), taken from `near` when free. Inputs are already checked finite and of the
/// right count.
pub(crate) fn solve(
    arm: &Arm,
    dims: &ArticulatedDims,
    target: &IkTarget,
    near: &[f64],
) -> Result<IkSolutions, IkError> {
    let with_roll = arm.joint_count() == 5;
    let (pitch, roll) = match (target.angle, target.roll) {
        (Some(pitch), roll) if roll.is_some() || !with_roll => (pitch, roll.unwrap_or(0.0)),
        (angle, roll) => {
            let near_tool = tool_pose(arm, near)?;
            let near_outward = outward_yaw(&near_tool.translation.vector, near[0]);
            let (near_pitch, near_roll) = pitch_and_roll(&near_tool, near_outward);
            (angle.unwrap_or(near_pitch), roll.unwrap_or(near_roll))
        }
    };
    let position = target.position;
    let facing = outward_yaw(&position, near[0]);
    let reach = position.x.hypot(position.y);
    let mut collector = BranchCollector::new();
    let sides = [
        (facing, reach, pitch, roll, false),
        (facing + PI, -reach, PI - pitch, roll + PI, true),
    ];
    for (base, in_plane, in_plane_pitch, roll_joint, turned) in sides {
        let wrist_out = in_plane - dims.wrist_to_tool * in_plane_pitch.cos();
        let wrist_up = position.z - dims.base_height - dims.wrist_to_tool * in_plane_pitch.sin();
        match planar_two_link::solve(dims.upper_arm, dims.forearm, wrist_out, wrist_up, near[1]) {
            Err(short_by) => collector.out_of_reach(short_by),
            Ok(solutions) => {
                let labels = if turned {
                    ["elbow up, turned over", "elbow down, turned over"]
                } else {
                    ["elbow down, facing", "elbow up, facing"]
                };
                let pairs = [solutions.bent_positive, solutions.bent_negative];
                for ((shoulder, elbow), label) in pairs.into_iter().zip(labels) {
                    let wrist = in_plane_pitch - shoulder - elbow;
                    let all = [base, shoulder, elbow, wrist, roll_joint];
                    let candidate = if with_roll { &all[..] } else { &all[..4] };
                    collector.offer(arm, candidate, near, label);
                }
            }
        }
    }
    collector.finish()
}

/// The tool pitch and roll (rad, each in (−π, π]) of a tool frame whose approach axis lies in
/// the vertical plane at yaw `outward` (rad): the angles with tool rotation
/// Rz(outward)·Ry(−pitch)·Rx(roll).
pub(crate) fn pitch_and_roll(tool: &Isometry3<f64>, outward: f64) -> (f64, f64) {
    let in_plane = UnitQuaternion::from_axis_angle(&Vector3::z_axis(), -outward) * tool.rotation;
    let approach = in_plane * Vector3::x();
    let pitch = approach.z.atan2(approach.x);
    let rolled = (UnitQuaternion::from_axis_angle(&Vector3::y_axis(), pitch) * in_plane)
        .to_rotation_matrix()
        .into_inner();
    (pitch, rolled[(2, 1)].atan2(rolled[(1, 1)]))
}
