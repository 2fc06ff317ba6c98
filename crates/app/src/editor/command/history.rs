//! Undo and redo, and [`edit`], which every command that changes the scene goes through so that
//! it is one undo step.

use crate::editor::history::{EditKey, Snapshot};
use crate::editor::state::{EditorState, Level};

/// Undoes the last edit, or says there is none.
pub(super) fn undo(state: &mut EditorState) {
    let current = snapshot(state);
    match state.document.history.undo(current) {
        Some(previous) => restore(state, previous),
        None => state.say(Level::Info, "nothing to undo"),
    }
}

/// Redoes the last undone edit, or says there is none.
pub(super) fn redo(state: &mut EditorState) {
    let current = snapshot(state);
    match state.document.history.redo(current) {
        Some(next) => restore(state, next),
        None => state.say(Level::Info, "nothing to redo"),
    }
}

fn snapshot(state: &EditorState) -> Snapshot {
    Snapshot {
        scene: state.scene.clone(),
        selected_waypoint: state.selected_waypoint,
    }
}

fn restore(state: &mut EditorState, snapshot: Snapshot) {
    let arm_changed = snapshot.scene.arm != state.scene.arm;
    let timing_changed = snapshot.scene.timing != state.scene.timing;
    state.scene = snapshot.scene;
    state.selected_waypoint = snapshot.selected_waypoint;
    if arm_changed {
        state.arm_changed();
        state.arm_form.arm_replaced(&state.scene);
    } else if timing_changed {
        state.pose_changed();
    }
    state.scene_changed();
}

/// Runs an edit of the scene as one undo step (merging with the previous step when `key` is the
/// same as its key).
pub(super) fn edit(
    state: &mut EditorState,
    key: Option<EditKey>,
    change: impl FnOnce(&mut EditorState),
) {
    let before = snapshot(state);
    change(state);
    if state.scene != before.scene {
        state.document.history.record(before, key);
        state.scene_changed();
    }
}
