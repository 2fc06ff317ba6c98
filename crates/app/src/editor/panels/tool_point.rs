//! The tool point: where it is, the tool angle held while dragging, whether the last drag
//! reached its target, and the other branches the user may switch to.

use armwright_kinematics::ArmType;
use egui::{Color32, DragValue, RichText, Ui};

use crate::editor::command::Command;
use crate::editor::state::{EditorState, ReachStatus};

/// Draws the tool-point panel.
pub fn tool_point(ui: &mut Ui, state: &EditorState) -> Command {
    let mut command = Command::None;
    ui.heading("Tool point");
    if let Some(point) = state.tool_point() {
        ui.label(format!(
            "x {:.1} mm   y {:.1} mm   z {:.1} mm",
            point.x * 1e3,
            point.y * 1e3,
            point.z * 1e3
        ));
    }
    let angle_name = match state.arm().map(|arm| arm.arm_type()) {
        Some(ArmType::Scara(_)) => "tool yaw",
        _ => "tool pitch",
    };
    ui.horizontal(|ui| {
        ui.label(angle_name);
        let mut degrees = state.tool_angle.to_degrees();
        if ui
            .add(
                DragValue::new(&mut degrees)
                    .speed(0.5)
                    .max_decimals(1)
                    .suffix("°"),
            )
            .on_hover_text("held while dragging; the wheel over the tool point changes it too")
            .changed()
        {
            command = Command::SetToolAngle(degrees.to_radians());
        }
    });
    if let Some(budget) = &state.accuracy {
        ui.label(format!(
            "accuracy budget: worst ±{:.2} mm, RSS ±{:.2} mm",
            budget.worst * 1e3,
            budget.rss * 1e3
        ))
        .on_hover_text("from each servo's deadband and backlash at this pose");
    }
    match (&state.reach, &state.branch) {
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
    if !state.branch_choices.is_empty() {
        ui.label("other branches reaching the target:");
        for (index, choice) in state.branch_choices.iter().enumerate() {
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
    fn an_unreachable_target_is_said_plainly() {
        let mut state = EditorState::new(sample_scene(), None);
        state.reach = ReachStatus::OutOfReach { short_by_mm: 12.25 };
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
