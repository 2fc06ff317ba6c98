//! The input arm (`inputs` in the scene): each analog input's measured points fitted into a map
//! from reading to joint position by the calibration fit of the kinematics crate (a least-squares
//! line, or a quadratic when four or more points bow clearly), the rules across its fields, and
//! the pose a set of readings gives.

use armwright_kinematics::{
    CalibrationFit, CalibrationFitError, CalibrationFitOptions, CalibrationReading, fit_calibration,
};

use super::document::{InputDoc, JointKindDoc, Scene};
use super::field_table as table;
use super::problem::{Problem, child, item};
use super::units::{position_from_file_unit, position_to_file_unit};
use super::validate::{joint_named, ranges as ranges_at};

/// The scene's input arm, fitted: for each mapped joint, the input that moves it and the fit.
#[derive(Debug, Clone)]
pub struct InputMap {
    mapped: Vec<MappedInput>,
    kinds: Vec<JointKindDoc>,
}

#[derive(Debug, Clone)]
struct MappedInput {
    joint: usize,
    input: usize,
    /// Reading (0–4095) → joint position in rad or m.
    fit: CalibrationFit,
}

/// The pose a set of readings gives.
#[derive(Debug, Clone, PartialEq)]
pub struct InputPose {
    /// Every joint's position, in the file's units (degrees or mm): a mapped joint's from its
    /// input, the others as given.
    pub joints_deg_or_mm: Vec<f64>,
    /// Joints whose input was missing from the readings (the device has fewer inputs), kept
    /// as given, by index.
    pub unread: Vec<usize>,
}

impl InputMap {
    /// Whether the scene maps no input.
    pub fn is_empty(&self) -> bool {
        self.mapped.is_empty()
    }

    /// The mapped joints by index, base first, each with its input's number.
    pub fn joints(&self) -> Vec<(usize, usize)> {
        let mut joints: Vec<(usize, usize)> =
            self.mapped.iter().map(|m| (m.joint, m.input)).collect();
        joints.sort_unstable();
        joints
    }

    /// The pose `readings` (input 0 first, 0–4095) give: each mapped joint at its fitted
    /// position, every other joint at its value in `base` (file units: degrees or mm, one per
    /// joint). Positions are not limited to the joints' limits: callers compare them with the
    /// joints' `min` and `max` (`capture` reports those outside, the editor holds them there).
    pub fn pose(&self, readings: &[u16], base: &[f64]) -> InputPose {
        let mut joints_deg_or_mm = base.to_vec();
        let mut unread = Vec::new();
        for mapped in &self.mapped {
            let Some(slot) = joints_deg_or_mm.get_mut(mapped.joint) else {
                continue;
            };
            match readings.get(mapped.input) {
                Some(&reading) => {
                    let kind = self
                        .kinds
                        .get(mapped.joint)
                        .copied()
                        .unwrap_or(JointKindDoc::Revolute);
                    *slot = position_to_file_unit(kind, mapped.fit.position(f64::from(reading)));
                }
                None => unread.push(mapped.joint),
            }
        }
        unread.sort_unstable();
        InputPose {
            joints_deg_or_mm,
            unread,
        }
    }
}

/// The scene's input arm fitted, or every problem with it at its JSON path (the same problems
/// [`super::validate`] reports for `inputs`).
///
/// # Errors
/// The problems, when any input names no joint of the arm, repeats an input or a joint, has
/// fewer than two points, or has points that do not fit (every reading the same, or no change
/// of position with the reading).
pub fn input_map_of(scene: &Scene) -> Result<InputMap, Vec<Problem>> {
    let mut problems = Vec::new();
    let map = fit_inputs(scene, &mut problems);
    if problems.is_empty() {
        Ok(map)
    } else {
        Err(problems)
    }
}

/// Checks `inputs` (adding each problem at its path) and fits every entry that is sound.
pub(super) fn fit_inputs(scene: &Scene, problems: &mut Vec<Problem>) -> InputMap {
    let kinds = scene.arm.shape.joint_kinds();
    let joints = &scene.arm.joints;
    let mut mapped = Vec::new();
    for (index, input) in scene.inputs.iter().enumerate() {
        let path = item("inputs", index);
        let Some(joint) = joint_named(joints, &input.joint, &path, "map an input", problems) else {
            continue;
        };
        let kind = kinds.get(joint).copied().unwrap_or(JointKindDoc::Revolute);
        let before = problems.len();
        ranges_at(table::input::ROWS, input, kind, &path, problems);
        let points_path = child(&path, "points");
        for (point_index, point) in input.points.iter().enumerate() {
            ranges_at(
                table::input_point::ROWS,
                point,
                kind,
                &item(&points_path, point_index),
                problems,
            );
        }
        let earlier = &scene.inputs[..index];
        if let Some(other) = earlier.iter().position(|o| o.input == input.input) {
            problems.push(Problem::new(
                child(&path, "input"),
                format!(
                    "input {} is already mapped, in inputs[{other}]; an input moves one joint",
                    input.input
                ),
            ));
        }
        if let Some(other) = earlier.iter().position(|o| o.joint == input.joint) {
            problems.push(Problem::new(
                child(&path, "joint"),
                format!(
                    "\"{}\" already has an input, in inputs[{other}]; a joint follows one input",
                    input.joint
                ),
            ));
        }
        if problems.len() > before {
            continue;
        }
        match fit_input(input, kind) {
            Ok(fit) => mapped.push(MappedInput {
                joint,
                input: input.input as usize,
                fit,
            }),
            Err(message) => problems.push(Problem::new(points_path, message)),
        }
    }
    InputMap { mapped, kinds }
}

/// The least-squares fit of one input's points (reading → rad or m) on a joint of `kind`, or
/// what is wrong with them, in the words the validator uses at the input's `points`.
///
/// # Errors
/// Fewer than two points, a point that is not a number, every reading the same, or no change of
/// position with the reading.
pub(crate) fn fit_input(input: &InputDoc, kind: JointKindDoc) -> Result<CalibrationFit, String> {
    let points: Vec<CalibrationReading> = input
        .points
        .iter()
        .map(|point| CalibrationReading {
            pulse_us: f64::from(point.reading),
            position: position_from_file_unit(kind, point.position),
        })
        .collect();
    fit_calibration(&points, &CalibrationFitOptions::default()).map_err(|error| match error {
        CalibrationFitError::TooFewPoints { given } => {
            format!("expected 2 or more points, found {given}")
        }
        CalibrationFitError::OnePulseOnly { pulse_us } => {
            format!("every point has the same reading ({pulse_us}): turn the joint between points")
        }
        CalibrationFitError::NoSlope => "the position does not change with the reading: check \
                                         that the input turns with the joint"
            .to_string(),
        CalibrationFitError::NotFinite { index } => format!("point {index} is not a number"),
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::editor::sample_scene;
    use crate::scene::InputPointDoc;

    fn input(input: u32, joint: &str, points: &[(u32, f64)]) -> InputDoc {
        InputDoc {
            input,
            joint: joint.to_string(),
            points: points
                .iter()
                .map(|&(reading, position)| InputPointDoc { reading, position })
                .collect(),
        }
    }

    #[test]
    fn two_points_map_readings_along_their_line() {
        let mut scene = sample_scene();
        let joint = scene.arm.joints[1].name.clone();
        scene.inputs = vec![input(2, &joint, &[(1000, -30.0), (3000, 50.0)])];
        let map = input_map_of(&scene).expect("valid");
        assert_eq!(map.joints(), [(1, 2)]);
        let base = vec![5.0; scene.arm.joints.len()];
        let pose = map.pose(&[0, 0, 2000, 0], &base);
        // Midway between the points: 10°; the other joints keep the base pose.
        assert!((pose.joints_deg_or_mm[1] - 10.0).abs() < 1e-9);
        assert_eq!(pose.joints_deg_or_mm[0], 5.0);
        // 25 counts per degree: 3250 is 10° past the second point.
        let pose = map.pose(&[0, 0, 3250], &base);
        assert!((pose.joints_deg_or_mm[1] - 60.0).abs() < 1e-9);
        // A device with two inputs cannot move it.
        let pose = map.pose(&[0, 0], &base);
        assert_eq!(pose.unread, [1]);
        assert_eq!(pose.joints_deg_or_mm[1], 5.0);
    }

    #[test]
    fn problems_name_the_input_and_what_is_wrong() {
        let mut scene = sample_scene();
        let first = scene.arm.joints[0].name.clone();
        scene.inputs = vec![
            input(0, &first, &[(1000, 0.0), (2000, 10.0)]),
            input(0, "elbw", &[(1000, 0.0), (2000, 10.0)]),
            input(1, &first, &[(1000, 0.0)]),
            input(
                2,
                &scene.arm.joints[2].name.clone(),
                &[(900, 0.0), (900, 20.0)],
            ),
            input(
                9,
                &scene.arm.joints[3].name.clone(),
                &[(5000, 0.0), (0, 20.0)],
            ),
        ];
        let problems = input_map_of(&scene).expect_err("problems");
        let text: Vec<String> = problems.iter().map(ToString::to_string).collect();
        assert!(
            text[0].starts_with("inputs[1].joint: no joint is named \"elbw\""),
            "{text:?}"
        );
        assert_eq!(
            text[1],
            format!(
                "inputs[2].joint: \"{first}\" already has an input, in inputs[0]; a joint \
                 follows one input"
            )
        );
        assert_eq!(
            text[2],
            "inputs[3].points: every point has the same reading (900): turn the joint between \
             points"
        );
        assert!(text[3].starts_with("inputs[4].input:"), "{text:?}");
        assert!(
            text[4].starts_with("inputs[4].points[0].reading:"),
            "{text:?}"
        );
        assert_eq!(text.len(), 5, "{text:?}");
    }
}
