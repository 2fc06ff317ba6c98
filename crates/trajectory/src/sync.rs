//! Multi-joint synchronisation: every joint of a move starts and ends together.
//!
//! The slowest joint sets the duration; every other joint's profile is stretched to that
//! duration within its own limits ([`Profile::stretched`]). Up to [`MAX_JOINTS`] joints are
//! held in a fixed array, so planning a move does not allocate.

use crate::profile::{
    JointLimits, JointMove, JointState, PLACEHOLDER, Profile, ProfileError, ProfileShape,
};

/// The most joints one synchronised move can hold: the arm's own limit, declared once in the
/// kinematics crate.
pub use armwright_kinematics::MAX_JOINTS;

/// Why a move could not be synchronised.
#[derive(Debug, Clone, Copy, PartialEq, thiserror::Error)]
pub enum SyncError {
    /// No joints were given.
    #[error("a move needs at least one joint")]
    NoJoints,
    /// More joints than [`MAX_JOINTS`].
    #[error("a move can hold at most {max} joints, {count} given")]
    TooManyJoints {
        /// Joints given.
        count: usize,
        /// The most allowed.
        max: usize,
    },
    /// The lists of moves and limits differ in length.
    #[error("{moves} joint moves were given with {limits} sets of limits")]
    LimitCountMismatch {
        /// Number of joint moves.
        moves: usize,
        /// Number of limit sets.
        limits: usize,
    },
    /// One joint's profile could not be made or stretched.
    #[error("joint {joint}: {source}")]
    Joint {
        /// Index of the joint (0-based, in chain order).
        joint: usize,
        /// What went wrong.
        #[source]
        source: ProfileError,
    },
}

/// A move of several joints that start and end together.
///
/// Time in s from the start of the move; positions in rad.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SyncedMove {
    duration: f64,
    joint_count: usize,
    profiles: [Profile; MAX_JOINTS],
}

/// Plans every joint's part of a move with the given profile shape, all starting and ending
/// together, as fast as the slowest joint allows.
///
/// A joint with boundary velocities may be unable to take one interval of durations longer
/// than its own (it passes its ends too fast to slow down in time); the common duration then
/// moves to the shortest one every joint can take, the end of that interval, found in closed
/// form or by one bracketed root. This is the time-optimal synchronised duration of
/// Berscheid & Kröger (RSS 2021) for zero boundary accelerations.
///
/// `moves[i]` and `limits[i]` belong to joint `i`. Each joint's profile respects its own
/// velocity, acceleration and (for the double-S) jerk limits.
///
/// # Errors
/// [`SyncError::NoJoints`], [`SyncError::TooManyJoints`], [`SyncError::LimitCountMismatch`];
/// [`SyncError::Joint`] naming the joint whose profile could not be made or stretched.
///
/// # Example
/// ```
/// use armwright_trajectory::{JointLimits, JointMove, ProfileShape, synchronise};
/// let limits = [JointLimits::new(2.0, 5.0, 40.0); 2];
/// let moves = [JointMove::rest_to_rest(0.0, 1.0), JointMove::rest_to_rest(0.5, 0.4)];
/// let synced = synchronise(ProfileShape::DoubleS, &moves, &limits)?;
/// assert_eq!(synced.profiles()[1].duration(), synced.duration());
/// # Ok::<(), armwright_trajectory::SyncError>(())
/// ```
pub fn synchronise(
    shape: ProfileShape,
    moves: &[JointMove],
    limits: &[JointLimits],
) -> Result<SyncedMove, SyncError> {
    if moves.is_empty() {
        return Err(SyncError::NoJoints);
    }
    if moves.len() > MAX_JOINTS {
        return Err(SyncError::TooManyJoints {
            count: moves.len(),
            max: MAX_JOINTS,
        });
    }
    if moves.len() != limits.len() {
        return Err(SyncError::LimitCountMismatch {
            moves: moves.len(),
            limits: limits.len(),
        });
    }
    let joint_count = moves.len();
    // Each joint's fastest profile, built in place in the fixed array.
    let mut synced = SyncedMove {
        duration: 0.0,
        joint_count,
        profiles: [PLACEHOLDER; MAX_JOINTS],
    };
    for (joint, profile) in synced.profiles.iter_mut().enumerate().take(joint_count) {
        profile
            .become_fastest(shape, &moves[joint], &limits[joint])
            .map_err(|source| SyncError::Joint { joint, source })?;
    }
    let mut duration = synced.profiles[..joint_count]
        .iter()
        .map(Profile::duration)
        .fold(0.0, f64::max);
    // Every joint is stretched in place to the slowest joint's duration. A joint with boundary
    // velocities may refuse one interval of durations (it cannot slow down in time, but can
    // dip further or back up in a longer one); the common duration then moves to the end of
    // that interval and every joint is stretched again. A joint's interval is passed at most
    // once, so there is at most one more round than there are joints.
    let mut rounds = 0;
    loop {
        let mut blocked = None;
        for (joint, profile) in synced.profiles.iter_mut().enumerate().take(joint_count) {
            if let Err(source) = profile.stretch(duration) {
                blocked = Some((joint, source));
                break;
            }
        }
        let Some((joint, source)) = blocked else {
            synced.duration = duration;
            return Ok(synced);
        };
        rounds += 1;
        let later = match source {
            ProfileError::StretchUnreachable { .. } if rounds <= joint_count => {
                synced.profiles[joint].end_of_refused(duration)
            }
            _ => None,
        };
        duration = later.ok_or(SyncError::Joint { joint, source })?;
    }
}

impl SyncedMove {
    /// The same move slowed so that every joint takes exactly `duration` s.
    ///
    /// # Errors
    /// [`SyncError::Joint`] when a joint cannot take that long (shorter than its fastest
    /// profile, or a boundary velocity that cannot be kept at that duration).
    pub fn stretched(&self, duration: f64) -> Result<Self, SyncError> {
        let mut stretched = *self;
        for (joint, profile) in stretched
            .profiles
            .iter_mut()
            .enumerate()
            .take(self.joint_count)
        {
            profile
                .stretch(duration)
                .map_err(|source| SyncError::Joint { joint, source })?;
        }
        stretched.duration = duration;
        Ok(stretched)
    }

    /// Duration shared by every joint, s.
    pub fn duration(&self) -> f64 {
        self.duration
    }

    /// Number of joints.
    pub fn joint_count(&self) -> usize {
        self.joint_count
    }

    /// Each joint's profile, in joint order.
    pub fn profiles(&self) -> &[Profile] {
        &self.profiles[..self.joint_count]
    }

    /// Writes every joint's state at time `t` (s, clamped to the move) into `states`, as many
    /// as both hold.
    pub fn states_at(&self, t: f64, states: &mut [JointState]) {
        for (state, profile) in states.iter_mut().zip(self.profiles()) {
            *state = profile.state_at(t);
        }
    }

    /// Writes every joint's position at time `t` (s, clamped to the move) into `positions`
    /// (rad), as many as both hold.
    pub fn positions_at(&self, t: f64, positions: &mut [f64]) {
        for (position, profile) in positions.iter_mut().zip(self.profiles()) {
            *position = profile.position_at(t);
        }
    }
}
