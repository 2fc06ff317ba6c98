//! Slowing a profile with boundary velocities to a given duration, and the durations it cannot
//! take.
//!
//! In the non-negative displacement frame, with boundary velocities v0 and v1 (either sign),
//! limits V, A, J and a duration T, every jerk-limited motion with zero boundary acceleration
//! covers a distance between two extremes, Dmin(T) and Dmax(T): the set of such motions is
//! convex (the constraints are linear in the jerk), so every distance between the two is
//! covered by some motion. The profiles here cover that whole interval with one monotone
//! family, ordered by the velocity it cruises at:
//!
//! * **above both boundary velocities**: change up to a peak p, cruise, change down; the
//!   peak runs from max(v0, v1) up to the highest one whose two time-optimal changes fit in T
//!   (or V). Its top end is Dmax(T).
//! * **between them**: one direct change from v0 to v1 made slower than time-optimal (its
//!   acceleration holds a level below A), with a cruise at v0 before it or at v1 after it. As
//!   the change lengthens from its fastest to T the distance sweeps from the value at p = v0
//!   or p = v1 to T·(v0 + v1)/2, so the two together join the families above and below.
//!   Without them a peak between v0 and v1 may have no room for both its changes, and some
//!   durations were wrongly refused (issue 13).
//! * **below both boundary velocities**: a dip to p < min(v0, v1), a cruise (a coast), and a
//!   change back; p may be below zero (the joint brakes through zero and backs up) down to −V.
//!   Its bottom end is Dmin(T).
//!
//! In each family the distance rises with the cruise velocity (the derivative is at least the
//! cruise time, since each change's duration t(Δv) is concave with t(0) = 0), so the motion for
//! a distance is one bracketed root, or a closed form between the boundary velocities.
//!
//! A duration T is feasible when Dmin(T) ≤ h ≤ Dmax(T). With h ≥ 0, Dmax(T) ≥ h holds for every
//! T past the fastest profile's; Dmin(T) first grows (the joint cannot slow down in time) and
//! then falls (it dips deeper, then backs up), so the durations refused form one interval
//! whose end is where Dmin(T) falls back to h: a no-cruise dip whose two changes cover h, or,
//! when even the dip to −V covers more, that dip with a cruise at −V, in closed form. This
//! matches the one blocked interval per joint of Berscheid & Kröger (RSS 2021).

use super::limits::ProfileError;
use super::{ThreePart, VelocityChange, changes_through, covered_with_slope, solve_bracketed_from};

/// Root-finding tolerance on distances, relative to the move's scale.
const DISTANCE_TOLERANCE: f64 = 1e-15;

/// Largest x ≥ 0 such that two time-optimal changes of x and x + `spread` (rad/s) take at most
/// `duration` s together, with acceleration `amax` and jerk `jmax` (∞ for constant
/// acceleration); in closed form for each of the three regimes (both changes reach `amax`,
/// only the larger does, neither does). `None` when even x = 0 takes longer.
fn widest_swing(spread: f64, duration: f64, amax: f64, jmax: f64) -> Option<f64> {
    let together = |x: f64| {
        VelocityChange::fastest(x, amax, jmax).duration
            + VelocityChange::fastest(x + spread, amax, jmax).duration
    };
    if together(0.0) > duration {
        return None;
    }
    // A change of Δv ≥ amax²/jmax reaches amax and lasts r + Δv/amax, with r = amax/jmax;
    // a smaller one lasts 2√(Δv/jmax).
    let ramp = amax / jmax;
    let reaching = amax * ramp;
    if together(reaching) <= duration {
        return Some((0.5 * (amax * (duration - 2.0 * ramp) - spread)).max(0.0));
    }
    let root_jerk = 1.0 / jmax.sqrt();
    if spread >= reaching || together(reaching - spread) <= duration {
        // Only the larger change reaches amax: with s = √x,
        // s²/amax + 2s/√jmax + (r + spread/amax − T) = 0.
        let c = ramp + spread / amax - duration;
        let s = -c / (root_jerk + (root_jerk * root_jerk - c / amax).max(0.0).sqrt());
        return Some(s * s);
    }
    // Neither reaches amax: √x + √(x + spread) = k with k = T·√jmax / 2.
    let k = 0.5 * duration * jmax.sqrt();
    let s = ((k * k - spread) / (2.0 * k)).max(0.0);
    Some(s * s)
}

/// Distance covered in `duration` s through cruise velocity `peak` (two time-optimal changes
/// and the cruise that fills the rest), its slope with respect to `peak` (rad per rad/s), and
/// the two changes.
fn distance_through(
    start: f64,
    peak: f64,
    end: f64,
    duration: f64,
    (amax, jmax): (f64, f64),
) -> (f64, f64, VelocityChange, VelocityChange) {
    let (covered, first, last) = changes_through(start, peak, end, amax, jmax);
    let (_, covered_slope) = covered_with_slope(start, peak, end, amax, jmax);
    let first_slope =
        (peak - start).signum() * VelocityChange::duration_slope((peak - start).abs(), amax, jmax);
    let last_slope =
        (peak - end).signum() * VelocityChange::duration_slope((peak - end).abs(), amax, jmax);
    let cruise = duration - first.duration - last.duration;
    let distance = covered + peak * cruise;
    let slope = covered_slope + cruise - peak * (first_slope + last_slope);
    (distance, slope, first, last)
}

/// A change of velocity by `dv` (rad/s, > 0) that takes exactly `duration` s, no less than the
/// fastest: jerk ramps of `jmax` to an acceleration level a below `amax`, held so that
/// a·T − a²/jmax = dv. `jmax = ∞` gives constant acceleration dv/T.
fn slowed_change(dv: f64, duration: f64, jmax: f64) -> VelocityChange {
    if dv <= 0.0 {
        return VelocityChange {
            duration,
            ..VelocityChange::default()
        };
    }
    let discriminant = (duration * duration - 4.0 * dv / jmax).max(0.0);
    let level = 2.0 * dv / (duration + discriminant.sqrt());
    let ramp = level / jmax;
    VelocityChange {
        duration,
        ramp,
        peak_acceleration: level,
        jerk: if ramp > 0.0 { jmax } else { 0.0 },
    }
}

/// The profile of the family above that covers `distance` (rad, ≥ 0) from `start` to `end`
/// (rad/s) in exactly `duration` s within `limits` (V rad/s, A rad/s², J rad/s³; J = ∞ for
/// constant-acceleration changes).
///
/// # Errors
/// [`ProfileError::StretchUnreachable`] when no profile takes that long: the distance lies
/// outside [Dmin(T), Dmax(T)].
pub(crate) fn stretch_to(
    distance: f64,
    start: f64,
    end: f64,
    duration: f64,
    limits: (f64, f64, f64),
) -> Result<ThreePart, ProfileError> {
    let (vmax, amax, jmax) = limits;
    let unreachable = ProfileError::StretchUnreachable {
        requested: duration,
    };
    let high = start.max(end);
    let low = start.min(end);
    let spread = high - low;
    let swing = widest_swing(spread, duration, amax, jmax).ok_or(unreachable)?;
    let scale = distance.max(vmax * duration).max(1e-300);
    let tolerance = 1e-12 * scale;
    let at = |peak: f64| distance_through(start, peak, end, duration, (amax, jmax));
    let parts = |peak: f64, first: VelocityChange, last: VelocityChange| ThreePart {
        start_velocity: start,
        peak_velocity: peak,
        end_velocity: end,
        first,
        cruise: (duration - first.duration - last.duration).max(0.0),
        last,
    };
    let solve = |lowest: f64, highest: f64, ends: (f64, f64)| {
        let peak = solve_bracketed_from(
            lowest,
            highest,
            (ends.0 - distance, ends.1 - distance),
            DISTANCE_TOLERANCE * scale,
            |peak| {
                let (covered, slope, _, _) = at(peak);
                (covered - distance, slope)
            },
        );
        let (_, _, first, last) = at(peak);
        parts(peak, first, last)
    };
    let at_high = at(high);
    if distance >= at_high.0 {
        // Cruise above both boundary velocities.
        let top = (high + swing).min(vmax);
        let at_top = at(top);
        if distance > at_top.0 + tolerance {
            return Err(unreachable);
        }
        if distance >= at_top.0 {
            return Ok(parts(top, at_top.2, at_top.3));
        }
        return Ok(solve(high, top, (at_high.0, at_top.0)));
    }
    let at_low = at(low);
    if distance <= at_low.0 {
        // Dip below both boundary velocities, through zero if need be.
        let bottom = (low - swing).max(-vmax);
        let at_bottom = at(bottom);
        if distance < at_bottom.0 - tolerance {
            return Err(unreachable);
        }
        if distance <= at_bottom.0 {
            return Ok(parts(bottom, at_bottom.2, at_bottom.3));
        }
        return Ok(solve(bottom, low, (at_bottom.0, at_low.0)));
    }
    // Between the boundary velocities: one slowed change, with a cruise at the start velocity
    // before it or at the end velocity after it. The change's duration τ follows from
    // h = τ·(v0 + v1)/2 + (T − τ)·v_cruise.
    let fastest = VelocityChange::fastest(spread, amax, jmax).duration;
    let half_change = 0.5 * (start - end);
    let change_first = (distance - end * duration) / half_change;
    if (fastest..=duration).contains(&change_first) {
        let first = slowed_change(spread, change_first, jmax);
        return Ok(parts(end, first, VelocityChange::default()));
    }
    let change_last = ((start * duration - distance) / half_change).clamp(fastest, duration);
    let last = slowed_change(spread, change_last, jmax);
    Ok(parts(start, VelocityChange::default(), last))
}

/// The shortest duration after `blocked` (s) that a move of `distance` (rad, ≥ 0) from `start`
/// to `end` (rad/s) can take within `limits` (V, A, J as for [`stretch_to`]), when `blocked`
/// is refused because every profile of that duration covers more than the move (see the
/// module notes). `None` when `blocked` is not refused that way.
pub(crate) fn end_of_refused(
    distance: f64,
    start: f64,
    end: f64,
    blocked: f64,
    limits: (f64, f64, f64),
) -> Option<f64> {
    let (vmax, amax, jmax) = limits;
    let low = start.min(end);
    let swing = widest_swing(start.max(end) - low, blocked, amax, jmax)?;
    let deepest = (low - swing).max(-vmax);
    let (least, _, _, _) = distance_through(start, deepest, end, blocked, (amax, jmax));
    if least <= distance {
        return None;
    }
    // The dip to −V without a cruise, and how far it goes.
    let (covered_at_limit, first, last) = changes_through(start, -vmax, end, amax, jmax);
    let dip_at_limit = first.duration + last.duration;
    let end_of_gap = if covered_at_limit >= distance {
        dip_at_limit + (covered_at_limit - distance) / vmax
    } else {
        // A no-cruise dip between −V and the deepest at `blocked` whose changes cover h.
        let (covered_deepest, _) = covered_with_slope(start, deepest, end, amax, jmax);
        let tolerance = DISTANCE_TOLERANCE * distance.max(vmax * blocked).max(1e-300);
        let peak = solve_bracketed_from(
            -vmax,
            deepest,
            (covered_at_limit - distance, covered_deepest - distance),
            tolerance,
            |peak| {
                let (covered, slope) = covered_with_slope(start, peak, end, amax, jmax);
                (covered - distance, slope)
            },
        );
        let (_, first, last) = changes_through(start, peak, end, amax, jmax);
        first.duration + last.duration
    };
    (end_of_gap > blocked).then_some(end_of_gap)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn widest_swing_fills_the_duration_in_every_regime() {
        let (amax, jmax) = (3.0, 20.0);
        for &spread in &[0.0, 0.1, 0.3, 0.45, 0.8, 2.0] {
            for &extra in &[0.0, 0.01, 0.1, 0.3, 1.0, 3.0] {
                let shortest = VelocityChange::fastest(spread, amax, jmax).duration;
                let duration = shortest + extra;
                let swing = widest_swing(spread, duration, amax, jmax).expect("long enough");
                let took = VelocityChange::fastest(swing, amax, jmax).duration
                    + VelocityChange::fastest(swing + spread, amax, jmax).duration;
                assert!(
                    (took - duration).abs() < 1e-12,
                    "{spread} {extra}: {took} vs {duration}"
                );
            }
        }
        assert_eq!(widest_swing(1.0, 0.1, amax, jmax), None);
    }

    #[test]
    fn slowed_change_changes_the_velocity_by_its_amount() {
        for &(dv, extra, jmax) in &[(0.5, 0.2, 30.0), (2.0, 1.0, 5.0), (0.5, 0.3, f64::INFINITY)] {
            let fastest = VelocityChange::fastest(dv, 4.0, jmax);
            let slowed = slowed_change(dv, fastest.duration + extra, jmax);
            let (_, reached, _, _) = slowed.state_at(0.0, dv, slowed.duration);
            assert!((reached - dv).abs() < 1e-12);
            assert!(slowed.peak_acceleration <= fastest.peak_acceleration);
            let (_, middle, _, _) = slowed.state_at(0.0, dv, 0.5 * slowed.duration);
            assert!((middle - 0.5 * dv).abs() < 1e-12, "symmetric change");
        }
    }
}
