//! Trapezoidal velocity profile: velocity and acceleration limited, acceleration constant in
//! each velocity change (Biagiotti & Melchiorri, *Trajectory Planning for Automatic Machines
//! and Robots*, Springer 2008, ch. 3), with general start and end velocities.

use super::limits::{JointLimits, ProfileError};
use super::{ThreePart, VelocityChange, stretch::stretch_to};

/// The time-optimal parts for displacement `distance` (rad, ≥ 0) from velocity `start` to
/// `end` (rad/s, in the direction of motion), limits already checked.
pub(super) fn fastest(
    distance: f64,
    start: f64,
    end: f64,
    limits: &JointLimits,
) -> Result<ThreePart, ProfileError> {
    let (vmax, amax) = (limits.velocity, limits.acceleration);
    // Feasibility (Biagiotti & Melchiorri 2008, ch. 3): amax·h ≥ |v1² − v0²| / 2 when the
    // velocity changes directly; here with signed velocities in the direction of motion. When
    // it fails the book has no profile; here the joint backs up instead: with the peak below
    // both boundary velocities the changes cover (v0² + v1² − 2vp²)/(2a), which equals h at
    // vp = −√((v0² + v1²)/2 − a·h).
    let lowest_peak = start.max(end);
    let direct = (2.0 * lowest_peak * lowest_peak - start * start - end * end) / (2.0 * amax);
    if direct.is_nan() {
        return Err(ProfileError::OutOfRange);
    }
    if direct > distance * (1.0 + 1e-12) + 1e-15 {
        let peak = -(0.5 * (start * start + end * end) - amax * distance)
            .max(0.0)
            .sqrt();
        return Ok(ThreePart {
            start_velocity: start,
            peak_velocity: peak,
            end_velocity: end,
            first: change(start - peak, amax),
            cruise: 0.0,
            last: change(end - peak, amax),
        });
    }
    // Peak without cruise: (vp² − v0²)/(2a) + (vp² − v1²)/(2a) = h.
    let unlimited_peak = (distance * amax + 0.5 * (start * start + end * end)).sqrt();
    let peak = unlimited_peak.min(vmax).max(lowest_peak);
    let first = change(peak - start, amax);
    let last = change(peak - end, amax);
    let covered = 0.5 * (start + peak) * first.duration + 0.5 * (peak + end) * last.duration;
    let cruise = if peak > 0.0 {
        ((distance - covered) / peak).max(0.0)
    } else {
        0.0
    };
    Ok(ThreePart {
        start_velocity: start,
        peak_velocity: peak,
        end_velocity: end,
        first,
        cruise,
        last,
    })
}

/// A constant-acceleration change of velocity by `dv` (rad/s, ≥ 0) at `amax` (rad/s²).
fn change(dv: f64, amax: f64) -> VelocityChange {
    VelocityChange::fastest(dv, amax, f64::INFINITY)
}

/// A profile with boundary velocities slowed to `duration` (s). With the peak at or above both
/// boundary velocities the book's fixed-duration closed form gives the peak:
/// vp = ½(v0 + v1 + aT − √(a²T² − 4ah + 2a(v0 + v1)T − (v0 − v1)²));
/// otherwise the families of `stretch.rs` are searched.
pub(super) fn stretch(
    distance: f64,
    parts: &ThreePart,
    duration: f64,
    limits: &JointLimits,
) -> Result<ThreePart, ProfileError> {
    let (start, end, amax) = (
        parts.start_velocity,
        parts.end_velocity,
        limits.acceleration,
    );
    let a_t = amax * duration;
    let discriminant = a_t * a_t - 4.0 * amax * distance + 2.0 * amax * (start + end) * duration
        - (start - end) * (start - end);
    if discriminant >= 0.0 {
        let peak = 0.5 * (start + end + a_t - discriminant.sqrt());
        if peak > 0.0 && peak >= start.max(end) && peak <= parts.peak_velocity {
            let first = change(peak - start, amax);
            let last = change(peak - end, amax);
            let cruise = (duration - first.duration - last.duration).max(0.0);
            return Ok(ThreePart {
                start_velocity: start,
                peak_velocity: peak,
                end_velocity: end,
                first,
                cruise,
                last,
            });
        }
    }
    stretch_to(
        distance,
        start,
        end,
        duration,
        (limits.velocity, amax, f64::INFINITY),
    )
}
