//! Fitting a joint's calibration from measured points: pulse widths sent, joint positions read.
//!
//! The person sets the pulse (exact) and reads the joint's position off a protractor or rule
//! (the noisy part), so the fit regresses position on pulse by least squares and its residuals
//! are in the joint's own unit. A straight line always; a quadratic when at least four points
//! show a curvature that is both statistically clear and large enough to matter.

use nalgebra::{DMatrix, DVector};

use super::Calibration;

/// One measured calibration point.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CalibrationReading {
    /// Pulse width sent to the servo, in µs.
    pub pulse_us: f64,
    /// Joint position read while that pulse was held, in rad (revolute) or m (prismatic).
    pub position: f64,
}

/// When a quadratic fit is preferred to the straight line.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CalibrationFitOptions {
    /// The quadratic term must stand this many standard errors clear of zero. Default 3 (a
    /// common rule of thumb for a clearly non-zero regression coefficient).
    pub curvature_t: f64,
    /// …and bow the fitted curve away from the straight line by at least this much over the
    /// measured pulse range, in rad or m. Default 0.25° (4.4e-3 rad): below that a printed
    /// protractor cannot tell the two fits apart (common practice: it reads to about ½°).
    pub min_bow: f64,
}

impl Default for CalibrationFitOptions {
    fn default() -> Self {
        CalibrationFitOptions {
            curvature_t: 3.0,
            min_bow: 0.25_f64.to_radians(),
        }
    }
}

/// The shape the fit settled on.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum FitShape {
    /// position = c₀ + c₁·p
    Linear,
    /// position = c₀ + c₁·p + c₂·p²
    Quadratic,
}

/// A least-squares calibration fit.
///
/// The polynomial is in the pulse width `p` in µs and gives the joint position in rad or m:
/// `position = c₀ + c₁·p + c₂·p²`, with `c₂ = 0` for a straight line.
#[derive(Debug, Clone, PartialEq)]
pub struct CalibrationFit {
    /// The shape chosen.
    pub shape: FitShape,
    /// c₀ (rad or m), c₁ (rad/µs or m/µs), c₂ (rad/µs² or m/µs²).
    pub coefficients: [f64; 3],
    /// The straight-line fit's c₀ and c₁, whichever shape was chosen.
    pub line: [f64; 2],
    /// Measured minus fitted position per reading, in rad or m, in the order given.
    pub residuals: Vec<f64>,
    /// Shortest and longest pulse measured, in µs.
    pub pulse_range_us: (f64, f64),
}

/// Why a set of readings cannot be fitted.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum CalibrationFitError {
    /// Fewer than two readings.
    #[error("a calibration needs at least two points, {given} given")]
    TooFewPoints {
        /// How many were given.
        given: usize,
    },
    /// A pulse or position is NaN or infinite.
    #[error("point {index} is not a finite number")]
    NotFinite {
        /// Index of the reading, from 0.
        index: usize,
    },
    /// Every reading has the same pulse width, so nothing ties the pulse to the position.
    #[error("every point has the same pulse width ({pulse_us} µs): step the pulse between points")]
    OnePulseOnly {
        /// The one pulse width given, in µs.
        pulse_us: f64,
    },
    /// The position does not change with the pulse: the servo did not move, or was misread.
    #[error("the position does not change with the pulse: check that the servo moves")]
    NoSlope,
}

/// Fits a calibration to measured readings by least squares (position on pulse).
///
/// `readings` hold pulses in µs and positions in rad or m. A quadratic is chosen only with four
/// or more readings whose curvature passes both tests of `options`.
///
/// # Errors
/// [`CalibrationFitError`] when there are fewer than two readings, a value is not finite,
/// every pulse is the same, or the fitted slope is zero.
pub fn fit_calibration(
    readings: &[CalibrationReading],
    options: &CalibrationFitOptions,
) -> Result<CalibrationFit, CalibrationFitError> {
    if readings.len() < 2 {
        return Err(CalibrationFitError::TooFewPoints {
            given: readings.len(),
        });
    }
    if let Some(index) = readings
        .iter()
        .position(|r| !r.pulse_us.is_finite() || !r.position.is_finite())
    {
        return Err(CalibrationFitError::NotFinite { index });
    }
    let low = readings
        .iter()
        .map(|r| r.pulse_us)
        .fold(f64::INFINITY, f64::min);
    let high = readings
        .iter()
        .map(|r| r.pulse_us)
        .fold(f64::NEG_INFINITY, f64::max);
    if low == high {
        return Err(CalibrationFitError::OnePulseOnly { pulse_us: low });
    }
    // Centred and scaled pulse for a well-conditioned solve; coefficients are mapped back.
    let centre = 0.5 * (low + high);
    let scale = 0.5 * (high - low);
    let line = least_squares(readings, 1, centre, scale).ok_or(CalibrationFitError::NoSlope)?;
    // c₁ here is the position change over half the measured pulse range (rad or m).
    if line.coefficients[1].abs() < 1e-12 {
        return Err(CalibrationFitError::NoSlope);
    }
    let mut chosen = line.clone();
    let mut shape = FitShape::Linear;
    if readings.len() >= 4
        && let Some(quadratic) = least_squares(readings, 2, centre, scale)
        && clearly_curved(&quadratic, options)
    {
        chosen = quadratic;
        shape = FitShape::Quadratic;
    }
    let coefficients = unscale(&chosen.coefficients, centre, scale);
    let line_coefficients = unscale(&line.coefficients, centre, scale);
    let residuals = readings
        .iter()
        .map(|r| r.position - polynomial(&coefficients, r.pulse_us))
        .collect();
    Ok(CalibrationFit {
        shape,
        coefficients,
        line: [line_coefficients[0], line_coefficients[1]],
        residuals,
        pulse_range_us: (low, high),
    })
}

impl CalibrationFit {
    /// Fitted joint position for a pulse width in µs, in rad or m.
    pub fn position(&self, pulse_us: f64) -> f64 {
        polynomial(&self.coefficients, pulse_us)
    }

    /// Root mean square of the residuals, in rad or m.
    pub fn rms_residual(&self) -> f64 {
        let sum: f64 = self.residuals.iter().map(|r| r * r).sum();
        (sum / self.residuals.len() as f64).sqrt()
    }

    /// Largest residual by size, in rad or m.
    pub fn max_residual(&self) -> f64 {
        self.residuals.iter().fold(0.0, |m, r| f64::max(m, r.abs()))
    }

    /// Pulse-width change per unit of position along the straight-line fit, in µs/rad or µs/m
    /// (negative when the pulse falls as the position grows).
    pub fn pulse_per_position_us(&self) -> f64 {
        1.0 / self.line[1]
    }

    /// Pulse width at position zero along the straight-line fit, in µs.
    pub fn pulse_at_zero_us(&self) -> f64 {
        -self.line[0] / self.line[1]
    }

    /// The straight-line fit as a two-point [`Calibration`] through the ends of the measured
    /// range, keeping the given accepted pulse range (µs).
    ///
    /// The arm model maps position to pulse along a straight line; when the quadratic was
    /// chosen, [`CalibrationFit::line_residuals`] says how far that line stays off.
    pub fn to_calibration(&self, pulse_min_us: f64, pulse_max_us: f64) -> Calibration {
        let (low, high) = self.pulse_range_us;
        let line = [self.line[0], self.line[1], 0.0];
        Calibration {
            position_a: polynomial(&line, low),
            pulse_a_us: low,
            position_b: polynomial(&line, high),
            pulse_b_us: high,
            pulse_min_us,
            pulse_max_us,
        }
    }

    /// Residuals of the straight-line fit at the given readings, in rad or m.
    pub fn line_residuals(&self, readings: &[CalibrationReading]) -> Vec<f64> {
        let line = [self.line[0], self.line[1], 0.0];
        readings
            .iter()
            .map(|r| r.position - polynomial(&line, r.pulse_us))
            .collect()
    }
}

/// A least-squares polynomial in the scaled pulse `x = (p − centre) / scale`, with the
/// standard error of its highest coefficient and the bow of that term over |x| ≤ 1.
#[derive(Debug, Clone)]
struct ScaledFit {
    coefficients: [f64; 3],
    top_standard_error: f64,
}

fn least_squares(
    readings: &[CalibrationReading],
    degree: usize,
    centre: f64,
    scale: f64,
) -> Option<ScaledFit> {
    let rows = readings.len();
    let columns = degree + 1;
    let design = DMatrix::from_fn(rows, columns, |row, column| {
        ((readings[row].pulse_us - centre) / scale).powi(column as i32)
    });
    let target = DVector::from_iterator(rows, readings.iter().map(|r| r.position));
    let svd = design.clone().svd(true, true);
    let solution = svd.solve(&target, 1e-12).ok()?;
    let mut coefficients = [0.0; 3];
    for (slot, value) in coefficients.iter_mut().zip(solution.iter()) {
        *slot = *value;
    }
    // Standard error of the top coefficient: s²·[(XᵀX)⁻¹]ₖₖ with s² = RSS / (n − k − 1).
    let freedom = rows.saturating_sub(columns);
    let top_standard_error = if freedom == 0 {
        f64::INFINITY
    } else {
        let residual = &target - &design * &solution;
        let variance = residual.norm_squared() / freedom as f64;
        let normal = design.transpose() * &design;
        match normal.try_inverse() {
            Some(inverse) => (variance * inverse[(degree, degree)]).sqrt(),
            None => f64::INFINITY,
        }
    };
    Some(ScaledFit {
        coefficients,
        top_standard_error,
    })
}

fn clearly_curved(quadratic: &ScaledFit, options: &CalibrationFitOptions) -> bool {
    let curvature = quadratic.coefficients[2];
    // Over |x| ≤ 1 the term c₂·x² bows the curve by |c₂| from the chord; the straight line
    // fitted alongside splits that bow, so half of it is the most either fit can disagree by.
    let bow = 0.5 * curvature.abs();
    let clear = quadratic.top_standard_error == 0.0
        || curvature.abs() > options.curvature_t * quadratic.top_standard_error;
    clear && bow >= options.min_bow
}

/// Coefficients in `x = (p − centre) / scale` → coefficients in `p`.
fn unscale(scaled: &[f64; 3], centre: f64, scale: f64) -> [f64; 3] {
    let [a, b, c] = *scaled;
    let (b, c) = (b / scale, c / (scale * scale));
    [
        a - b * centre + c * centre * centre,
        b - 2.0 * c * centre,
        c,
    ]
}

fn polynomial(coefficients: &[f64; 3], x: f64) -> f64 {
    coefficients[0] + x * (coefficients[1] + x * coefficients[2])
}

#[cfg(test)]
mod tests {
    use super::*;

    fn readings(pairs: &[(f64, f64)]) -> Vec<CalibrationReading> {
        pairs
            .iter()
            .map(|&(pulse_us, degrees)| CalibrationReading {
                pulse_us,
                position: degrees.to_radians(),
            })
            .collect()
    }

    #[test]
    fn two_points_give_the_line_through_them() {
        let fit = fit_calibration(
            &readings(&[(1000.0, -45.0), (2000.0, 45.0)]),
            &CalibrationFitOptions::default(),
        )
        .unwrap();
        assert_eq!(fit.shape, FitShape::Linear);
        // 1000 µs over 90° (common practice for a 1000–2000 µs servo over a quarter turn).
        let per_degree = fit.pulse_per_position_us() * 1f64.to_radians();
        assert!((per_degree - 1000.0 / 90.0).abs() < 1e-9, "{per_degree}");
        assert!((fit.pulse_at_zero_us() - 1500.0).abs() < 1e-9);
        assert!(fit.max_residual() < 1e-12);
    }

    #[test]
    fn a_clear_bow_with_four_points_is_fitted_as_a_quadratic() {
        // position° = 0.09·(p − 1500) + 2e-5·(p − 1500)²: bows 5° at the ends.
        let pairs: Vec<(f64, f64)> = [1000.0_f64, 1250.0, 1500.0, 1750.0, 2000.0]
            .iter()
            .map(|&p| (p, 0.09 * (p - 1500.0) + 2e-5 * (p - 1500.0).powi(2)))
            .collect();
        let fit = fit_calibration(&readings(&pairs), &CalibrationFitOptions::default()).unwrap();
        assert_eq!(fit.shape, FitShape::Quadratic);
        assert!(fit.max_residual() < 1e-12);
        let at = fit.position(1900.0).to_degrees();
        assert!(
            (at - (0.09 * 400.0 + 2e-5 * 400.0 * 400.0)).abs() < 1e-9,
            "{at}"
        );
    }

    #[test]
    fn a_bow_smaller_than_a_protractor_reads_stays_a_line() {
        let pairs: Vec<(f64, f64)> = [1000.0_f64, 1250.0, 1500.0, 1750.0, 2000.0]
            .iter()
            .map(|&p| (p, 0.09 * (p - 1500.0) + 1e-6 * (p - 1500.0).powi(2)))
            .collect();
        let fit = fit_calibration(&readings(&pairs), &CalibrationFitOptions::default()).unwrap();
        assert_eq!(fit.shape, FitShape::Linear);
    }

    #[test]
    fn three_points_never_choose_a_quadratic() {
        let pairs = [(1000.0, -50.0), (1500.0, 10.0), (2000.0, 45.0)];
        let fit = fit_calibration(&readings(&pairs), &CalibrationFitOptions::default()).unwrap();
        assert_eq!(fit.shape, FitShape::Linear);
        let sum: f64 = fit.residuals.iter().sum();
        assert!(sum.abs() < 1e-12, "least-squares residuals sum to zero");
    }

    #[test]
    fn bad_readings_are_named() {
        let options = CalibrationFitOptions::default();
        assert_eq!(
            fit_calibration(&readings(&[(1500.0, 0.0)]), &options),
            Err(CalibrationFitError::TooFewPoints { given: 1 })
        );
        assert_eq!(
            fit_calibration(&readings(&[(1500.0, 0.0), (1500.0, 10.0)]), &options),
            Err(CalibrationFitError::OnePulseOnly { pulse_us: 1500.0 })
        );
        assert_eq!(
            fit_calibration(&readings(&[(1000.0, 5.0), (2000.0, 5.0)]), &options),
            Err(CalibrationFitError::NoSlope)
        );
        assert_eq!(
            fit_calibration(&readings(&[(1000.0, 5.0), (f64::NAN, 5.0)]), &options),
            Err(CalibrationFitError::NotFinite { index: 1 })
        );
    }

    #[test]
    fn the_line_as_a_calibration_maps_back_to_the_fitted_positions() {
        let pairs = [
            (900.0, -62.0),
            (1400.0, -8.5),
            (1900.0, 47.0),
            (2100.0, 66.0),
        ];
        let fit = fit_calibration(&readings(&pairs), &CalibrationFitOptions::default()).unwrap();
        let calibration = fit.to_calibration(800.0, 2200.0);
        for &(pulse, _) in &pairs {
            let expected = fit.line[0] + fit.line[1] * pulse;
            assert!((calibration.position(pulse) - expected).abs() < 1e-12);
        }
    }
}
