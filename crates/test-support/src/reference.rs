//! Shared by the Rust tests that check against fixtures written by the Python generators in
//! `tests/reference/`: where the fixtures are, which Python to run, and how to compare JSON. A
//! missing reference library goes through the shared rule of [`crate::outside_tool`].

use crate::outside_tool;

use serde_json::Value;
use std::path::PathBuf;
use std::process::Command;

/// The `tests/reference/` folder: the generator scripts and their `fixtures/`.
pub fn reference_dir() -> PathBuf {
    crate::workspace_root().join("tests/reference")
}

/// A committed fixture, parsed.
pub fn fixture(name: &str) -> Value {
    let path = reference_dir().join("fixtures").join(name);
    let text = std::fs::read_to_string(&path)
        .unwrap_or_else(|e| panic!("fixture {} is missing: {e}", path.display()));
    serde_json::from_str(&text).expect("fixture is JSON")
}

/// The numbers of a JSON array (a fixture's, or a command's `--json` output); stops loudly,
/// showing the value, when it is not an array of numbers.
pub fn numbers(value: &Value) -> Vec<f64> {
    value
        .as_array()
        .unwrap_or_else(|| panic!("a list of numbers: {value}"))
        .iter()
        .map(|v| v.as_f64().unwrap_or_else(|| panic!("a number: {v}")))
        .collect()
}

/// Python with the reference libraries: `ARMWRIGHT_PYTHON`, else the repository's `.venv`,
/// else `python3` on the path.
pub fn python() -> PathBuf {
    if let Some(path) = std::env::var_os("ARMWRIGHT_PYTHON") {
        return PathBuf::from(path);
    }
    let venv = crate::workspace_root().join(".venv/bin/python");
    if venv.exists() {
        return venv;
    }
    PathBuf::from("python3")
}

/// Runs `generator` (a script in `tests/reference/`) with `--out` into a fresh temporary folder and
/// returns that folder, or `None` when `modules` cannot be imported (the check is skipped with a
/// notice, or fails under `ARMWRIGHT_STRICT=1`; see [`crate::outside_tool`]).
pub fn regenerate(generator: &str, modules: &str) -> Option<PathBuf> {
    let python = python();
    let importable = Command::new(&python)
        .args(["-c", &format!("import {modules}")])
        .output()
        .is_ok_and(|out| out.status.success());
    if !importable {
        let why = format!(
            "{} cannot import {modules}; set up with `python3 -m venv .venv && \
             .venv/bin/pip install -r tests/reference/requirements.txt`",
            python.display()
        );
        outside_tool::cannot_run(&format!("the check against {generator}"), &why);
        return None;
    }
    let out = std::env::temp_dir().join(format!(
        "armwright-reference-{}-{}",
        generator.trim_end_matches(".py"),
        std::process::id()
    ));
    let status = Command::new(&python)
        .arg(reference_dir().join(generator))
        .arg("--out")
        .arg(&out)
        .status()
        .expect("the generator runs");
    assert!(status.success(), "{generator} failed: {status}");
    Some(out)
}

/// Same structure and every number within 1e-12 relative (so a last-digit difference from
/// another numeric build does not fail here; CI's byte-for-byte diff is the stricter check).
pub fn assert_same_json(path: &str, a: &Value, b: &Value) {
    match (a, b) {
        (Value::Number(x), Value::Number(y)) => {
            let (x, y) = (x.as_f64().unwrap(), y.as_f64().unwrap());
            assert!(
                (x - y).abs() <= 1e-12 * (1.0 + x.abs()),
                "{path}: {x} vs {y}"
            );
        }
        (Value::Array(x), Value::Array(y)) => {
            assert_eq!(x.len(), y.len(), "{path}: lengths differ");
            for (i, (p, q)) in x.iter().zip(y).enumerate() {
                assert_same_json(&format!("{path}[{i}]"), p, q);
            }
        }
        (Value::Object(x), Value::Object(y)) => {
            let keys: Vec<_> = x.keys().collect();
            assert_eq!(keys, y.keys().collect::<Vec<_>>(), "{path}: keys differ");
            for key in x.keys() {
                assert_same_json(&format!("{path}.{key}"), &x[key], &y[key]);
            }
        }
        _ => assert_eq!(a, b, "{path}"),
    }
}
