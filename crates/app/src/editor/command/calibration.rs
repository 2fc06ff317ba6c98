//! The calibration panel's commands, applied to its part of the state; a fit applied is one
//! undo step.

use super::Outside;
use super::history::edit;
use crate::editor::calibration::{self, AppliedFit, CalibrationCommand};
use crate::editor::state::{EditorState, Level};

/// Applies a calibration command; what it asks of the device link comes back in `outside`.
pub(super) fn apply(
    state: &mut EditorState,
    command: CalibrationCommand,
    outside: &mut Vec<Outside>,
) {
    let (mut said, mut link) = (Vec::new(), Vec::new());
    let (around, calibrating) = state.calibration_parts();
    let applied = calibration::apply(calibrating, &around, command, &mut said, &mut link);
    state.say_all(said);
    outside.extend(link.into_iter().map(Outside::Link));
    if let Some(AppliedFit { scene, message }) = applied {
        edit(state, None, |state| state.scene = scene);
        state.arm_changed();
        state.arm_form.arm_replaced(&state.scene);
        state.say(Level::Info, message);
    }
}
