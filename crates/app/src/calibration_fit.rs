//! A calibration fit as the scene keeps it, the same for `armwright calibrate` and the editor's
//! guided calibration: SI per file unit of a joint kind, when a fit is taken as a quadratic,
//! the scene's two calibration points and its uncertainty for a fit, and how far the deadband
//! search steps before it gives up.

use armwright_kinematics::{CalibrationFit, CalibrationFitOptions, CalibrationReading};

use crate::scene::{CalibrationPoint, JointKindDoc};

/// The deadband search gives up after this many µs in one direction without a movement seen:
/// hobby-servo deadbands are a few µs (common practice). `armwright calibrate` and the editor's
/// search both stop there.
pub(crate) const DEADBAND_SEARCH_LIMIT_US: f64 = 50.0;

/// SI units (rad or m) per file unit (degree or mm) of a joint of this kind.
pub(crate) fn si_per_file_unit(kind: JointKindDoc) -> f64 {
    match kind {
        JointKindDoc::Revolute => 1f64.to_radians(),
        JointKindDoc::Prismatic => 1e-3,
    }
}

/// When a fit of this joint kind's readings is taken as a quadratic: the defaults for a
/// turning joint; a sliding joint's bow must reach half a millimetre, what a steel rule reads
/// to (common practice).
pub(crate) fn fit_options(kind: JointKindDoc) -> CalibrationFitOptions {
    CalibrationFitOptions {
        min_bow: match kind {
            JointKindDoc::Revolute => CalibrationFitOptions::default().min_bow,
            JointKindDoc::Prismatic => 0.5e-3,
        },
        ..CalibrationFitOptions::default()
    }
}

/// The scene's two calibration points for a fit: its straight line at the ends of the measured
/// pulse range (whole µs, as measured), positions in degrees or mm kept to a hundredth.
pub(crate) fn fitted_points(fit: &CalibrationFit, kind: JointKindDoc) -> [CalibrationPoint; 2] {
    let from_si = 1.0 / si_per_file_unit(kind);
    // The accepted range does not enter the two points.
    let line = fit.to_calibration(0.0, 0.0);
    [
        CalibrationPoint {
            position: (line.position_a * from_si * 100.0).round() / 100.0,
            pulse_us: line.pulse_a_us.round() as u32,
        },
        CalibrationPoint {
            position: (line.position_b * from_si * 100.0).round() / 100.0,
            pulse_us: line.pulse_b_us.round() as u32,
        },
    ]
}

/// The calibration uncertainty a straight-line fit leaves, in rad or m: the residual standard
/// error √(Σ r² / (n − 2)) of the line through `n` readings (Draper & Smith, *Applied Regression
/// Analysis*, 3rd ed., 1998, §1.4; from memory). `None` for two readings, which any line meets.
fn line_uncertainty(line_residuals: &[f64]) -> Option<f64> {
    let n = line_residuals.len();
    (n > 2).then(|| (line_residuals.iter().map(|r| r * r).sum::<f64>() / (n - 2) as f64).sqrt())
}

/// The scene's `calibration.uncertainty_deg` (or `_mm`) for a fit of `readings` on a joint of
/// this kind: the line's residual standard error ([`line_uncertainty`]) in degrees or mm, to
/// 0.0001; `None` for two readings. `armwright calibrate --write` and the editor's Apply both
/// write it.
pub(crate) fn fitted_uncertainty(
    fit: &CalibrationFit,
    readings: &[CalibrationReading],
    kind: JointKindDoc,
) -> Option<f64> {
    let from_si = 1.0 / si_per_file_unit(kind);
    line_uncertainty(&fit.line_residuals(readings)).map(|sd| (sd * from_si * 1e4).round() / 1e4)
}
