//! Follow and jog commands, applied to follow's settings; a jog moves the edited arm.

use super::Outside;
use crate::editor::device::LinkAction;
use crate::editor::follow::{self, FollowCommand};
use crate::editor::state::EditorState;

/// Applies a follow command; what it asks of the device link comes back in `outside`.
pub(super) fn apply(state: &mut EditorState, command: FollowCommand, outside: &mut Vec<Outside>) {
    if matches!(command, FollowCommand::Jog(_)) && state.refuse_jog() {
        return;
    }
    let (mut said, mut asks) = (Vec::new(), Vec::new());
    let (around, settings) = state.follow_parts();
    let jogged = follow::apply(settings, &around, command, &mut said, &mut asks);
    state.say_all(said);
    outside.extend(
        asks.into_iter()
            .map(|ask| Outside::Link(LinkAction::Follow(ask))),
    );
    if let Some(pose) = jogged {
        state.move_arm_to(pose);
    }
}
