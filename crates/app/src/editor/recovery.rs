//! The autosaved recovery copies: written every 30 s while there are unsaved changes, removed
//! on a clean save or close, and offered back when a window opens the same scene (or, for a
//! scene that was never saved, opens untitled) and finds a copy no running window owns.
//!
//! One copy per scene file and one per untitled window, in the per-user state folder:
//! `scene-<hash of the scene's path>.armwright.json` or `untitled-<process>-<n>.armwright.json`,
//! each with a `.source.txt` naming the scene's file and a `.lock` file that the owning window
//! keeps locked while it runs. A copy whose lock is held belongs to a running window and is never
//! offered to another one.

use std::fs::{File, OpenOptions};
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicU64, Ordering};

use crate::scene::{Scene, SceneError, load, save_unrounded};

/// Untitled windows opened by this process so far, for their copies' names.
static UNTITLED: AtomicU64 = AtomicU64::new(0);

/// The folder the recovery copies live in.
#[derive(Debug, Clone)]
pub struct Recovery {
    dir: PathBuf,
}

impl Recovery {
    /// Recovery copies kept in `dir` (created when first written).
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

    /// The folder.
    pub fn dir(&self) -> &Path {
        &self.dir
    }

    /// Takes the copy for a window editing `scene_file` (`None`: a scene never saved) and locks
    /// it for as long as the returned copy lives. For a file whose copy another running window
    /// holds, this window gets a copy of its own (nothing to offer). For an untitled window, a
    /// copy of an untitled window that is no longer running is taken over (the newest, so it
    /// can be offered), else a new one is made.
    pub fn claim(&self, scene_file: Option<&Path>) -> RecoveryCopy {
        if let Some(file) = scene_file {
            let stem = format!("scene-{:016x}", path_hash(file));
            // Another window has this scene open: keep a copy apart from it.
            let mut copy = self
                .try_claim(&stem)
                .unwrap_or_else(|| self.new_copy(&format!("{stem}-window")));
            copy.file = Some(file.to_path_buf());
            return copy;
        }
        let mut orphans: Vec<(std::time::SystemTime, String)> = std::fs::read_dir(&self.dir)
            .into_iter()
            .flatten()
            .flatten()
            .filter_map(|entry| {
                let name = entry.file_name().to_string_lossy().into_owned();
                let stem = name
                    .strip_prefix("untitled-")
                    .and_then(|rest| rest.strip_suffix(".armwright.json"))
                    .map(|rest| format!("untitled-{rest}"))?;
                let modified = entry.metadata().and_then(|m| m.modified()).ok()?;
                Some((modified, stem))
            })
            .collect();
        orphans.sort();
        while let Some((_, stem)) = orphans.pop() {
            if let Some(copy) = self.try_claim(&stem) {
                return copy;
            }
        }
        self.new_copy("untitled")
    }

    fn new_copy(&self, prefix: &str) -> RecoveryCopy {
        loop {
            let n = UNTITLED.fetch_add(1, Ordering::Relaxed);
            let stem = format!("{prefix}-{}-{n}", std::process::id());
            if let Some(copy) = self.try_claim(&stem) {
                return copy;
            }
            if n > 10_000 {
                // The folder cannot be written (or is full of locks): autosave will say so.
                return RecoveryCopy {
                    dir: self.dir.clone(),
                    stem,
                    lock: None,
                    file: None,
                };
            }
        }
    }

    /// The copy named `stem`, locked for this window, unless another window holds it.
    fn try_claim(&self, stem: &str) -> Option<RecoveryCopy> {
        let mut copy = RecoveryCopy {
            dir: self.dir.clone(),
            stem: stem.to_string(),
            lock: None,
            file: None,
        };
        if std::fs::create_dir_all(&self.dir).is_err() {
            return Some(copy);
        }
        let lock = OpenOptions::new()
            .create(true)
            .truncate(false)
            .write(true)
            .open(copy.lock_path())
            .ok()?;
        lock.try_lock().ok()?;
        copy.lock = Some(lock);
        Some(copy)
    }
}

/// A stable 64-bit hash (FNV-1a) of a scene file's absolute path, for its copy's name.
fn path_hash(file: &Path) -> u64 {
    let absolute = std::path::absolute(file).unwrap_or_else(|_| file.to_path_buf());
    absolute
        .to_string_lossy()
        .bytes()
        .fold(0xcbf2_9ce4_8422_2325, |hash, byte| {
            (hash ^ u64::from(byte)).wrapping_mul(0x0000_0100_0000_01b3)
        })
}

/// One window's recovery copy, locked while this value lives.
#[derive(Debug)]
pub struct RecoveryCopy {
    dir: PathBuf,
    stem: String,
    lock: Option<File>,
    /// The scene file this copy is for; `None` for an untitled window.
    file: Option<PathBuf>,
}

impl RecoveryCopy {
    /// The scene file this copy is for; `None` for an untitled window.
    pub fn scene_file(&self) -> Option<&Path> {
        self.file.as_deref()
    }

    /// The recovery scene file.
    pub fn scene_path(&self) -> PathBuf {
        self.dir.join(format!("{}.armwright.json", self.stem))
    }

    fn source_path(&self) -> PathBuf {
        self.dir.join(format!("{}.source.txt", self.stem))
    }

    fn lock_path(&self) -> PathBuf {
        self.dir.join(format!("{}.lock", self.stem))
    }

    /// Whether the copy exists.
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

    /// A handle that writes the same copy from a worker thread (it holds no lock).
    pub(crate) fn writer(&self) -> RecoveryCopy {
        RecoveryCopy {
            dir: self.dir.clone(),
            stem: self.stem.clone(),
            lock: None,
            file: self.file.clone(),
        }
    }
}

impl Drop for RecoveryCopy {
    fn drop(&mut self) {
        // An owner leaving no copy behind takes its lock file along; a copy left behind keeps
        // it, unlocked, for a later window to take over.
        if self.lock.take().is_some() && !self.exists() {
            let _ = std::fs::remove_file(self.lock_path());
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn folder(name: &str) -> Recovery {
        let dir =
            std::env::temp_dir().join(format!("armwright-recovery-{}-{name}", std::process::id()));
        let _ = std::fs::remove_dir_all(&dir);
        Recovery::in_dir(dir)
    }

    #[test]
    fn each_scene_file_has_its_own_copy() {
        let recovery = folder("per-file");
        let scene = crate::editor::sample::sample_scene();
        let first = recovery.claim(Some(Path::new("/tmp/a.armwright.json")));
        first.write(&scene, None).expect("written");
        drop(first);
        let other = recovery.claim(Some(Path::new("/tmp/b.armwright.json")));
        assert!(!other.exists(), "another scene's copy is not offered");
        let again = recovery.claim(Some(Path::new("/tmp/a.armwright.json")));
        assert!(again.exists(), "the same scene finds its copy");
    }

    #[test]
    fn a_running_window_keeps_its_copy_to_itself() {
        let recovery = folder("running");
        let scene = crate::editor::sample::sample_scene();
        let untitled = recovery.claim(None);
        untitled.write(&scene, None).expect("written");
        let second = recovery.claim(None);
        assert_ne!(second.scene_path(), untitled.scene_path());
        assert!(!second.exists());
        let file = Path::new("/tmp/c.armwright.json");
        let owner = recovery.claim(Some(file));
        owner.write(&scene, Some(file)).expect("written");
        let beside = recovery.claim(Some(file));
        assert_ne!(beside.scene_path(), owner.scene_path());
        assert!(!beside.exists());
        // Once the window has gone, its untitled copy is offered to the next untitled one.
        drop(untitled);
        drop(second);
        let later = recovery.claim(None);
        assert!(later.exists());
        assert_eq!(later.load().expect("the copy"), scene);
    }
}
