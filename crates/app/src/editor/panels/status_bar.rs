//! The status bar: the latest message, and the cautions that go with driving real hardware.

use egui::{Color32, RichText, Ui};

use crate::editor::estop::STOP_KEY_NAME;
use crate::editor::state::{EditorState, Level};

/// The cautions shown whenever the editor runs.
pub const CAUTION: &str = "A software stop is not a safety device: keep a hard power cut-off within reach, keep clear of the arm's reach while powered, and defer to local codes and licensed practice.";

/// Draws the status bar. It asks for nothing.
pub fn status_bar(ui: &mut Ui, state: &EditorState) {
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
    ui.label(
        RichText::new(CAUTION)
            .small()
            .color(Color32::from_rgb(230, 159, 0)),
    );
}
