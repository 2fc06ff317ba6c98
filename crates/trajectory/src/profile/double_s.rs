//! Jerk-limited double-S profile (Biagiotti & Melchiorri, *Trajectory Planning for Automatic
//! Machines and Robots*, Springer 2008, ch. 3), with general start and end velocities and zero
//! acceleration at both ends.
//!
//! The book's algorithm first assumes the velocity limit is reached; if not, it assumes the
//! acceleration limit is reached in both changes, and if that fails it lowers the acceleration
//! step by step. Here the peak velocity is instead found exactly: the distance covered by the
//! two velocity changes grows with the peak, so the highest peak whose changes fit in the move
//! is the root of one increasing function, found in closed form for rest-to-rest moves and by
//! a bracketed Newton search otherwise. Every case of the book — cruise reached or not,
//! acceleration limit reached or not in either change — falls out of the same root.

use super::limits::{JointLimits, ProfileError};
use super::{
    ThreePart, VelocityChange, changes_through, covered_with_slope, reversing_peak,
    solve_bracketed, stretch::stretch_to,
};

/// The time-optimal parts for displacement `distance` (rad, ≥ 0) from velocity `start` to
/// `end` (rad/s, in the direction of motion), limits already checked.
pub(super) fn fastest(
    distance: f64,
    start: f64,
    end: f64,
    limits: &JointLimits,
) -> Result<ThreePart, ProfileError> {
    let (vmax, amax, jmax) = (limits.velocity, limits.acceleration, limits.jerk);
    if start == 0.0 && end == 0.0 {
        return Ok(rest_to_rest(distance, vmax, amax, jmax));
    }
    // Feasibility (Biagiotti & Melchiorri 2008, ch. 3): the direct change from one boundary
    // velocity to the other must fit in the move. When it does not, the book has no profile;
    // here the joint backs up instead (peak velocity below zero, no cruise), so that the
    // velocity changes alone cover exactly the move.
    let lowest_peak = start.max(end);
    let (direct, _, _) = changes_through(start, lowest_peak, end, amax, jmax);
    if direct.is_nan() {
        return Err(ProfileError::OutOfRange);
    }
    if direct > distance * (1.0 + 1e-12) + 1e-15 {
        let peak = reversing_peak(distance, start, end, start.min(end), (vmax, amax, jmax));
        let (_, first, last) = changes_through(start, peak, end, amax, jmax);
        return Ok(ThreePart {
            start_velocity: start,
            peak_velocity: peak,
            end_velocity: end,
            first,
            cruise: 0.0,
            last,
        });
    }
    let (covered, first, last) = changes_through(start, vmax, end, amax, jmax);
    if covered <= distance {
        return Ok(ThreePart {
            start_velocity: start,
            peak_velocity: vmax,
            end_velocity: end,
            first,
            cruise: (distance - covered) / vmax,
            last,
        });
    }
    let peak = if direct >= distance {
        lowest_peak
    } else if let Some(peak) = peak_with_both_limits_reached(distance, start, end, amax, jmax) {
        peak
    } else {
        solve_bracketed(lowest_peak, vmax, 1e-14 * distance, |peak| {
            let (covered, slope) = covered_with_slope(start, peak, end, amax, jmax);
            (covered - distance, slope)
        })
    };
    let (_, first, last) = changes_through(start, peak, end, amax, jmax);
    Ok(ThreePart {
        start_velocity: start,
        peak_velocity: peak,
        end_velocity: end,
        first,
        cruise: 0.0,
        last,
    })
}

/// The peak without cruise when both velocity changes reach the acceleration limit, in closed
/// form, or `None` when they do not. With r = amax/jmax each change lasts r + Δv/amax, so the
/// covered distance (2vp² − v0² − v1²)/(2amax) + r·vp + r(v0 + v1)/2 = h is a quadratic:
/// vp² + amax·r·vp + amax·r(v0 + v1)/2 − (v0² + v1²)/2 − amax·h = 0.
fn peak_with_both_limits_reached(
    distance: f64,
    start: f64,
    end: f64,
    amax: f64,
    jmax: f64,
) -> Option<f64> {
    let reach = amax * amax / jmax;
    let constant =
        0.5 * reach * (start + end) - 0.5 * (start * start + end * end) - amax * distance;
    let discriminant = reach * reach - 4.0 * constant;
    let peak = 0.5 * (-reach + discriminant.sqrt());
    (peak - start.max(end) >= reach).then_some(peak)
}

/// The peak with cruise that makes the profile last `duration` s when both velocity changes
/// reach the acceleration limit, in closed form, or `None` when they do not. As in the
/// trapezoid's fixed-duration formula (Biagiotti & Melchiorri 2008, ch. 3), with the jerk
/// ramps adding r = amax/jmax to each change: vp² + B·vp + C = 0 with
/// B = amax·r − (v0 + v1) − amax·T and C = (v0² + v1²)/2 + amax·h − amax·r(v0 + v1)/2; the
/// smaller root leaves a cruise.
fn stretched_peak_with_both_limits_reached(
    distance: f64,
    parts: &ThreePart,
    duration: f64,
    amax: f64,
    jmax: f64,
) -> Option<ThreePart> {
    let (start, end) = (parts.start_velocity, parts.end_velocity);
    let reach = amax * amax / jmax;
    let b = reach - (start + end) - amax * duration;
    let c = 0.5 * (start * start + end * end) + amax * distance - 0.5 * reach * (start + end);
    let discriminant = b * b - 4.0 * c;
    let peak = 0.5 * (-b - discriminant.sqrt());
    if !(peak - start.max(end) >= reach && peak <= parts.peak_velocity && peak > 0.0) {
        return None;
    }
    let (_, first, last) = changes_through(start, peak, end, amax, jmax);
    let cruise = duration - first.duration - last.duration;
    (cruise >= 0.0).then_some(ThreePart {
        start_velocity: start,
        peak_velocity: peak,
        end_velocity: end,
        first,
        cruise,
        last,
    })
}

/// Closed-form time-optimal rest-to-rest double-S (Biagiotti & Melchiorri 2008, ch. 3, with
/// v0 = v1 = 0, where both velocity changes are alike and each covers half the peak velocity
/// times its duration).
fn rest_to_rest(distance: f64, vmax: f64, amax: f64, jmax: f64) -> ThreePart {
    let at_rest = ThreePart {
        start_velocity: 0.0,
        peak_velocity: 0.0,
        end_velocity: 0.0,
        first: VelocityChange::default(),
        cruise: 0.0,
        last: VelocityChange::default(),
    };
    if distance <= 0.0 {
        return at_rest;
    }
    let full = VelocityChange::fastest(vmax, amax, jmax);
    let (peak, change) = if distance >= vmax * full.duration {
        (vmax, full)
    } else if distance * jmax * jmax >= 2.0 * amax * amax * amax {
        // Acceleration limit reached: peak²/amax + peak·amax/jmax = distance.
        let ramp = amax / jmax;
        let peak = 0.5 * amax * (-ramp + (ramp * ramp + 4.0 * distance / amax).sqrt());
        let change = VelocityChange {
            duration: ramp + peak / amax,
            ramp,
            peak_acceleration: amax,
            jerk: jmax,
        };
        (peak, change)
    } else {
        // Neither limit reached: four jerk ramps of cbrt(distance / (2 jmax)).
        let ramp = (0.5 * distance / jmax).cbrt();
        let change = VelocityChange {
            duration: 2.0 * ramp,
            ramp,
            peak_acceleration: jmax * ramp,
            jerk: jmax,
        };
        (jmax * ramp * ramp, change)
    };
    let cruise = if peak >= vmax {
        (distance / vmax - change.duration).max(0.0)
    } else {
        0.0
    };
    ThreePart {
        peak_velocity: peak,
        first: change,
        cruise,
        last: change,
        ..at_rest
    }
}

/// A profile with boundary velocities slowed to `duration` (s), the limits kept: in closed form
/// when the peak stays above both boundary velocities and both changes reach the acceleration
/// limit, otherwise by the families of `stretch.rs`.
pub(super) fn stretch(
    distance: f64,
    parts: &ThreePart,
    duration: f64,
    limits: &JointLimits,
) -> Result<ThreePart, ProfileError> {
    let (amax, jmax) = (limits.acceleration, limits.jerk);
    if let Some(parts) =
        stretched_peak_with_both_limits_reached(distance, parts, duration, amax, jmax)
    {
        return Ok(parts);
    }
    stretch_to(
        distance,
        parts.start_velocity,
        parts.end_velocity,
        duration,
        (limits.velocity, limits.acceleration, limits.jerk),
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn closed_forms_with_both_limits_reached_match_the_searches() {
        let (amax, jmax) = (4.0, 40.0);
        let limits = JointLimits::new(5.0, amax, jmax);
        for &(distance, start, end) in &[(3.0, 0.2, 0.1), (6.0, 1.0, 0.0), (4.0, 0.0, 0.7)] {
            let peak = peak_with_both_limits_reached(distance, start, end, amax, jmax)
                .expect("both changes reach amax here");
            let searched = solve_bracketed(start.max(end), 5.0, 1e-15 * distance, |peak| {
                let (covered, slope) = covered_with_slope(start, peak, end, amax, jmax);
                (covered - distance, slope)
            });
            assert!((peak - searched).abs() < 1e-12, "{peak} vs {searched}");
            let fastest = fastest(distance, start, end, &limits).expect("feasible");
            let wanted = 1.3 * (fastest.first.duration + fastest.cruise + fastest.last.duration);
            let closed =
                stretched_peak_with_both_limits_reached(distance, &fastest, wanted, amax, jmax)
                    .expect("both changes still reach amax");
            let general =
                stretch_to(distance, start, end, wanted, (5.0, amax, jmax)).expect("reachable");
            assert!((closed.peak_velocity - general.peak_velocity).abs() < 1e-12);
            assert!((closed.duration() - wanted).abs() < 1e-12);
        }
    }

    #[test]
    fn rest_to_rest_closed_form_matches_the_general_search() {
        let limits = JointLimits::new(2.0, 3.0, 7.0);
        for &distance in &[1e-6, 0.01, 0.3, 1.0, 2.0, 5.0] {
            let closed = rest_to_rest(distance, 2.0, 3.0, 7.0);
            // Same search as for boundary velocities, started at a tiny start velocity.
            let searched = fastest(distance, 1e-300, 0.0, &limits).expect("feasible");
            assert!(
                (closed.duration() - searched.duration()).abs() < 1e-12,
                "{distance}: {} vs {}",
                closed.duration(),
                searched.duration()
            );
        }
    }
}
