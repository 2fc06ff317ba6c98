//! Reading a scene file: bytes → JSON (no key given twice) → migrated → decoded → validated →
//! arm model built. Loading only reads: a failed load never changes the file. Text that is not
//! plain UTF-8 JSON (a byte-order mark, UTF-16, comments) is named for what it is.

use std::path::Path;

use super::SceneError;
use super::decode::decode_scene;
use super::document::Scene;
use super::duplicate_keys::duplicate_keys;
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
/// [`SceneError::Syntax`] (with line and column, and what was found: a byte-order mark, UTF-16
/// text, a comment) if the bytes are not JSON;
/// [`SceneError::NotAScene`], [`SceneError::MissingVersion`], [`SceneError::BadVersion`] or
/// [`SceneError::NewerVersion`] if the format or version is wrong; [`SceneError::Problems`]
/// with every problem found, each at its JSON path (a key given twice in one object among
/// them), otherwise.
pub fn load_bytes(bytes: &[u8]) -> Result<Scene, SceneError> {
    if let Some(found) = not_plain_json(bytes) {
        return Err(SceneError::Syntax {
            line: 1,
            column: 1,
            message: found,
        });
    }
    let value: serde_json::Value =
        serde_json::from_slice(bytes).map_err(|error| SceneError::Syntax {
            line: error.line(),
            column: error.column(),
            message: comment_at(bytes, error.line(), error.column())
                .unwrap_or_else(|| strip_position(&error.to_string())),
        })?;
    let current = to_current(value)?;
    let mut problems = duplicate_keys(bytes);
    let decoded = decode_scene(&current);
    let scene = match decoded {
        Ok(scene) if problems.is_empty() => scene,
        Ok(_) => return Err(SceneError::Problems { problems }),
        Err(more) => {
            problems.extend(more);
            return Err(SceneError::Problems { problems });
        }
    };
    let problems = validate(&scene);
    if !problems.is_empty() {
        return Err(SceneError::Problems { problems });
    }
    build_arm(&scene.arm).map_err(|problem| SceneError::Problems {
        problems: vec![problem],
    })?;
    Ok(scene)
}

/// What the bytes hold when they are text but not plain UTF-8 JSON at the start: a UTF-8
/// byte-order mark, or UTF-16 (with or without its mark).
fn not_plain_json(bytes: &[u8]) -> Option<String> {
    const SAVE: &str = "save the file as UTF-8 without a byte-order mark";
    if bytes.starts_with(&[0xEF, 0xBB, 0xBF]) {
        return Some(format!(
            "the file starts with a UTF-8 byte-order mark (bytes EF BB BF), which JSON does not \
             allow; {SAVE}"
        ));
    }
    let utf16 = bytes.starts_with(&[0xFF, 0xFE])
        || bytes.starts_with(&[0xFE, 0xFF])
        // Without a mark, ASCII text in UTF-16 has a zero byte beside each of its first letters.
        || (bytes.len() >= 4 && (bytes[0] == 0) != (bytes[1] == 0) && (bytes[2] == 0) != (bytes[3] == 0));
    utf16.then(|| format!("the file is UTF-16 text; {SAVE}"))
}

/// A comment where the parser stopped (`line` and `column` 1-based, as serde_json counts):
/// JSON has none, so say so instead of "expected value".
fn comment_at(bytes: &[u8], line: usize, column: usize) -> Option<String> {
    let text = String::from_utf8_lossy(bytes);
    let at_line = text.lines().nth(line.checked_sub(1)?)?;
    // serde_json's column is the character it stopped at; look from one before it, where the
    // comment's first slash is, and at the line's own start (a comment after some spaces).
    let from = at_line
        .char_indices()
        .nth(column.saturating_sub(1))
        .map_or(at_line.len(), |(index, _)| index);
    let candidates = [
        at_line.get(from.saturating_sub(1)..),
        Some(at_line.trim_start()),
    ];
    let opener = candidates.into_iter().flatten().find_map(|rest| {
        ["//", "/*"]
            .into_iter()
            .find(|opener| rest.starts_with(opener))
    })?;
    Some(format!(
        "found a comment (\"{opener}\"); JSON has no comments, so remove it (the scene's \
         \"description\" holds free text)"
    ))
}

/// serde_json ends its messages with " at line L column C"; the error says that separately.
fn strip_position(message: &str) -> String {
    match message.rfind(" at line ") {
        Some(cut) => message[..cut].to_string(),
        None => message.to_string(),
    }
}
