//! Forward kinematics: joint positions → every link frame and the tool-point pose.

use nalgebra::{Isometry3, Unit, Vector3};

use crate::arm::{Arm, MAX_JOINTS};
use crate::error::{KinematicsError, check_pose};

/// Every joint's frame and the tool frame for one pose, in the base frame (m). Lives on the
/// stack: no allocation.
#[derive(Debug, Clone, Copy)]
pub struct ChainPose {
    frames: [Isometry3<f64>; MAX_JOINTS],
    count: usize,
    tool: Isometry3<f64>,
}

impl ChainPose {
    /// Each joint's frame after its motion (the frame its link is described in), base first.
    pub fn frames(&self) -> &[Isometry3<f64>] {
        &self.frames[..self.count]
    }

    /// The tool frame; its origin is the tool point.
    pub fn tool(&self) -> &Isometry3<f64> {
        &self.tool
    }

    /// Joint `index`'s axis in the base frame (unit) and a point on it (m).
    pub fn joint_axis(&self, arm: &Arm, index: usize) -> (Vector3<f64>, Vector3<f64>) {
        let frame = &self.frames[index];
        let axis = frame.rotation * arm.joints()[index].axis.into_inner();
        (axis, frame.translation.vector)
    }
}

/// Forward kinematics: every link frame and the tool frame for the given joint positions.
///
/// `positions` are in rad (revolute) or m (prismatic), one per movable joint in chain order;
/// frames are in the base frame, in m.
///
/// # Errors
/// [`KinematicsError`] if the count is wrong or a position is not finite.
pub fn forward(arm: &Arm, positions: &[f64]) -> Result<ChainPose, KinematicsError> {
    check_pose(arm.joint_count(), positions)?;
    let mut frames = [Isometry3::identity(); MAX_JOINTS];
    let mut current = Isometry3::identity();
    for (index, (joint, &q)) in arm.joints().iter().zip(positions).enumerate() {
        current = current * joint.origin * joint.motion(q);
        frames[index] = current;
    }
    Ok(ChainPose {
        frames,
        count: arm.joint_count(),
        tool: current * arm.tool_offset(),
    })
}

/// The tool-point pose for the given joint positions, in the base frame (m).
///
/// `positions` are in rad (revolute) or m (prismatic), one per movable joint in chain order.
///
/// # Errors
/// [`KinematicsError`] if the count is wrong or a position is not finite.
pub fn tool_pose(arm: &Arm, positions: &[f64]) -> Result<Isometry3<f64>, KinematicsError> {
    check_pose(arm.joint_count(), positions)?;
    let mut current = Isometry3::identity();
    for (joint, &q) in arm.joints().iter().zip(positions) {
        current = current * joint.origin * joint.motion(q);
    }
    Ok(current * arm.tool_offset())
}

/// The tool frame's orientation as yaw, pitch and roll, in rad.
///
/// The rotation is Rz(yaw)·Ry(−pitch)·Rx(roll): yaw turns about the base's vertical, pitch
/// lifts the tool's approach axis (its X axis) above the horizontal, roll turns about the
/// approach axis. For the built-in articulated arms pitch is the sum of shoulder, elbow and wrist
/// angles; for the horizontal-jointed arm yaw is the sum of shoulder, elbow and roll.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ToolAngles {
    /// About the base's vertical axis, in rad.
    pub yaw: f64,
    /// Elevation of the approach axis above the horizontal, in rad.
    pub pitch: f64,
    /// About the approach axis, in rad.
    pub roll: f64,
}

impl ToolAngles {
    /// The angles of a tool frame.
    pub fn of(tool: &Isometry3<f64>) -> ToolAngles {
        let (roll, pitch_about_y, yaw) = tool.rotation.euler_angles();
        ToolAngles {
            yaw,
            pitch: -pitch_about_y,
            roll,
        }
    }

    /// The approach axis (tool X) in the base frame, a unit vector.
    pub fn approach(tool: &Isometry3<f64>) -> Unit<Vector3<f64>> {
        Unit::new_unchecked(tool.rotation * Vector3::x())
    }
}
