//! Joint controls: per joint a slider and a number (degrees, or mm for a sliding joint), the
//! pulse width from its calibration with the rounding error, the torque use; the heaviest payload
//! the pose holds; the gripper.

use armwright_kinematics::{Arm, Calibration, SentPulse};
use egui::{Color32, DragValue, RichText, Slider, Ui};

use crate::editor::command::Command;
use crate::editor::state::EditorState;
use crate::scene::{GripperState, JointKindDoc, position_from_file_unit, position_to_file_unit};

/// The pulse width sent for a joint position (rad or m) by the pulse rule
/// ([`Calibration::sent_pulse`]: rounded to `pulse_unit_us`, the device's unit in µs, and
/// limited to the calibrated range), and the position error it leaves, in the file's unit
/// (degrees or mm).
pub fn shown_pulse(
    calibration: &Calibration,
    kind: JointKindDoc,
    position: f64,
    pulse_unit_us: f64,
) -> (SentPulse, f64) {
    let sent = calibration.sent_pulse(position, pulse_unit_us);
    let error = calibration.position(sent.pulse_us) - position;
    (sent, position_to_file_unit(kind, error))
}

/// The heaviest payload the current pose holds within the derated stall torque, short enough
/// to sit beside the panel's heading: "payload ≤ 184 g (elbow)"; the hover gives it as `pose`
/// prints it ("heaviest payload 184 g at the tool point (set by elbow)").
fn payload_text(state: &EditorState, arm: &Arm) -> Option<(String, String)> {
    let limit = state.readout.max_payload?;
    Some(match limit.joint.and_then(|j| arm.joints().get(j)) {
        Some(joint) if limit.mass.is_finite() => (
            format!("payload ≤ {:.0} g ({})", limit.mass * 1e3, joint.name),
            format!(
                "heaviest payload {:.0} g at the tool point (set by {})",
                limit.mass * 1e3,
                joint.name
            ),
        ),
        _ => (
            "payload: any".to_string(),
            "heaviest payload: no joint's torque depends on it".to_string(),
        ),
    })
}

fn payload_line(ui: &mut Ui, state: &EditorState, arm: &Arm) {
    let Some((short, long)) = payload_text(state, arm) else {
        return;
    };
    let over = state
        .readout
        .max_payload
        .is_some_and(|limit| limit.mass < arm.payload_mass());
    if over {
        ui.colored_label(Color32::from_rgb(255, 80, 60), short)
            .on_hover_text(format!(
                "{long}: less than the arm's payload, a joint is over its derated torque"
            ));
    } else {
        ui.label(short).on_hover_text(format!(
            "{long}, holding this pose with every joint within {:.0} % of its stall torque \
             (timing.torque_derating_pct)",
            state.scene.timing.torque_derating_pct
        ));
    }
}

/// Draws the joint controls; pulse widths are rounded to `pulse_unit_us` (µs), the connected
/// device's unit.
pub fn joint_controls(ui: &mut Ui, state: &EditorState, pulse_unit_us: f64) -> Command {
    let mut command = Command::None;
    let Some(arm) = state.arm() else {
        ui.heading("Joints");
        ui.colored_label(Color32::from_rgb(255, 80, 60), "the arm cannot be built");
        return command;
    };
    ui.horizontal(|ui| {
        ui.heading("Joints");
        payload_line(ui, state, arm);
    });
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
        let (sent, error) = shown_pulse(&joint.calibration, kind, position, pulse_unit_us);
        let unit_short = if kind == JointKindDoc::Prismatic {
            "mm"
        } else {
            "°"
        };
        let pulse_text = format!(
            "pulse width {} µs (rounding {error:+.3}{unit_short})",
            sent.pulse_us
        );
        ui.horizontal(|ui| {
            if sent.clamped {
                ui.colored_label(
                    Color32::from_rgb(255, 80, 60),
                    format!("{pulse_text} — limited to the servo's range"),
                );
            } else {
                ui.label(pulse_text);
            }
        });
        if let Some(share) = state.readout.torque_use.get(index) {
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
    use armwright_kinematics::DEFAULT_PULSE_UNIT_US;
    use egui_kittest::Harness;
    use egui_kittest::kittest::Queryable;

    use super::*;
    use crate::editor::sample::sample_scene;

    #[test]
    fn the_shown_pulse_is_rounded_to_the_unit_and_limited_to_the_range() {
        // 1800 µs over 180°: 10 µs per degree (worked by hand).
        let calibration = Calibration {
            position_a: (-90f64).to_radians(),
            pulse_a_us: 600.0,
            position_b: 90f64.to_radians(),
            pulse_b_us: 2400.0,
            pulse_min_us: 500.0,
            pulse_max_us: 2500.0,
        };
        let (sent, error) = shown_pulse(
            &calibration,
            JointKindDoc::Revolute,
            10.03f64.to_radians(),
            DEFAULT_PULSE_UNIT_US,
        );
        assert_eq!((sent.pulse_us, sent.clamped), (1600.0, false));
        assert!((error - -0.03).abs() < 1e-9, "{error}");
        // A 2 µs device unit: 1600.3 µs is sent as 1600, 0.03° short.
        let (sent, error) = shown_pulse(
            &calibration,
            JointKindDoc::Revolute,
            10.03f64.to_radians(),
            2.0,
        );
        assert_eq!(sent.pulse_us, 1600.0);
        assert!((error - -0.03).abs() < 1e-9, "{error}");
        // 200° asks for 3500 µs: limited to the 2500 µs end, the error says how far (100°).
        let (sent, error) = shown_pulse(
            &calibration,
            JointKindDoc::Revolute,
            200f64.to_radians(),
            DEFAULT_PULSE_UNIT_US,
        );
        assert_eq!((sent.pulse_us, sent.clamped), (2500.0, true));
        assert!((error - -100.0).abs() < 1e-9, "{error}");
    }

    #[test]
    fn joint_controls_pose_and_stream_show_and_send_the_same_pulse() {
        use armwright_link::{SimDevice, SimDeviceConfig, device_setpoints};
        use armwright_trajectory::Sample;

        use crate::pose_report::evaluate;
        use crate::scene::build_arm;

        let scene = sample_scene();
        let arm = build_arm(&scene.arm).unwrap();
        let kinds = scene.arm.shape.joint_kinds();
        let device = SimDevice::new(SimDeviceConfig::default()).info();
        let home: Vec<f64> = arm.joints().iter().map(|joint| joint.home).collect();
        let (mut compared, mut clamped) = (0, 0);
        for (index, joint) in arm.joints().iter().enumerate() {
            // Every 0.05° (half a µs on these 10 µs/° servos) from 30° below the joint's lower
            // limit to 30° above its upper one, so that both ends of the pulse range are met.
            let (low, high) = (joint.min.to_degrees() - 30.0, joint.max.to_degrees() + 30.0);
            let steps = ((high - low) / 0.05).round() as usize;
            for step in 0..=steps {
                let angle = (low + step as f64 * 0.05).to_radians();
                let mut positions = home.clone();
                positions[index] = angle;
                let (shown, _) = shown_pulse(
                    &joint.calibration,
                    kinds[index],
                    angle,
                    DEFAULT_PULSE_UNIT_US,
                );
                let pose = evaluate(&scene, &arm, &positions).unwrap();
                let sample = Sample {
                    time: 0.0,
                    positions,
                    gripper_closed: false,
                };
                let streamed = device_setpoints(&arm, [sample], &device).unwrap();
                let sent_us = device.us_from_units(streamed.values[0].as_slice()[index]);
                assert_eq!(shown, pose.pulse[index], "joint {index} at {angle} rad");
                assert_eq!(shown.pulse_us, sent_us, "joint {index} at {angle} rad");
                assert_eq!(
                    shown.clamped,
                    streamed.clamped == 1,
                    "joint {index} at {angle} rad"
                );
                compared += 1;
                clamped += usize::from(shown.clamped);
            }
        }
        assert!(
            compared > 4000 && clamped > 100,
            "{compared} angles, {clamped} clamped"
        );
    }

    #[test]
    fn choosing_closed_asks_to_close_the_gripper() {
        let mut harness = Harness::new_ui_state(
            |ui, (state, commands): &mut (EditorState, Vec<Command>)| {
                let command = joint_controls(ui, state, DEFAULT_PULSE_UNIT_US);
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

    #[test]
    fn the_heaviest_payload_is_the_one_pose_gives_and_follows_the_slider() {
        use crate::editor::command::apply;
        use crate::editor::estop::ChannelStopLink;
        use crate::pose_report::evaluate;

        let mut harness = Harness::new_ui_state(
            |ui, (state, commands): &mut (EditorState, Vec<Command>)| {
                let command = joint_controls(ui, state, DEFAULT_PULSE_UNIT_US);
                if command != Command::None {
                    commands.push(command);
                }
            },
            (EditorState::new(sample_scene(), None), Vec::new()),
        );
        // What `pose --json` gives (`max_payload_g`) for the pose shown, named by the joint
        // that sets it.
        let shown = |harness: &Harness<'_, (EditorState, Vec<Command>)>| {
            let (state, _) = harness.state();
            let arm = state.arm().cloned().expect("an arm");
            let report = evaluate(&state.scene, &arm, &state.pose).expect("the pose evaluates");
            let joint = report.payload_joint.expect("a joint sets it");
            let text = format!(
                "payload ≤ {:.0} g ({})",
                report.max_payload_kg * 1e3,
                arm.joints()[joint].name
            );
            assert!(
                harness.query_by_label(&text).is_some(),
                "no \"{text}\" at {:?}",
                state.pose
            );
            report.max_payload_kg
        };
        let before = shown(&harness);
        // Move the shoulder's slider with the keyboard, as a drag does, and apply what it asks.
        let name = harness.state().0.scene.arm.joints[1].name.clone();
        harness.get_by_label(&format!("{name} position")).focus();
        harness.run();
        for _ in 0..20 {
            harness.key_press(egui::Key::ArrowLeft);
        }
        harness.run();
        let commands = std::mem::take(&mut harness.state_mut().1);
        assert!(
            commands
                .iter()
                .any(|c| matches!(c, Command::SetJoint { joint: 1, .. })),
            "{commands:?}"
        );
        let (mut link, _requests) = ChannelStopLink::new();
        for command in commands {
            apply(
                &mut harness.state_mut().0,
                command,
                &mut link,
                1,
                &mut Vec::new(),
            );
        }
        harness.run();
        let after = shown(&harness);
        assert!(
            (after - before).abs() > 1e-3,
            "{before} kg, then {after} kg"
        );
    }
}
