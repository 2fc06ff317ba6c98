//! Velocity profiles for one joint.
//!
//! Naming scheme: one file per published method, named after the method —
//! `trapezoid.rs` (velocity and acceleration limited) and `double_s.rs` (jerk limited, after
//! Biagiotti & Melchiorri, *Trajectory Planning for Automatic Machines and Robots*, Springer
//! 2008, ch. 3). `phases.rs` holds the [`Profile`] value both methods produce and evaluates it
//! phase by phase (up to seven phases of constant jerk). `limits.rs` holds the inputs (a
//! joint's move and limits) and their checks; `stretch.rs` slows a profile with boundary
//! velocities to a given duration (for both methods) and finds the durations it cannot take.
//! This file holds what the methods share: a time-optimal velocity change, the three-part
//! shape and the root finder.
//!
//! Every profile has the same three-part shape: a velocity change from the start velocity to a
//! peak velocity, a cruise at the peak velocity, and a velocity change to the end velocity.
//! The methods differ in how a velocity change is made (constant acceleration, or an S-curve
//! with limited jerk). Internally the maths works in a frame where the displacement is not
//! negative; the sign is put back when the profile is evaluated. The peak velocity may lie
//! below a boundary velocity, and below zero when a move is too short for its boundary
//! velocities (the joint backs up).

mod double_s; // jerk-limited double-S: minimum time, peak velocity search, stretching
mod limits; // JointMove, JointLimits, ProfileError and their validation
mod phases; // the Profile value and its evaluation, phase by phase
mod stretch; // slowing a profile with boundary velocities to a duration; durations it cannot take
mod trapezoid; // velocity and acceleration limited trapezoid: closed forms

pub use limits::{Boundary, JointLimits, JointMove, LimitKind, ProfileError};
pub(crate) use phases::PLACEHOLDER;
pub use phases::{JointState, Profile, ProfileShape, ProfileTimes};

/// One sixth, as a product is faster than a division.
const SIXTH: f64 = 1.0 / 6.0;

/// A time-optimal change of velocity with zero acceleration at both ends.
///
/// Times in s, acceleration in rad/s², jerk in rad/s³. With jerk = ∞ (trapezoid) the ramp
/// times are zero and the acceleration jumps to `peak_acceleration`.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub(crate) struct VelocityChange {
    /// Whole duration of the change, s.
    pub duration: f64,
    /// Duration of each jerk ramp (rising and falling), s.
    pub ramp: f64,
    /// Largest acceleration magnitude reached, rad/s².
    pub peak_acceleration: f64,
    /// Jerk magnitude during the ramps, rad/s³ (0 when the ramps have zero length).
    pub jerk: f64,
}

impl VelocityChange {
    /// The velocity change of magnitude `dv` (rad/s, ≥ 0) in minimum time with the given
    /// acceleration and jerk limits. `jerk = ∞` gives a constant-acceleration change.
    #[inline]
    pub(crate) fn fastest(dv: f64, acceleration: f64, jerk: f64) -> Self {
        if dv <= 0.0 {
            return Self::default();
        }
        if dv * jerk >= acceleration * acceleration {
            // Acceleration limit reached: ramp, constant acceleration, ramp.
            let ramp = acceleration / jerk;
            Self {
                duration: ramp + dv / acceleration,
                ramp,
                peak_acceleration: acceleration,
                jerk: if ramp > 0.0 { jerk } else { 0.0 },
            }
        } else {
            // Acceleration limit not reached: two ramps meeting at the peak.
            let ramp = (dv / jerk).sqrt();
            Self {
                duration: 2.0 * ramp,
                ramp,
                peak_acceleration: jerk * ramp,
                jerk,
            }
        }
    }

    /// This change made `factor` (≥ 1) times slower: acceleration ÷ factor², jerk ÷ factor³.
    pub(crate) fn time_scaled(self, factor: f64) -> Self {
        Self {
            duration: self.duration * factor,
            ramp: self.ramp * factor,
            peak_acceleration: self.peak_acceleration / (factor * factor),
            jerk: self.jerk / (factor * factor * factor),
        }
    }

    /// Displacement, velocity, acceleration and jerk at `tau` s into this change from
    /// velocity `from` to velocity `to` (either direction), with `0 ≤ tau ≤ duration`.
    #[inline(always)]
    pub(crate) fn state_at(&self, from: f64, to: f64, tau: f64) -> (f64, f64, f64, f64) {
        let direction = if to >= from { 1.0 } else { -1.0 };
        let jerk = direction * self.jerk;
        let peak = direction * self.peak_acceleration;
        let ramp = self.ramp;
        if tau < ramp {
            let v = from + 0.5 * jerk * tau * tau;
            let p = tau * (from + jerk * tau * tau * SIXTH);
            return (p, v, jerk * tau, jerk);
        }
        let remaining = self.duration - tau;
        if remaining > ramp {
            // Constant acceleration after the rising ramp.
            let since = tau - ramp;
            let v_ramp = from + 0.5 * peak * ramp;
            let p_ramp = ramp * (from + jerk * ramp * ramp * SIXTH);
            let v = v_ramp + peak * since;
            let p = p_ramp + since * (v_ramp + 0.5 * peak * since);
            return (p, v, peak, 0.0);
        }
        // Falling ramp, measured back from the end of the change where a = 0, v = to.
        let covered = 0.5 * (from + to) * self.duration;
        let v = to - 0.5 * jerk * remaining * remaining;
        let p = covered - remaining * (to - jerk * remaining * remaining * SIXTH);
        (p, v, jerk * remaining, -jerk)
    }

    /// Derivative of the duration with respect to `dv` (s per rad/s), for Newton steps.
    #[inline]
    pub(crate) fn duration_slope(dv: f64, acceleration: f64, jerk: f64) -> f64 {
        if dv * jerk >= acceleration * acceleration {
            1.0 / acceleration
        } else {
            1.0 / (dv * jerk).sqrt()
        }
    }
}

/// The three-part shape of a profile in the non-negative displacement frame.
///
/// Velocities in rad/s, durations in s.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct ThreePart {
    /// Velocity at the start.
    pub start_velocity: f64,
    /// Velocity of the cruise.
    pub peak_velocity: f64,
    /// Velocity at the end.
    pub end_velocity: f64,
    /// Change from start to peak velocity.
    pub first: VelocityChange,
    /// Cruise duration, s.
    pub cruise: f64,
    /// Change from peak to end velocity.
    pub last: VelocityChange,
}

#[cfg(test)]
impl ThreePart {
    /// Total duration, s.
    pub(crate) fn duration(&self) -> f64 {
        self.first.duration + self.cruise + self.last.duration
    }
}

/// Distance covered by the two velocity changes through `peak` with no cruise, and the two
/// changes themselves. An S-curve or a ramp is symmetric, so each covers the mean of its end
/// velocities times its duration (Biagiotti & Melchiorri 2008, ch. 3).
#[inline]
pub(crate) fn changes_through(
    start: f64,
    peak: f64,
    end: f64,
    acceleration: f64,
    jerk: f64,
) -> (f64, VelocityChange, VelocityChange) {
    let first = VelocityChange::fastest((peak - start).abs(), acceleration, jerk);
    let last = VelocityChange::fastest((peak - end).abs(), acceleration, jerk);
    let distance = 0.5 * (start + peak) * first.duration + 0.5 * (peak + end) * last.duration;
    (distance, first, last)
}

/// Solves `f(x) = 0` for `x` in `[lo, hi]`, where `f` returns the value and its slope and
/// `f(lo)` and `f(hi)` have opposite signs (or one is zero). Starts from the secant of the
/// bracket, takes Newton steps, and bisects whenever a step leaves the bracket. Stops when
/// `|f(x)| ≤ tolerance` or the bracket cannot shrink further. Returns the best `x` found.
pub(crate) fn solve_bracketed(
    lo: f64,
    hi: f64,
    tolerance: f64,
    f: impl Fn(f64) -> (f64, f64),
) -> f64 {
    let (f_lo, _) = f(lo);
    let (f_hi, _) = f(hi);
    solve_bracketed_from(lo, hi, (f_lo, f_hi), tolerance, f)
}

/// [`solve_bracketed`] with the values at both ends already known.
pub(crate) fn solve_bracketed_from(
    mut lo: f64,
    mut hi: f64,
    (f_lo, f_hi): (f64, f64),
    tolerance: f64,
    f: impl Fn(f64) -> (f64, f64),
) -> f64 {
    if f_lo.abs() <= tolerance {
        return lo;
    }
    if f_hi.abs() <= tolerance {
        return hi;
    }
    let rising = f_hi > f_lo;
    let secant = lo + (hi - lo) * f_lo / (f_lo - f_hi);
    let mut x = if secant > lo && secant < hi {
        secant
    } else {
        0.5 * (lo + hi)
    };
    for _ in 0..200 {
        let (value, slope) = f(x);
        if value.abs() <= tolerance {
            return x;
        }
        if (value > 0.0) == rising {
            hi = x;
        } else {
            lo = x;
        }
        let newton = x - value / slope;
        let usable = slope.is_finite() && slope != 0.0 && newton > lo && newton < hi;
        let next = if usable { newton } else { 0.5 * (lo + hi) };
        if next == x || hi - lo <= 4.0 * f64::EPSILON * hi.abs().max(lo.abs()) {
            return next;
        }
        x = next;
    }
    x
}

/// Distance covered by the two velocity changes through `peak` with no cruise, and its slope
/// with respect to `peak` (rad per rad/s).
pub(crate) fn covered_with_slope(
    start: f64,
    peak: f64,
    end: f64,
    acceleration: f64,
    jerk: f64,
) -> (f64, f64) {
    let (covered, first, last) = changes_through(start, peak, end, acceleration, jerk);
    let first_slope = (peak - start).signum()
        * VelocityChange::duration_slope((peak - start).abs(), acceleration, jerk);
    let last_slope = (peak - end).signum()
        * VelocityChange::duration_slope((peak - end).abs(), acceleration, jerk);
    let slope = 0.5 * (first.duration + last.duration)
        + 0.5 * (start + peak) * first_slope
        + 0.5 * (peak + end) * last_slope;
    (covered, slope)
}

/// The peak velocity below zero (the joint backs up) at which the two velocity changes alone
/// cover `distance`: the root of covered(peak) = distance on [−vmax, highest], where the
/// covered distance is below `distance` at −vmax and above it at `highest`.
pub(crate) fn reversing_peak(
    distance: f64,
    start: f64,
    end: f64,
    highest: f64,
    limits: (f64, f64, f64),
) -> f64 {
    let (vmax, acceleration, jerk) = limits;
    solve_bracketed(-vmax, highest, 1e-14 * distance.max(1e-12), |peak| {
        let (covered, slope) = covered_with_slope(start, peak, end, acceleration, jerk);
        (covered - distance, slope)
    })
}
