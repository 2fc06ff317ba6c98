//! The status bar: the latest message, and the cautions that go with driving real hardware.

use egui::{Color32, RichText, Ui};

use crate::editor::estop::STOP_KEY_NAME;
use crate::editor::state::{EditorState, Level};

/// The cautions shown whenever the editor runs.
pub const CAUTION: &str = "A software stop is not a safety device: keep a hard power cut-off within reach, keep clear of the arm's reach while powered, and defer to local codes and licensed practice.";

/// Draws the status bar, with `hint` (what the thing under the pointer does: a view's mouse
/// use) after the latest message. It asks for nothing.
pub fn status_bar(ui: &mut Ui, state: &EditorState, hint: Option<&str>) {
    ui.horizontal(|ui| {
        if let Some(message) = state.messages.last() {
            let colour = match message.level {
                Level::Info => ui.visuals().text_color(),
                Level::Warning => Color32::from_rgb(230, 159, 0),
                Level::Error => Color32::from_rgb(255, 90, 60),
            };
            ui.colored_label(colour, &message.text);
        } else {
            ui.label(format!(
                "Drag the tool point to teach; {STOP_KEY_NAME} stops the arm whatever has focus."
            ));
        }
        if let Some(hint) = hint {
            ui.separator();
            ui.label(RichText::new(hint).weak());
        }
    });
    ui.label(
        RichText::new(CAUTION)
            .small()
            .color(Color32::from_rgb(230, 159, 0)),
    );
}

#[cfg(test)]
mod tests {
    use egui_kittest::Harness;
    use egui_kittest::kittest::Queryable;

    use super::*;
    use crate::editor::sample::sample_scene;

    #[test]
    fn the_cautions_and_the_latest_message_are_shown() {
        let mut state = EditorState::new(sample_scene(), None);
        state.say(Level::Error, "cannot save x: disk full");
        let mut harness = Harness::new_ui_state(
            |ui, state: &mut EditorState| status_bar(ui, state, Some("pan")),
            state,
        );
        harness.run();
        assert!(harness.query_by_label(CAUTION).is_some());
        assert!(harness.query_by_label("cannot save x: disk full").is_some());
        assert!(harness.query_by_label("pan").is_some());
    }
}
