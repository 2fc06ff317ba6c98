//! Velocity profiles for one joint.
//!
//! Naming scheme: one file per published method, named after the method —
//! `trapezoid.rs` (velocity and acceleration limited) and `double_s.rs` (jerk limited, after
//! Biagiotti & Melchiorri, *Trajectory Planning for Automatic Machines and Robots*, Springer
//! 2008, ch. 3). `phases.rs` holds the [`Profile`] value both methods produce and evaluates it
//! phase by phase (up to seven phases of constant jerk). `limits.rs` holds the inputs (a
//! joint's move and limits) and their checks. This file holds what the methods share: a
//! time-optimal velocity change, the three-part shape, the root finder and stretching.
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

/// Duration through peak velocity `peak` with the cruise that completes `distance`, and its
/// slope with respect to `peak` (s per rad/s). Also returns the no-cruise distance.
fn duration_through(
    distance: f64,
    start: f64,
    peak: f64,
    end: f64,
    acceleration: f64,
    jerk: f64,
) -> (f64, f64, f64) {
    let (covered, first, last) = changes_through(start, peak, end, acceleration, jerk);
    let duration = first.duration + last.duration + (distance - covered) / peak;
    let first_slope = (peak - start).signum()
        * VelocityChange::duration_slope((peak - start).abs(), acceleration, jerk);
    let last_slope = (peak - end).signum()
        * VelocityChange::duration_slope((peak - end).abs(), acceleration, jerk);
    let covered_slope = 0.5 * first.duration
        + 0.5 * (start + peak) * first_slope
        + 0.5 * last.duration
        + 0.5 * (peak + end) * last_slope;
    let slope =
        first_slope + last_slope - (covered_slope * peak + (distance - covered)) / (peak * peak);
    (duration, slope, covered)
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

/// Lowers the peak velocity of `parts` (time-optimal, non-negative frame) until the profile
/// takes `duration` s, keeping velocity, acceleration and jerk limits (`limits`: rad/s, rad/s²,
/// rad/s³) and the boundary velocities.
///
/// First along the usual shape (peak at or above both boundary velocities), where the duration
/// falls as the peak rises; then along positive peaks below a boundary velocity, found by
/// halving the peak; finally, when the velocity changes alone cover more than the move, along
/// negative peaks (the joint backs up while it cruises), where the duration grows without
/// bound as the peak rises towards zero.
pub(crate) fn stretch_peak(
    distance: f64,
    parts: &ThreePart,
    duration: f64,
    limits: (f64, f64, f64),
) -> Result<ThreePart, ProfileError> {
    let (_, acceleration, jerk) = limits;
    let start = parts.start_velocity;
    let end = parts.end_velocity;
    let fastest_peak = parts.peak_velocity;
    let timing = |peak: f64| duration_through(distance, start, peak, end, acceleration, jerk);
    let tolerance = 1e-12 * distance.max(1e-12);
    let unreachable = ProfileError::StretchUnreachable {
        requested: duration,
    };
    // The usual case first: a peak between the boundary velocities and the fastest peak.
    let usual_low = start.max(end);
    if fastest_peak > 0.0 && usual_low > 0.0 && usual_low <= fastest_peak {
        let at_low = timing(usual_low).0;
        if at_low >= duration {
            let fastest_duration = parts.first.duration + parts.cruise + parts.last.duration;
            let ends = (at_low - duration, fastest_duration - duration);
            let peak =
                solve_bracketed_from(usual_low, fastest_peak, ends, 1e-14 * duration, |peak| {
                    let (time, slope, _) = timing(peak);
                    (time - duration, slope)
                });
            return finish_stretch(distance, start, peak, end, duration, (acceleration, jerk));
        }
    }
    // Whether the two changes through a zero peak already cover more than the move: then small
    // positive peaks do not fit, and long durations need the joint to back up.
    let (covered_at_rest, rest_first, rest_last) =
        changes_through(start, 0.0, end, acceleration, jerk);
    let backs_up = covered_at_rest > distance + tolerance;
    let mut bracket = None;
    if fastest_peak > 0.0 {
        bracket = if backs_up {
            bounded_forward_bracket(distance, start, end, fastest_peak, duration, limits)
        } else {
            forward_bracket(distance, start, end, fastest_peak, duration, &timing)
        };
    }
    if bracket.is_none() && backs_up {
        let lowest = if fastest_peak < 0.0 {
            fastest_peak
        } else {
            reversing_peak(distance, start, end, 0.0, limits)
        };
        if timing(lowest).0 <= duration {
            // Near a zero peak the cruise dominates: T ≈ T(0 changes) + (h − D(0)) / peak.
            let estimate = (distance - covered_at_rest)
                / (duration - rest_first.duration - rest_last.duration);
            let mut high = if estimate > lowest && estimate < 0.0 {
                estimate
            } else {
                0.5 * lowest
            };
            for _ in 0..1100 {
                if timing(high).0 >= duration {
                    bracket = Some((lowest, high));
                    break;
                }
                high *= 0.5;
            }
        }
    }
    let (low, high) = bracket.ok_or(unreachable)?;
    let peak = solve_bracketed(low, high, 1e-14 * duration, |peak| {
        let (time, slope, _) = timing(peak);
        (time - duration, slope)
    });
    finish_stretch(distance, start, peak, end, duration, (acceleration, jerk))
}

/// The parts through `peak` that take `duration` s, checked to cover `distance`.
fn finish_stretch(
    distance: f64,
    start: f64,
    peak: f64,
    end: f64,
    duration: f64,
    (acceleration, jerk): (f64, f64),
) -> Result<ThreePart, ProfileError> {
    let (covered, first, last) = changes_through(start, peak, end, acceleration, jerk);
    let cruise = (duration - first.duration - last.duration).max(0.0);
    let miss = distance - covered - peak * cruise;
    if miss.is_nan() || miss.abs() > 1e-9 * distance.max(1e-6) {
        return Err(ProfileError::StretchUnreachable {
            requested: duration,
        });
    }
    Ok(ThreePart {
        start_velocity: start,
        peak_velocity: peak,
        end_velocity: end,
        first,
        cruise,
        last,
    })
}

/// Like [`forward_bracket`] when the changes through a zero peak cover more than the move:
/// positive peaks then fit only down to the one whose changes alone cover the move, so the
/// bracket is searched between that peak and the usual shape's lowest.
fn bounded_forward_bracket(
    distance: f64,
    start: f64,
    end: f64,
    fastest_peak: f64,
    duration: f64,
    limits: (f64, f64, f64),
) -> Option<(f64, f64)> {
    let (_, acceleration, jerk) = limits;
    let timing = |peak: f64| duration_through(distance, start, peak, end, acceleration, jerk).0;
    let low = start.max(end);
    if !(low > 0.0 && low <= fastest_peak) {
        return None;
    }
    if timing(low) >= duration {
        return Some((low, fastest_peak));
    }
    let fitting = solve_bracketed(0.0, low, 1e-14 * distance.max(1e-12), |peak| {
        let (covered, slope) = covered_with_slope(start, peak, end, acceleration, jerk);
        (covered - distance, slope)
    });
    (fitting > 0.0 && timing(fitting) >= duration).then_some((fitting, low))
}

/// A bracket `(low, high)` of positive peak velocities whose durations straddle `duration`,
/// along the usual shape or, failing that, below a boundary velocity.
fn forward_bracket(
    distance: f64,
    start: f64,
    end: f64,
    fastest_peak: f64,
    duration: f64,
    timing: &impl Fn(f64) -> (f64, f64, f64),
) -> Option<(f64, f64)> {
    let tolerance = 1e-12 * distance.max(1e-12);
    let mut low = start.max(end).max(0.0);
    if low <= 0.0 {
        // Both boundary velocities are zero or negative: the duration grows without bound as
        // the peak falls towards zero.
        low = fastest_peak;
        for _ in 0..2000 {
            if timing(low).0 >= duration {
                break;
            }
            low *= 0.5;
        }
    }
    if low > 0.0 && low <= fastest_peak && timing(low).0 >= duration {
        return Some((low, fastest_peak));
    }
    if low <= 0.0 {
        return None;
    }
    // Peaks below a boundary velocity: halve the peak until the profile takes long enough,
    // keeping the last feasible peak above as the other end of the bracket. Where the
    // feasible set has a gap between the two, scan it finely.
    let feasible = |peak: f64| {
        let (time, _, covered) = timing(peak);
        (covered <= distance + tolerance && time.is_finite()).then_some(time)
    };
    let mut bracket = None;
    let mut above = Some(low);
    let mut peak = low;
    for _ in 0..64 {
        let upper = peak;
        peak *= 0.5;
        match feasible(peak) {
            None => above = None,
            Some(time) if time >= duration => {
                bracket = match above {
                    Some(above) => Some((peak, above)),
                    None => (1..16)
                        .map(|k| upper - (upper - peak) * f64::from(k) / 16.0)
                        .zip((0..15).map(|k| upper - (upper - peak) * f64::from(k) / 16.0))
                        .find(|&(lower, higher)| {
                            matches!(feasible(lower), Some(t) if t >= duration)
                                && matches!(feasible(higher), Some(t) if t < duration)
                        }),
                };
                break;
            }
            Some(_) => above = Some(peak),
        }
    }
    if bracket.is_none() {
        // Last resort: an even scan from `low` down.
        let mut above = Some(low);
        for k in (1..64).rev() {
            let peak = low * f64::from(k) / 64.0;
            match feasible(peak) {
                None => above = None,
                Some(time) if time >= duration => {
                    bracket = above.map(|above| (peak, above));
                    if bracket.is_some() {
                        break;
                    }
                }
                Some(_) => above = Some(peak),
            }
        }
    }
    bracket
}
