//! `armwright calibrate`: fit a joint's calibration to measured points (pulse width sent,
//! position read), report the fit and its residuals, and optionally write it into the scene.

use std::path::Path;

use armwright_kinematics::{
    CalibrationFit, CalibrationFitOptions, CalibrationReading, FitShape, fit_calibration,
};
use serde_json::{Value, json};

use super::Outcome;
use super::report::{all_rounded, fail, load_scene, print_json, rounded};
use crate::scene::{CalibrationPoint, JointKindDoc, Scene, save, validate};

/// What `calibrate` was asked to do.
pub(crate) struct CalibrateRequest<'a> {
    /// The joint's name in the scene.
    pub(crate) joint: &'a str,
    /// Measured points: pulse width in µs, position in degrees (revolute) or mm (prismatic).
    pub(crate) points: &'a [MeasuredPoint],
    /// Where to save the scene with the fitted calibration.
    pub(crate) write: Option<&'a Path>,
}

/// One measured point as typed: `PULSE:POSITION`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MeasuredPoint {
    /// Pulse width sent, in whole µs.
    pub pulse_us: u32,
    /// Position read: degrees for a revolute joint, mm for a prismatic one.
    pub position: f64,
}

/// Parses `PULSE:POSITION` (µs, then degrees or mm), for clap.
///
/// # Errors
/// A message naming the text and what was expected.
pub fn parse_measured_point(text: &str) -> Result<MeasuredPoint, String> {
    let expected = "expected PULSE_US:POSITION, for example 1500:2.5";
    let (pulse, position) = text
        .split_once(':')
        .ok_or_else(|| format!("\"{text}\": {expected}"))?;
    let pulse: f64 = pulse.trim().parse().map_err(|_| {
        format!("\"{text}\": the pulse width \"{pulse}\" is not a number; {expected}")
    })?;
    if !(pulse.is_finite() && pulse.fract() == 0.0 && (1.0..=u16::MAX as f64).contains(&pulse)) {
        return Err(format!(
            "\"{text}\": the pulse width must be whole µs between 1 and {}",
            u16::MAX
        ));
    }
    let position: f64 = position.trim().parse().map_err(|_| {
        format!("\"{text}\": the position \"{position}\" is not a number; {expected}")
    })?;
    if !position.is_finite() {
        return Err(format!("\"{text}\": the position is not a finite number"));
    }
    Ok(MeasuredPoint {
        pulse_us: pulse as u32,
        position,
    })
}

/// Runs `calibrate`.
pub(crate) fn run(file: &Path, request: &CalibrateRequest, json: bool) -> Outcome {
    let (scene, _arm) = match load_scene(file, json) {
        Ok(loaded) => loaded,
        Err(outcome) => return outcome,
    };
    let Some(index) = scene
        .arm
        .joints
        .iter()
        .position(|joint| joint.name == request.joint)
    else {
        let names: Vec<String> = scene
            .arm
            .joints
            .iter()
            .map(|joint| format!("\"{}\"", joint.name))
            .collect();
        let message = format!(
            "--joint: no joint is named \"{}\"; the scene's joints are {}",
            request.joint,
            names.join(", ")
        );
        return fail(json, &message, json!({}), Outcome::Unreadable);
    };
    let kind = scene.arm.shape.joint_kinds()[index];
    let (unit, to_si) = match kind {
        JointKindDoc::Revolute => ("deg", 1f64.to_radians()),
        JointKindDoc::Prismatic => ("mm", 1e-3),
    };
    let readings: Vec<CalibrationReading> = request
        .points
        .iter()
        .map(|point| CalibrationReading {
            pulse_us: f64::from(point.pulse_us),
            position: point.position * to_si,
        })
        .collect();
    let options = CalibrationFitOptions {
        min_bow: match kind {
            JointKindDoc::Revolute => CalibrationFitOptions::default().min_bow,
            // Half a millimetre: what a steel rule reads to (common practice).
            JointKindDoc::Prismatic => 0.5e-3,
        },
        ..CalibrationFitOptions::default()
    };
    let fit = match fit_calibration(&readings, &options) {
        Ok(fit) => fit,
        Err(error) => {
            let message = format!("--points: {error}");
            return fail(json, &message, json!({}), Outcome::Refused);
        }
    };
    let written = match request.write {
        Some(out) => match write_fit(&scene, index, &fit, &readings, out) {
            Ok(()) => Some(out),
            Err(message) => return fail(json, &message, json!({}), Outcome::Refused),
        },
        None => None,
    };
    let report = FitReport::of(&fit, &readings, 1.0 / to_si);
    if json {
        print_json(&report.json(&scene.arm.joints[index].name, index, unit, written));
    } else {
        report.print(&scene.arm.joints[index].name, unit, written);
    }
    Outcome::Done
}

/// The fit in the joint's file unit (degrees or mm per µs).
struct FitReport {
    shape: FitShape,
    pulse_per_unit_us: f64,
    pulse_at_zero_us: f64,
    quadratic_per_us2: f64,
    residuals: Vec<f64>,
    line_residuals: Vec<f64>,
    rms: f64,
    worst: f64,
}

impl FitReport {
    fn of(fit: &CalibrationFit, readings: &[CalibrationReading], from_si: f64) -> FitReport {
        FitReport {
            shape: fit.shape,
            pulse_per_unit_us: fit.pulse_per_position_us() / from_si,
            pulse_at_zero_us: fit.pulse_at_zero_us(),
            quadratic_per_us2: fit.coefficients[2] * from_si,
            residuals: fit.residuals.iter().map(|r| r * from_si).collect(),
            line_residuals: fit
                .line_residuals(readings)
                .iter()
                .map(|r| r * from_si)
                .collect(),
            rms: fit.rms_residual() * from_si,
            worst: fit.max_residual() * from_si,
        }
    }

    fn json(&self, name: &str, index: usize, unit: &str, written: Option<&Path>) -> Value {
        let mut out = json!({
            "ok": true,
            "joint": name,
            "joint_index": index,
            "shape": match self.shape { FitShape::Linear => "line", FitShape::Quadratic => "quadratic" },
            format!("pulse_per_{unit}_us"): rounded(self.pulse_per_unit_us, 4),
            "pulse_at_zero_us": rounded(self.pulse_at_zero_us, 2),
            format!("residuals_{unit}"): all_rounded(&self.residuals, 3),
            format!("rms_residual_{unit}"): rounded(self.rms, 3),
            format!("max_residual_{unit}"): rounded(self.worst, 3),
            "written": written.map(|p| p.display().to_string()),
        });
        if self.shape == FitShape::Quadratic {
            out[format!("quadratic_{unit}_per_us2")] = json!(self.quadratic_per_us2);
            out[format!("line_residuals_{unit}")] = json!(all_rounded(&self.line_residuals, 3));
        }
        out
    }

    fn print(&self, name: &str, unit: &str, written: Option<&Path>) {
        let symbol = if unit == "deg" { "°" } else { " mm" };
        let per = if unit == "deg" { "degree" } else { "mm" };
        let count = self.residuals.len();
        match self.shape {
            FitShape::Linear => println!("joint \"{name}\": straight line through {count} points"),
            FitShape::Quadratic => {
                println!("joint \"{name}\": quadratic through {count} points (they bow clearly)")
            }
        }
        println!(
            "  {:.3} µs per {per}, {:.1} µs at 0{symbol} (straight-line fit)",
            self.pulse_per_unit_us, self.pulse_at_zero_us
        );
        if self.shape == FitShape::Quadratic {
            println!(
                "  quadratic term {:.3e}{symbol} per µs²",
                self.quadratic_per_us2
            );
        }
        let listed: Vec<String> = self.residuals.iter().map(|r| format!("{r:+.2}")).collect();
        println!(
            "  residuals {}{symbol} (rms {:.2}{symbol}, worst {:.2}{symbol})",
            listed.join(", "),
            self.rms,
            self.worst
        );
        if let Some(out) = written {
            println!(
                "wrote {}: the straight-line fit through the measured pulse range",
                out.display()
            );
            if self.shape == FitShape::Quadratic {
                let worst = self
                    .line_residuals
                    .iter()
                    .fold(0.0, |m: f64, r| m.max(r.abs()));
                println!(
                    "  note: a scene's calibration is a straight line; it is off by up to {worst:.2}{symbol} at these points"
                );
            }
        }
    }
}

/// The calibration uncertainty a straight-line fit leaves, in rad or m: the residual standard
/// error √(Σ r² / (n − 2)) of the line through `n` readings (Draper & Smith, *Applied Regression
/// Analysis*, 3rd ed., 1998, §1.4; from memory). `None` for two readings, which any line meets.
fn line_uncertainty(line_residuals: &[f64]) -> Option<f64> {
    let n = line_residuals.len();
    (n > 2).then(|| (line_residuals.iter().map(|r| r * r).sum::<f64>() / (n - 2) as f64).sqrt())
}

/// Saves the scene with joint `index`'s calibration points replaced by the straight-line fit
/// at the ends of the measured pulse range, and its uncertainty by the line's residual standard
/// error ([`line_uncertainty`]; absent for two points), after checking the whole scene again.
fn write_fit(
    scene: &Scene,
    index: usize,
    fit: &CalibrationFit,
    readings: &[CalibrationReading],
    out: &Path,
) -> Result<(), String> {
    let mut scene = scene.clone();
    let kind = scene.arm.shape.joint_kinds()[index];
    let from_si = match kind {
        JointKindDoc::Revolute => 1f64.to_degrees(),
        JointKindDoc::Prismatic => 1e3,
    };
    let joint = &mut scene.arm.joints[index];
    let line = fit.to_calibration(
        f64::from(joint.calibration.pulse_min_us),
        f64::from(joint.calibration.pulse_max_us),
    );
    // Pulse ends are measured whole µs; positions keep a hundredth of a degree or mm.
    joint.calibration.points = [
        CalibrationPoint {
            position: (line.position_a * from_si * 100.0).round() / 100.0,
            pulse_us: line.pulse_a_us as u32,
        },
        CalibrationPoint {
            position: (line.position_b * from_si * 100.0).round() / 100.0,
            pulse_us: line.pulse_b_us as u32,
        },
    ];
    joint.calibration.uncertainty = line_uncertainty(&fit.line_residuals(readings))
        .map(|sd| (sd * from_si * 1e4).round() / 1e4);
    let problems = validate(&scene);
    if !problems.is_empty() {
        let listed: Vec<String> = problems.iter().map(|p| p.to_string()).collect();
        return Err(format!(
            "the fitted calibration makes the scene invalid, nothing written: {}",
            listed.join("; ")
        ));
    }
    save(&scene, out).map_err(|error| error.to_string())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_point_is_pulse_colon_position() {
        assert_eq!(
            parse_measured_point("1500:-2.5"),
            Ok(MeasuredPoint {
                pulse_us: 1500,
                position: -2.5
            })
        );
    }

    #[test]
    fn a_bad_point_says_what_was_expected() {
        let error = parse_measured_point("1500").unwrap_err();
        assert!(error.contains("PULSE_US:POSITION"), "{error}");
        let error = parse_measured_point("1500.5:3").unwrap_err();
        assert!(error.contains("whole µs"), "{error}");
        let error = parse_measured_point("1500:abc").unwrap_err();
        assert!(error.contains("\"abc\" is not a number"), "{error}");
    }
}
