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
    /// A joint rate or acceleration is NaN or infinite.
    #[error("joint {joint} {quantity} is not a finite number ({value})")]
    MotionNotFinite {
        /// Joint index, 0-based.
        joint: usize,
        /// `rate` or `acceleration`.
        quantity: &'static str,
        /// The bad value.
        value: f64,
    },
    /// A payload mass is negative or not finite.
    #[error("payload must be a finite mass of 0 kg or more, got {value} kg")]
    Payload {
        /// The bad value, in kg.
        value: f64,
    },
    /// A joint index past the arm's last joint.
    #[error("joint {joint} does not exist; the arm has {count} joints")]
    NoSuchJoint {
        /// The index asked for, 0-based.
        joint: usize,
        /// The arm's joint count.
        count: usize,
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
    // One pass without an early exit (the usual answer), then the search for the culprit.
    if positions
        .iter()
        .fold(true, |finite, q| finite & q.is_finite())
    {
        return Ok(());
    }
    match positions.iter().position(|q| !q.is_finite()) {
        Some(joint) => Err(KinematicsError::NotFinite {
            joint,
            value: positions[joint],
        }),
        None => Ok(()),
    }
}

/// Checks joint rates or accelerations for count and finiteness; `quantity` names them.
pub(crate) fn check_motion(
    joint_count: usize,
    values: &[f64],
    quantity: &'static str,
) -> Result<(), KinematicsError> {
    if values.len() != joint_count {
        return Err(KinematicsError::WrongJointCount {
            expected: joint_count,
            got: values.len(),
        });
    }
    match values.iter().position(|v| !v.is_finite()) {
        Some(joint) => Err(KinematicsError::MotionNotFinite {
            joint,
            quantity,
            value: values[joint],
        }),
        None => Ok(()),
    }
}

/// Checks a payload mass: finite and not negative, in kg.
pub(crate) fn check_payload(payload_mass: f64) -> Result<(), KinematicsError> {
    if payload_mass.is_finite() && payload_mass >= 0.0 {
        Ok(())
    } else {
        Err(KinematicsError::Payload {
            value: payload_mass,
        })
    }
}
