//! Reading a scene file: bytes → JSON → migrated → decoded → validated → arm model built.
//! Loading only reads: a failed load never changes the file.

use std::path::Path;

use super::SceneError;
use super::decode::decode_scene;
use super::document::Scene;
use super::migrate::to_current;
use super::units::build_arm;
use super::validate::validate;

/// Loads and checks the scene at `path`.
///
/// # Errors
/// [`SceneError::Read`] if the file cannot be read; otherwise as [`load_bytes`].
pub fn load(path: &Path) -> Result<Scene, SceneError> {
    let bytes = std::fs::read(path).map_err(|source| SceneError::Read {
        path: path.to_path_buf(),
        source,
    })?;
    load_bytes(&bytes)
}

/// Parses and checks a scene from the bytes of a file.
///
/// # Errors
/// [`SceneError::Syntax`] (with line and column) if the bytes are not JSON;
/// [`SceneError::NotAScene`], [`SceneError::MissingVersion`], [`SceneError::BadVersion`] or
/// [`SceneError::NewerVersion`] if the format or version is wrong; [`SceneError::Problems`]
/// with every problem found, each at its JSON path, otherwise.
pub fn load_bytes(bytes: &[u8]) -> Result<Scene, SceneError> {
    let value: serde_json::Value =
        serde_json::from_slice(bytes).map_err(|error| SceneError::Syntax {
            line: error.line(),
            column: error.column(),
            message: strip_position(&error.to_string()),
        })?;
    let current = to_current(value)?;
    let scene = decode_scene(&current).map_err(|problems| SceneError::Problems { problems })?;
    let problems = validate(&scene);
    if !problems.is_empty() {
        return Err(SceneError::Problems { problems });
    }
    build_arm(&scene.arm).map_err(|problem| SceneError::Problems {
        problems: vec![problem],
    })?;
    Ok(scene)
}

/// serde_json ends its messages with " at line L column C"; the error says that separately.
fn strip_position(message: &str) -> String {
    match message.rfind(" at line ") {
        Some(cut) => message[..cut].to_string(),
        None => message.to_string(),
    }
}
