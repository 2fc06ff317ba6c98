//! The inputs of a profile — one joint's move and its limits — and the checks on them.

/// One joint's part of a move: where it starts and ends and how fast it passes there.
///
/// Positions in rad (m for a sliding joint), velocities in rad/s (m/s). A stop has zero
/// velocity; a pass-through has the velocity the joint keeps through the waypoint.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct JointMove {
    /// Position at the start, rad.
    pub from: f64,
    /// Position at the end, rad.
    pub to: f64,
    /// Velocity at the start, rad/s.
    pub from_velocity: f64,
    /// Velocity at the end, rad/s.
    pub to_velocity: f64,
}

impl JointMove {
    /// A move from rest at `from` to rest at `to` (rad).
    pub fn rest_to_rest(from: f64, to: f64) -> Self {
        Self {
            from,
            to,
            from_velocity: 0.0,
            to_velocity: 0.0,
        }
    }

    /// A move from `from` to `to` (rad) passing the ends at the given velocities (rad/s).
    pub fn passing(from: f64, to: f64, from_velocity: f64, to_velocity: f64) -> Self {
        Self {
            from,
            to,
            from_velocity,
            to_velocity,
        }
    }
}

/// A joint's limits, symmetric in both directions.
///
/// Velocity in rad/s, acceleration in rad/s², jerk in rad/s³ (m/s, m/s², m/s³ for a sliding
/// joint). The trapezoid does not use `jerk`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct JointLimits {
    /// Largest speed, rad/s.
    pub velocity: f64,
    /// Largest acceleration magnitude, rad/s².
    pub acceleration: f64,
    /// Largest jerk magnitude, rad/s³.
    pub jerk: f64,
}

impl JointLimits {
    /// Limits from velocity (rad/s), acceleration (rad/s²) and jerk (rad/s³).
    pub fn new(velocity: f64, acceleration: f64, jerk: f64) -> Self {
        Self {
            velocity,
            acceleration,
            jerk,
        }
    }
}

/// Which limit a [`ProfileError::BadLimit`] is about.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum LimitKind {
    /// The velocity limit (rad/s).
    Velocity,
    /// The acceleration limit (rad/s²).
    Acceleration,
    /// The jerk limit (rad/s³).
    Jerk,
}

impl std::fmt::Display for LimitKind {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(match self {
            Self::Velocity => "velocity limit (rad/s)",
            Self::Acceleration => "acceleration limit (rad/s²)",
            Self::Jerk => "jerk limit (rad/s³)",
        })
    }
}

/// Which end of a move an error is about.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Boundary {
    /// The start of the move.
    Start,
    /// The end of the move.
    End,
}

impl std::fmt::Display for Boundary {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(match self {
            Self::Start => "start",
            Self::End => "end",
        })
    }
}

/// Why a profile could not be made.
#[derive(Debug, Clone, Copy, PartialEq, thiserror::Error)]
pub enum ProfileError {
    /// A limit is zero, negative, NaN or infinite.
    #[error("{limit} is {value}, expected a positive finite number")]
    BadLimit {
        /// The limit.
        limit: LimitKind,
        /// The value given.
        value: f64,
    },
    /// A position or velocity of the move is NaN or infinite.
    #[error("{what} at the {boundary} of the move is {value}, expected a finite number")]
    NotFinite {
        /// `"position"` or `"velocity"`.
        what: &'static str,
        /// Which end.
        boundary: Boundary,
        /// The value given.
        value: f64,
    },
    /// A boundary velocity is faster than the velocity limit. Both in rad/s.
    #[error("velocity {velocity} rad/s at the {boundary} is above the limit of {limit} rad/s")]
    BoundaryVelocityOverLimit {
        /// Which end.
        boundary: Boundary,
        /// The boundary velocity, rad/s.
        velocity: f64,
        /// The velocity limit, rad/s.
        limit: f64,
    },
    /// The move or its limits are so large or small that a time, distance or velocity of the
    /// profile would not be a finite number.
    #[error("the move and its limits are too extreme to plan: a time or distance would overflow")]
    OutOfRange,
    /// A stretch was asked for a duration shorter than the profile's own. Both in s.
    #[error("cannot stretch to {requested} s: the profile already needs {minimum} s")]
    StretchTooShort {
        /// The duration asked for, s.
        requested: f64,
        /// The profile's duration, s.
        minimum: f64,
    },
    /// No profile of this shape with these boundary velocities takes as long as asked.
    #[error(
        "cannot slow this move to {requested} s without breaking its boundary velocities or limits"
    )]
    StretchUnreachable {
        /// The duration asked for, s.
        requested: f64,
    },
}

/// Checks one limit: positive and finite.
fn check_limit(limit: LimitKind, value: f64) -> Result<(), ProfileError> {
    if value.is_finite() && value > 0.0 {
        Ok(())
    } else {
        Err(ProfileError::BadLimit { limit, value })
    }
}

/// Checks limits and move; `with_jerk` says whether the jerk limit is used.
#[inline]
pub(crate) fn validate(
    joint_move: &JointMove,
    limits: &JointLimits,
    with_jerk: bool,
) -> Result<(), ProfileError> {
    // Fast path for the usual, valid input; the checks below find what is wrong otherwise.
    let positive = |x: f64| x.is_finite() && x > 0.0;
    let vmax = limits.velocity;
    if positive(vmax)
        && positive(limits.acceleration)
        && (!with_jerk || positive(limits.jerk))
        && (joint_move.from - joint_move.to).is_finite()
        && joint_move.from_velocity.abs() <= vmax
        && joint_move.to_velocity.abs() <= vmax
    {
        return Ok(());
    }
    diagnose(joint_move, limits, with_jerk)
}

/// Finds what is wrong with an input that failed the fast check of [`validate`].
#[cold]
fn diagnose(
    joint_move: &JointMove,
    limits: &JointLimits,
    with_jerk: bool,
) -> Result<(), ProfileError> {
    check_limit(LimitKind::Velocity, limits.velocity)?;
    check_limit(LimitKind::Acceleration, limits.acceleration)?;
    if with_jerk {
        check_limit(LimitKind::Jerk, limits.jerk)?;
    }
    let checks = [
        ("position", Boundary::Start, joint_move.from),
        ("position", Boundary::End, joint_move.to),
        ("velocity", Boundary::Start, joint_move.from_velocity),
        ("velocity", Boundary::End, joint_move.to_velocity),
    ];
    for (what, boundary, value) in checks {
        if !value.is_finite() {
            return Err(ProfileError::NotFinite {
                what,
                boundary,
                value,
            });
        }
    }
    for (boundary, velocity) in [
        (Boundary::Start, joint_move.from_velocity),
        (Boundary::End, joint_move.to_velocity),
    ] {
        if velocity.abs() > limits.velocity {
            return Err(ProfileError::BoundaryVelocityOverLimit {
                boundary,
                velocity,
                limit: limits.velocity,
            });
        }
    }
    Ok(())
}
