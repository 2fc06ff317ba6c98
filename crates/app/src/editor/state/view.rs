//! What the window shows around the views: the tools panel's tab, the dialog over the window,
//! and the side view's plane held during a drag.

use super::{Dialog, ToolsTab};

/// The editor's view state (not saved with the scene).
#[derive(Debug, Clone, PartialEq, Default)]
pub struct ViewState {
    /// The tab shown in the tools panel.
    pub tools_tab: ToolsTab,
    /// The dialog shown over the window, if any.
    pub dialog: Option<Dialog>,
    /// The side view's yaw held while the primary pointer button is down (rad), so that a drag
    /// in either view does not turn the side view, its shading or its title under the pointer.
    side_yaw_held: Option<f64>,
}

impl ViewState {
    /// The side view's yaw held for a drag, in rad, if it is held.
    pub(crate) fn side_yaw_held(&self) -> Option<f64> {
        self.side_yaw_held
    }

    /// Holds the side view's yaw while `held`, at the yaw already held or else at `yaw_now()`
    /// (rad); lets it go when not.
    pub(crate) fn hold_side_yaw(&mut self, held: bool, yaw_now: impl FnOnce() -> f64) {
        self.side_yaw_held = if held {
            Some(self.side_yaw_held.unwrap_or_else(yaw_now))
        } else {
            None
        };
    }
}
