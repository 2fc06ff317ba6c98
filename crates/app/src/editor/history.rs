//! Undo and redo: whole-scene snapshots taken before each edit.
//!
//! A scene is a few kilobytes (tens of kilobytes with hundreds of waypoints), so a snapshot per
//! edit is cheap and can never get out of step with the edit, as an inverse operation could.
//! Repeated edits of the same field of the same waypoint (a drag on a number, typing a name), or
//! of the same arm setting, merge into one step.

use super::arm_form::ArmField;
use super::inputs_form::InputField;
use crate::scene::Scene;

/// Most undo steps kept.
const STEPS_KEPT: usize = 200;

/// One state to go back or forward to.
#[derive(Debug, Clone)]
pub(crate) struct Snapshot {
    pub scene: Scene,
    pub selected_waypoint: Option<usize>,
}

/// The undo and redo stacks.
#[derive(Debug, Default)]
pub(crate) struct History {
    undo: Vec<Snapshot>,
    redo: Vec<Snapshot>,
    /// What the last edit changed, when it may merge with the next one.
    last_key: Option<EditKey>,
}

/// Which field an edit changed; consecutive edits with the same key merge.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum EditKey {
    /// One setting of one waypoint.
    Waypoint {
        waypoint: usize,
        field: &'static str,
    },
    /// One field of the arm settings.
    Arm(ArmField),
    /// The scene's description.
    Description,
    /// One number of the input arm's form.
    Inputs(InputField),
}

impl History {
    /// Records the state before an edit. With a `key` equal to the previous edit's, the edit
    /// merges into that step and nothing is recorded.
    pub fn record(&mut self, before: Snapshot, key: Option<EditKey>) {
        if key.is_some() && key == self.last_key {
            return;
        }
        self.last_key = key;
        self.undo.push(before);
        if self.undo.len() > STEPS_KEPT {
            self.undo.remove(0);
        }
        self.redo.clear();
    }

    /// Ends any merging: the next edit starts a new step.
    pub fn break_merge(&mut self) {
        self.last_key = None;
    }

    /// Takes the step to undo to, giving `current` to the redo stack.
    pub fn undo(&mut self, current: Snapshot) -> Option<Snapshot> {
        let previous = self.undo.pop()?;
        self.redo.push(current);
        self.last_key = None;
        Some(previous)
    }

    /// Takes the step to redo to, giving `current` to the undo stack.
    pub fn redo(&mut self, current: Snapshot) -> Option<Snapshot> {
        let next = self.redo.pop()?;
        self.undo.push(current);
        self.last_key = None;
        Some(next)
    }

    pub fn can_undo(&self) -> bool {
        !self.undo.is_empty()
    }

    pub fn can_redo(&self) -> bool {
        !self.redo.is_empty()
    }
}
