//! Multi-joint synchronisation: every joint of a move starts and ends together.
//!
//! The slowest joint sets the duration; every other joint's profile is stretched to that
//! duration within its own limits ([`Profile::stretched`]). Up to [`MAX_JOINTS`] joints are
//! held in a fixed array, so planning a move does not allocate.

use crate::profile::{
    JointLimits, JointMove, JointState, PLACEHOLDER, Profile, ProfileError, ProfileShape,
};

/// The most joints one synchronised move can hold.
pub const MAX_JOINTS: usize = 8;

/// Why a move could not be synchronised.
#[derive(Debug, Clone, Copy, PartialEq, thiserror::Error)]
pub enum SyncError {
    /// No joints were given.
    #[error("a move needs at least one joint")]
    NoJoints,
    /// More joints than [`MAX_JOINTS`].
    #[error("a move can hold at most {max} joints, {count} were given")]
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
/// A joint with boundary velocities may be unable to take some durations longer than its
/// own (between slowing its peak velocity and backing up); the common duration then moves to
/// the shortest one every joint can take, found by search to about 1e-15 relative.
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
    // Usually every joint stretches to the slowest joint's duration, in place.
    let mut blocked = None;
    for (joint, profile) in synced.profiles.iter_mut().enumerate().take(joint_count) {
        if let Err(source) = profile.stretch(duration) {
            blocked = Some(SyncError::Joint { joint, source });
            break;
        }
    }
    // A joint with boundary velocities may be unable to take some durations (a gap between
    // slowing its peak and backing up); then the common duration moves past that joint's gap
    // and every joint is tried again from its fastest profile. Each round lengthens the
    // duration.
    let mut rounds = 0;
    while let Some(error) = blocked.take() {
        rounds += 1;
        let later = match error {
            SyncError::Joint {
                joint,
                source: ProfileError::StretchUnreachable { .. },
            } if rounds <= 4 * MAX_JOINTS => {
                let fastest = Profile::fastest(shape, &moves[joint], &limits[joint])
                    .map_err(|source| SyncError::Joint { joint, source })?;
                next_reachable(&fastest, duration)
            }
            _ => None,
        };
        duration = later.ok_or(error)?;
        for (joint, profile) in synced.profiles.iter_mut().enumerate().take(joint_count) {
            let stretched = Profile::fastest(shape, &moves[joint], &limits[joint])
                .and_then(|fastest| fastest.stretched(duration));
            match stretched {
                Ok(stretched) => *profile = stretched,
                Err(source) => {
                    blocked = Some(SyncError::Joint { joint, source });
                    break;
                }
            }
        }
    }
    synced.duration = duration;
    Ok(synced)
}

/// The shortest duration after `blocked` (s) that `profile` can be stretched to, found by
/// doubling a step until a stretch succeeds and then bisecting; `None` if none is found.
fn next_reachable(profile: &Profile, blocked: f64) -> Option<f64> {
    let reachable = |duration: f64| profile.stretched(duration).is_ok();
    let mut low = blocked;
    let mut step = 1e-3 * blocked.max(1e-6);
    let mut high = low + step;
    let mut found = false;
    for _ in 0..64 {
        if reachable(high) {
            found = true;
            break;
        }
        low = high;
        step *= 2.0;
        high = low + step;
    }
    if !found {
        return None;
    }
    for _ in 0..60 {
        let middle = 0.5 * (low + high);
        if middle <= low || middle >= high {
            break;
        }
        if reachable(middle) {
            high = middle;
        } else {
            low = middle;
        }
    }
    Some(high)
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
