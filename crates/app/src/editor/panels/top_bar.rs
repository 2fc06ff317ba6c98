//! The top bar: the emergency stop (always shown, above any dialog), the stop latch and its
//! reset, files, undo and redo.

use egui::{Button, Color32, RichText, Ui, vec2};

use crate::editor::command::Command;
use crate::editor::estop::STOP_KEY_NAME;
use crate::editor::estop::{StopSource, StopState};
use crate::editor::state::{Dialog, EditorState};

/// The emergency-stop button's text.
pub const EMERGENCY_STOP_LABEL: &str = "EMERGENCY STOP";

/// Fill of the emergency-stop button.
const STOP_RED: Color32 = Color32::from_rgb(204, 0, 0);

/// Draws the top bar. The emergency stop acts on the press, not the release, so it goes out in
/// the frame the button goes down.
pub fn top_bar(ui: &mut Ui, state: &EditorState) -> Command {
    let mut command = Command::None;
    ui.horizontal(|ui| {
        let stop = ui.add(
            Button::new(
                RichText::new(format!("{EMERGENCY_STOP_LABEL}  [{STOP_KEY_NAME}]"))
                    .size(24.0)
                    .strong()
                    .color(Color32::WHITE),
            )
            .fill(STOP_RED)
            .stroke(egui::Stroke::new(3.0, Color32::from_rgb(255, 220, 0)))
            .min_size(vec2(330.0, 52.0)),
        );
        let pressed_now =
            stop.is_pointer_button_down_on() && ui.input(|input| input.pointer.any_pressed());
        if pressed_now || (stop.clicked() && state.stop == StopState::Clear) {
            command = Command::EmergencyStop(StopSource::Button);
        }
        ui.add_space(12.0);
        match state.stop {
            StopState::Clear => {
                ui.label(RichText::new("armed: no stop latched").color(Color32::LIGHT_GREEN));
            }
            StopState::Latched { .. } => {
                ui.vertical(|ui| {
                    ui.label(
                        RichText::new("STOPPED — latched")
                            .size(20.0)
                            .strong()
                            .color(Color32::from_rgb(255, 80, 60)),
                    );
                    if ui.button("Reset stop…").clicked() {
                        command = Command::RequestStopReset;
                    }
                });
            }
        }
        ui.separator();
        let free = state.view.dialog.is_none();
        ui.add_enabled_ui(free, |ui| {
            if ui.button("Open…").clicked() {
                command = Command::ShowDialog(Dialog::Open {
                    path: String::new(),
                });
            }
            if ui.button("Save").clicked() {
                command = Command::Save;
            }
            if ui.button("Save as…").clicked() {
                command = Command::ShowDialog(Dialog::SaveAs {
                    path: state
                        .document
                        .file_path
                        .as_ref()
                        .map(|path| path.display().to_string())
                        .unwrap_or_default(),
                    then_close: false,
                });
            }
            ui.separator();
            if ui
                .add_enabled(state.can_undo(), Button::new("Undo"))
                .on_hover_text("Ctrl+Z")
                .clicked()
            {
                command = Command::Undo;
            }
            if ui
                .add_enabled(state.can_redo(), Button::new("Redo"))
                .on_hover_text("Ctrl+Shift+Z")
                .clicked()
            {
                command = Command::Redo;
            }
        });
        ui.separator();
        let name = state
            .document
            .file_path
            .as_ref()
            .and_then(|path| path.file_name())
            .map(|name| name.to_string_lossy().into_owned())
            .unwrap_or_else(|| "built-in sample (not saved)".into());
        let mark = if state.document.dirty { "* " } else { "" };
        ui.vertical(|ui| {
            ui.label(format!("{mark}{name}"))
                .on_hover_text(if state.document.dirty {
                    "unsaved changes"
                } else {
                    "saved"
                });
            let mut text = state.scene.description.clone();
            let field = ui
                .add_enabled(
                    free,
                    egui::TextEdit::singleline(&mut text)
                        .id_salt("scene description")
                        .hint_text("what this scene is for")
                        .desired_width(ui.available_width().clamp(120.0, 420.0)),
                )
                .accessible_name("scene description");
            if field.changed() {
                command = Command::SetDescription(text);
            }
        });
    });
    command
}

#[cfg(test)]
mod tests {
    use egui_kittest::Harness;
    use egui_kittest::kittest::Queryable;

    use super::*;
    use crate::editor::sample::sample_scene;

    fn harness() -> Harness<'static, (EditorState, Vec<Command>)> {
        Harness::new_ui_state(
            |ui, (state, commands): &mut (EditorState, Vec<Command>)| {
                let command = top_bar(ui, state);
                if command != Command::None {
                    commands.push(command);
                }
            },
            (EditorState::new(sample_scene(), None), Vec::new()),
        )
    }

    #[test]
    fn pressing_the_stop_asks_for_a_stop_in_the_press_frame() {
        let mut harness = harness();
        let centre = harness
            .get_by_label_contains(EMERGENCY_STOP_LABEL)
            .rect()
            .center();
        harness.hover_at(centre);
        harness.step();
        harness.drag_at(centre);
        harness.step();
        assert_eq!(
            harness.state().1,
            vec![Command::EmergencyStop(StopSource::Button)]
        );
    }

    #[test]
    fn typing_a_description_asks_to_set_it() {
        let mut harness = harness();
        harness.get_by_label("scene description").focus();
        harness.run();
        harness.get_by_label("scene description").type_text("!");
        harness.run();
        let description = format!("{}!", sample_scene().description);
        assert_eq!(
            harness.state().1.last(),
            Some(&Command::SetDescription(description))
        );
    }

    #[test]
    fn a_latched_stop_offers_a_reset() {
        let mut harness = harness();
        harness.state_mut().0.stop = StopState::Latched {
            source: StopSource::Key,
            frame: 1,
        };
        harness.run();
        harness.get_by_label("Reset stop…").click();
        harness.run();
        assert!(harness.state().1.contains(&Command::RequestStopReset));
    }
}
