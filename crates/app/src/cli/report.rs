//! Loading the scene for a subcommand and printing results as text or JSON. JSON goes to
//! standard output, pretty-printed, keys sorted, units in the key names.

use std::path::Path;

use armwright_kinematics::Arm;
use serde_json::{Value, json};

use super::Outcome;
use crate::scene::{Problem, Scene, SceneError, build_arm, load};

/// The one basis every torque use is given in, named in reports: the effort needed over the
/// servo's stall torque times the scene's torque derating. 100 % is all the share allowed.
pub(crate) const TORQUE_BASIS: &str =
    "% of the derated stall torque (stall torque × timing.torque_derating_pct)";

/// Loads and checks the scene and builds its arm, or prints why not and says how to exit.
pub(crate) fn load_scene(file: &Path, json: bool) -> Result<(Scene, Arm), Outcome> {
    let scene = load(file).map_err(|error| report_load_error(file, &error, json))?;
    match build_arm(&scene.arm) {
        Ok(arm) => Ok((scene, arm)),
        Err(problem) => Err(report_load_error(
            file,
            &SceneError::Problems {
                problems: vec![problem],
            },
            json,
        )),
    }
}

/// The exit outcome a load error calls for: problems in the scene → 1, anything that stops the
/// file being read as a scene → 2.
pub(crate) fn outcome_of(error: &SceneError) -> Outcome {
    match error {
        SceneError::Problems { .. } => Outcome::Refused,
        _ => Outcome::Unreadable,
    }
}

/// Problems as JSON objects `{ "path", "message" }`.
pub(crate) fn problems_json(problems: &[Problem]) -> Value {
    Value::Array(
        problems
            .iter()
            .map(|p| json!({ "path": p.path, "message": p.message }))
            .collect(),
    )
}

/// Prints a load error (JSON on standard output, text on standard error).
pub(crate) fn report_load_error(file: &Path, error: &SceneError, json: bool) -> Outcome {
    let problems: &[Problem] = match error {
        SceneError::Problems { problems } => problems,
        _ => &[],
    };
    if json {
        let mut out = json!({
            "ok": false,
            "file": file.display().to_string(),
            "error": error.to_string(),
            "problems": problems_json(problems),
        });
        if let SceneError::Syntax { line, column, .. } = error {
            out["line"] = json!(line);
            out["column"] = json!(column);
        }
        print_json(&out);
    } else {
        eprintln!("{}: {error}", file.display());
        for problem in problems {
            eprintln!("  {problem}");
        }
    }
    outcome_of(error)
}

/// Prints a failure that is not a load error: `{ "ok": false, "error": … }` plus `extra` keys
/// in JSON, or the message on standard error.
pub(crate) fn fail(json: bool, message: &str, extra: Value, outcome: Outcome) -> Outcome {
    if json {
        let mut out = json!({ "ok": false, "error": message });
        if let (Value::Object(out), Value::Object(extra)) = (&mut out, extra) {
            out.extend(extra);
        }
        print_json(&out);
    } else {
        eprintln!("error: {message}");
    }
    outcome
}

pub(crate) fn print_json(value: &Value) {
    match serde_json::to_string_pretty(value) {
        Ok(text) => println!("{text}"),
        Err(error) => eprintln!("error: cannot write JSON: {error}"),
    }
}

/// Rounds to a fixed number of decimals for reports, so printed figures are stable (and -0
/// prints as 0).
pub(crate) fn rounded(value: f64, decimals: i32) -> f64 {
    let scale = 10f64.powi(decimals);
    let out = (value * scale).round() / scale;
    if out == 0.0 { 0.0 } else { out }
}

/// Rounds each value.
pub(crate) fn all_rounded(values: &[f64], decimals: i32) -> Vec<f64> {
    values.iter().map(|&v| rounded(v, decimals)).collect()
}

/// A list of numbers for text output: "12.5, -3, 0".
pub(crate) fn listed(values: &[f64], decimals: usize) -> String {
    values
        .iter()
        .map(|v| format!("{v:.decimals$}"))
        .collect::<Vec<_>>()
        .join(", ")
}
