//! The error every pose-taking function shares.

/// A joint-position input the arm cannot take.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum KinematicsError {
    /// One position per movable joint is needed.
    #[error("expected {expected} joint positions, got {got}")]
    WrongJointCount {
        /// The arm's joint count.
        expected: usize,
        /// Positions given.
        got: usize,
    },
    /// A position is NaN or infinite.
    #[error("joint {joint} position is not a finite number ({value})")]
    NotFinite {
        /// Joint index, 0-based.
        joint: usize,
        /// The bad value.
        value: f64,
    },
}

/// Checks a pose for count and finiteness.
pub(crate) fn check_pose(joint_count: usize, positions: &[f64]) -> Result<(), KinematicsError> {
    if positions.len() != joint_count {
        return Err(KinematicsError::WrongJointCount {
            expected: joint_count,
            got: positions.len(),
        });
    }
    match positions.iter().position(|q| !q.is_finite()) {
        Some(joint) => Err(KinematicsError::NotFinite {
            joint,
            value: positions[joint],
        }),
        None => Ok(()),
    }
}
