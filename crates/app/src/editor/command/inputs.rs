//! The input arm's form's commands: each goes to the form, and inputs that make the scene valid
//! are written into it as one undo step (typing into one field merges into one step until the
//! field is left).

use super::history::edit;
use crate::editor::history::EditKey;
use crate::editor::inputs_form::InputsCommand;
use crate::editor::state::EditorState;

/// Applies a command of the input arm's form.
pub(super) fn apply(state: &mut EditorState, command: InputsCommand) {
    let key = match &command {
        InputsCommand::FinishField => {
            state.document.history.break_merge();
            return;
        }
        InputsCommand::Type { field, .. } => Some(EditKey::Inputs(*field)),
        _ => None,
    };
    if let Some(inputs) = state.inputs_form.apply(command, &state.scene) {
        edit(state, key, |state| state.scene.inputs = inputs);
    }
}
