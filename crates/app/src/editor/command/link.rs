//! The device link's commands: which device, the streaming caution, parking after a stream,
//! and link actions, passed on only when they may move the arm.

use super::Outside;
use crate::editor::device::LinkAction;
use crate::editor::estop::StopState;
use crate::editor::state::{EditorState, Level};
use crate::scene::Device;

/// Picks the device the link panel connects to.
pub(super) fn choose_device(state: &mut EditorState, device: Device) {
    state.device.link_device = device;
}

/// The user read and acknowledged the streaming caution (for this session).
pub(super) fn acknowledge_caution(state: &mut EditorState) {
    state.device.caution_acknowledged = true;
    state.say(
        Level::Info,
        "streaming caution acknowledged for this session",
    );
}

/// Whether each stream ends at the rest pose (park).
pub(super) fn park_after_stream(state: &mut EditorState, park: bool) {
    state.device.park_after_stream = park;
}

/// Passes a link action on, unless it would move the arm while that is not allowed: streaming
/// needs the caution acknowledged and no stop latched.
pub(super) fn action(state: &mut EditorState, action: LinkAction, outside: &mut Vec<Outside>) {
    let moves = matches!(
        action,
        LinkAction::Stream { .. } | LinkAction::Resume | LinkAction::HoldChannel(_)
    );
    if moves && !state.device.caution_acknowledged {
        state.say(
            Level::Warning,
            "read and acknowledge the caution in the link panel before streaming",
        );
    } else if moves && matches!(state.stop, StopState::Latched { .. }) {
        state.say(
            Level::Warning,
            "the emergency stop is latched: check the arm and reset the stop before streaming",
        );
    } else {
        outside.push(Outside::Link(action));
    }
}
