//! Format name and version check, and the migration chain: one step per older version.
//!
//! `STEPS[i]` turns a version `i + 1` document into a version `i + 2` one. Version 1 is the
//! first, so the chain is empty; version 2 adds one function to `STEPS` and bumps
//! [`CURRENT_VERSION`].

use serde_json::Value;

use super::SceneError;

/// The value of the `format` field of every scene file.
pub const FORMAT_NAME: &str = "armwright-scene";

/// The format version this program writes, and the newest it reads.
pub const CURRENT_VERSION: u64 = 1;

/// One migration step: a document of one version in, the next version out.
pub(crate) type Step = fn(Value) -> Result<Value, SceneError>;

/// The steps from each older version to the next, oldest first.
const STEPS: &[Step] = &[];

/// Checks the format name and version and brings the document up to [`CURRENT_VERSION`].
pub(crate) fn to_current(document: Value) -> Result<Value, SceneError> {
    migrate_with(document, STEPS)
}

/// [`to_current`] with a given chain (the current version is `steps.len() + 1`).
pub(crate) fn migrate_with(mut document: Value, steps: &[Step]) -> Result<Value, SceneError> {
    let Value::Object(map) = &document else {
        return Err(SceneError::NotAScene {
            found: "the file holds JSON, but not an object { … }".into(),
        });
    };
    match map.get("format") {
        Some(Value::String(name)) if name == FORMAT_NAME => {}
        Some(other) => {
            return Err(SceneError::NotAScene {
                found: format!("\"format\" is {other}, expected \"{FORMAT_NAME}\""),
            });
        }
        None => {
            return Err(SceneError::NotAScene {
                found: format!("no \"format\" field (expected \"format\": \"{FORMAT_NAME}\")"),
            });
        }
    }
    let version = match map.get("version") {
        None => return Err(SceneError::MissingVersion),
        Some(value) => match value.as_u64() {
            Some(version) if version >= 1 => version,
            _ => {
                return Err(SceneError::BadVersion {
                    found: value.to_string(),
                });
            }
        },
    };
    let current = steps.len() as u64 + 1;
    if version > current {
        return Err(SceneError::NewerVersion {
            found: version,
            supported: current,
        });
    }
    for (index, step) in steps.iter().enumerate().skip((version - 1) as usize) {
        document = step(document)?;
        if let Value::Object(map) = &mut document {
            map.insert("version".into(), Value::from(index as u64 + 2));
        }
    }
    Ok(document)
}

#[cfg(test)]
mod tests {
    use super::*;
    use serde_json::json;

    #[test]
    fn the_current_version_passes_unchanged() {
        let document = json!({ "format": FORMAT_NAME, "version": 1, "arm": {} });
        assert_eq!(to_current(document.clone()).unwrap(), document);
    }

    #[test]
    fn a_newer_version_says_so_clearly() {
        let document = json!({ "format": FORMAT_NAME, "version": CURRENT_VERSION + 1 });
        let error = to_current(document).unwrap_err();
        assert!(matches!(
            error,
            SceneError::NewerVersion {
                found: 2,
                supported: 1
            }
        ));
        let message = error.to_string();
        assert!(message.contains("newer"), "{message}");
        assert!(message.contains("version 2"), "{message}");
    }

    #[test]
    fn a_missing_version_says_what_to_add() {
        let error = to_current(json!({ "format": FORMAT_NAME })).unwrap_err();
        assert!(matches!(error, SceneError::MissingVersion));
        assert!(error.to_string().contains("\"version\": 1"));
    }

    #[test]
    fn a_bad_version_or_format_is_refused() {
        for version in [json!(0), json!("1"), json!(1.5), json!(-1)] {
            let error = to_current(json!({ "format": FORMAT_NAME, "version": version }));
            assert!(matches!(error, Err(SceneError::BadVersion { .. })));
        }
        let error = to_current(json!({ "format": "something-else", "version": 1 }));
        assert!(matches!(error, Err(SceneError::NotAScene { .. })));
        assert!(matches!(
            to_current(json!([1, 2])),
            Err(SceneError::NotAScene { .. })
        ));
    }

    fn rename_speed(mut document: Value) -> Result<Value, SceneError> {
        if let Some(map) = document.as_object_mut()
            && let Some(old) = map.remove("speed")
        {
            map.insert("speed_share_pct".into(), old);
        }
        Ok(document)
    }

    fn add_marker(mut document: Value) -> Result<Value, SceneError> {
        if let Some(map) = document.as_object_mut() {
            map.insert("marker".into(), json!(3));
        }
        Ok(document)
    }

    #[test]
    fn each_older_version_runs_every_later_step_in_order() {
        let steps: &[Step] = &[rename_speed, add_marker];
        let old = json!({ "format": FORMAT_NAME, "version": 1, "speed": 40 });
        let new = migrate_with(old, steps).unwrap();
        assert_eq!(
            new,
            json!({ "format": FORMAT_NAME, "version": 3, "speed_share_pct": 40, "marker": 3 })
        );
        // A version 2 document skips the first step.
        let middle = json!({ "format": FORMAT_NAME, "version": 2, "speed": 40 });
        let new = migrate_with(middle, steps).unwrap();
        assert_eq!(
            new,
            json!({ "format": FORMAT_NAME, "version": 3, "speed": 40, "marker": 3 })
        );
    }
}
