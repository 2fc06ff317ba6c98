//! The planar two-link arm: the shared core of every built-in closed form.
//!
//! Two links of lengths `a1` and `a2` turn about parallel axes; the first axis is at the
//! origin. Given the far end of the second link at (x, y), the law of cosines gives the second
//! angle and the first follows from the triangle (Spong, Hutchinson & Vidyasagar, *Robot
//! Modeling and Control*, 2006, ch. 1, two-link planar example).

/// Both solutions of the planar two-link arm, or how far the point lies outside the ring the
/// arm can reach. Angles in rad; the second angle of `bent_positive` is ≥ 0.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct TwoLinkSolutions {
    /// (first, second) with the second angle ≥ 0.
    pub(crate) bent_positive: (f64, f64),
    /// (first, second) with the second angle ≤ 0.
    pub(crate) bent_negative: (f64, f64),
}

/// Distance (m) below which the far end counts as sitting on the first axis, so the first
/// angle is undetermined and `keep_first` is used.
pub(crate) const ON_AXIS: f64 = 1e-12;

/// Solves the planar two-link arm for the far end at (x, y), in m.
///
/// `keep_first` is the first angle (rad) to keep when the far end sits on the first axis
/// (only possible when `a1 == a2`), where any first angle works.
///
/// # Errors
/// The distance (m) the point must move towards the reachable ring: positive, finite for finite
/// input.
pub(crate) fn solve(
    a1: f64,
    a2: f64,
    x: f64,
    y: f64,
    keep_first: f64,
) -> Result<TwoLinkSolutions, f64> {
    let distance = x.hypot(y);
    let outer = a1 + a2;
    let inner = (a1 - a2).abs();
    // Points within rounding of the rings still count: they come from stretched or folded arms.
    let slack = 1e-12 * outer;
    if distance > outer + slack {
        return Err(distance - outer);
    }
    if distance < inner - slack {
        return Err(inner - distance);
    }
    // cos q2 by the law of cosines; 1 − cos and 1 + cos as products of ring distances, which
    // keeps precision where the arm is nearly stretched or folded.
    let twice_product = 2.0 * a1 * a2;
    let one_minus = ((outer - distance) * (outer + distance) / twice_product).clamp(0.0, 2.0);
    let one_plus = ((distance - inner) * (distance + inner) / twice_product).clamp(0.0, 2.0);
    let cos_q2 = (one_plus - one_minus) / 2.0;
    let sin_q2 = (one_minus * one_plus).sqrt();
    let q2 = sin_q2.atan2(cos_q2);
    // atan2(−y, x) = −atan2(y, x): the two branches' shoulder offsets differ only in sign.
    let offset = (a2 * sin_q2).atan2(a1 + a2 * cos_q2);
    let (first_positive, first_negative) = if distance <= ON_AXIS {
        (keep_first, keep_first)
    } else {
        let direction = y.atan2(x);
        (direction - offset, direction + offset)
    };
    Ok(TwoLinkSolutions {
        bent_positive: (first_positive, q2),
        bent_negative: (first_negative, -q2),
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn end(a1: f64, a2: f64, (q1, q2): (f64, f64)) -> (f64, f64) {
        (
            a1 * q1.cos() + a2 * (q1 + q2).cos(),
            a1 * q1.sin() + a2 * (q1 + q2).sin(),
        )
    }

    #[test]
    fn both_solutions_reach_the_point() {
        let solutions = solve(0.3, 0.2, 0.25, 0.17, 0.0).unwrap();
        for pair in [solutions.bent_positive, solutions.bent_negative] {
            let (x, y) = end(0.3, 0.2, pair);
            assert!((x - 0.25).abs() < 1e-14 && (y - 0.17).abs() < 1e-14);
        }
        assert!(solutions.bent_positive.1 > 0.0 && solutions.bent_negative.1 < 0.0);
    }

    #[test]
    fn outside_and_inside_the_ring_say_how_far() {
        assert!((solve(0.3, 0.2, 0.6, 0.0, 0.0).unwrap_err() - 0.1).abs() < 1e-15);
        assert!((solve(0.3, 0.2, 0.0, 0.04, 0.0).unwrap_err() - 0.06).abs() < 1e-15);
    }

    #[test]
    fn folded_equal_links_keep_the_first_angle() {
        let solutions = solve(0.2, 0.2, 0.0, 0.0, 0.7).unwrap();
        assert_eq!(solutions.bent_positive.0, 0.7);
        assert!((solutions.bent_positive.1 - std::f64::consts::PI).abs() < 1e-15);
    }
}
