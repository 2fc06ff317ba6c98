//! The calibration panel: pick a joint, hold it at a pulse on the connected device and step
//! that pulse, type the position read off the protractor, see the fit of the points, look for
//! the deadband, and apply the fit to the scene.

use egui::{Color32, Grid, Key, RichText, Ui};

use armwright_kinematics::FitShape;

use crate::calibration_fit::si_per_file_unit;
use crate::editor::calibration::{
    CalibrationCommand, DEADBAND_STEP_S, DeadbandSearch, PULSE_STEPS_US, SearchLeg,
};
use crate::editor::command::Command;
use crate::editor::device::LinkView;
use crate::editor::estop::StopState;
use crate::editor::state::EditorState;
use crate::scene::JointKindDoc;

use super::link::caution_box;

/// The button the person presses when the joint moved during the deadband search.
pub const MOVED_LABEL: &str = "It moved";

/// The keys that step the held pulse while the Calibrate tab is shown and no field has the
/// keyboard: key and step in µs.
pub const STEP_KEYS: [(Key, f64); 6] = [
    (Key::Minus, -1.0),
    (Key::Equals, 1.0),
    (Key::OpenBracket, -10.0),
    (Key::CloseBracket, 10.0),
    (Key::Comma, -50.0),
    (Key::Period, 50.0),
];

/// The keys of [`STEP_KEYS`] as the panel lists them.
const STEP_KEY_WORDS: &str = "Keys: − and = step 1 µs, [ and ] 10 µs, comma and full stop 50 µs.";

/// The pulse step asked for by the keys pressed this frame, in µs (consumed), 0 for none.
pub(crate) fn step_keys(input: &mut egui::InputState) -> f64 {
    STEP_KEYS
        .iter()
        .map(|&(key, step_us)| {
            f64::from(input.count_and_consume_key(egui::Modifiers::NONE, key) as u32) * step_us
        })
        .sum()
}

/// Draws the calibration panel.
pub fn calibration(ui: &mut Ui, state: &EditorState, view: &LinkView) -> Command {
    let mut command = Command::None;
    let session = &state.calibration;
    ui.heading("Calibrate a joint");
    ui.label(
        "Print the protractor (armwright protractor, at 100 %) and fix it behind the joint. Hold \
         the joint at a pulse, read its angle, record it; step and repeat across its range. Two \
         points give a line, four or more show whether it bows.",
    );
    let names: Vec<&str> = state
        .scene
        .arm
        .joints
        .iter()
        .map(|joint| joint.name.as_str())
        .collect();
    let joint = session.joint;
    let Some(name) = names.get(joint).copied() else {
        ui.label("The arm has no joint to calibrate.");
        return command;
    };
    egui::ComboBox::from_label("joint")
        .selected_text(name)
        .show_ui(ui, |ui| {
            for (index, other) in names.iter().enumerate() {
                if ui.selectable_label(index == joint, *other).clicked() && index != joint {
                    command = Command::Calibration(CalibrationCommand::ChooseJoint(index));
                }
            }
        });
    let kind = state
        .scene
        .arm
        .shape
        .joint_kinds()
        .get(joint)
        .copied()
        .unwrap_or(JointKindDoc::Revolute);
    let (symbol, per) = match kind {
        JointKindDoc::Revolute => ("°", "degree"),
        JointKindDoc::Prismatic => (" mm", "mm"),
    };
    ui.separator();
    if view.connection.is_none() {
        ui.label("Connect a device in the Link tab to step this joint's pulse.");
    }
    if !state.device.caution_acknowledged
        && caution_box(
            ui,
            "The first pulse wakes this joint, and any other joint whose servo is limp at \
                     the editor's pose: a limp servo jumps to its first pulse at its own top speed.",
        )
    {
        command = Command::AcknowledgeCaution;
    }
    if matches!(state.stop, StopState::Latched { .. }) {
        ui.colored_label(
            Color32::from_rgb(255, 120, 80),
            "The emergency stop is latched: reset it (top bar) before stepping.",
        );
    }
    let may_move = view.connection.is_some()
        && state.device.caution_acknowledged
        && matches!(state.stop, StopState::Clear);
    command = command.then(pulse_controls(ui, state, may_move));
    ui.separator();
    command = command.then(points(ui, state, symbol));
    ui.separator();
    fit_summary(ui, state, kind, symbol, per);
    ui.separator();
    command = command.then(deadband(ui, state, may_move));
    ui.separator();
    let fitted = matches!(session.fit, Some(Ok(_)));
    let found = matches!(session.deadband, DeadbandSearch::Found { .. });
    let what = if found {
        "the fitted line and the deadband found"
    } else {
        "the fitted line"
    };
    if ui
        .add_enabled(fitted, egui::Button::new("Apply to the scene"))
        .on_hover_text(format!(
            "Writes {what} into joint \"{name}\" as one undo step."
        ))
        .clicked()
    {
        command = command.then(Command::Calibration(CalibrationCommand::Apply));
    }
    command
}

fn pulse_controls(ui: &mut Ui, state: &EditorState, may_move: bool) -> Command {
    let mut command = Command::None;
    let session = &state.calibration;
    let pose_pulse = state
        .arm()
        .and_then(|arm| arm.joints().get(session.joint))
        .zip(state.pose.get(session.joint))
        .map(|(spec, &position)| spec.calibration.pulse_us(position));
    Grid::new("calibration pulse")
        .num_columns(2)
        .show(ui, |ui| {
            ui.label("pulse held");
            ui.label(match session.held_pulse_us {
                Some(pulse) => format!("{pulse:.1} µs"),
                None => "none yet: this tool has sent no pulse".to_owned(),
            });
            ui.end_row();
            if let Some((low, high)) = session.safe_range_us(&state.scene) {
                ui.label("safe range");
                ui.label(format!(
                    "{low:.0}–{high:.0} µs (the servo's, within the device's)"
                ));
                ui.end_row();
            }
        });
    if let Some(limited) = &session.limited {
        ui.colored_label(Color32::from_rgb(230, 159, 0), limited);
    }
    if let Some(pulse) = pose_pulse {
        let label = format!("Hold at the editor's pose ({pulse:.0} µs)");
        if ui.add_enabled(may_move, egui::Button::new(label)).clicked() {
            command = Command::Calibration(CalibrationCommand::HoldAtPose);
        }
    }
    let may_step = may_move && session.held_pulse_us.is_some() && !session.searching();
    ui.horizontal(|ui| {
        let steps = PULSE_STEPS_US
            .iter()
            .rev()
            .map(|step| -step)
            .chain(PULSE_STEPS_US);
        for step in steps {
            if ui
                .add_enabled(may_step, egui::Button::new(format!("{step:+.0} µs")))
                .clicked()
            {
                command = Command::Calibration(CalibrationCommand::Step(step));
            }
        }
    });
    ui.label(RichText::new(STEP_KEY_WORDS).small());
    command
}

fn points(ui: &mut Ui, state: &EditorState, symbol: &str) -> Command {
    let mut command = Command::None;
    let session = &state.calibration;
    let kind_si = si_per_shown_unit(state);
    let residuals = match &session.fit {
        Some(Ok(fit)) => fit.residuals.iter().map(|r| r / kind_si).collect(),
        _ => Vec::new(),
    };
    ui.label(RichText::new("Points").strong());
    if session.points.is_empty() {
        ui.label("none yet");
    } else {
        Grid::new("calibration points")
            .num_columns(4)
            .striped(true)
            .show(ui, |ui| {
                ui.label("pulse");
                ui.label("read");
                ui.label("off the fit");
                ui.label("");
                ui.end_row();
                for (index, point) in session.points.iter().enumerate() {
                    ui.label(format!("{:.1} µs", point.pulse_us));
                    ui.label(format!("{:.2}{symbol}", point.position));
                    ui.label(
                        residuals
                            .get(index)
                            .map_or(String::new(), |r: &f64| format!("{r:+.2}{symbol}")),
                    );
                    let remove = ui.button("Remove").on_hover_text("Remove this point");
                    let remove = remove.accessible_name(format!("remove point {}", index + 1));
                    if remove.clicked() {
                        command = Command::Calibration(CalibrationCommand::Remove(index));
                    }
                    ui.end_row();
                }
            });
    }
    let mut typed = session.typed.clone();
    ui.horizontal(|ui| {
        let field = ui
            .add(
                egui::TextEdit::singleline(&mut typed)
                    .id_salt("calibration position")
                    .hint_text(format!("position read ({})", symbol.trim()))
                    .desired_width(110.0),
            )
            .accessible_name("position read");
        if field.changed() {
            command = Command::Calibration(CalibrationCommand::TypePosition(typed.clone()));
        }
        let held = session.held_pulse_us.is_some();
        let entered = field.lost_focus() && ui.input(|input| input.key_pressed(Key::Enter));
        let label = match session.held_pulse_us {
            Some(pulse) => format!("Record at {pulse:.1} µs"),
            None => "Record".to_owned(),
        };
        let clicked = ui
            .add_enabled(held && !typed.trim().is_empty(), egui::Button::new(label))
            .clicked();
        if (entered && held) || clicked {
            let typed_now = std::mem::replace(&mut command, Command::None);
            command = typed_now.then(Command::Calibration(CalibrationCommand::Record));
        }
    });
    command
}

fn fit_summary(ui: &mut Ui, state: &EditorState, kind: JointKindDoc, symbol: &str, per: &str) {
    let session = &state.calibration;
    let si = si_per_file_unit(kind);
    ui.label(RichText::new("Fit").strong());
    match &session.fit {
        None => {
            ui.label("Record at least two points at different pulses.");
        }
        Some(Err(reason)) => {
            ui.colored_label(Color32::from_rgb(255, 120, 80), reason);
        }
        Some(Ok(fit)) => {
            let count = fit.residuals.len();
            ui.label(match fit.shape {
                FitShape::Linear => format!("straight line through {count} points"),
                FitShape::Quadratic => {
                    format!("quadratic through {count} points: they bow clearly")
                }
            });
            ui.label(format!(
                "{:.3} µs per {per}, {:.1} µs at 0{symbol} (straight-line fit)",
                fit.pulse_per_position_us() * si,
                fit.pulse_at_zero_us()
            ));
            let from_si = 1.0 / si;
            ui.label(format!(
                "residuals: rms {:.2}{symbol}, worst {:.2}{symbol}",
                fit.rms_residual() * from_si,
                fit.max_residual() * from_si
            ));
            if fit.shape == FitShape::Quadratic {
                ui.label(format!(
                    "quadratic term {:.3e}{symbol} per µs²; the scene keeps the straight line, \
                     which misses these points by up to {:.2}{symbol}",
                    fit.coefficients[2] * from_si,
                    line_worst(state) * from_si
                ));
            }
            if let Some(doc) = state.scene.arm.joints.get(session.joint) {
                let [a, b] = doc.calibration.points;
                ui.label(format!(
                    "the scene says now: {} µs at {}{symbol}, {} µs at {}{symbol}",
                    a.pulse_us, a.position, b.pulse_us, b.position
                ));
            }
        }
    }
}

/// rad or m per degree or mm of the joint being calibrated (1 when it is not in the arm).
fn si_per_shown_unit(state: &EditorState) -> f64 {
    state
        .scene
        .arm
        .shape
        .joint_kinds()
        .get(state.calibration.joint)
        .map_or(1.0, |&kind| si_per_file_unit(kind))
}

/// The worst miss of the straight-line fit at the recorded points, in rad or m.
fn line_worst(state: &EditorState) -> f64 {
    let session = &state.calibration;
    let Some(Ok(fit)) = &session.fit else {
        return 0.0;
    };
    let si = si_per_shown_unit(state);
    session
        .points
        .iter()
        .map(|point| (point.position * si - (fit.line[0] + fit.line[1] * point.pulse_us)).abs())
        .fold(0.0, f64::max)
}

fn deadband(ui: &mut Ui, state: &EditorState, may_move: bool) -> Command {
    let mut command = Command::None;
    let session = &state.calibration;
    ui.label(RichText::new("Deadband").strong());
    let scene_deadband = state
        .scene
        .arm
        .joints
        .get(session.joint)
        .map(|joint| joint.servo.deadband_us);
    match &session.deadband {
        DeadbandSearch::Idle => {
            ui.label(format!(
                "From the pulse held, the tool steps 1 µs every {DEADBAND_STEP_S} s: up until you \
                 press \"{MOVED_LABEL}\", then down, then up again. Watch the servo's horn: gear \
                 play at the link adds to what you see."
            ));
            if ui
                .add_enabled(
                    may_move && session.held_pulse_us.is_some(),
                    egui::Button::new("Find the deadband"),
                )
                .clicked()
            {
                command = Command::Calibration(CalibrationCommand::StartDeadband);
            }
        }
        DeadbandSearch::Stepping { leg, from_us, .. } => {
            let way = match leg {
                SearchLeg::TakeUp => "up, taking up the deadband",
                SearchLeg::Down => "down",
                SearchLeg::Up => "up again",
            };
            ui.label(format!(
                "stepping {way} from {from_us:.1} µs, now {:.1} µs",
                session.held_pulse_us.unwrap_or(*from_us)
            ));
            ui.horizontal(|ui| {
                if ui
                    .button(RichText::new(MOVED_LABEL).strong().size(18.0))
                    .clicked()
                {
                    command = Command::Calibration(CalibrationCommand::Moved);
                }
                if ui.button("Stop the search").clicked() {
                    command = Command::Calibration(CalibrationCommand::CancelDeadband);
                }
            });
        }
        DeadbandSearch::Found {
            widths_us,
            proposed_us,
        } => {
            ui.label(format!(
                "moved after {:.0} µs down and {:.0} µs up: deadband about {proposed_us:.1} µs{}",
                widths_us[0],
                widths_us[1],
                scene_deadband.map_or(String::new(), |now| format!(" (the scene says {now} µs)"))
            ));
            if ui
                .add_enabled(may_move, egui::Button::new("Search again"))
                .clicked()
            {
                command = Command::Calibration(CalibrationCommand::StartDeadband);
            }
        }
    }
    command
}
