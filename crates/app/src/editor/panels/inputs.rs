//! The input arm's form, at the foot of the Arm tab: per analog input the joint it moves, its
//! number on the device, what it reads now (from the connected device), and its measured points
//! of reading ↔ position, each reading typed or taken from the device. Every problem is listed
//! by row and point; a number with a problem shows in red and keeps its text, and the scene keeps
//! its last valid inputs until the form is valid again.

use egui::{CollapsingHeader, Color32, Grid, RichText, TextEdit, Ui};

use crate::editor::command::Command;
use crate::editor::device::LinkView;
use crate::editor::inputs_form::{InputField, InputRow, InputsCommand, joint_kind, place_in_form};
use crate::editor::state::EditorState;
use crate::input_fit::InputFit;
use crate::scene::JointKindDoc;

/// The button that adds an input.
pub const ADD_INPUT_LABEL: &str = "Add an input";

/// The button that takes what an input reads now into a point.
pub const TAKE_LABEL: &str = "Take";

/// Colour of a problem (as the arm settings show theirs).
const PROBLEM: Color32 = Color32::from_rgb(255, 90, 70);

/// Background of a number with a problem: an empty field has no text to show red.
const PROBLEM_FIELD: Color32 = Color32::from_rgb(72, 24, 20);

/// Width of a reading's text box, in points.
const READING_WIDTH: f32 = 56.0;

/// Width of a position's text box, in points.
const POSITION_WIDTH: f32 = 70.0;

/// Draws the input arm's form.
pub fn inputs(ui: &mut Ui, state: &EditorState, view: &LinkView) -> Command {
    let mut command = Command::None;
    let scene = &state.scene;
    let rows = state.inputs_form.rows(scene);
    let problems = state.inputs_form.problems(scene);
    let fits = state.inputs_form.fits(scene);
    let concerns = fit_concerns(&fits);
    let mut title = RichText::new("Input arm (analog inputs)");
    if !problems.is_empty() || !concerns.is_empty() {
        title = title.color(PROBLEM);
    }
    let readings: Option<Vec<u16>> = view
        .connection
        .as_ref()
        .and(view.stats.as_ref())
        .and_then(|stats| stats.readings)
        .map(|readings| readings.as_slice().to_vec());
    // A form with a problem stays open, so the number at fault is in view.
    CollapsingHeader::new(title)
        .id_salt("input arm")
        .default_open(!rows.is_empty())
        .open((!problems.is_empty()).then_some(true))
        .show(ui, |ui| {
            ui.label(
                "Each analog input of a hand-guided input arm (a potentiometer, or a servo's \
                 feedback wire) moves one joint. Hold that joint at a known position, take the \
                 reading, type the position; two points give a line, four or more show whether \
                 it bows.",
            );
            match (&view.connection, &readings) {
                (None, _) => {
                    ui.label("Connect a device in the Link tab to see what each input reads.");
                }
                (Some(_), None) => {
                    ui.label(
                        "The device has sent no readings yet (it needs analog readings, \
                         protocol 3).",
                    );
                }
                (Some(_), Some(values)) => {
                    ui.label(format!("The device sends {} inputs.", values.len()));
                }
            }
            if !problems.is_empty() {
                ui.label(
                    RichText::new(format!(
                        "{}, not applied to the scene:",
                        super::counted(problems.len(), "problem", "problems")
                    ))
                    .color(PROBLEM)
                    .strong(),
                );
                for problem in problems {
                    ui.colored_label(
                        PROBLEM,
                        format!("{}: {}", place_in_form(&problem.path), problem.message),
                    )
                    .on_hover_text(problem.path.as_str());
                }
            }
            if !concerns.is_empty() {
                ui.label(
                    RichText::new(format!(
                        "{}, applied all the same:",
                        super::counted(concerns.len(), "poor fit", "poor fits")
                    ))
                    .color(PROBLEM)
                    .strong(),
                );
                for concern in &concerns {
                    ui.colored_label(PROBLEM, concern);
                }
            }
            for (index, row) in rows.iter().enumerate() {
                ui.separator();
                let drawn = input_row(ui, state, index, row, readings.as_deref());
                command = std::mem::replace(&mut command, Command::None).then(drawn);
                match fits.get(index) {
                    Some(Some(Ok(fit))) => {
                        let text = format!("fit: {}", fit.summary());
                        if fit.concerns.is_empty() {
                            ui.label(text);
                        } else {
                            ui.colored_label(PROBLEM, text);
                        }
                    }
                    Some(Some(Err(why))) => {
                        ui.colored_label(PROBLEM, format!("no fit: {why}"));
                    }
                    _ => {}
                }
            }
            ui.separator();
            if ui
                .button(ADD_INPUT_LABEL)
                .on_hover_text("A new row for the next joint and input, with two points to measure")
                .clicked()
            {
                command = std::mem::replace(&mut command, Command::None)
                    .then(Command::Inputs(InputsCommand::AddInput));
            }
        });
    command
}

/// What is poor about each row's fit, named by its input and joint:
/// `input 2 (joint "elbow"): point 3 is 4.7° off the fit …`.
fn fit_concerns(fits: &[Option<Result<InputFit, String>>]) -> Vec<String> {
    fits.iter()
        .flatten()
        .flatten()
        .flat_map(InputFit::named_concerns)
        .collect()
}

/// One row: its joint, its input's number and reading now, its points.
fn input_row(
    ui: &mut Ui,
    state: &EditorState,
    index: usize,
    row: &InputRow,
    readings: Option<&[u16]>,
) -> Command {
    let mut command = Command::None;
    let scene = &state.scene;
    let kind = joint_kind(scene, &row.joint);
    let name = format!("row {}", index + 1);
    let reading_now = row
        .input
        .trim()
        .parse::<usize>()
        .ok()
        .and_then(|input| readings?.get(input).copied());
    ui.horizontal(|ui| {
        ui.strong(format!("Row {}", index + 1));
        let remove = ui
            .button("Remove row")
            .on_hover_text("Remove this input and its points")
            .accessible_name(format!("remove {name}"));
        if remove.clicked() {
            command = Command::Inputs(InputsCommand::RemoveInput(index));
        }
    });
    Grid::new(("input row", index))
        .num_columns(2)
        .spacing([8.0, 4.0])
        .show(ui, |ui| {
            ui.label("joint");
            egui::ComboBox::from_id_salt(("input joint", index))
                .selected_text(row.joint.as_str())
                .show_ui(ui, |ui| {
                    for joint in &scene.arm.joints {
                        if ui
                            .selectable_label(joint.name == row.joint, joint.name.as_str())
                            .clicked()
                            && joint.name != row.joint
                        {
                            command = Command::Inputs(InputsCommand::ChooseJoint {
                                row: index,
                                joint: joint.name.clone(),
                            });
                        }
                    }
                })
                .response
                .accessible_name(format!("{name} joint"));
            ui.end_row();
            let field = InputField::Input { row: index };
            ui.label(field.label());
            let typed = number_edit(ui, state, row, field, kind, &name, READING_WIDTH);
            command = std::mem::replace(&mut command, Command::None).then(typed);
            ui.end_row();
            ui.label("reads now");
            ui.label(now_text(state, row, reading_now));
            ui.end_row();
        });
    let unit = InputField::Position {
        row: index,
        point: 0,
    }
    .unit(kind);
    Grid::new(("input points", index))
        .num_columns(5)
        .spacing([6.0, 4.0])
        .show(ui, |ui| {
            ui.label("point");
            ui.label("reading");
            ui.label("");
            ui.label(format!("position ({unit})"));
            ui.label("");
            ui.end_row();
            for point in 0..row.points.len() {
                let at = format!("{name} point {}", point + 1);
                ui.label(format!("{}", point + 1));
                let reading = InputField::Reading { row: index, point };
                let typed = number_edit(ui, state, row, reading, kind, &at, READING_WIDTH);
                command = std::mem::replace(&mut command, Command::None).then(typed);
                let take = ui
                    .add_enabled(reading_now.is_some(), egui::Button::new(TAKE_LABEL))
                    .on_hover_text(format!(
                        "Puts what input {} reads now into this point's reading",
                        row.input.trim()
                    ))
                    .on_disabled_hover_text(
                        "needs a connected device that sends analog readings, among them this \
                         row's input",
                    )
                    .accessible_name(format!("take the reading for {at}"));
                if take.clicked()
                    && let Some(value) = reading_now
                {
                    command = std::mem::replace(&mut command, Command::None).then(Command::Inputs(
                        InputsCommand::TakeReading {
                            row: index,
                            point,
                            reading: value,
                        },
                    ));
                }
                let position = InputField::Position { row: index, point };
                let typed = number_edit(ui, state, row, position, kind, &at, POSITION_WIDTH);
                command = std::mem::replace(&mut command, Command::None).then(typed);
                let remove = ui
                    .small_button("Remove")
                    .on_hover_text("Remove this point")
                    .accessible_name(format!("remove {at}"));
                if remove.clicked() {
                    command = Command::Inputs(InputsCommand::RemovePoint { row: index, point });
                }
                ui.end_row();
            }
        });
    if ui
        .button("Add a point")
        .accessible_name(format!("add a point to {name}"))
        .clicked()
    {
        command = Command::Inputs(InputsCommand::AddPoint(index));
    }
    command
}

/// What a row's input reads now, and the position the scene's fit gives for it when the scene
/// maps this row's joint.
fn now_text(state: &EditorState, row: &InputRow, reading_now: Option<u16>) -> String {
    let Some(reading) = reading_now else {
        return "—".to_owned();
    };
    let joint = state
        .scene
        .arm
        .joints
        .iter()
        .position(|joint| joint.name == row.joint);
    let mapped = state
        .scene
        .inputs
        .iter()
        .any(|input| input.joint == row.joint && input.input.to_string() == row.input.trim());
    let fitted = joint
        .filter(|_| mapped)
        .and_then(|joint| Some((joint, *state.device.input_pose.as_ref()?.get(joint)?)));
    match fitted {
        Some((joint, position)) => {
            let (value, unit) = if state.is_prismatic(joint) {
                (position * 1e3, " mm")
            } else {
                (position.to_degrees(), "°")
            };
            format!("{reading} (the scene's fit: {value:.1}{unit})")
        }
        None => reading.to_string(),
    }
}

/// A number's text box, named `{prefix} {label}` (with its unit) for screen readers and tests,
/// red with the problem on hover when it has one, its JSON path, meaning and range otherwise.
fn number_edit(
    ui: &mut Ui,
    state: &EditorState,
    row: &InputRow,
    field: InputField,
    kind: JointKindDoc,
    prefix: &str,
    width: f32,
) -> Command {
    let problem = state.inputs_form.problem_at(&state.scene, field);
    let mut text = row.text(field).to_owned();
    let mut edit = TextEdit::singleline(&mut text).id_salt(("input field", field));
    if problem.is_some() {
        edit = edit.text_color(PROBLEM).background_color(PROBLEM_FIELD);
    }
    let unit = field.unit(kind);
    let name = if unit.is_empty() {
        format!("{prefix} {}", field.label())
    } else {
        format!("{prefix} {} ({unit})", field.label())
    };
    let response = ui.add_sized([width, 20.0], edit).accessible_name(name);
    let response = match problem {
        Some(problem) => response.on_hover_text(problem.to_string()),
        None => response.on_hover_text(format!("{}: {}", field.path(kind), field.about(kind))),
    };
    if response.changed() {
        Command::Inputs(InputsCommand::Type { field, text })
    } else if response.lost_focus() {
        Command::Inputs(InputsCommand::FinishField)
    } else {
        Command::None
    }
}

#[cfg(test)]
mod tests {
    use egui_kittest::Harness;
    use egui_kittest::kittest::{NodeT, Queryable};

    use super::*;
    use crate::editor::sample_scene;
    use crate::scene::{InputDoc, InputPointDoc};

    #[test]
    fn without_a_device_nothing_can_be_taken_and_rows_ask_by_their_number() {
        let mut scene = sample_scene();
        scene.inputs = vec![InputDoc {
            input: 2,
            joint: scene.arm.joints[1].name.clone(),
            points: [(1000, 10.0), (3000, 50.0)]
                .map(|(reading, position)| InputPointDoc { reading, position })
                .to_vec(),
        }];
        let state = EditorState::new(scene, None);
        let mut harness = Harness::new_ui_state(
            |ui, state: &mut (EditorState, Command)| {
                let command = inputs(ui, &state.0, &LinkView::default());
                if command != Command::None {
                    state.1 = command;
                }
            },
            (state, Command::None),
        );
        harness.run();
        assert!(
            harness
                .query_by_label_contains("Connect a device in the Link tab")
                .is_some()
        );
        assert_eq!(
            harness.get_by_label("row 1 input").value().as_deref(),
            Some("2")
        );
        assert_eq!(
            harness
                .get_by_label("row 1 point 2 position (°)")
                .value()
                .as_deref(),
            Some("50")
        );
        assert!(
            harness
                .get_by_label("take the reading for row 1 point 1")
                .accesskit_node()
                .is_disabled()
        );
        harness.get_by_label("remove row 1 point 2").click();
        harness.run();
        assert_eq!(
            harness.state().1,
            Command::Inputs(InputsCommand::RemovePoint { row: 0, point: 1 })
        );
        harness.get_by_label(ADD_INPUT_LABEL).click();
        harness.run();
        assert_eq!(harness.state().1, Command::Inputs(InputsCommand::AddInput));
    }
}
