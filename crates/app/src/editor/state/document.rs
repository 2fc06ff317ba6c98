//! The document's file and history, apart from the scene itself ([`EditorState::scene`]).
//!
//! [`EditorState::scene`]: super::EditorState::scene

use std::path::PathBuf;

use crate::editor::history::History;
use crate::scene::Scene;

/// The document around the edited scene: undo and redo, the scene as the file has it, whether
/// the scene differs from that, and the file.
#[derive(Debug)]
pub struct Document {
    /// Undo and redo steps.
    pub(crate) history: History,
    /// The scene as last loaded or saved, to tell whether there are unsaved changes; `None`
    /// when the scene was never in a file as it is (a recovered copy).
    saved_scene: Option<Scene>,
    /// Whether the scene differs from the file.
    pub dirty: bool,
    /// The scene's file, once it has one.
    pub file_path: Option<PathBuf>,
}

impl Document {
    /// The document of `scene` as read from `file_path` (if any): clean, with no history.
    pub(crate) fn new(scene: &Scene, file_path: Option<PathBuf>) -> Document {
        Document {
            history: History::default(),
            saved_scene: Some(scene.clone()),
            dirty: false,
            file_path,
        }
    }

    /// Recomputes the dirty mark: whether `scene` differs from the file.
    pub(crate) fn compare(&mut self, scene: &Scene) {
        self.dirty = self.saved_scene.as_ref() != Some(scene);
    }

    /// Records that `saved` is now in `path`; `scene` is the scene being edited now.
    pub(crate) fn saved(&mut self, path: PathBuf, saved: Scene, scene: &Scene) {
        self.dirty = *scene != saved;
        self.saved_scene = Some(saved);
        self.file_path = Some(path);
    }

    /// Marks the scene as not in any file as it is (a recovered copy): unsaved until saved.
    pub(crate) fn unsaved(&mut self) {
        self.saved_scene = None;
        self.dirty = true;
    }
}
