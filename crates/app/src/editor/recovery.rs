//! The autosaved recovery copy: written every 30 s while there are unsaved changes, removed on
//! a clean save or close, and offered back when the editor starts and finds one.

use std::path::{Path, PathBuf};

use crate::scene::{Scene, SceneError, load, save_unrounded};

/// Where the recovery copy lives.
#[derive(Debug, Clone)]
pub struct Recovery {
    dir: PathBuf,
}

impl Recovery {
    /// A recovery copy kept in `dir` (created when first written).
    pub fn in_dir(dir: impl Into<PathBuf>) -> Recovery {
        Recovery { dir: dir.into() }
    }

    /// The per-user state folder: `$XDG_STATE_HOME/armwright`, else
    /// `$HOME/.local/state/armwright`; `None` when neither variable is set.
    pub fn default_dir() -> Option<PathBuf> {
        let base = std::env::var_os("XDG_STATE_HOME")
            .filter(|value| !value.is_empty())
            .map(PathBuf::from)
            .or_else(|| {
                std::env::var_os("HOME")
                    .filter(|value| !value.is_empty())
                    .map(|home| Path::new(&home).join(".local").join("state"))
            })?;
        Some(base.join("armwright"))
    }

    /// The recovery scene file.
    pub fn scene_path(&self) -> PathBuf {
        self.dir.join("recovery.armwright.json")
    }

    fn source_path(&self) -> PathBuf {
        self.dir.join("recovery-source.txt")
    }

    /// Whether a recovery copy exists.
    pub fn exists(&self) -> bool {
        self.scene_path().is_file()
    }

    /// The file the copy was made from, if it had one.
    pub fn source(&self) -> Option<PathBuf> {
        let text = std::fs::read_to_string(self.source_path()).ok()?;
        let line = text.lines().next()?.trim();
        (!line.is_empty()).then(|| PathBuf::from(line))
    }

    /// Reads the copy.
    ///
    /// # Errors
    /// As [`load`].
    pub fn load(&self) -> Result<Scene, SceneError> {
        load(&self.scene_path())
    }

    /// Writes the copy (atomically) and the name of the file it belongs to.
    ///
    /// # Errors
    /// A message if the folder or a file cannot be written.
    pub fn write(&self, scene: &Scene, source: Option<&Path>) -> Result<(), String> {
        std::fs::create_dir_all(&self.dir)
            .map_err(|error| format!("cannot create {}: {error}", self.dir.display()))?;
        // Every digit, so that recovering gives back exactly the unsaved work.
        save_unrounded(scene, &self.scene_path()).map_err(|error| error.to_string())?;
        let source = source
            .map(|path| path.display().to_string())
            .unwrap_or_default();
        std::fs::write(self.source_path(), format!("{source}\n"))
            .map_err(|error| format!("cannot write {}: {error}", self.source_path().display()))
    }

    /// Removes the copy (nothing happens when there is none).
    pub fn discard(&self) {
        let _ = std::fs::remove_file(self.scene_path());
        let _ = std::fs::remove_file(self.source_path());
    }
}
