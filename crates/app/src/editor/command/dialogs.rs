//! What is shown over and beside the views: the dialog over the window, the path typed into the
//! open or save-as dialog, and the tools panel's tab.

use crate::editor::state::{Dialog, EditorState, ToolsTab};

/// Shows this tab of the tools panel.
pub(super) fn show_tab(state: &mut EditorState, tab: ToolsTab) {
    state.view.tools_tab = tab;
}

/// Shows `dialog` over the window, in place of any other.
pub(super) fn show(state: &mut EditorState, dialog: Dialog) {
    state.view.dialog = Some(dialog);
}

/// Closes the dialog.
pub(super) fn close(state: &mut EditorState) {
    state.view.dialog = None;
}

/// The whole path now typed into the open or save-as dialog; ignored with no such dialog open.
pub(super) fn set_path(state: &mut EditorState, text: String) {
    if let Some(Dialog::Open { path } | Dialog::SaveAs { path, .. }) = &mut state.view.dialog {
        *path = text;
    }
}
