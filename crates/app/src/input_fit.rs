//! An analog input's fit judged: the shape the scene's fit of its points takes, the joint's
//! change per reading count, how far the points lie off it, and what is poor about it. The
//! editor's input form shows it row by row; `armwright check` names the poor fits as notes.
//! A poor fit is applied all the same (it is not a problem of the file): it says what to measure
//! again.

use armwright_kinematics::{CalibrationFit, FitShape};

use crate::scene::field::Unit;
use crate::scene::{InputDoc, JointKindDoc, Problem, Scene, fit_input, position_to_file_unit};

/// A point this far off its input's fit, or more (degrees, or mm on a sliding joint), makes the
/// fit poor. A printed protractor is read to about ½° (common practice, as the calibration fit's
/// `min_bow` says), and one step of the reference firmware's 10-bit converter
/// ([`CONVERTER_STEP_COUNTS`]) is about ¼° on a potentiometer that turns about 270° over its
/// track (from memory: 270° / 1024 steps). A point 2° off is several times both: a misread
/// position, an input slipping on its shaft, or a reading taken from another input. On a
/// sliding joint the same 2 mm: a steel rule is read to about ½ mm (common practice).
pub const POOR_RESIDUAL: f64 = 2.0;

/// One step of the reference firmware's converter in reading counts: it reads 10 bits and sends
/// them on the 12-bit scale of the protocol (`assets/firmware/analog_inputs.c`), 4096 / 1024.
/// A fit that moves the joint more than [`POOR_RESIDUAL`] in one such step is too coarse to
/// teach with: the input hardly turns with the joint (a loose coupling, or readings of another
/// input). A potentiometer turning with the joint gives about 0.07° a count (from memory).
pub const CONVERTER_STEP_COUNTS: f64 = 4.0;

/// The shape of an input's fit, as the form names it.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum FitKind {
    /// Two points: the line through them, which leaves no residuals.
    TwoPoints,
    /// A least-squares straight line through three or more points.
    Line,
    /// A least-squares quadratic: four or more points that bow clearly (the calibration fit's
    /// rule).
    Quadratic,
}

/// How far the points lie off an input's fit.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Residuals {
    /// The largest by size, in degrees or mm.
    pub worst: f64,
    /// The point it is at, 0-based.
    pub worst_point: usize,
    /// Their root mean square, in degrees or mm.
    pub rms: f64,
}

/// An input's fit as the editor's form and `armwright check` show it: what the scene's fit of
/// its points gives (the same fit as `scene::validate` and `armwright capture` use), and what is
/// poor about it.
#[derive(Debug, Clone, PartialEq)]
pub struct InputFit {
    /// The input's number on the device.
    pub input: u32,
    /// The joint it moves, by name.
    pub joint: String,
    /// How many points were fitted.
    pub points: usize,
    /// The fit's shape.
    pub kind: FitKind,
    /// Change of the joint's position per reading count along the straight-line fit, in degrees
    /// (or mm on a sliding joint) per count; negative when the position falls as the reading
    /// grows.
    pub per_count: f64,
    /// The points' residuals from the fit chosen, in degrees or mm; `None` for two points.
    pub residuals: Option<Residuals>,
    /// "°" or "mm": the unit of `per_count` and `residuals`.
    pub unit: &'static str,
    /// What is poor about the fit, in words (the input and joint not named); empty when nothing.
    pub concerns: Vec<String>,
}

impl InputFit {
    /// The fit of `input`'s points on a joint of `kind`, judged; the fit's own words when the
    /// points do not fit (every reading the same, …).
    pub fn judged(input: &InputDoc, kind: JointKindDoc) -> Result<InputFit, String> {
        fit_input(input, kind).map(|fit| InputFit::of(input, kind, &fit))
    }

    /// What is poor about the fit, each named by the input and its joint:
    /// `input 2 (joint "elbow"): point 3 is 4.7° off the fit …`.
    pub fn named_concerns(&self) -> impl Iterator<Item = String> + '_ {
        self.concerns
            .iter()
            .map(|concern| format!("input {} (joint \"{}\"): {concern}", self.input, self.joint))
    }

    /// The view of `fit`, made from `input`'s points on a joint of `kind`.
    pub(crate) fn of(input: &InputDoc, kind: JointKindDoc, fit: &CalibrationFit) -> InputFit {
        let unit = Unit::Position.symbol(kind);
        let per_count = position_to_file_unit(kind, fit.line[1]);
        let points = input.points.len();
        let kind_of_fit = match fit.shape {
            FitShape::Quadratic => FitKind::Quadratic,
            FitShape::Linear if points == 2 => FitKind::TwoPoints,
            FitShape::Linear => FitKind::Line,
        };
        let residuals = (kind_of_fit != FitKind::TwoPoints).then(|| {
            let sizes: Vec<f64> = fit
                .residuals
                .iter()
                .map(|&r| position_to_file_unit(kind, r).abs())
                .collect();
            let (worst_point, worst) =
                sizes
                    .iter()
                    .copied()
                    .enumerate()
                    .fold(
                        (0, 0.0),
                        |best, (at, size)| {
                            if size > best.1 { (at, size) } else { best }
                        },
                    );
            Residuals {
                worst,
                worst_point,
                rms: position_to_file_unit(kind, fit.rms_residual()),
            }
        });
        let mut concerns = Vec::new();
        if let Some(residuals) = residuals
            && residuals.worst >= POOR_RESIDUAL
        {
            concerns.push(format!(
                "point {} is {} off the fit ({POOR_RESIDUAL}{} or more is poor): a misread \
                 position, an input slipping on its shaft, or a reading of another input; \
                 measure it again",
                residuals.worst_point + 1,
                amount(residuals.worst, 1, unit),
                spaced(unit)
            ));
        }
        let step = per_count.abs() * CONVERTER_STEP_COUNTS;
        if step > POOR_RESIDUAL {
            concerns.push(format!(
                "{} per count: one step of a 10-bit converter ({CONVERTER_STEP_COUNTS} counts) \
                 moves the joint {}, over {POOR_RESIDUAL}{}; the input hardly turns with the \
                 joint (a loose coupling, or readings of another input)",
                amount(per_count, 3, unit),
                amount(step, 1, unit),
                spaced(unit)
            ));
        }
        InputFit {
            input: input.input,
            joint: input.joint.clone(),
            points,
            kind: kind_of_fit,
            per_count,
            residuals,
            unit,
            concerns,
        }
    }

    /// The fit in a line: its shape, its slope and its residuals.
    pub fn summary(&self) -> String {
        let slope = format!("{} per count", amount(self.per_count, 4, self.unit));
        let shape = match self.kind {
            FitKind::TwoPoints => return format!("line through 2 points: {slope}"),
            FitKind::Line => format!("least-squares line through {} points: {slope}", self.points),
            FitKind::Quadratic => format!(
                "quadratic through {} points (they bow): {slope} along the straight line",
                self.points
            ),
        };
        match self.residuals {
            Some(residuals) => format!(
                "{shape}; residuals worst {} (point {}), RMS {}",
                amount(residuals.worst, 2, self.unit),
                residuals.worst_point + 1,
                amount(residuals.rms, 2, self.unit)
            ),
            None => shape,
        }
    }
}

/// `value` with `decimals` and its unit: "0.25°", "1.5 mm".
fn amount(value: f64, decimals: usize, unit: &str) -> String {
    format!("{value:.decimals$}{}", spaced(unit))
}

/// A unit as written after a number: "°" close up, "mm" after a space.
fn spaced(unit: &str) -> String {
    if unit == "°" {
        unit.to_owned()
    } else {
        format!(" {unit}")
    }
}

/// Every poor fit of the scene's inputs as a note at the input's path, `inputs[i]`, named by the
/// input and its joint. An input whose joint is not the arm's, or whose points do not fit, is a
/// problem of the file, which the validator names; none is noted here.
pub fn poor_fit_notes(scene: &Scene) -> Vec<Problem> {
    let kinds = scene.arm.shape.joint_kinds();
    scene
        .inputs
        .iter()
        .enumerate()
        .filter_map(|(index, input)| {
            let joint = scene
                .arm
                .joints
                .iter()
                .position(|j| j.name == input.joint)?;
            let kind = kinds.get(joint).copied()?;
            let fit = InputFit::judged(input, kind).ok()?;
            Some(
                fit.named_concerns()
                    .map(|concern| Problem::new(format!("inputs[{index}]"), concern))
                    .collect::<Vec<_>>(),
            )
        })
        .flatten()
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::editor::sample_scene;
    use crate::scene::InputPointDoc;
    use armwright_test_support::reference::numbers;

    /// The fit judged for each invented input arm of `tests/reference/fixtures/
    /// input_fit.json`, against NumPy's least-squares polynomial fit (`numpy.polyfit`, PyPI
    /// `numpy`; written by `tests/reference/generate_input_fit.py`): the slope in degrees per
    /// count to 1e-9 relative (the fixture keeps 12 digits), the worst and RMS residual of the
    /// shape chosen to 1e-8°; and which fits are poor.
    #[test]
    fn fits_match_numpy_polyfit_and_the_poor_ones_are_named() {
        let fixture = armwright_test_support::reference::fixture("input_fit.json");
        let sets = fixture["sets"].as_array().expect("sets");
        let mut scene = sample_scene();
        let joint = scene.arm.joints[1].name.clone();
        let mut poor = Vec::new();
        let mut inputs = Vec::new();
        for set in sets {
            let name = set["name"].as_str().expect("a name");
            let readings = numbers(&set["readings"]);
            let positions = numbers(&set["positions_deg"]);
            let input = InputDoc {
                input: 3,
                joint: joint.clone(),
                points: readings
                    .iter()
                    .zip(&positions)
                    .map(|(&reading, &position)| InputPointDoc {
                        reading: reading as u32,
                        position,
                    })
                    .collect(),
            };
            let fit = InputFit::judged(&input, JointKindDoc::Revolute)
                .unwrap_or_else(|why| panic!("{name}: {why}"));
            inputs.push(input);
            let line = numbers(&set["linear"]["coefficients_high_first"]);
            let slope = line[0];
            assert!(
                (fit.per_count - slope).abs() <= 1e-9 * slope.abs(),
                "{name}: slope {} vs numpy.polyfit {slope}",
                fit.per_count
            );
            assert_eq!(fit.unit, "°");
            let expected = match fit.kind {
                FitKind::TwoPoints => {
                    assert_eq!(readings.len(), 2, "{name}");
                    assert_eq!(fit.residuals, None, "{name}");
                    None
                }
                FitKind::Line => Some(&set["linear"]),
                FitKind::Quadratic => Some(&set["quadratic"]),
            };
            if let Some(expected) = expected {
                let residuals = fit.residuals.expect("residuals");
                let worst = expected["worst_residual_deg"].as_f64().expect("worst");
                let rms = expected["rms_residual_deg"].as_f64().expect("rms");
                assert!((residuals.worst - worst).abs() < 1e-8, "{name}: worst");
                assert!((residuals.rms - rms).abs() < 1e-8, "{name}: rms");
                let at = numbers(&expected["residuals_deg"])[residuals.worst_point];
                assert!((at.abs() - worst).abs() < 1e-8, "{name}: worst point");
            }
            if name.contains("bowed") {
                assert_eq!(fit.kind, FitKind::Quadratic, "{name}");
            }
            if !fit.concerns.is_empty() {
                poor.push((name, fit.concerns.clone()));
            }
        }
        // The misread point (6° off) and the input that hardly turns (1.2° a count), no other.
        let [(misread, residual), (coarse, per_count)] = poor.as_slice() else {
            panic!("{poor:?}");
        };
        assert_eq!(*misread, "five points, one misread");
        assert_eq!(residual.len(), 1);
        assert!(
            residual[0].starts_with("point 3 is 4.7° off the fit"),
            "{residual:?}"
        );
        assert_eq!(*coarse, "three points, coarse");
        assert!(
            per_count[0].starts_with("1.198° per count: one step"),
            "{per_count:?}"
        );
        // `armwright check` notes the same two, at their inputs' places, named by input and joint
        // (each set as input 3 of its own; the notes keep the scene's order).
        let misread_at = sets
            .iter()
            .position(|set| set["name"] == "five points, one misread")
            .expect("set");
        scene.inputs = inputs;
        for (number, input) in scene.inputs.iter_mut().enumerate() {
            input.input = number as u32;
        }
        let notes = poor_fit_notes(&scene);
        assert_eq!(notes.len(), 2, "{notes:?}");
        assert_eq!(notes[0].path, format!("inputs[{misread_at}]"));
        assert!(
            notes[0].message.starts_with(&format!(
                "input {misread_at} (joint \"{joint}\"): point 3 is 4.7° off the fit"
            )),
            "{notes:?}"
        );
        assert!(notes[1].message.contains("1.198° per count"), "{notes:?}");
    }

    #[test]
    fn the_input_fit_fixture_matches_a_fresh_numpy_run() {
        use armwright_test_support::reference;
        let Some(out) = reference::regenerate("generate_input_fit.py", "numpy") else {
            return;
        };
        let fresh: serde_json::Value = serde_json::from_str(
            &std::fs::read_to_string(out.join("input_fit.json")).expect("written"),
        )
        .expect("JSON");
        reference::assert_same_json("", &fresh, &reference::fixture("input_fit.json"));
    }
}
