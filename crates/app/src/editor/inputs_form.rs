//! The input arm's form without its drawing: the scene's `inputs` as rows (an analog input, the
//! joint it moves, its measured points of reading ↔ position), each number kept as typed so that
//! a bad value loses nothing, and every problem with them named by row and point. The rows are
//! handed on to the scene only when the whole scene with them passes the validator (which fits
//! every input, as `armwright check` does); until then the scene keeps its last valid inputs.
//! No egui types live here.
//!
//! The form follows the scene: when the scene's inputs change from outside the form (undo, redo,
//! opening a file), the rows are made afresh from them.

use std::borrow::Cow;

use crate::input_fit::InputFit;
use crate::scene::field::{Field, shown};
use crate::scene::field_table as table;
use crate::scene::{InputDoc, InputPointDoc, JointKindDoc, Problem, Scene, child, validate};

/// The most inputs a device reads: a readings line of the link protocol carries 1 to 8.
const MOST_INPUTS: u32 = 8;

/// One number of the form.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum InputField {
    /// The input's number on the device, of row `row` (0-based).
    Input {
        /// Row index, 0-based.
        row: usize,
    },
    /// The reading (0–4095) of point `point` of row `row`.
    Reading {
        /// Row index, 0-based.
        row: usize,
        /// Point index, 0-based.
        point: usize,
    },
    /// The joint's position (degrees or mm) at point `point` of row `row`.
    Position {
        /// Row index, 0-based.
        row: usize,
        /// Point index, 0-based.
        point: usize,
    },
}

impl InputField {
    /// The row the field is in, 0-based.
    pub fn row(self) -> usize {
        match self {
            InputField::Input { row }
            | InputField::Reading { row, .. }
            | InputField::Position { row, .. } => row,
        }
    }

    /// The field's JSON path in the scene file, as the validator names it, for a row whose
    /// joint is of `kind`: `inputs[0].points[1].angle_deg`.
    pub fn path(self, kind: JointKindDoc) -> String {
        let row = format!("inputs[{}]", self.row());
        match self {
            InputField::Input { .. } => child(&row, table::input::INPUT.key(kind)),
            InputField::Reading { point, .. } | InputField::Position { point, .. } => {
                let at = format!("{row}.points[{point}]");
                child(&at, self.point_row().map_or("", |field| field.key(kind)))
            }
        }
    }

    /// The field table's row of a point's number; `None` for the input's number.
    fn point_row(self) -> Option<Field<InputPointDoc>> {
        match self {
            InputField::Input { .. } => None,
            InputField::Reading { .. } => Some(table::input_point::READING),
            InputField::Position { .. } => Some(table::input_point::POSITION),
        }
    }

    /// What the form calls the field, from its row in the field table: "reading".
    pub fn label(self) -> &'static str {
        match self.point_row() {
            Some(field) => field.label,
            None => table::input::INPUT.label,
        }
    }

    /// The unit of the field's value for a joint of `kind` ("" for readings and numbers).
    pub fn unit(self, kind: JointKindDoc) -> &'static str {
        match self.point_row() {
            Some(field) => field.unit.symbol(kind),
            None => table::input::INPUT.unit.symbol(kind),
        }
    }

    /// The field's meaning and allowed range, from its row in the field table.
    pub fn about(self, kind: JointKindDoc) -> String {
        let (about, range) = match self.point_row() {
            Some(field) => (field.about, field.range(kind)),
            None => (table::input::INPUT.about, table::input::INPUT.range(kind)),
        };
        format!("{about}; {}", range.describe(self.unit(kind)))
    }
}

/// One row of the form: an input, the joint it moves (by name) and its points, as typed.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct InputRow {
    /// The joint's name, as in `arm.joints`.
    pub joint: String,
    /// The input's number as typed.
    pub input: String,
    /// Each point's reading and position as typed.
    pub points: Vec<PointText>,
}

/// One point of a row, as typed.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct PointText {
    /// The reading, 0–4095.
    pub reading: String,
    /// The joint's position there, degrees or mm.
    pub position: String,
}

impl InputRow {
    /// The row showing `input` as the scene has it.
    fn of(input: &InputDoc) -> InputRow {
        InputRow {
            joint: input.joint.clone(),
            input: input.input.to_string(),
            points: input
                .points
                .iter()
                .map(|point| PointText {
                    reading: point.reading.to_string(),
                    position: point.position.to_string(),
                })
                .collect(),
        }
    }

    /// The text of a field of this row; empty for a point it does not have.
    pub fn text(&self, field: InputField) -> &str {
        match field {
            InputField::Input { .. } => &self.input,
            InputField::Reading { point, .. } => {
                self.points.get(point).map_or("", |p| p.reading.as_str())
            }
            InputField::Position { point, .. } => {
                self.points.get(point).map_or("", |p| p.position.as_str())
            }
        }
    }

    fn text_mut(&mut self, field: InputField) -> Option<&mut String> {
        match field {
            InputField::Input { .. } => Some(&mut self.input),
            InputField::Reading { point, .. } => Some(&mut self.points.get_mut(point)?.reading),
            InputField::Position { point, .. } => Some(&mut self.points.get_mut(point)?.position),
        }
    }
}

/// What the input arm's form asks for.
#[derive(Debug, Clone, PartialEq)]
pub enum InputsCommand {
    /// Add a row: the first joint no row moves, the lowest input no row reads, two empty points.
    AddInput,
    /// Remove a row.
    RemoveInput(usize),
    /// Choose the joint a row moves, by name.
    ChooseJoint {
        /// The row, 0-based.
        row: usize,
        /// The joint's name.
        joint: String,
    },
    /// Text typed into a field: kept as typed, applied when the scene with it is valid.
    Type {
        /// The field.
        field: InputField,
        /// The whole text now in it.
        text: String,
    },
    /// The user left a field: the next edit starts a new undo step.
    FinishField,
    /// Put what the input reads now (from the connected device) into a point's reading.
    TakeReading {
        /// The row, 0-based.
        row: usize,
        /// The point, 0-based.
        point: usize,
        /// The reading, 0–4095.
        reading: u16,
    },
    /// Add an empty point to a row.
    AddPoint(usize),
    /// Remove a point of a row.
    RemovePoint {
        /// The row, 0-based.
        row: usize,
        /// The point, 0-based.
        point: usize,
    },
}

/// The input arm's form: its rows as typed and every problem with them.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct InputsForm {
    /// The scene's inputs the rows were made from or last handed on; when the scene's differ,
    /// the rows are stale and the form shows the scene's.
    base: Vec<InputDoc>,
    /// The rows as typed.
    rows: Vec<InputRow>,
    /// Every problem with the rows, each at its JSON path; empty when the rows are the scene's.
    problems: Vec<Problem>,
}

impl InputsForm {
    /// The rows the form shows for `scene`: as typed, or the scene's when they changed from
    /// outside the form.
    pub fn rows<'a>(&'a self, scene: &Scene) -> Cow<'a, [InputRow]> {
        if self.base == scene.inputs {
            Cow::Borrowed(&self.rows)
        } else {
            Cow::Owned(scene.inputs.iter().map(InputRow::of).collect())
        }
    }

    /// Every problem with the rows as typed, each at its JSON path; while there are any, the
    /// scene keeps its last valid inputs.
    pub fn problems(&self, scene: &Scene) -> &[Problem] {
        if self.base == scene.inputs {
            &self.problems
        } else {
            &[]
        }
    }

    /// The problem at a field, if any (at the field's own path).
    pub fn problem_at(&self, scene: &Scene, field: InputField) -> Option<&Problem> {
        let kind = self
            .rows(scene)
            .get(field.row())
            .map_or(JointKindDoc::Revolute, |row| joint_kind(scene, &row.joint));
        let path = field.path(kind);
        self.problems(scene)
            .iter()
            .find(|problem| problem.path == path)
    }

    /// Each row's fit, in the order shown: `None` while a number of the row cannot be read or
    /// its joint is not the arm's (the problems say so), the fit's own words when the points do
    /// not fit (every reading the same, …), else what the fit gives and what is poor about it.
    pub fn fits(&self, scene: &Scene) -> Vec<Option<Result<InputFit, String>>> {
        self.rows(scene)
            .iter()
            .map(|row| {
                if !scene.arm.joints.iter().any(|joint| joint.name == row.joint) {
                    return None;
                }
                let kind = joint_kind(scene, &row.joint);
                let input = read_row(row, kind)?;
                Some(InputFit::judged(&input, kind))
            })
            .collect()
    }

    /// Whether the form shows any row (the device's readings are then wanted).
    pub fn has_rows(&self, scene: &Scene) -> bool {
        !self.rows(scene).is_empty()
    }

    /// Applies a command to the rows and checks them against the whole scene. Returns the
    /// inputs to hand on to the scene when they are valid and differ from its own.
    pub(crate) fn apply(&mut self, command: InputsCommand, scene: &Scene) -> Option<Vec<InputDoc>> {
        if self.base != scene.inputs {
            self.base = scene.inputs.clone();
            self.rows = scene.inputs.iter().map(InputRow::of).collect();
            self.problems.clear();
        }
        match command {
            InputsCommand::AddInput => {
                let row = self.new_row(scene);
                self.rows.push(row);
            }
            InputsCommand::RemoveInput(row) => {
                if row >= self.rows.len() {
                    return None;
                }
                self.rows.remove(row);
            }
            InputsCommand::ChooseJoint { row, joint } => {
                self.rows.get_mut(row)?.joint = joint;
            }
            InputsCommand::Type { field, text } => {
                *self.rows.get_mut(field.row())?.text_mut(field)? = text;
            }
            InputsCommand::FinishField => return None,
            InputsCommand::TakeReading {
                row,
                point,
                reading,
            } => {
                let field = InputField::Reading { row, point };
                *self.rows.get_mut(row)?.text_mut(field)? = reading.to_string();
            }
            InputsCommand::AddPoint(row) => {
                self.rows.get_mut(row)?.points.push(PointText::default());
            }
            InputsCommand::RemovePoint { row, point } => {
                let points = &mut self.rows.get_mut(row)?.points;
                if point >= points.len() {
                    return None;
                }
                points.remove(point);
            }
        }
        self.check(scene)
    }

    /// A new row: the first joint no row moves (else the first), the lowest input no row reads,
    /// and two points to measure.
    fn new_row(&self, scene: &Scene) -> InputRow {
        let joints = &scene.arm.joints;
        let joint = joints
            .iter()
            .find(|joint| !self.rows.iter().any(|row| row.joint == joint.name))
            .or(joints.first())
            .map(|joint| joint.name.clone())
            .unwrap_or_default();
        let input = (0..MOST_INPUTS)
            .find(|number| {
                !self
                    .rows
                    .iter()
                    .any(|row| row.input.trim() == number.to_string())
            })
            .unwrap_or(0);
        InputRow {
            joint,
            input: input.to_string(),
            points: vec![PointText::default(), PointText::default()],
        }
    }

    /// The inputs the rows describe and every problem with them: numbers that are no numbers
    /// (at their own path), then what the validator finds with the whole scene — except what
    /// it says of an input's number, or of a row's points, that could not be read.
    fn check(&mut self, scene: &Scene) -> Option<Vec<InputDoc>> {
        let mut problems = Vec::new();
        // Paths the validator would judge from stand-in values.
        let mut unread = Vec::new();
        let mut inputs = Vec::new();
        for (index, row) in self.rows.iter().enumerate() {
            let kind = joint_kind(scene, &row.joint);
            // An unread number stands in as one no other row has (out of range: judged no
            // further), so that no other row is said to repeat it.
            let mut doc = InputDoc {
                input: u32::MAX - index as u32,
                joint: row.joint.clone(),
                points: vec![InputPointDoc::default(); row.points.len()],
            };
            let number = InputField::Input { row: index };
            match parse_number(&row.input, number, kind)
                .and_then(|value| table::input::INPUT.set_value(&mut doc, value))
            {
                Ok(()) => {}
                Err(message) => {
                    problems.push(Problem::new(number.path(kind), message));
                    unread.push(number.path(kind));
                }
            }
            let before = problems.len();
            for (point, (text, written)) in row.points.iter().zip(&mut doc.points).enumerate() {
                for (field, typed) in [
                    (InputField::Reading { row: index, point }, &text.reading),
                    (InputField::Position { row: index, point }, &text.position),
                ] {
                    let Some(table_row) = field.point_row() else {
                        continue;
                    };
                    if let Err(message) = parse_number(typed, field, kind)
                        .and_then(|value| table_row.set_value(written, value))
                    {
                        problems.push(Problem::new(field.path(kind), message));
                    }
                }
            }
            if problems.len() > before {
                unread.push(format!("inputs[{index}].points"));
            }
            inputs.push(doc);
        }
        let candidate = Scene {
            inputs: inputs.clone(),
            ..scene.clone()
        };
        problems.extend(validate(&candidate).into_iter().filter(|problem| {
            problem.path.starts_with("inputs")
                && !unread.iter().any(|path| {
                    problem
                        .path
                        .strip_prefix(path.as_str())
                        .is_some_and(|rest| {
                            rest.is_empty() || rest.starts_with('.') || rest.starts_with('[')
                        })
                })
        }));
        self.problems = problems;
        if !self.problems.is_empty() || inputs == scene.inputs {
            return None;
        }
        self.base.clone_from(&inputs);
        Some(inputs)
    }
}

/// The input a row describes, when every number of it reads.
fn read_row(row: &InputRow, kind: JointKindDoc) -> Option<InputDoc> {
    let mut doc = InputDoc {
        joint: row.joint.clone(),
        ..InputDoc::default()
    };
    let number = InputField::Input { row: 0 };
    table::input::INPUT
        .set_value(&mut doc, parse_number(&row.input, number, kind).ok()?)
        .ok()?;
    for text in &row.points {
        let mut point = InputPointDoc::default();
        for (field, typed) in [
            (InputField::Reading { row: 0, point: 0 }, &text.reading),
            (InputField::Position { row: 0, point: 0 }, &text.position),
        ] {
            let value = parse_number(typed, field, kind).ok()?;
            field.point_row()?.set_value(&mut point, value).ok()?;
        }
        doc.points.push(point);
    }
    Some(doc)
}

/// The kind of the joint named `name` in `scene` (revolute when there is none).
pub(crate) fn joint_kind(scene: &Scene, name: &str) -> JointKindDoc {
    let kinds = scene.arm.shape.joint_kinds();
    scene
        .arm
        .joints
        .iter()
        .position(|joint| joint.name == name)
        .and_then(|index| kinds.get(index).copied())
        .unwrap_or(JointKindDoc::Revolute)
}

/// A number typed into a field: a finite decimal (`-12.5`), or for an input's number and a
/// reading a whole number of 0 or more (`2048`). An empty field says what to put there.
fn parse_number(text: &str, field: InputField, kind: JointKindDoc) -> Result<f64, String> {
    let whole = match field {
        InputField::Input { .. } => Some(table::input::INPUT.range(kind)),
        InputField::Reading { .. } => Some(table::input_point::READING.range(kind)),
        InputField::Position { .. } => None,
    };
    match text.trim().parse::<f64>() {
        Ok(value) if value.is_finite() => match whole {
            Some(range) if value.fract() != 0.0 || value < 0.0 => Err(format!(
                "must be a whole number {}, got {}",
                range.describe(""),
                shown(value)
            )),
            _ => Ok(value),
        },
        Ok(_) => Err(format!("\"{text}\" is not a finite number")),
        Err(_) if text.trim().is_empty() => Err(match field {
            InputField::Input { .. } => "is empty; type the input's number on the device".into(),
            InputField::Reading { .. } => {
                "is empty; type the reading, or take it from the connected device".into()
            }
            InputField::Position { .. } => {
                "is empty; type the joint's position at this reading".into()
            }
        }),
        Err(_) => Err(format!("\"{text}\" is not a number")),
    }
}

/// Where a problem's JSON path is in the form, in words: `inputs[1].points[0].reading` is
/// "row 2, point 1, reading". A path outside `inputs` is given as it is.
pub fn place_in_form(path: &str) -> String {
    let Some(rest) = path.strip_prefix("inputs[") else {
        return path.to_string();
    };
    let Some((row, rest)) = rest.split_once(']') else {
        return path.to_string();
    };
    let Ok(row) = row.parse::<usize>() else {
        return path.to_string();
    };
    let mut words = vec![format!("row {}", row + 1)];
    let rest = rest.strip_prefix('.').unwrap_or(rest);
    if let Some(points) = rest.strip_prefix("points") {
        match points
            .strip_prefix('[')
            .and_then(|inner| inner.split_once(']'))
        {
            Some((point, key)) => {
                let point = point.parse::<usize>().map_or(0, |p| p + 1);
                words.push(format!("point {point}"));
                let key = key.strip_prefix('.').unwrap_or(key);
                if !key.is_empty() {
                    words.push(key_label(key).to_string());
                }
            }
            None => words.push("points".to_string()),
        }
    } else if !rest.is_empty() {
        words.push(key_label(rest).to_string());
    }
    words.join(", ")
}

/// The form's label for a key of `inputs` (its field table row's label), or the key itself.
fn key_label(key: &str) -> &str {
    for kind in [JointKindDoc::Revolute, JointKindDoc::Prismatic] {
        for field in table::input_point::ROWS {
            if field.key(kind) == key {
                return field.label;
            }
        }
        if table::input::INPUT.key(kind) == key {
            return table::input::INPUT.label;
        }
    }
    key
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::editor::sample_scene;
    use crate::input_fit::FitKind;

    fn typed(form: &mut InputsForm, scene: &Scene, field: InputField, text: &str) -> bool {
        let command = InputsCommand::Type {
            field,
            text: text.into(),
        };
        form.apply(command, scene).is_some()
    }

    #[test]
    fn a_new_row_is_handed_on_once_both_points_are_measured() {
        let mut scene = sample_scene();
        let mut form = InputsForm::default();
        assert_eq!(form.apply(InputsCommand::AddInput, &scene), None);
        let rows = form.rows(&scene).into_owned();
        assert_eq!(rows.len(), 1);
        assert_eq!(rows[0].joint, scene.arm.joints[0].name);
        assert_eq!(rows[0].input, "0");
        // Four empty numbers: each named by row and point.
        let places: Vec<String> = form
            .problems(&scene)
            .iter()
            .map(|p| place_in_form(&p.path))
            .collect();
        assert_eq!(
            places,
            [
                "row 1, point 1, reading",
                "row 1, point 1, position",
                "row 1, point 2, reading",
                "row 1, point 2, position"
            ]
        );
        let (row, p0, p1) = (0, 0, 1);
        assert!(!typed(
            &mut form,
            &scene,
            InputField::Reading { row, point: p0 },
            "1000"
        ));
        assert!(!typed(
            &mut form,
            &scene,
            InputField::Position { row, point: p0 },
            "-20"
        ));
        assert!(!typed(
            &mut form,
            &scene,
            InputField::Reading { row, point: p1 },
            "3000"
        ));
        let field = InputField::Position { row, point: p1 };
        let inputs = form
            .apply(
                InputsCommand::Type {
                    field,
                    text: "20.".into(),
                },
                &scene,
            )
            .expect("valid inputs");
        assert_eq!(inputs[0].points[1].position, 20.0);
        assert!(form.problems(&scene).is_empty());
        scene.inputs = inputs;
        assert_eq!(
            form.rows(&scene)[0].points[1].position,
            "20.",
            "kept as typed"
        );
    }

    #[test]
    fn bad_text_is_kept_and_named_and_the_scene_keeps_its_inputs() {
        let scene = editor_scene_with_one_input();
        let mut form = InputsForm::default();
        let field = InputField::Reading { row: 0, point: 1 };
        assert!(!typed(&mut form, &scene, field, "30o0"));
        let problem = form.problem_at(&scene, field).expect("listed");
        assert_eq!(problem.path, "inputs[0].points[1].reading");
        assert_eq!(problem.message, "\"30o0\" is not a number");
        assert_eq!(form.rows(&scene)[0].points[1].reading, "30o0");
        // Out of range: the field table's range, at the same path.
        assert!(!typed(&mut form, &scene, field, "5000"));
        let problem = form.problem_at(&scene, field).expect("listed");
        assert!(problem.message.contains("4095"), "{problem}");
        // Same reading twice: the fit's own words, at the row's points.
        assert!(!typed(&mut form, &scene, field, "1000"));
        assert_eq!(
            form.problems(&scene)
                .iter()
                .map(|p| (place_in_form(&p.path), p.message.clone()))
                .collect::<Vec<_>>(),
            [(
                "row 1, points".to_string(),
                "every point has the same reading (1000): turn the joint between points"
                    .to_string()
            )]
        );
        // A whole reading only.
        assert!(!typed(&mut form, &scene, field, "2000.5"));
        assert!(
            form.problem_at(&scene, field)
                .is_some_and(|p| p.message.contains("whole number"))
        );
        // A second row whose number is empty: that alone is named, no made-up repeat of it.
        assert!(!typed(&mut form, &scene, field, "3000"));
        assert_eq!(form.apply(InputsCommand::AddInput, &scene), None);
        let number = InputField::Input { row: 1 };
        assert!(!typed(&mut form, &scene, number, ""));
        let problems: Vec<String> = form
            .problems(&scene)
            .iter()
            .map(|p| p.to_string())
            .filter(|p| p.starts_with("inputs[1].input") || p.contains("already"))
            .collect();
        assert_eq!(
            problems,
            ["inputs[1].input: is empty; type the input's number on the device"]
        );
    }

    #[test]
    fn an_outside_change_shows_the_scenes_inputs() {
        let scene = editor_scene_with_one_input();
        let mut form = InputsForm::default();
        assert!(!typed(
            &mut form,
            &scene,
            InputField::Input { row: 0 },
            "nine"
        ));
        assert_eq!(form.rows(&scene)[0].input, "nine");
        let mut other = scene.clone();
        other.inputs[0].input = 3;
        assert_eq!(form.rows(&other)[0].input, "3");
        assert!(form.problems(&other).is_empty());
    }

    #[test]
    fn a_second_row_takes_the_next_joint_and_input_and_a_repeat_is_named() {
        let scene = editor_scene_with_one_input();
        let mut form = InputsForm::default();
        assert_eq!(form.apply(InputsCommand::AddInput, &scene), None);
        let rows = form.rows(&scene).into_owned();
        assert_eq!(rows[1].joint, scene.arm.joints[1].name);
        assert_eq!(rows[1].input, "1");
        let joint = scene.arm.joints[0].name.clone();
        assert_eq!(
            form.apply(InputsCommand::ChooseJoint { row: 1, joint }, &scene),
            None
        );
        assert!(
            form.problems(&scene)
                .iter()
                .any(|p| p.path == "inputs[1].joint" && p.message.contains("already has an input")),
            "{:?}",
            form.problems(&scene)
        );
        let removed = form.apply(InputsCommand::RemoveInput(1), &scene);
        assert_eq!(removed, None, "back to the scene's own inputs");
        assert!(form.problems(&scene).is_empty());
    }

    #[test]
    fn places_name_rows_and_points_from_one() {
        assert_eq!(place_in_form("inputs[0].input"), "row 1, input");
        assert_eq!(place_in_form("inputs[2].joint"), "row 3, joint");
        assert_eq!(
            place_in_form("inputs[1].points[3].position_mm"),
            "row 2, point 4, position"
        );
        assert_eq!(place_in_form("inputs[0].points"), "row 1, points");
        assert_eq!(place_in_form("arm.joints[0]"), "arm.joints[0]");
    }

    #[test]
    fn a_row_shows_no_fit_until_its_numbers_read_and_says_why_points_do_not_fit() {
        let scene = editor_scene_with_one_input();
        let mut form = InputsForm::default();
        let fits = form.fits(&scene);
        let [Some(Ok(fit))] = fits.as_slice() else {
            panic!("{fits:?}");
        };
        // 40° over 2000 counts.
        assert_eq!(fit.kind, FitKind::TwoPoints);
        assert!((fit.per_count - 0.02).abs() < 1e-12);
        assert_eq!(fit.summary(), "line through 2 points: 0.0200° per count");
        let field = InputField::Reading { row: 0, point: 1 };
        assert!(!typed(&mut form, &scene, field, "30o0"));
        assert_eq!(form.fits(&scene), [None]);
        // Both readings the same: the fit's own words.
        assert!(!typed(&mut form, &scene, field, "1000"));
        assert_eq!(
            form.fits(&scene),
            [Some(Err(
                "every point has the same reading (1000): turn the joint between points".into()
            ))]
        );
    }

    fn editor_scene_with_one_input() -> Scene {
        let mut scene = sample_scene();
        scene.inputs = vec![InputDoc {
            input: 0,
            joint: scene.arm.joints[0].name.clone(),
            points: vec![
                InputPointDoc {
                    reading: 1000,
                    position: -20.0,
                },
                InputPointDoc {
                    reading: 3000,
                    position: 20.0,
                },
            ],
        }];
        scene
    }
}
