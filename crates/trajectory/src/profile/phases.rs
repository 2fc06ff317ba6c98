//! The [`Profile`] value both methods produce — a velocity change, a cruise and a velocity
//! change, each change up to three phases of constant jerk — and its evaluation at a time.

use super::limits::{JointLimits, JointMove, ProfileError};
use super::{ThreePart, double_s, trapezoid};

/// Which published method made a profile.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum ProfileShape {
    /// Velocity and acceleration limited; acceleration jumps (Biagiotti & Melchiorri 2008,
    /// ch. 3, "trapezoidal velocity profile").
    Trapezoid,
    /// Jerk limited; acceleration continuous (Biagiotti & Melchiorri 2008, ch. 3, "double S").
    #[default]
    DoubleS,
}

/// Position, velocity, acceleration and jerk of one joint at one instant.
///
/// Units: rad, rad/s, rad/s², rad/s³ (m, m/s, … for a sliding joint).
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct JointState {
    /// Position, rad.
    pub position: f64,
    /// Velocity, rad/s.
    pub velocity: f64,
    /// Acceleration, rad/s².
    pub acceleration: f64,
    /// Jerk, rad/s³ (0 in a trapezoid, whose jerk is not defined where acceleration jumps).
    pub jerk: f64,
}

/// Durations of the parts of a profile, in s, named as in Biagiotti & Melchiorri 2008, ch. 3.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ProfileTimes {
    /// Tj1: each jerk ramp of the first velocity change, s.
    pub start_ramp: f64,
    /// Ta: the first velocity change (start velocity to peak velocity), s.
    pub start_change: f64,
    /// Tv: the cruise at peak velocity, s.
    pub cruise: f64,
    /// Td: the last velocity change (peak velocity to end velocity), s.
    pub end_change: f64,
    /// Tj2: each jerk ramp of the last velocity change, s.
    pub end_ramp: f64,
}

/// A velocity profile for one joint: a value with a duration that can be evaluated at any time.
///
/// Made by [`Profile::double_s`] or [`Profile::trapezoid`]; positions in rad, time in s.
/// Evaluation outside `[0, duration]` is clamped: before the start it gives the start state,
/// after the end the end state, both with zero acceleration and jerk.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Profile {
    shape: ProfileShape,
    joint_move: JointMove,
    limits: JointLimits,
    /// Direction of motion, +1 or −1.
    sign: f64,
    /// Displacement in the direction of motion, rad (≥ 0).
    distance: f64,
    parts: ThreePart,
    duration: f64,
}

impl Profile {
    /// The time-optimal jerk-limited double-S profile for `joint_move` within `limits`
    /// (Biagiotti & Melchiorri 2008, ch. 3), with any boundary velocities the move allows.
    ///
    /// The velocity rises (or falls) from the start velocity to a peak, cruises, and changes to
    /// the end velocity, each change an S-curve with zero acceleration at its ends; the peak is
    /// the highest the move's length allows, up to `limits.velocity`. Rest-to-rest moves use
    /// closed forms; others find the peak by a bracketed Newton search to machine precision.
    ///
    /// A move too short to change directly from its start to its end velocity (the book's
    /// feasibility condition fails) backs up: the peak velocity is negative and the joint
    /// overshoots its end position and comes back; see [`Profile::reverses`].
    ///
    /// # Errors
    /// [`ProfileError::BadLimit`] for a limit that is zero, negative, NaN or infinite;
    /// [`ProfileError::NotFinite`] for a NaN or infinite position or velocity;
    /// [`ProfileError::BoundaryVelocityOverLimit`];
    /// [`ProfileError::OutOfRange`] when the numbers are too large or small to plan in `f64`.
    ///
    /// # Example
    /// ```
    /// use armwright_trajectory::{JointLimits, JointMove, Profile};
    /// let limits = JointLimits::new(5.0, 10.0, 30.0);
    /// let profile = Profile::double_s(&JointMove::passing(0.0, 10.0, 1.0, 0.0), &limits)?;
    /// assert!((profile.duration() - 2.71).abs() < 1e-3);
    /// assert_eq!(profile.state_at(100.0).position, 10.0);
    /// # Ok::<(), armwright_trajectory::ProfileError>(())
    /// ```
    pub fn double_s(joint_move: &JointMove, limits: &JointLimits) -> Result<Self, ProfileError> {
        Self::fastest(ProfileShape::DoubleS, joint_move, limits)
    }

    /// The time-optimal trapezoidal profile for `joint_move` within the velocity and
    /// acceleration of `limits` (`limits.jerk` is not used), with any boundary velocities the
    /// move allows (Biagiotti & Melchiorri 2008, ch. 3).
    ///
    /// # Errors
    /// As [`Profile::double_s`], except that the jerk limit is not checked.
    pub fn trapezoid(joint_move: &JointMove, limits: &JointLimits) -> Result<Self, ProfileError> {
        Self::fastest(ProfileShape::Trapezoid, joint_move, limits)
    }

    /// The time-optimal profile of the given shape; see [`Profile::double_s`] and
    /// [`Profile::trapezoid`].
    ///
    /// # Errors
    /// As the method called.
    pub fn fastest(
        shape: ProfileShape,
        joint_move: &JointMove,
        limits: &JointLimits,
    ) -> Result<Self, ProfileError> {
        let mut profile = PLACEHOLDER;
        profile.become_fastest(shape, joint_move, limits)?;
        Ok(profile)
    }

    /// [`Profile::fastest`] written into `self`, so that fixed arrays of profiles are filled
    /// without copies; on error `self` is unchanged.
    pub(crate) fn become_fastest(
        &mut self,
        shape: ProfileShape,
        joint_move: &JointMove,
        limits: &JointLimits,
    ) -> Result<(), ProfileError> {
        let with_jerk = shape == ProfileShape::DoubleS;
        super::limits::validate(joint_move, limits, with_jerk)?;
        let displacement = joint_move.to - joint_move.from;
        let sign = if displacement < 0.0 { -1.0 } else { 1.0 };
        let distance = displacement.abs();
        let v0 = sign * joint_move.from_velocity;
        let v1 = sign * joint_move.to_velocity;
        let parts = match shape {
            ProfileShape::Trapezoid => trapezoid::fastest(distance, v0, v1, limits)?,
            ProfileShape::DoubleS => double_s::fastest(distance, v0, v1, limits)?,
        };
        let duration = parts.first.duration + parts.cruise + parts.last.duration;
        check_representable(&parts, duration)?;
        self.shape = shape;
        self.joint_move = *joint_move;
        self.limits = *limits;
        self.sign = sign;
        self.distance = distance;
        self.duration = duration;
        self.parts = parts;
        Ok(())
    }

    /// The same move with the same shape and boundary velocities, slowed to take exactly
    /// `duration` s, with every limit still respected.
    ///
    /// A rest-to-rest move is scaled uniformly in time (the fixed-duration approach of
    /// Biagiotti & Melchiorri 2008, ch. 3, with the phase proportions of the time-optimal
    /// profile): velocity falls by the factor, acceleration by its square, jerk by its cube. A
    /// move with boundary velocities keeps its limits and changes the velocity it cruises at
    /// until the duration fits: a lower peak, a slower change between its boundary
    /// velocities, or a dip below both (through zero if need be). A duration no longer than
    /// this profile's returns it unchanged.
    ///
    /// # Errors
    /// [`ProfileError::StretchTooShort`] when `duration` is shorter than this profile's by more
    /// than rounding; [`ProfileError::StretchUnreachable`] when no profile of this shape with
    /// these boundary velocities can take that long (only possible with a boundary velocity).
    pub fn stretched(&self, duration: f64) -> Result<Self, ProfileError> {
        let mut stretched = *self;
        stretched.stretch(duration)?;
        Ok(stretched)
    }

    /// [`Profile::stretched`] in place; on error the profile is unchanged.
    pub(crate) fn stretch(&mut self, duration: f64) -> Result<(), ProfileError> {
        let tolerance = 1e-12 * self.duration.max(1e-3);
        if duration.is_nan() || duration < self.duration - tolerance {
            return Err(ProfileError::StretchTooShort {
                requested: duration,
                minimum: self.duration,
            });
        }
        if duration <= self.duration {
            return Ok(());
        }
        if !duration.is_finite() {
            return Err(ProfileError::StretchUnreachable {
                requested: duration,
            });
        }
        let parts = if self.parts.start_velocity == 0.0 && self.parts.end_velocity == 0.0 {
            rest_to_rest_scaled(&self.parts, self.duration, duration)
        } else {
            match self.shape {
                ProfileShape::Trapezoid => {
                    trapezoid::stretch(self.distance, &self.parts, duration, &self.limits)
                }
                ProfileShape::DoubleS => {
                    double_s::stretch(self.distance, &self.parts, duration, &self.limits)
                }
            }?
        };
        check_representable(&parts, duration)?;
        self.parts = parts;
        self.duration = duration;
        Ok(())
    }

    /// The shortest duration after `blocked` (s) that this move can be stretched to, when
    /// `blocked` is refused because every profile that long covers more than the move (a joint
    /// passing its ends too fast to slow down in time, but able to dip further, or back up, in
    /// a longer time); `None` otherwise. Found in closed form or by one bracketed root.
    pub(crate) fn end_of_refused(&self, blocked: f64) -> Option<f64> {
        let (start, end) = (self.parts.start_velocity, self.parts.end_velocity);
        if start == 0.0 && end == 0.0 {
            return None;
        }
        let jerk = match self.shape {
            ProfileShape::Trapezoid => f64::INFINITY,
            ProfileShape::DoubleS => self.limits.jerk,
        };
        let limits = (self.limits.velocity, self.limits.acceleration, jerk);
        super::stretch::end_of_refused(self.distance, start, end, blocked, limits)
    }

    /// Duration, s.
    pub fn duration(&self) -> f64 {
        self.duration
    }

    /// The method that made this profile.
    pub fn shape(&self) -> ProfileShape {
        self.shape
    }

    /// The move this profile makes.
    pub fn joint_move(&self) -> &JointMove {
        &self.joint_move
    }

    /// The limits this profile respects.
    pub fn limits(&self) -> &JointLimits {
        &self.limits
    }

    /// Peak velocity (the cruise velocity), rad/s, signed in the direction of the joint's axis.
    pub fn peak_velocity(&self) -> f64 {
        self.sign * self.parts.peak_velocity
    }

    /// Whether the joint backs up during the move: its peak velocity is against the direction
    /// from start to end. Only a move with boundary velocities that is too short to change
    /// directly from one to the other does this (it overshoots its end position and comes
    /// back), or one stretched far beyond its minimum duration.
    pub fn reverses(&self) -> bool {
        self.parts.peak_velocity < 0.0
    }

    /// Durations of the parts, in s, with the names of Biagiotti & Melchiorri 2008, ch. 3.
    pub fn times(&self) -> ProfileTimes {
        ProfileTimes {
            start_ramp: self.parts.first.ramp,
            start_change: self.parts.first.duration,
            cruise: self.parts.cruise,
            end_change: self.parts.last.duration,
            end_ramp: self.parts.last.ramp,
        }
    }

    /// Position, velocity, acceleration and jerk at time `t` (s from the start of the move),
    /// clamped to `[0, duration]`. A NaN time gives the start state.
    ///
    /// The first velocity change and the cruise are evaluated forward from the start state,
    /// the last velocity change backward from the end state, so both ends are exact.
    #[inline(always)]
    pub fn state_at(&self, t: f64) -> JointState {
        if t <= 0.0 || t.is_nan() {
            return JointState {
                position: self.joint_move.from,
                velocity: self.joint_move.from_velocity,
                acceleration: 0.0,
                jerk: 0.0,
            };
        }
        if t >= self.duration {
            return JointState {
                position: self.joint_move.to,
                velocity: self.joint_move.to_velocity,
                acceleration: 0.0,
                jerk: 0.0,
            };
        }
        let parts = &self.parts;
        let first_end = parts.first.duration;
        let cruise_end = first_end + parts.cruise;
        // State in the non-negative frame, position measured from the start.
        let (position, velocity, acceleration, jerk) = if t < first_end {
            parts
                .first
                .state_at(parts.start_velocity, parts.peak_velocity, t)
        } else if t < cruise_end {
            let covered = 0.5 * (parts.start_velocity + parts.peak_velocity) * first_end;
            (
                covered + parts.peak_velocity * (t - first_end),
                parts.peak_velocity,
                0.0,
                0.0,
            )
        } else {
            // The last change seen backward in time from the end: x(t) = h − y(T − t), so
            // velocity and jerk keep their sign and acceleration flips.
            let (p, v, a, j) =
                parts
                    .last
                    .state_at(parts.end_velocity, parts.peak_velocity, self.duration - t);
            (self.distance - p, v, -a, j)
        };
        JointState {
            position: self.joint_move.from + self.sign * position,
            velocity: self.sign * velocity,
            acceleration: self.sign * acceleration,
            jerk: self.sign * jerk,
        }
    }

    /// Position at time `t` (s), rad; see [`Profile::state_at`].
    #[inline]
    pub fn position_at(&self, t: f64) -> f64 {
        self.state_at(t).position
    }
}

/// A profile at rest at zero: a placeholder that fills unused slots of fixed arrays.
pub(crate) const PLACEHOLDER: Profile = {
    let change = super::VelocityChange {
        duration: 0.0,
        ramp: 0.0,
        peak_acceleration: 0.0,
        jerk: 0.0,
    };
    Profile {
        shape: ProfileShape::DoubleS,
        joint_move: JointMove {
            from: 0.0,
            to: 0.0,
            from_velocity: 0.0,
            to_velocity: 0.0,
        },
        limits: JointLimits {
            velocity: f64::INFINITY,
            acceleration: f64::INFINITY,
            jerk: f64::INFINITY,
        },
        sign: 1.0,
        distance: 0.0,
        parts: ThreePart {
            start_velocity: 0.0,
            peak_velocity: 0.0,
            end_velocity: 0.0,
            first: change,
            cruise: 0.0,
            last: change,
        },
        duration: 0.0,
    }
};

/// Checks that evaluating the profile stays within finite numbers: the duration and every
/// velocity times the duration must be finite.
fn check_representable(parts: &ThreePart, duration: f64) -> Result<(), ProfileError> {
    let speed = parts
        .start_velocity
        .abs()
        .max(parts.peak_velocity.abs())
        .max(parts.end_velocity.abs());
    if duration.is_finite() && (speed * duration).is_finite() && !speed.is_nan() {
        Ok(())
    } else {
        Err(ProfileError::OutOfRange)
    }
}

/// A rest-to-rest profile slowed uniformly in time from `from_duration` to `to_duration`.
fn rest_to_rest_scaled(parts: &ThreePart, from_duration: f64, to_duration: f64) -> ThreePart {
    if from_duration <= 0.0 {
        // A zero-length move: stay at rest.
        return ThreePart {
            cruise: to_duration,
            ..*parts
        };
    }
    let factor = to_duration / from_duration;
    ThreePart {
        start_velocity: 0.0,
        peak_velocity: parts.peak_velocity / factor,
        end_velocity: 0.0,
        first: parts.first.time_scaled(factor),
        cruise: parts.cruise * factor,
        last: parts.last.time_scaled(factor),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    use armwright_test_support::seeded::XorShift;

    /// Samples `profile` at 2 001 points: within its limits, continuous, exact at both ends.
    fn assert_sound(profile: &Profile) {
        let limits = profile.limits;
        let slack = |limit: f64| limit * (1.0 + 1e-9) + 1e-12;
        let steps = 2_000;
        let dt = profile.duration / f64::from(steps);
        let mut previous = profile.state_at(0.0);
        for k in 1..=steps {
            let state = profile.state_at(f64::from(k) * dt);
            assert!(
                state.velocity.abs() <= slack(limits.velocity),
                "{profile:?}"
            );
            assert!(
                state.acceleration.abs() <= slack(limits.acceleration),
                "{profile:?}"
            );
            if profile.shape == ProfileShape::DoubleS {
                assert!(state.jerk.abs() <= slack(limits.jerk), "{profile:?}");
            }
            let moved = (state.position - previous.position).abs();
            assert!(moved <= slack(limits.velocity) * dt + 1e-9, "{profile:?}");
            previous = state;
        }
        let end = profile.state_at(profile.duration * (1.0 - 1e-13));
        assert!(
            (end.position - profile.joint_move.to).abs() < 1e-9,
            "{profile:?}"
        );
        assert!(
            (end.velocity - profile.joint_move.to_velocity).abs() < 1e-6,
            "{profile:?}"
        );
    }

    #[test]
    fn a_refused_duration_lies_in_one_interval_whose_end_can_be_taken() {
        let mut rng = XorShift::new(0x5EED_0013);
        let mut refused = 0;
        for index in 0..4_000 {
            let shape = if index % 2 == 0 {
                ProfileShape::DoubleS
            } else {
                ProfileShape::Trapezoid
            };
            let limits = JointLimits::new(
                rng.uniform(0.3, 5.0),
                rng.uniform(0.5, 30.0),
                rng.uniform(2.0, 300.0),
            );
            let joint_move = JointMove::passing(
                rng.uniform(-2.0, 2.0),
                rng.uniform(-2.0, 2.0),
                rng.uniform(-1.0, 1.0) * limits.velocity,
                rng.uniform(-1.0, 1.0) * limits.velocity,
            );
            let fastest = Profile::fastest(shape, &joint_move, &limits).expect("plans");
            let wanted = fastest.duration() * rng.uniform(1.0, 2.0);
            match fastest.stretched(wanted) {
                Ok(stretched) => assert_sound(&stretched),
                Err(ProfileError::StretchUnreachable { .. }) => {
                    refused += 1;
                    let end = fastest
                        .end_of_refused(wanted)
                        .expect("refused in an interval");
                    assert!(end > wanted);
                    assert_sound(&fastest.stretched(end).expect("the end can be taken"));
                    let inside = 0.5 * (wanted + end);
                    assert!(inside == end || fastest.stretched(inside).is_err());
                }
                Err(other) => panic!("{other}"),
            }
        }
        assert!(refused > 20, "only {refused} refused");
    }
}
