//! Jacobians: how the tool frame moves for small joint motions.

use nalgebra::{Isometry3, SMatrix, Vector3};

use crate::arm::{Arm, JointKind, MAX_JOINTS};
use crate::error::{KinematicsError, check_pose};
use crate::fk::forward;

/// A 6×n Jacobian stored in a fixed 6×[`MAX_JOINTS`] matrix whose columns past the joint count
/// are zero. Columns are per joint (rad or m); rows are as each constructor says.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Jacobian {
    /// The matrix; columns past [`Jacobian::joint_count`] are zero.
    pub matrix: SMatrix<f64, 6, MAX_JOINTS>,
    joints: usize,
}

impl Jacobian {
    /// Number of meaningful columns.
    pub fn joint_count(&self) -> usize {
        self.joints
    }
}

/// The geometric Jacobian at the tool point, in the base frame.
///
/// Rows 0–2 are the tool point's linear velocity (m/s), rows 3–5 the tool frame's angular
/// velocity (rad/s), per unit joint rate (rad/s or m/s). Worked out in the same pass down the
/// arm's precomputed chain as [`crate::tool_pose`].
///
/// # Errors
/// [`KinematicsError`] if the count is wrong or a position is not finite.
pub fn tool_jacobian(arm: &Arm, positions: &[f64]) -> Result<Jacobian, KinematicsError> {
    check_pose(arm.joint_count(), positions)?;
    let (_, matrix) = arm.tool_chain().tool_pose_and_jacobian(positions);
    Ok(Jacobian {
        matrix,
        joints: arm.joint_count(),
    })
}

/// The tool pose (m, base frame) and [`tool_jacobian`] from the same pass down the chain.
///
/// # Errors
/// [`KinematicsError`] if the count is wrong or a position is not finite.
pub(crate) fn tool_pose_and_jacobian(
    arm: &Arm,
    positions: &[f64],
) -> Result<(Isometry3<f64>, Jacobian), KinematicsError> {
    check_pose(arm.joint_count(), positions)?;
    let (tool, matrix) = arm.tool_chain().tool_pose_and_jacobian(positions);
    Ok((
        tool,
        Jacobian {
            matrix,
            joints: arm.joint_count(),
        },
    ))
}

/// The space Jacobian of the product-of-exponentials formulation (Lynch & Park, *Modern
/// Robotics*, 2017, §5.1.1): column i is joint i's screw axis in the base frame at this pose,
/// rows 0–2 angular (ω), rows 3–5 linear (v = −ω × q for a revolute joint through point q).
///
/// # Errors
/// [`KinematicsError`] if the count is wrong or a position is not finite.
pub fn space_jacobian(arm: &Arm, positions: &[f64]) -> Result<Jacobian, KinematicsError> {
    let pose = forward(arm, positions)?;
    let mut matrix = SMatrix::<f64, 6, MAX_JOINTS>::zeros();
    for (index, joint) in arm.joints().iter().enumerate() {
        let (axis, point) = pose.joint_axis(arm, index);
        let (angular, linear) = match joint.kind {
            JointKind::Revolute => (axis, -axis.cross(&point)),
            JointKind::Prismatic => (Vector3::zeros(), axis),
        };
        matrix.fixed_view_mut::<3, 1>(0, index).copy_from(&angular);
        matrix.fixed_view_mut::<3, 1>(3, index).copy_from(&linear);
    }
    Ok(Jacobian {
        matrix,
        joints: arm.joint_count(),
    })
}
