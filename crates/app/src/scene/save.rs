//! Writing a scene file atomically: write a temporary file beside the target, flush it to disk,
//! then rename it over the target. A failed save leaves the existing file as it was. An existing
//! file keeps its permissions, and a symbolic link stays a link: the file it points to is the
//! one written.

use std::fs::{self, File};
use std::io::Write;
use std::path::{Path, PathBuf};

use super::SceneError;
use super::decode::decode_scene;
use super::document::Scene;
use super::encode::{Out, encode_scene};

/// The scene as pretty-printed JSON text, ending with a newline; each number is written with
/// the decimals its field keeps (`49.53`, not `49.53125000000001`).
pub fn to_json(scene: &Scene) -> String {
    text_of(&encode_scene(scene))
}

/// The scene as [`to_json`] writes it but with every number in full, so that loading it gives
/// back exactly this scene: for a recovery copy of unsaved work, not for the user's files.
pub fn to_json_unrounded(scene: &Scene) -> String {
    text_of(&encode_scene(scene).unrounded())
}

fn text_of(out: &Out) -> String {
    let mut text = serde_json::to_string_pretty(out)
        // Our encoder only produces strings, numbers, lists and objects with string keys, which
        // serde_json always writes; this fallback is never taken.
        .unwrap_or_default();
    text.push('\n');
    text
}

/// The scene as a save writes it and a load reads it back: every number rounded to the
/// decimals its field keeps. The editor keeps this as its scene once saved, so that the file and
/// the window agree.
pub fn as_saved(scene: &Scene) -> Scene {
    serde_json::to_value(encode_scene(scene))
        .ok()
        .and_then(|value| decode_scene(&value).ok())
        .unwrap_or_else(|| scene.clone())
}

/// Saves the scene to `path` atomically.
///
/// # Errors
/// [`SceneError::Write`] if the temporary file cannot be written or renamed; the existing file
/// at `path`, if any, is unchanged and the temporary file is removed.
pub fn save(scene: &Scene, path: &Path) -> Result<(), SceneError> {
    save_text(&to_json(scene), path).map_err(|source| SceneError::Write {
        path: path.to_path_buf(),
        source,
    })
}

/// Saves the scene to `path` atomically with every number in full ([`to_json_unrounded`]): a
/// recovery copy that loads back to exactly the scene it was written from.
///
/// # Errors
/// As [`save`].
pub fn save_unrounded(scene: &Scene, path: &Path) -> Result<(), SceneError> {
    save_text(&to_json_unrounded(scene), path).map_err(|source| SceneError::Write {
        path: path.to_path_buf(),
        source,
    })
}

/// Writes `text` to `path` atomically (temporary file beside it, flushed, renamed over it): the
/// scene files and every other file the program writes (setpoint CSV, pictures). When `path` is
/// a symbolic link, the file it leads to is written and the link stays; an existing file keeps
/// its permissions.
///
/// # Errors
/// The I/O error if the temporary file cannot be written or renamed; the existing file at
/// `path`, if any, is unchanged and the temporary file is removed.
pub fn save_text(text: &str, path: &Path) -> std::io::Result<()> {
    let target = through_links(path)?;
    let path = target.as_path();
    let temporary = temporary_beside(path);
    let written = write_synced(&temporary, text.as_bytes()).and_then(|()| {
        if let Ok(existing) = fs::metadata(path)
            && existing.is_file()
        {
            fs::set_permissions(&temporary, existing.permissions())?;
        }
        if path.is_dir() {
            // rename() would replace an empty directory on some systems; never do that.
            return Err(std::io::Error::new(
                std::io::ErrorKind::IsADirectory,
                "the target is a directory",
            ));
        }
        fs::rename(&temporary, path)
    });
    if let Err(error) = written {
        let _ = fs::remove_file(&temporary);
        return Err(error);
    }
    // Make the rename itself durable where the system allows opening a directory.
    if let Some(parent) = parent_dir(path)
        && let Ok(dir) = File::open(parent)
    {
        let _ = dir.sync_all();
    }
    Ok(())
}

/// The file a path leads to: `path` itself unless it is a symbolic link, else the link's target
/// (relative targets from the link's folder), followed through up to 40 links as the system
/// does.
fn through_links(path: &Path) -> std::io::Result<PathBuf> {
    let mut current = path.to_path_buf();
    for _ in 0..40 {
        match fs::symlink_metadata(&current) {
            Ok(metadata) if metadata.file_type().is_symlink() => {
                let target = fs::read_link(&current)?;
                current = match parent_dir(&current) {
                    Some(parent) if target.is_relative() => parent.join(target),
                    _ => target,
                };
            }
            _ => return Ok(current),
        }
    }
    Err(std::io::Error::other(format!(
        "{} leads through more than 40 symbolic links",
        path.display()
    )))
}

fn write_synced(path: &Path, bytes: &[u8]) -> std::io::Result<()> {
    let mut file = File::create(path)?;
    file.write_all(bytes)?;
    file.sync_all()
}

fn parent_dir(path: &Path) -> Option<&Path> {
    match path.parent() {
        Some(parent) if parent.as_os_str().is_empty() => Some(Path::new(".")),
        other => other,
    }
}

/// `dir/.name.saving-PID` beside the target, so the rename stays on one file system.
fn temporary_beside(path: &Path) -> PathBuf {
    let name = path
        .file_name()
        .map(|name| name.to_string_lossy().into_owned())
        .unwrap_or_else(|| "scene".into());
    let file = format!(".{name}.saving-{}", std::process::id());
    match parent_dir(path) {
        Some(parent) => parent.join(file),
        None => PathBuf::from(file),
    }
}
