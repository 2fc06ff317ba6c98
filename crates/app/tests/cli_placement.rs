//! Placement success per pick and place: each waypoint's own tolerance
//! (`placement_tolerance_mm`) and each joint's calibration uncertainty (`calibration.
//! uncertainty_deg`, written by `calibrate --write` from the fit's residuals) reach
//! `simulate --json`.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

mod common;

use common::{armwright, armwright_json, articulated5, sample, scene_file};
use serde_json::{Value, json};

fn read_sample(name: &str) -> Value {
    serde_json::from_str(&std::fs::read_to_string(sample(name)).unwrap()).unwrap()
}

fn number(value: &Value) -> f64 {
    value
        .as_f64()
        .unwrap_or_else(|| panic!("not a number: {value}"))
}

/// The spacer stacker's first pick ("grip spacer 1") as `simulate --json` reports it, with the scene
/// changed by `change`.
fn first_pick(test: &str, change: impl Fn(&mut Value)) -> Value {
    let mut scene = read_sample("spacer-stacker.armwright.json");
    change(&mut scene);
    let file = scene_file(test, &scene);
    let (_, report) = armwright_json(&["simulate", &file, "--json"]);
    report["waypoints"]
        .as_array()
        .unwrap()
        .iter()
        .find(|w| w["name"] == "grip spacer 1")
        .cloned()
        .unwrap_or_else(|| panic!("no \"grip spacer 1\": {report}"))
}

fn pick_index(scene: &Value) -> usize {
    scene["waypoints"]
        .as_array()
        .unwrap()
        .iter()
        .position(|w| w["name"] == "grip spacer 1")
        .unwrap()
}

#[test]
fn a_waypoints_own_tolerance_is_used_and_a_wider_one_succeeds_more_often() {
    let at = |tolerance_mm: Option<f64>| {
        first_pick(&format!("placement-tolerance-{tolerance_mm:?}"), |scene| {
            if let Some(mm) = tolerance_mm {
                let index = pick_index(scene);
                scene["waypoints"][index]["placement_tolerance_mm"] = json!(mm);
            }
        })
    };
    let default = at(None);
    assert_eq!(number(&default["placement_tolerance_mm"]), 2.0);
    let tight = at(Some(0.4));
    let loose = at(Some(6.0));
    assert_eq!(number(&tight["placement_tolerance_mm"]), 0.4);
    assert_eq!(number(&loose["placement_tolerance_mm"]), 6.0);
    let share = |w: &Value| number(&w["placement_success"]);
    assert!(share(&tight) < share(&default), "{tight} vs {default}");
    assert!(share(&default) <= share(&loose), "{default} vs {loose}");
    // The error itself does not depend on the tolerance.
    assert_eq!(tight["placement_error_mm"], loose["placement_error_mm"]);
}

#[test]
fn a_bad_tolerance_is_refused_at_its_path() {
    let mut scene = read_sample("spacer-stacker.armwright.json");
    let index = pick_index(&scene);
    scene["waypoints"][index]["placement_tolerance_mm"] = json!(0.0);
    let file = scene_file("placement-tolerance-zero", &scene);
    let (code, stdout, stderr) = armwright(&["check", &file]);
    assert_eq!(code, 1, "{stdout}{stderr}");
    let said = format!("{stdout}{stderr}");
    assert!(
        said.contains(&format!("waypoints[{index}].placement_tolerance_mm")),
        "{said}"
    );
}

#[test]
fn a_larger_calibration_uncertainty_lowers_the_predicted_success() {
    let at = |uncertainty_deg: f64| {
        first_pick(
            &format!("placement-uncertainty-{uncertainty_deg}"),
            |scene| {
                for joint in scene["arm"]["joints"].as_array_mut().unwrap() {
                    joint["calibration"]["uncertainty_deg"] = json!(uncertainty_deg);
                }
            },
        )
    };
    let shares: Vec<f64> = [0.1, 0.5, 1.5]
        .into_iter()
        .map(|u| number(&at(u)["placement_success"]))
        .collect();
    assert!(shares[0] > shares[1] && shares[1] > shares[2], "{shares:?}");
    // Stated at the default (0.5°) it is the default.
    let default = number(&first_pick("placement-uncertainty-none", |_| {})["placement_success"]);
    assert_eq!(shares[1], default);
}

#[test]
fn calibrate_write_records_the_lines_residual_standard_error() {
    // Four readings off a straight line: the residual standard error of the least-squares line,
    // √(Σ r² / (n − 2)) (Draper & Smith, Applied Regression Analysis, 3rd ed., 1998; from
    // memory), worked here from the closed-form line.
    // The base of the test arm turns ±90° within its accepted 900–2100 µs.
    let points = [
        (1000.0, -88.0),
        (1250.0, -45.5),
        (1750.0, 45.5),
        (2000.0, 88.0),
    ];
    let n = points.len() as f64;
    let mean_x = points.iter().map(|p| p.0).sum::<f64>() / n;
    let mean_y = points.iter().map(|p| p.1).sum::<f64>() / n;
    let sxy: f64 = points.iter().map(|p| (p.0 - mean_x) * (p.1 - mean_y)).sum();
    let sxx: f64 = points.iter().map(|p| (p.0 - mean_x).powi(2)).sum();
    let slope = sxy / sxx;
    let squares: f64 = points
        .iter()
        .map(|p| (p.1 - (mean_y + slope * (p.0 - mean_x))).powi(2))
        .sum();
    let expected = (squares / (n - 2.0)).sqrt();
    assert!(
        expected > 0.05,
        "the readings must be off the line: {expected}"
    );

    let file = scene_file("placement-calibrate", &articulated5());
    let out = std::path::Path::new(&file).with_file_name("calibrated.armwright.json");
    let out = out.to_string_lossy().into_owned();
    let listed: Vec<String> = points.iter().map(|(p, a)| format!("{p}:{a}")).collect();
    let (code, report) = armwright_json(&[
        "calibrate",
        &file,
        "--joint",
        "base",
        "--points",
        &listed.join(","),
        "--write",
        &out,
        "--json",
    ]);
    assert_eq!(code, 0, "{report}");
    assert_eq!(report["shape"], "line");
    let written: Value = serde_json::from_slice(&std::fs::read(&out).unwrap()).unwrap();
    let uncertainty = number(&written["arm"]["joints"][0]["calibration"]["uncertainty_deg"]);
    assert!(
        (uncertainty - expected).abs() < 1e-4,
        "{uncertainty} vs {expected}"
    );
    // Two points say nothing of the error: no uncertainty is written.
    let (code, report) = armwright_json(&[
        "calibrate",
        &file,
        "--joint",
        "base",
        "--points",
        "1000:-88,2000:89",
        "--write",
        &out,
        "--json",
    ]);
    assert_eq!(code, 0, "{report}");
    let written: Value = serde_json::from_slice(&std::fs::read(&out).unwrap()).unwrap();
    assert!(
        written["arm"]["joints"][0]["calibration"]
            .get("uncertainty_deg")
            .is_none()
    );
}
