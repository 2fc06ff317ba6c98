//! Placement success: the share of picks or places at one waypoint that land within a
//! tolerance of the target, from the arm's sources of error.
//!
//! The tool point's error in the horizontal plane of the base frame is the dry run's resting
//! offset (deadband and gravity sag as the servo model predicts them, taken as fixed) plus, per
//! joint, three independent spreads about it: where inside its deadband the servo stops
//! (uniform over ± half the deadband), where inside the gear play the link sits (uniform over ±
//! half the backlash), and how far the calibration is off (Gaussian: the joint's own calibration
//! uncertainty where it has one — from its calibration fit's residuals, or stated — else a
//! default). Two estimates:
//!
//! - **Monte Carlo**: `draws` seeded draws of every joint's error, each turned into a tool point
//!   by forward kinematics (no linearisation);
//! - **linearised closed form**: the joint errors mapped through the tool Jacobian's horizontal
//!   rows as a Gaussian with the same mean and covariance, whose mass inside the tolerance
//!   circle is integrated exactly along rays from its mean (in whitened coordinates each ray's
//!   share is a difference of Rayleigh tails). For a zero mean and isotropic covariance this is
//!   the Rayleigh result P = 1 − exp(−r²/2σ²).
//!
//! Left out: vertical error and tool orientation, the gripper's own play, wear and temperature,
//! supply-voltage sag, the object's own position error, and correlation between joints beyond
//! what the kinematics gives.

use armwright_kinematics::{Arm, JointKind, KinematicsError, MAX_JOINTS, tool_jacobian, tool_pose};

/// Settings of a placement estimate.
#[derive(Debug, Clone, PartialEq)]
pub struct PlacementOptions {
    /// Radius of the tolerance circle in the horizontal plane, in m. Default 2 mm.
    pub tolerance: f64,
    /// Standard deviation of each revolute joint's calibration error, in rad. Default 0.5°
    /// (how closely a servo horn's zero is usually set by eye; from memory).
    pub calibration_sd: f64,
    /// Standard deviation of each sliding joint's calibration error, in m. Default 0.5 mm (from
    /// memory).
    pub calibration_sd_sliding: f64,
    /// Each joint's own calibration uncertainty (the standard deviation of its calibration
    /// error), in rad or m, by joint index: where one is given it replaces
    /// [`PlacementOptions::calibration_sd`] (or `calibration_sd_sliding`) for that joint. Default:
    /// none given.
    pub joint_calibration_sd: [Option<f64>; MAX_JOINTS],
    /// Monte Carlo draws. Default 4000: the share's standard error is then at most
    /// √(0.25 / 4000) ≈ 0.008.
    pub draws: usize,
    /// Seed of the draws, so every run gives the same figures.
    pub seed: u64,
}

impl Default for PlacementOptions {
    fn default() -> Self {
        PlacementOptions {
            tolerance: 2e-3,
            calibration_sd: 0.5_f64.to_radians(),
            calibration_sd_sliding: 0.5e-3,
            joint_calibration_sd: [None; MAX_JOINTS],
            draws: 4000,
            seed: 0x05EE_D0FA_1ACE,
        }
    }
}

impl PlacementOptions {
    /// Joint `joint`'s own calibration uncertainty (rad or m), when it has a usable one: finite
    /// and not negative.
    fn calibration_sd_of(&self, joint: usize) -> Option<f64> {
        self.joint_calibration_sd
            .get(joint)
            .copied()
            .flatten()
            .filter(|sd| sd.is_finite() && *sd >= 0.0)
    }
}

/// Most draws an estimate takes, to bound its time.
pub const MAX_PLACEMENT_DRAWS: usize = 100_000;

/// How often a placement lands within tolerance, and how far off it lands.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PlacementEstimate {
    /// Share of Monte Carlo draws within the tolerance (0–1).
    pub success: f64,
    /// The linearised closed form's share (0–1).
    pub closed_form: f64,
    /// Mean horizontal distance from the target over the draws, in m.
    pub mean_error: f64,
    /// 95th percentile of that distance, in m.
    pub p95_error: f64,
    /// Draws taken.
    pub draws: usize,
}

/// Estimates placement success at the pose `positions` (rad or m, one per joint), with the dry
/// run's resting offset `resting_offset` (rest − target, base frame, m) taken as fixed.
///
/// # Errors
/// [`KinematicsError`] when the pose does not fit the arm.
pub fn placement_estimate(
    arm: &Arm,
    positions: &[f64],
    resting_offset: [f64; 3],
    options: &PlacementOptions,
) -> Result<PlacementEstimate, KinematicsError> {
    let n = arm.joint_count();
    let target = tool_pose(arm, positions)?.translation.vector;
    let mean = [resting_offset[0], resting_offset[1]];
    // Each joint's spreads: half-widths of the two uniform ones, and the Gaussian's sd.
    let mut deadband = [0.0; MAX_JOINTS];
    let mut backlash = [0.0; MAX_JOINTS];
    let mut calibration = [0.0; MAX_JOINTS];
    for (j, joint) in arm.joints().iter().enumerate() {
        deadband[j] = joint
            .calibration
            .position_per_us(joint.servo.deadband_us / 2.0);
        backlash[j] = joint.servo.backlash * joint.servo.drive_ratio / 2.0;
        calibration[j] = options.calibration_sd_of(j).unwrap_or(match joint.kind {
            JointKind::Revolute => options.calibration_sd,
            JointKind::Prismatic => options.calibration_sd_sliding,
        });
    }

    // Linearised: horizontal rows of the tool Jacobian, covariance J diag(s²) Jᵀ, where a
    // uniform spread over ±h has variance h²/3.
    let jacobian = tool_jacobian(arm, positions)?;
    let mut covariance = [[0.0; 2]; 2];
    for j in 0..n {
        let variance = (deadband[j].powi(2) + backlash[j].powi(2)) / 3.0 + calibration[j].powi(2);
        let column = [jacobian.matrix[(0, j)], jacobian.matrix[(1, j)]];
        for a in 0..2 {
            for b in 0..2 {
                covariance[a][b] += column[a] * column[b] * variance;
            }
        }
    }
    let closed_form = disc_probability(mean, covariance, options.tolerance);

    // Monte Carlo through forward kinematics.
    let draws = options.draws.clamp(1, MAX_PLACEMENT_DRAWS);
    let mut random = SplitMix(options.seed);
    let mut errors = Vec::with_capacity(draws);
    let mut pose = [0.0; MAX_JOINTS];
    for _ in 0..draws {
        for j in 0..n {
            pose[j] = positions[j]
                + random.uniform(-deadband[j], deadband[j])
                + random.uniform(-backlash[j], backlash[j])
                + calibration[j] * random.gaussian();
        }
        let point = tool_pose(arm, &pose[..n])?.translation.vector;
        let x = point.x - target.x + mean[0];
        let y = point.y - target.y + mean[1];
        errors.push(x.hypot(y));
    }
    let within = errors.iter().filter(|&&e| e <= options.tolerance).count();
    let mean_error = errors.iter().sum::<f64>() / draws as f64;
    errors.sort_by(f64::total_cmp);
    let p95_index = ((0.95 * draws as f64).ceil() as usize).clamp(1, draws) - 1;
    Ok(PlacementEstimate {
        success: within as f64 / draws as f64,
        closed_form,
        mean_error,
        p95_error: errors[p95_index],
        draws,
    })
}

/// Probability that a 2-D Gaussian with `mean` (m) and `covariance` (m²) falls within `radius`
/// (m) of the origin.
///
/// Whitened by the Cholesky factor L of the covariance (x = mean + L z, z standard normal), the
/// distance of z from the origin is Rayleigh-distributed and independent of its direction, so
/// each direction θ contributes exp(−t₁²/2) − exp(−t₂²/2), where the ray mean + t L u(θ) lies
/// inside the circle for t in [t₁, t₂]; the directions are averaged over 720 equal steps (the
/// trapezoid rule, very accurate for a periodic integrand).
pub fn disc_probability(mean: [f64; 2], covariance: [[f64; 2]; 2], radius: f64) -> f64 {
    if radius.is_nan() || radius <= 0.0 {
        return 0.0;
    }
    // Cholesky of the (symmetric) covariance, kept positive where it is degenerate.
    let tiny = (radius * 1e-9).powi(2);
    let a = covariance[0][0].max(0.0) + tiny;
    let l11 = a.sqrt();
    let l21 = 0.5 * (covariance[0][1] + covariance[1][0]) / l11;
    let l22 = (covariance[1][1] + tiny - l21 * l21).max(tiny).sqrt();
    let inside_at_mean = mean[0].hypot(mean[1]) <= radius;
    let steps = 720;
    let mut sum = 0.0;
    for k in 0..steps {
        let theta = std::f64::consts::TAU * k as f64 / steps as f64;
        let (s, c) = theta.sin_cos();
        // The direction in the plane: v = L u.
        let v = [l11 * c, l21 * c + l22 * s];
        let vv = v[0] * v[0] + v[1] * v[1];
        let mv = mean[0] * v[0] + mean[1] * v[1];
        let mm = mean[0] * mean[0] + mean[1] * mean[1];
        // |mean + t v|² = r²:  vv t² + 2 mv t + (mm − r²) = 0.
        let discriminant = mv * mv - vv * (mm - radius * radius);
        let share = if vv <= 0.0 || discriminant <= 0.0 {
            if inside_at_mean && vv <= 0.0 {
                1.0
            } else {
                0.0
            }
        } else {
            let root = discriminant.sqrt();
            let t1 = ((-mv - root) / vv).max(0.0);
            let t2 = (-mv + root) / vv;
            if t2 <= t1 {
                0.0
            } else {
                (-0.5 * t1 * t1).exp() - (-0.5 * t2 * t2).exp()
            }
        };
        sum += share;
    }
    (sum / steps as f64).clamp(0.0, 1.0)
}

/// A small seeded generator (SplitMix64) with uniform and Gaussian draws.
struct SplitMix(u64);

impl SplitMix {
    fn next_u64(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }

    /// Uniform in [0, 1).
    fn unit(&mut self) -> f64 {
        (self.next_u64() >> 11) as f64 / (1u64 << 53) as f64
    }

    fn uniform(&mut self, low: f64, high: f64) -> f64 {
        low + (high - low) * self.unit()
    }

    /// Standard normal, by the Box–Muller transform.
    fn gaussian(&mut self) -> f64 {
        let u1 = 1.0 - self.unit(); // in (0, 1]
        let u2 = self.unit();
        (-2.0 * u1.ln()).sqrt() * (std::f64::consts::TAU * u2).cos()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn gaussian_draws_fall_in_a_disc_as_the_closed_form_says() {
        // An anisotropic, correlated Gaussian off centre: the share of 200 000 draws inside the
        // circle against `disc_probability`, within four binomial standard errors.
        let mean = [0.4e-3, -0.3e-3];
        let (sx, sy, rho) = (0.7e-3, 0.3e-3, 0.6);
        let covariance = [[sx * sx, rho * sx * sy], [rho * sx * sy, sy * sy]];
        let radius = 1.0e-3;
        let expected = disc_probability(mean, covariance, radius);
        let mut random = SplitMix(11);
        let draws = 200_000;
        let l21 = rho * sy;
        let l22 = sy * (1.0 - rho * rho).sqrt();
        let mut inside = 0;
        for _ in 0..draws {
            let (z1, z2) = (random.gaussian(), random.gaussian());
            let x = mean[0] + sx * z1;
            let y = mean[1] + l21 * z1 + l22 * z2;
            if x.hypot(y) <= radius {
                inside += 1;
            }
        }
        let share = inside as f64 / draws as f64;
        let standard_error = (expected * (1.0 - expected) / draws as f64).sqrt();
        assert!(
            (share - expected).abs() < 4.0 * standard_error,
            "{share} vs {expected}"
        );
        // A mean outside the circle still gives the mass that reaches in.
        let far = disc_probability([1.5e-3, 0.0], [[0.25e-6, 0.0], [0.0, 0.25e-6]], 1e-3);
        assert!(far > 0.05 && far < 0.5, "{far}");
    }
}
