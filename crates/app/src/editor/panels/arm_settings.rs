//! The arm tab: the arm type, link lengths (or a chain arm's Denavit–Hartenberg rows or joint
//! axes, and its tool placement), masses and payload, gripper pulses, and per joint its limits,
//! servo ratings and calibration, in the scene file's units. Every problem with what was
//! typed is listed with its field path; a field with a problem shows in red and keeps its text,
//! and the arm keeps its last valid settings until the form is valid again.

use egui::{CollapsingHeader, Color32, Grid, RichText, TextEdit, Ui};

use crate::editor::arm_form::{ArmField, ArmTypeChoice};
use crate::editor::command::Command;
use crate::editor::state::EditorState;
use crate::scene::{ArmShape, FileWords};

/// Width of a number field, in points.
const FIELD_WIDTH: f32 = 90.0;

/// Width of a number in the chain geometry's table, in points: narrower, so that a joint's six
/// axis and point numbers fit the tools panel side by side.
const CELL_WIDTH: f32 = 50.0;

/// Colour of a problem.
const PROBLEM: Color32 = Color32::from_rgb(255, 90, 70);

/// Draws the arm tab.
pub fn arm_settings(ui: &mut Ui, state: &EditorState) -> Command {
    let mut command = Command::None;
    let arm = &state.scene.arm;
    ui.heading("Arm settings");
    ui.label(
        "Values in the scene file's units. A value that makes the scene invalid stays here and is \
         listed; the arm keeps its last valid settings until every problem is fixed.",
    );
    let problems = state.arm_form.problems();
    if !problems.is_empty() {
        ui.add_space(4.0);
        ui.label(
            RichText::new(format!(
                "{}, not applied to the arm:",
                super::counted(problems.len(), "problem", "problems")
            ))
            .color(PROBLEM)
            .strong(),
        );
        for problem in problems {
            ui.colored_label(PROBLEM, problem.to_string());
        }
    }
    ui.add_space(6.0);
    // Wrapped: on one line the type choices made the tools panel wider for good.
    ui.horizontal_wrapped(|ui| {
        ui.label("type");
        match &arm.shape {
            ArmShape::Articulated4(_) | ArmShape::Articulated5(_) | ArmShape::Scara(_) => {
                let choices = [
                    (
                        ArmTypeChoice::Articulated4,
                        "articulated, 4 joints",
                        "base yaw, shoulder, elbow, wrist pitch",
                    ),
                    (
                        ArmTypeChoice::Articulated5,
                        "articulated, 5 joints",
                        "adds a wrist roll with a copy of the wrist's servo",
                    ),
                    (
                        ArmTypeChoice::Scara,
                        "horizontal-jointed (SCARA type)",
                        "shoulder, elbow, a sliding lift, wrist roll; lengths carry over, \
                         taught waypoints do not",
                    ),
                ];
                for (choice, label, hint) in choices {
                    let current = matches!(
                        (choice, &arm.shape),
                        (ArmTypeChoice::Articulated4, ArmShape::Articulated4(_))
                            | (ArmTypeChoice::Articulated5, ArmShape::Articulated5(_))
                            | (ArmTypeChoice::Scara, ArmShape::Scara(_))
                    );
                    // From the horizontal-jointed type the 4-joint arm is the one way back.
                    let offered = !(matches!(arm.shape, ArmShape::Scara(_))
                        && choice == ArmTypeChoice::Articulated5);
                    if offered
                        && ui
                            .selectable_label(current, label)
                            .on_hover_text(hint)
                            .clicked()
                        && !current
                    {
                        command = Command::ChangeArmType(choice);
                    }
                }
            }
            ArmShape::ChainDh { .. } => {
                ui.label(format!(
                    "chain of {} joints, standard Denavit–Hartenberg rows",
                    arm.joints.len()
                ));
            }
            ArmShape::ChainOriginAxis { .. } => {
                ui.label(format!(
                    "chain of {} joints, each given by its axis and a point on it",
                    arm.joints.len()
                ));
            }
        }
    });
    let chain = chain_geometry(ui, state);
    command = command.then(chain);
    CollapsingHeader::new("Lengths, masses, gripper")
        .default_open(true)
        .show(ui, |ui| {
            Grid::new("arm fields")
                .num_columns(3)
                .spacing([8.0, 4.0])
                .show(ui, |ui| {
                    for field in ArmField::arm_fields(arm) {
                        let row = field_row(ui, state, field, "");
                        command = std::mem::replace(&mut command, Command::None).then(row);
                    }
                });
        });
    for (index, joint) in arm.joints.iter().enumerate() {
        let fields = ArmField::joint_fields(arm, index);
        let troubled = fields
            .iter()
            .any(|field| state.arm_form.problem_at(*field, arm).is_some());
        let mut title = RichText::new(format!("Joint {} {}", index + 1, joint.name));
        if troubled {
            title = title.color(PROBLEM);
        }
        // A joint with a problem stays open, so the field at fault is in view.
        CollapsingHeader::new(title)
            .id_salt(("arm joint", index))
            .open(troubled.then_some(true))
            .show(ui, |ui| {
                Grid::new(("joint fields", index))
                    .num_columns(3)
                    .spacing([8.0, 4.0])
                    .show(ui, |ui| {
                        let prefix = format!("joint {} ", index + 1);
                        for field in fields {
                            let row = field_row(ui, state, field, &prefix);
                            command = std::mem::replace(&mut command, Command::None).then(row);
                        }
                    });
            });
    }
    command
}

/// A chain arm's geometry as a table: a row per Denavit–Hartenberg row (a, α, d, θ offset) or
/// per joint (axis, point on it), then the tool's shift and turn. Nothing for the built-in types.
fn chain_geometry(ui: &mut Ui, state: &EditorState) -> Command {
    let mut command = Command::None;
    let arm = &state.scene.arm;
    let fields = ArmField::chain_fields(arm);
    if fields.is_empty() {
        return command;
    }
    let troubled = fields
        .iter()
        .any(|field| state.arm_form.problem_at(*field, arm).is_some());
    let mut title = RichText::new("Chain geometry");
    if troubled {
        title = title.color(PROBLEM);
    }
    let (columns, per_joint, word): (&[&str], usize, &str) = match arm.shape {
        ArmShape::ChainDh { .. } => (
            &["row", "kind", "a (mm)", "α (°)", "d (mm)", "θ offset (°)"],
            4,
            "row",
        ),
        _ => (
            &[
                "joint",
                "kind",
                "axis x",
                "axis y",
                "axis z",
                "point x (mm)",
                "point y (mm)",
                "point z (mm)",
            ],
            6,
            "joint",
        ),
    };
    let kinds = arm.shape.joint_kinds();
    CollapsingHeader::new(title)
        .id_salt("chain geometry")
        .default_open(true)
        .open(troubled.then_some(true))
        .show(ui, |ui| {
            Grid::new("chain rows")
                .num_columns(columns.len())
                .spacing([6.0, 4.0])
                .show(ui, |ui| {
                    for column in columns {
                        ui.strong(*column);
                    }
                    ui.end_row();
                    for (index, kind) in kinds.iter().enumerate() {
                        ui.label(format!("{}", index + 1));
                        ui.label(kind.word());
                        let prefix = format!("{word} {} ", index + 1);
                        for field in fields.iter().skip(index * per_joint).take(per_joint) {
                            let cell = number_edit(ui, state, *field, &prefix, CELL_WIDTH);
                            command = std::mem::replace(&mut command, Command::None).then(cell);
                        }
                        ui.end_row();
                    }
                });
            if matches!(arm.shape, ArmShape::ChainOriginAxis { .. }) {
                ui.label("Axes are directions of any length; points on them are in mm.");
            }
            let tool = match arm.shape {
                ArmShape::ChainDh { .. } => "Tool point in the frame after the last row",
                _ => "Tool frame in the base frame, every joint at zero",
            };
            ui.label(format!("{tool}, turns about fixed axes:"));
            Grid::new("chain tool")
                .num_columns(4)
                .spacing([6.0, 4.0])
                .show(ui, |ui| {
                    let tool_fields = fields.iter().skip(kinds.len() * per_joint);
                    for (index, field) in tool_fields.enumerate() {
                        if index % 3 == 0 {
                            ui.label(if index == 0 {
                                "shift x, y, z (mm)"
                            } else {
                                "turn x, y, z (°)"
                            });
                        }
                        let cell = number_edit(ui, state, *field, "", CELL_WIDTH);
                        command = std::mem::replace(&mut command, Command::None).then(cell);
                        if index % 3 == 2 {
                            ui.end_row();
                        }
                    }
                });
        });
    command
}

/// One field: its name, its text (red with the problem on hover when it has one), its unit.
fn field_row(ui: &mut Ui, state: &EditorState, field: ArmField, prefix: &str) -> Command {
    let arm = &state.scene.arm;
    ui.label(field.label(arm));
    let command = number_edit(ui, state, field, prefix, FIELD_WIDTH);
    ui.label(field.unit(arm));
    ui.end_row();
    command
}

/// A field's text box alone, `width` points wide, named `{prefix}{label} ({unit})` for screen
/// readers and tests, red with the problem on hover when it has one, its JSON path, meaning and
/// allowed range on hover otherwise.
fn number_edit(
    ui: &mut Ui,
    state: &EditorState,
    field: ArmField,
    prefix: &str,
    width: f32,
) -> Command {
    let arm = &state.scene.arm;
    let label = field.label(arm);
    let unit = field.unit(arm);
    let problem = state.arm_form.problem_at(field, arm);
    let mut text = state.arm_form.text(field, arm);
    let mut edit = TextEdit::singleline(&mut text).id_salt(("arm field", field));
    if problem.is_some() {
        edit = edit.text_color(PROBLEM);
    }
    let name = if unit.is_empty() {
        format!("{prefix}{label}")
    } else {
        format!("{prefix}{label} ({unit})")
    };
    let response = ui.add_sized([width, 20.0], edit).accessible_name(name);
    let response = match problem {
        Some(problem) => response.on_hover_text(problem.to_string()),
        None => response.on_hover_text(format!("{}: {}", field.path(arm), field.about(arm))),
    };
    if response.changed() {
        Command::EditArmField { field, text }
    } else if response.lost_focus() {
        Command::FinishArmField
    } else {
        Command::None
    }
}
