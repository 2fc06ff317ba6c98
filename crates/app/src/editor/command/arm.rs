//! The arm settings form's commands: typed text applied to the arm when the scene with it is
//! valid (typing into one field merges into one undo step until the field is left), and a
//! switch of the arm's type (one undo step).

use super::history::edit;
use crate::editor::arm_form::{ArmField, ArmTypeChoice, with_arm_type};
use crate::editor::history::EditKey;
use crate::editor::state::{EditorState, Level};

/// Text typed into one field of the arm settings: kept as typed, written into the arm when the
/// scene with it is valid.
pub(super) fn edit_field(state: &mut EditorState, field: ArmField, text: String) {
    if let Some(arm) = state.arm_form.type_text(field, text, &state.scene) {
        edit(state, Some(EditKey::Arm(field)), |state| {
            state.scene.arm = arm
        });
        state.arm_changed();
    }
}

/// The user left an arm settings field: the next edit starts a new undo step.
pub(super) fn finish_field(state: &mut EditorState) {
    state.document.history.break_merge();
}

/// Switches the arm's type (one undo step), or says why not when taught data would be lost.
pub(super) fn change_type(state: &mut EditorState, choice: ArmTypeChoice) {
    match with_arm_type(&state.scene, choice) {
        Some(Ok((scene, message))) => {
            let same_kinds = scene.arm.shape.joint_kinds().get(..4)
                == state.scene.arm.shape.joint_kinds().get(..4);
            edit(state, None, |state| state.scene = scene);
            if !same_kinds {
                // Positions of the old joints mean nothing on the new ones: start at home.
                state.pose.clear();
            }
            state.arm_changed();
            state.arm_form.arm_replaced(&state.scene);
            state.say(Level::Info, message);
        }
        Some(Err(refusal)) => state.say(Level::Warning, refusal),
        None => {}
    }
}
