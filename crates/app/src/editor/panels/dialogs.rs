//! Questions and forms shown over the window: open, save as, a load error, unsaved changes,
//! resetting the emergency stop, recovering an autosaved copy.
//!
//! A dialog covers the window below the top bar only, so the emergency stop above it stays
//! visible and clickable while any dialog is open. Escape does not close a dialog: it is the
//! emergency-stop key.

use egui::{Align2, Area, Color32, Frame, Id, Order, Rect, RichText, ScrollArea, Sense, UiBuilder};

use crate::editor::command::Command;
use crate::editor::state::{Dialog, EditorState};

/// Width of a dialog, in points.
const WIDTH: f32 = 520.0;

/// Draws the open dialog, if any, over `below` (the window below the top bar).
pub fn dialogs(ctx: &egui::Context, below: Rect, state: &EditorState) -> Command {
    let Some(dialog) = &state.view.dialog else {
        return Command::None;
    };
    let mut command = Command::None;
    Area::new(Id::unique("armwright dialog"))
        .order(Order::Foreground)
        .fixed_pos(below.min)
        .constrain(false)
        .show(ctx, |ui| {
            // The backdrop takes the pointer so nothing below the dialog reacts.
            let mut backdrop = ui.new_child(
                UiBuilder::new()
                    .max_rect(below)
                    .sense(Sense::click_and_drag()),
            );
            backdrop.set_min_size(below.size());
            ui.painter()
                .rect_filled(below, 0.0, Color32::from_black_alpha(150));
            let size = egui::vec2(WIDTH, 10.0);
            let at = Align2::CENTER_CENTER.align_size_within_rect(size, below.shrink(40.0));
            let frame_rect = Rect::from_min_size(
                egui::pos2(at.min.x, below.top() + below.height() * 0.22),
                egui::vec2(WIDTH, below.height() * 0.6),
            );
            ui.scope_builder(
                UiBuilder::new()
                    .max_rect(frame_rect)
                    .sense(Sense::click_and_drag()),
                |ui| {
                    Frame::window(ui.style()).show(ui, |ui| {
                        ui.set_width(WIDTH - 30.0);
                        command = dialog_body(ui, dialog, state);
                    });
                },
            );
        });
    command
}

fn dialog_body(ui: &mut egui::Ui, dialog: &Dialog, state: &EditorState) -> Command {
    let mut command = Command::None;
    match dialog {
        Dialog::Open { path } => {
            ui.heading("Open a scene");
            command = path_form(ui, path, "Open this file", Command::BrowseForOpen, |path| {
                Command::OpenPath(path.into())
            });
        }
        Dialog::SaveAs { path, then_close } => {
            ui.heading("Save the scene as");
            let then_close = *then_close;
            command = path_form(
                ui,
                path,
                "Save to this file",
                Command::BrowseForSave,
                |path| Command::SaveToPath {
                    path: path.into(),
                    then_close,
                },
            );
        }
        Dialog::LoadError { path, problems } => {
            ui.heading(
                RichText::new("The scene could not be opened")
                    .color(Color32::from_rgb(255, 110, 60)),
            );
            ui.label(format!("{}", path.display()));
            ui.add_space(6.0);
            ScrollArea::vertical().max_height(260.0).show(ui, |ui| {
                for problem in problems {
                    ui.label(RichText::new(format!("• {problem}")).monospace());
                }
            });
            ui.add_space(6.0);
            ui.label("The file was not changed, and the scene you had stays open.");
            if ui.button("OK").clicked() {
                command = Command::CloseDialog;
            }
        }
        Dialog::UnsavedChanges => {
            ui.heading("Unsaved changes");
            ui.label("The scene has changes that are not saved. Close anyway?");
            ui.horizontal(|ui| {
                if ui.button("Save and close").clicked() {
                    command = match &state.document.file_path {
                        Some(path) => Command::SaveToPath {
                            path: path.clone(),
                            then_close: true,
                        },
                        None => Command::ShowDialog(Dialog::SaveAs {
                            path: String::new(),
                            then_close: true,
                        }),
                    };
                }
                if ui.button("Close without saving").clicked() {
                    command = Command::CloseWithoutSaving;
                }
                if ui.button("Keep editing").clicked() {
                    command = Command::CloseDialog;
                }
            });
        }
        Dialog::ConfirmStopReset => {
            ui.heading("Reset the emergency stop?");
            ui.label(
                "Reset only when the cause of the stop is understood and everyone is clear of \
                 the arm's reach. A software stop is not a safety device: keep a hard power \
                 cut-off within reach.",
            );
            ui.horizontal(|ui| {
                if ui.button("Reset stop").clicked() {
                    command = Command::ConfirmStopReset;
                }
                if ui.button("Keep stopped").clicked() {
                    command = Command::CloseDialog;
                }
            });
        }
        Dialog::Recovery { source } => {
            ui.heading("Recover unsaved work?");
            let of = source
                .as_ref()
                .map(|path| format!(" of {}", path.display()))
                .unwrap_or_default();
            ui.label(format!(
                "An autosaved copy{of} was found from a session that did not end cleanly."
            ));
            ui.horizontal(|ui| {
                if ui.button("Recover").clicked() {
                    command = Command::Recover;
                }
                if ui.button("Discard").clicked() {
                    command = Command::DiscardRecovery;
                }
            });
        }
    }
    command
}

/// A typed path with a button for the system's file dialog. The typed path always works, so the
/// editor stays usable where no file dialog is available.
fn path_form(
    ui: &mut egui::Ui,
    path: &str,
    action: &str,
    browse: Command,
    done: impl Fn(&str) -> Command,
) -> Command {
    let done_now = &done;
    let mut command = Command::None;
    ui.label("Type a path, or pick a file with the system's dialog:");
    let mut text = path.to_string();
    ui.horizontal(|ui| {
        let field = ui
            .add(
                egui::TextEdit::singleline(&mut text)
                    .id_salt("dialog path")
                    .hint_text("path/to/scene.armwright.json")
                    .desired_width(WIDTH - 140.0),
            )
            .accessible_name("scene path");
        // Typing starts in the path field unless something else already has the keyboard.
        if ui.memory(|memory| memory.focused().is_none()) {
            field.request_focus();
        }
        if field.changed() {
            command = Command::SetDialogPath(text.clone());
        }
        // Enter in the path acts as the action button does.
        let entered = (field.has_focus() || field.lost_focus())
            && ui.input(|input| input.key_pressed(egui::Key::Enter));
        if entered && !text.trim().is_empty() {
            command = done_now(text.trim());
        }
        if ui.button("Browse…").clicked() {
            command = browse;
        }
    });
    ui.horizontal(|ui| {
        let trimmed = text.trim();
        if ui
            .add_enabled(!trimmed.is_empty(), egui::Button::new(action))
            .clicked()
        {
            command = done(trimmed);
        }
        if ui.button("Cancel").clicked() {
            command = Command::CloseDialog;
        }
    });
    command
}

#[cfg(test)]
mod tests {
    use egui_kittest::Harness;
    use egui_kittest::kittest::Queryable;

    use super::*;
    use crate::editor::sample::sample_scene;

    type Setup = (EditorState, Vec<Command>);

    fn harness(dialog: Dialog) -> Harness<'static, Setup> {
        let mut state = EditorState::new(sample_scene(), None);
        state.view.dialog = Some(dialog);
        Harness::builder().with_size([900.0, 700.0]).build_ui_state(
            |ui, (state, commands): &mut Setup| {
                let below = ui.ctx().content_rect();
                let command = dialogs(ui.ctx(), below, state);
                if command != Command::None {
                    commands.push(command);
                }
            },
            (state, Vec::new()),
        )
    }

    #[test]
    fn a_load_error_lists_each_problem_with_its_field() {
        let mut harness = harness(Dialog::LoadError {
            path: "scene.armwright.json".into(),
            problems: vec!["arm.joints[0].min_deg: must be a number".into()],
        });
        harness.run();
        assert!(
            harness
                .query_by_label("• arm.joints[0].min_deg: must be a number")
                .is_some()
        );
        harness.get_by_label("OK").click();
        harness.run();
        assert_eq!(harness.state().1, vec![Command::CloseDialog]);
    }

    #[test]
    fn enter_in_the_path_saves_as_the_button_does() {
        // The path as typed (the editor keeps it in the dialog between frames).
        let mut harness = harness(Dialog::SaveAs {
            path: "there.armwright.json".into(),
            then_close: false,
        });
        harness.run();
        harness.get_by_label("scene path").focus();
        harness.run();
        assert!(harness.state().1.is_empty());
        harness.key_press(egui::Key::Enter);
        harness.run();
        assert_eq!(
            harness.state().1.last(),
            Some(&Command::SaveToPath {
                path: "there.armwright.json".into(),
                then_close: false
            })
        );
    }

    #[test]
    fn a_typed_path_opens_that_file() {
        let mut harness = harness(Dialog::Open {
            path: "here.armwright.json".into(),
        });
        harness.run();
        harness.get_by_label("Open this file").click();
        harness.run();
        assert_eq!(
            harness.state().1,
            vec![Command::OpenPath("here.armwright.json".into())]
        );
    }
}
