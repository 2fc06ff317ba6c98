//! `armwright reach`: every branch maps back to the target, the chosen branch is the one
//! nearest --near, and an unreachable target exits 1 with its reason.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

mod common;

use armwright_test_support::reference::numbers;
use common::{armwright, armwright_json, sample_path};
use serde_json::{Value, json};

fn joined(values: &[f64]) -> String {
    values
        .iter()
        .map(|v| v.to_string())
        .collect::<Vec<_>>()
        .join(",")
}

fn tool_of(file: &str, joints: &[f64]) -> Value {
    let (code, out) = armwright_json(&[
        "pose",
        file,
        &format!("--joints={}", joined(joints)),
        "--json",
    ]);
    assert_eq!(code, 0, "{out}");
    out
}

/// Reaches the tool point of `joints` (with `angle_key` and, if given, roll) again and checks
/// every branch and the chosen one.
fn reach_back(sample: &str, joints: &[f64], angle_key: &str, with_roll: bool) {
    let file = sample_path(sample);
    let pose = tool_of(&file, joints);
    let mut to = numbers(&pose["tool_mm"]);
    to.push(pose[angle_key].as_f64().unwrap());
    if with_roll {
        to.push(pose["tool_roll_deg"].as_f64().unwrap());
    }
    let (code, out) = armwright_json(&[
        "reach",
        &file,
        &format!("--to={}", joined(&to)),
        &format!("--near={}", joined(joints)),
        "--json",
    ]);
    assert_eq!(code, 0, "{out}");
    let solutions = out["solutions_deg"].as_array().unwrap();
    assert!(!solutions.is_empty());
    assert_eq!(
        out["solution_labels"].as_array().unwrap().len(),
        solutions.len()
    );
    for solution in solutions {
        let back = numbers(&tool_of(&file, &numbers(solution))["tool_mm"]);
        for axis in 0..3 {
            assert!(
                (back[axis] - to[axis]).abs() < 1e-3,
                "{sample}: {back:?} vs {to:?}"
            );
        }
    }
    // The pose the target came from is reached again, and it is the one nearest itself.
    let chosen = numbers(&out["chosen_deg"]);
    for (a, b) in chosen.iter().zip(joints) {
        assert!(
            (a - b).abs() < 1e-2,
            "{sample}: chosen {chosen:?} vs {joints:?}"
        );
    }
}

#[test]
fn every_branch_reaches_the_target_on_each_arm_type() {
    reach_back(
        "peg-sorter.armwright.json",
        &[40.0, -70.0, -12.0, 25.0],
        "tool_yaw_deg",
        false,
    );
    reach_back(
        "pen-plotter.armwright.json",
        &[20.0, 60.0, -70.0, -30.0],
        "tool_pitch_deg",
        false,
    );
    reach_back(
        "spacer-stacker.armwright.json",
        &[-30.0, 70.0, -60.0, -40.0, 35.0],
        "tool_pitch_deg",
        true,
    );
    // Pointing straight down (pitch −90°), where yaw and roll read from the tool frame alone
    // would be undetermined.
    reach_back(
        "spacer-stacker.armwright.json",
        &[30.38, 39.39, -86.16, -43.23, 20.0],
        "tool_pitch_deg",
        true,
    );
}

#[test]
fn both_hands_of_the_horizontal_arm_are_offered() {
    // With the tool yaw fixed at 0° both the left- and the right-handed elbow keep the wrist
    // roll inside its ±90° limits.
    let file = sample_path("peg-sorter.armwright.json");
    let (code, out) = armwright_json(&["reach", &file, "--to=150,50,80,0", "--json"]);
    assert_eq!(code, 0, "{out}");
    let labels = out["solution_labels"].as_array().unwrap();
    assert_eq!(labels.len(), 2, "{out}");
    let elbows: Vec<f64> = out["solutions_deg"]
        .as_array()
        .unwrap()
        .iter()
        .map(|s| numbers(s)[1])
        .collect();
    assert!(
        elbows[0] * elbows[1] < 0.0,
        "the elbow bends either way: {elbows:?}"
    );
}

#[test]
fn a_target_out_of_reach_exits_1_with_the_distance() {
    // Pen plotter: shoulder 75 mm up, links 105 + 100 mm, pen 55 mm. With the pen level
    // (pitch 0) at (1000, 0, 75) the wrist must be at 945 mm from the shoulder but reaches
    // 205 mm: 740 mm short.
    let file = sample_path("pen-plotter.armwright.json");
    let (code, out) = armwright_json(&["reach", &file, "--to=1000,0,75,0", "--json"]);
    assert_eq!(code, 1);
    assert_eq!(out["ok"], json!(false));
    assert_eq!(out["reason"], json!("out_of_reach"));
    let short = out["short_by_mm"].as_f64().unwrap();
    assert!((short - 740.0).abs() < 1.0, "{short}");
    assert!(out["error"].as_str().unwrap().contains("out of reach"));
    let (code, _, stderr) = armwright(&["reach", &file, "--to=1000,0,75,0"]);
    assert_eq!(code, 1);
    assert!(stderr.contains("740.0 mm out of reach"), "{stderr}");
}

#[test]
fn malformed_targets_are_unreadable_input() {
    let file = sample_path("pen-plotter.armwright.json");
    let (code, out) = armwright_json(&["reach", &file, "--to=100,0", "--json"]);
    assert_eq!(code, 2);
    assert!(out["error"].as_str().unwrap().contains("3 to 5 numbers"));
    let (code, out) = armwright_json(&["reach", &file, "--to=150,0,20,-90,30", "--json"]);
    assert_eq!(code, 2, "a 4-joint arm has no wrist roll");
    assert!(out["error"].as_str().unwrap().contains("no wrist roll"));
    let (code, _) = armwright_json(&["reach", &file, "--to=150,0,20", "--near=0,0", "--json"]);
    assert_eq!(code, 2);
    let (code, _, _) = armwright(&["reach", &file]);
    assert_eq!(code, 2, "--to is required");
}

#[test]
fn an_angle_left_out_is_searched_not_taken_from_the_start() {
    // Straight above the 5-joint sample's base: the home pose's tool pitch cannot get there, a
    // pitch near straight up can; leaving the angle out must find it.
    let file = sample_path("spacer-stacker.armwright.json");
    let (code, out) = armwright_json(&["reach", &file, "--to=0,0,335", "--json"]);
    assert_eq!(code, 0, "{out}");
    for solution in out["solutions_deg"].as_array().unwrap() {
        let back = numbers(&tool_of(&file, &numbers(solution))["tool_mm"]);
        for (axis, want) in [0.0, 0.0, 335.0].into_iter().enumerate() {
            assert!((back[axis] - want).abs() < 1e-3, "{back:?}");
        }
    }
    // A target out of reach at every pitch still says by how much.
    let (code, out) = armwright_json(&["reach", &file, "--to=0,0,600", "--json"]);
    assert_eq!(code, 1, "{out}");
    assert_eq!(out["reason"], json!("out_of_reach"), "{out}");
}
