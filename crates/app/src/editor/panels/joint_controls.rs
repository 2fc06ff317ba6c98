//! Joint controls: per joint a slider and a number (degrees, or mm for a sliding joint), the
//! pulse width from its calibration with the rounding error, the torque use; the gripper.

use egui::{Color32, DragValue, RichText, Slider, Ui};

use crate::editor::command::Command;
use crate::editor::state::EditorState;
use crate::scene::{GripperState, JointKindDoc, position_from_file_unit, position_to_file_unit};

/// The pulse width (µs) for a joint position (rad or m), rounded to whole µs as a servo
/// controller sends it, and the position error that rounding leaves, in the file's unit
/// (degrees or mm).
pub fn rounded_pulse(
    calibration: &armwright_kinematics::Calibration,
    kind: JointKindDoc,
    position: f64,
) -> (f64, f64) {
    let exact = calibration.pulse_us(position);
    let rounded = exact.round();
    let error = calibration.position(rounded) - position;
    (rounded, position_to_file_unit(kind, error))
}

/// Draws the joint controls.
pub fn joint_controls(ui: &mut Ui, state: &EditorState) -> Command {
    let mut command = Command::None;
    ui.heading("Joints");
    let Some(arm) = state.arm() else {
        ui.colored_label(Color32::from_rgb(255, 80, 60), "the arm cannot be built");
        return command;
    };
    let kinds = state.scene.arm.shape.joint_kinds();
    for (index, (doc, joint)) in state.scene.arm.joints.iter().zip(arm.joints()).enumerate() {
        let kind = kinds.get(index).copied().unwrap_or(JointKindDoc::Revolute);
        let unit = if kind == JointKindDoc::Prismatic {
            " mm"
        } else {
            "°"
        };
        let Some(&position) = state.pose.get(index) else {
            continue;
        };
        let mut value = position_to_file_unit(kind, position);
        let before = value;
        ui.add_space(4.0);
        ui.label(RichText::new(format!("{} {}", index + 1, doc.name)).strong());
        ui.horizontal(|ui| {
            ui.spacing_mut().slider_width = 150.0;
            ui.add(Slider::new(&mut value, doc.min..=doc.max).show_value(false))
                .accessible_name(format!("{} position", doc.name));
            ui.add(
                DragValue::new(&mut value)
                    .range(doc.min..=doc.max)
                    .speed(0.2)
                    .max_decimals(2)
                    .suffix(unit),
            );
        });
        if value != before {
            command = Command::SetJoint {
                joint: index,
                position: position_from_file_unit(kind, value),
            };
        }
        let (pulse, error) = rounded_pulse(&joint.calibration, kind, position);
        let outside =
            pulse < joint.calibration.pulse_min_us || pulse > joint.calibration.pulse_max_us;
        let unit_short = if kind == JointKindDoc::Prismatic {
            "mm"
        } else {
            "°"
        };
        let pulse_text = format!("pulse width {pulse:.0} µs (rounding {error:+.3}{unit_short})");
        ui.horizontal(|ui| {
            if outside {
                ui.colored_label(
                    Color32::from_rgb(255, 80, 60),
                    format!("{pulse_text} — outside the servo's range"),
                );
            } else {
                ui.label(pulse_text);
            }
        });
        if let Some(share) = state.torque_use.get(index) {
            let colour = if *share > 1.0 {
                Color32::from_rgb(255, 80, 60)
            } else if *share > 0.8 {
                Color32::from_rgb(230, 159, 0)
            } else {
                ui.visuals().text_color()
            };
            ui.colored_label(
                colour,
                format!("torque use {:.0} % of rated", share * 100.0),
            );
        }
    }
    ui.add_space(8.0);
    ui.separator();
    ui.label(RichText::new("Gripper").strong());
    ui.horizontal(|ui| {
        let pulses = state.scene.arm.gripper.as_ref();
        let open = match pulses {
            Some(g) => format!("open ({} µs)", g.open_pulse_us),
            None => "open".into(),
        };
        let closed = match pulses {
            Some(g) => format!("closed ({} µs)", g.closed_pulse_us),
            None => "closed".into(),
        };
        if ui
            .selectable_label(state.gripper == GripperState::Open, open)
            .clicked()
        {
            command = Command::SetGripper(GripperState::Open);
        }
        if ui
            .selectable_label(state.gripper == GripperState::Closed, closed)
            .clicked()
        {
            command = Command::SetGripper(GripperState::Closed);
        }
    });
    command
}

#[cfg(test)]
mod tests {
    use armwright_kinematics::Calibration;
    use egui_kittest::Harness;
    use egui_kittest::kittest::Queryable;

    use super::*;
    use crate::editor::sample::sample_scene;

    #[test]
    fn rounding_error_is_what_the_rounded_pulse_gives_back() {
        // 1800 µs over 180°: 10 µs per degree (worked by hand).
        let calibration = Calibration {
            position_a: (-90f64).to_radians(),
            pulse_a_us: 600.0,
            position_b: 90f64.to_radians(),
            pulse_b_us: 2400.0,
            pulse_min_us: 500.0,
            pulse_max_us: 2500.0,
        };
        let (pulse, error) =
            rounded_pulse(&calibration, JointKindDoc::Revolute, 10.03f64.to_radians());
        assert_eq!(pulse, 1600.0);
        assert!((error - -0.03).abs() < 1e-9, "{error}");
    }

    #[test]
    fn choosing_closed_asks_to_close_the_gripper() {
        let mut harness = Harness::new_ui_state(
            |ui, (state, commands): &mut (EditorState, Vec<Command>)| {
                let command = joint_controls(ui, state);
                if command != Command::None {
                    commands.push(command);
                }
            },
            (EditorState::new(sample_scene(), None), Vec::new()),
        );
        harness.get_by_label_contains("closed").click();
        harness.run();
        assert!(
            harness
                .state()
                .1
                .contains(&Command::SetGripper(GripperState::Closed))
        );
    }
}
