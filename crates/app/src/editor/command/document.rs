//! The document as a whole: its description, and the file work the editor does outside the
//! state (open, save, save as, close, the recovery copy), each closing the dialog that asked.

use std::path::PathBuf;

use super::Outside;
use super::history::edit;
use crate::editor::history::EditKey;
use crate::editor::state::{Dialog, EditorState};

/// Replaces the scene's description; typing merges into one undo step.
pub(super) fn set_description(state: &mut EditorState, text: String) {
    edit(state, Some(EditKey::Description), |state| {
        state.scene.description = text;
    });
}

/// Opens the scene at `path` (outside the state, on a worker thread).
pub(super) fn open(state: &mut EditorState, path: PathBuf, outside: &mut Vec<Outside>) {
    state.view.dialog = None;
    outside.push(Outside::Open(path));
}

/// Saves to the scene's file, or asks for one with the save-as dialog.
pub(super) fn save(state: &mut EditorState, outside: &mut Vec<Outside>) {
    match state.document.file_path.clone() {
        Some(path) => outside.push(Outside::Save {
            path,
            then_close: false,
        }),
        None => {
            state.view.dialog = Some(Dialog::SaveAs {
                path: String::new(),
                then_close: false,
            })
        }
    }
}

/// Saves to `path` (outside the state), closing the window afterwards when `then_close`.
pub(super) fn save_to(
    state: &mut EditorState,
    path: PathBuf,
    then_close: bool,
    outside: &mut Vec<Outside>,
) {
    state.view.dialog = None;
    outside.push(Outside::Save { path, then_close });
}

/// Closes the window, dropping unsaved changes.
pub(super) fn close_without_saving(state: &mut EditorState, outside: &mut Vec<Outside>) {
    state.view.dialog = None;
    outside.push(Outside::Close);
}

/// Takes the recovery copy as the scene.
pub(super) fn recover(state: &mut EditorState, outside: &mut Vec<Outside>) {
    state.view.dialog = None;
    outside.push(Outside::Recover);
}

/// Throws the recovery copy away.
pub(super) fn discard_recovery(state: &mut EditorState, outside: &mut Vec<Outside>) {
    state.view.dialog = None;
    outside.push(Outside::DiscardRecovery);
}
