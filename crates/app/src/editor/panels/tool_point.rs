//! The tool point: where it is, typed or nudged (x, y, z in mm and the tool angle, moving the arm
//! by the same inverse kinematics as a drag), the tool angle held while dragging, whether the
//! last move reached its target, and the other branches the user may switch to.

use armwright_kinematics::ArmType;
use egui::{Color32, DragValue, RichText, Ui};

use crate::editor::command::Command;
use crate::editor::state::{EditorState, ReachStatus};

/// The keys that nudge the tool point, and what each does, as the panel lists them.
pub const NUDGE_KEYS: &str = "nudge keys (no field focused): Left/Right x, Down/Up y, \
                              Page Down/Up z; 1 mm a press, 10 mm with Shift";

/// Draws the tool-point panel.
pub fn tool_point(ui: &mut Ui, state: &EditorState) -> Command {
    let mut command = Command::None;
    ui.heading("Tool point");
    let angle_name = match state.arm().map(|arm| arm.arm_type()) {
        Some(ArmType::Scara(_)) => "tool yaw",
        _ => "tool pitch",
    };
    egui::Grid::new("tool point fields")
        .num_columns(4)
        .spacing([6.0, 4.0])
        .show(ui, |ui| {
            if let Some(point) = state.tool_point() {
                let metres = [point.x, point.y, point.z];
                for (axis, name) in ["x", "y", "z"].into_iter().enumerate() {
                    ui.label(name);
                    let mut mm = metres[axis] * 1e3;
                    let response = ui
                        .add(
                            DragValue::new(&mut mm)
                                .speed(0.5)
                                .max_decimals(1)
                                .suffix(" mm"),
                        )
                        .accessible_name(format!("tool point {name} (mm)"))
                        .on_hover_text("type a position and press Enter, or drag the number");
                    if response.changed() && mm.is_finite() {
                        let mut target = metres;
                        target[axis] = mm * 1e-3;
                        command = Command::DragToolPoint { target };
                    }
                    if axis == 1 {
                        ui.end_row();
                    }
                }
            }
            ui.label(angle_name);
            let mut degrees = state.tool_angle.to_degrees();
            let response = ui
                .add(
                    DragValue::new(&mut degrees)
                        .speed(0.5)
                        .max_decimals(1)
                        .suffix("°"),
                )
                .accessible_name(format!("{angle_name} (°)"))
                .on_hover_text(
                    "moves the arm to this angle at the same tool point and is held while \
                     dragging; the wheel over the tool point changes it too",
                );
            if response.changed() && degrees.is_finite() {
                let set = Command::SetToolAngle(degrees.to_radians());
                command = match state.tool_point() {
                    Some(point) => set.then(Command::DragToolPoint {
                        target: [point.x, point.y, point.z],
                    }),
                    None => set,
                };
            }
            ui.end_row();
        });
    ui.label(RichText::new(NUDGE_KEYS).small().weak());
    if let Some(budget) = &state.readout.accuracy {
        ui.label(format!(
            "accuracy budget: worst ±{:.2} mm, RSS ±{:.2} mm",
            budget.worst * 1e3,
            budget.rss * 1e3
        ))
        .on_hover_text("from each servo's deadband and backlash at this pose");
    }
    match (&state.readout.reach, &state.readout.branch) {
        (ReachStatus::Reached, Some(branch)) => {
            ui.colored_label(
                Color32::LIGHT_GREEN,
                format!("reached, branch \"{branch}\""),
            );
        }
        (ReachStatus::Idle, _) => {
            ui.label("drag the tool point in either view");
        }
        _ => {}
    }
    for problem in state.reach_problems() {
        ui.label(
            RichText::new(problem)
                .strong()
                .color(Color32::from_rgb(255, 110, 60)),
        );
    }
    if !state.readout.branch_choices.is_empty() {
        ui.label("other branches reaching the target:");
        for (index, choice) in state.readout.branch_choices.iter().enumerate() {
            if ui
                .button(format!("switch to \"{}\"", choice.label))
                .clicked()
            {
                command = Command::ChooseBranch(index);
            }
        }
    }
    command
}

#[cfg(test)]
mod tests {
    use egui_kittest::Harness;
    use egui_kittest::kittest::Queryable;

    use super::*;
    use crate::editor::sample::sample_scene;

    #[test]
    fn a_typed_position_moves_the_tool_point_there_by_inverse_kinematics() {
        let mut harness = Harness::new_ui_state(
            |ui, state: &mut EditorState| {
                let command = tool_point(ui, state);
                let (mut link, _requests) = crate::editor::estop::ChannelStopLink::new();
                crate::editor::command::apply(state, command, &mut link, 0, &mut Vec::new());
            },
            EditorState::new(sample_scene(), None),
        );
        harness.run();
        let start = harness.state().tool_point().expect("tool point");
        let pitch = harness.state().tool_angle;
        let x_mm = start.x * 1e3 + 10.0;
        harness
            .get_by_label("tool point x (mm)")
            .set_value_accesskit(x_mm);
        harness.run();
        let state = harness.state();
        assert_eq!(state.readout.reach, ReachStatus::Reached);
        let now = state.tool_point().expect("tool point");
        assert!((now.x * 1e3 - x_mm).abs() < 0.01, "x {} mm", now.x * 1e3);
        assert!((now.y - start.y).abs() < 1e-5 && (now.z - start.z).abs() < 1e-5);
        assert!((state.tool_angle - pitch).abs() < 1e-12);
        // Far out: the arm stays and the panel says by how much, as a drag does.
        harness
            .get_by_label("tool point x (mm)")
            .set_value_accesskit(2000.0);
        harness.run();
        assert!(matches!(
            harness.state().readout.reach,
            ReachStatus::OutOfReach { .. }
        ));
        assert!(harness.query_by_label_contains("OUT OF REACH by").is_some());
    }

    #[test]
    fn an_unreachable_target_is_said_plainly() {
        let mut state = EditorState::new(sample_scene(), None);
        state.readout.reach = ReachStatus::OutOfReach { short_by_mm: 12.25 };
        let mut harness = Harness::new_ui_state(
            |ui, state: &mut EditorState| {
                let _ = tool_point(ui, state);
            },
            state,
        );
        harness.run();
        assert!(harness.query_by_label("OUT OF REACH by 12.2 mm").is_some());
    }
}
