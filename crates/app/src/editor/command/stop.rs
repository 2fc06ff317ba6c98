//! The emergency stop and its reset: a stop goes out at once and latches; the latch clears only
//! after the user confirmed, and this is the only place a [`ResetConfirmation`] is built.

use armwright_link::ResetConfirmation;

use crate::editor::estop::{StopLink, StopRequest, StopSource, StopState};
use crate::editor::state::{Dialog, EditorState, Level};

/// Sends a stop request to `stop_link` at once, tagged with `frame`, and latches the stop.
pub(super) fn emergency_stop(
    state: &mut EditorState,
    stop_link: &mut dyn StopLink,
    source: StopSource,
    frame: u64,
) {
    stop_link.send_stop(StopRequest { source, frame });
    state.stop = StopState::Latched { source, frame };
    let how = match source {
        StopSource::Button => "button",
        StopSource::Key => "key",
    };
    state.say(
        Level::Warning,
        format!("emergency stop sent ({how}); latched until reset"),
    );
}

/// Asks before clearing the stop latch; nothing to ask when no stop is latched.
pub(super) fn request_reset(state: &mut EditorState) {
    if matches!(state.stop, StopState::Latched { .. }) {
        state.view.dialog = Some(Dialog::ConfirmStopReset);
    }
}

/// Clears the stop latch once the user confirmed, and asks `stop_link` to reset the device.
pub(super) fn confirm_reset(state: &mut EditorState, stop_link: &mut dyn StopLink) {
    // Built only here, in answer to the confirmation question.
    stop_link.confirm_reset(ResetConfirmation::confirmed_by_person());
    state.stop = StopState::Clear;
    state.view.dialog = None;
    state.say(Level::Info, "emergency stop reset");
}
