//! `armwright plan`, `simulate` and `retime` on the sample scenes: JSON keys, CSV setpoints,
//! exit codes, and a retimed scene that reproduces its own "after" figures.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

mod common;

use serde_json::{Value, json};
use std::path::{Path, PathBuf};
use std::process::{Command, Output};

const SAMPLES: [&str; 3] = ["pen-plotter", "peg-sorter", "spacer-stacker"];

fn sample(name: &str) -> PathBuf {
    armwright_test_support::samples::sample_scene(name)
}

fn armwright(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_armwright"))
        .args(args)
        .output()
        .expect("the binary runs")
}

fn json_of(output: &Output) -> Value {
    serde_json::from_slice(&output.stdout).expect("JSON on standard output")
}

fn scratch(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("armwright-cli-timing-{}", std::process::id()));
    std::fs::create_dir_all(&dir).expect("scratch dir");
    dir.join(name)
}

/// A scene file read as JSON.
fn read_json(path: &Path) -> Value {
    serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap()
}

/// Writes `scene` to the scratch file `name`; returns its path.
fn write_scene(name: &str, scene: &Value) -> PathBuf {
    let path = scratch(name);
    std::fs::write(&path, serde_json::to_string_pretty(scene).unwrap()).unwrap();
    path
}

/// The JSON report of `armwright <command> <file> --json`.
fn report_of(command: &str, file: &Path) -> Value {
    json_of(&armwright(&[command, file.to_str().unwrap(), "--json"]))
}

/// Retimes `input` for at most 1.5 mm overshoot into `output`, checks that it succeeded, and
/// returns its JSON report.
fn retime_to(input: &Path, output: &Path) -> Value {
    let out = armwright(&[
        "retime",
        input.to_str().unwrap(),
        "--max-overshoot",
        "1.5",
        "--write",
        output.to_str().unwrap(),
        "--json",
    ]);
    assert!(
        out.status.success(),
        "{}: {}",
        input.display(),
        String::from_utf8_lossy(&out.stdout)
    );
    json_of(&out)
}

#[test]
fn plan_reports_the_cycle_and_writes_setpoints() {
    for name in SAMPLES {
        let csv = scratch(&format!("{name}.csv"));
        let file = sample(name);
        let out = armwright(&[
            "plan",
            file.to_str().unwrap(),
            "--json",
            "--rate",
            "200",
            "--csv",
            csv.to_str().unwrap(),
        ]);
        assert!(
            out.status.success(),
            "{name}: {}",
            String::from_utf8_lossy(&out.stderr)
        );
        let report = json_of(&out);
        let cycle = report["cycle_time_s"].as_f64().expect("cycle_time_s");
        assert!(cycle > 0.0);
        let segments = report["segments"].as_array().expect("segments");
        let last = segments.last().expect("at least one segment");
        let end = last["start_s"].as_f64().unwrap() + last["duration_s"].as_f64().unwrap();
        assert!(
            (end - cycle).abs() < 1e-3,
            "{name}: segments end at {end}, cycle {cycle}"
        );
        assert!(report["peak_commanded_torque_use_pct"].as_f64().unwrap() > 0.0);
        for waypoint in report["waypoints"].as_array().unwrap() {
            assert!(waypoint["commanded_torque_use_pct"].as_f64().is_some());
            // The heaviest payload each move could carry, in grams.
            assert!(waypoint["max_payload_g"].as_f64().unwrap() > 0.0, "{name}");
        }
        // CSV: a header naming each joint with its unit and the gripper, then rows at 200 Hz to
        // the end.
        let text = std::fs::read_to_string(&csv).expect("CSV written");
        let mut lines = text.lines();
        let header = lines.next().expect("header");
        assert!(
            header.starts_with("time_s,")
                && header.contains("_deg")
                && header.ends_with(",gripper_closed"),
            "{header}"
        );
        let rows: Vec<Vec<f64>> = lines
            .map(|l| l.split(',').map(|v| v.parse().expect("a number")).collect())
            .collect();
        assert_eq!(rows[1][0] - rows[0][0], 0.005);
        assert!((rows.last().unwrap()[0] - cycle).abs() < 1e-3);
        assert_eq!(rows[0].len(), header.split(',').count());
        assert!(
            rows.iter()
                .all(|row| matches!(row.last(), Some(&v) if v == 0.0 || v == 1.0)),
            "{name}: the gripper column holds 0 or 1"
        );
    }
}

#[test]
fn simulate_reports_every_waypoint() {
    for name in SAMPLES {
        let file = sample(name);
        let out = armwright(&["simulate", file.to_str().unwrap(), "--json"]);
        assert!(
            out.status.success(),
            "{name}: {}",
            String::from_utf8_lossy(&out.stderr)
        );
        let report = json_of(&out);
        for key in [
            "cycle_time_s",
            "worst_overshoot_mm",
            "worst_simulated_torque_use_pct",
            "peak_commanded_torque_use_pct",
        ] {
            assert!(report[key].as_f64().is_some(), "{name} lacks {key}");
        }
        assert_eq!(report["ok"], Value::Bool(true), "{name}");
        assert_eq!(report["unsettled_gripper_stops"], json!(0), "{name}");
        let scene = read_json(&file);
        let waypoints = report["waypoints"].as_array().expect("waypoints");
        assert_eq!(
            waypoints.len(),
            scene["waypoints"].as_array().unwrap().len()
        );
        for waypoint in waypoints {
            assert!(waypoint["overshoot_mm"].as_f64().unwrap() >= 0.0);
            assert!(waypoint["simulated_torque_use_pct"].as_f64().unwrap() <= 100.0);
            assert!(waypoint.get("settle_ms").is_some());
            if waypoint["gripper_acts_s"].is_number() {
                // A pick or place: settled first, and its placement success.
                assert_eq!(waypoint["settled"], Value::Bool(true), "{name}");
                let success = waypoint["placement_success"].as_f64().unwrap();
                let closed = waypoint["placement_success_closed_form"].as_f64().unwrap();
                assert!((0.0..=1.0).contains(&success));
                assert!(
                    (success - closed).abs() < 0.1,
                    "{name}: {success} vs {closed}"
                );
                let error = &waypoint["placement_error_mm"];
                assert!(error["p95"].as_f64().unwrap() >= error["mean"].as_f64().unwrap());
            }
        }
    }
}

#[test]
fn retimed_scenes_meet_the_target_and_simulate_to_the_after_figures() {
    for name in SAMPLES {
        let file = sample(name);
        let out_file = scratch(&format!("{name}.retimed.armwright.json"));
        let before_bytes = std::fs::read(&file).unwrap();
        let report = retime_to(&file, &out_file);
        assert_eq!(report["met"], Value::Bool(true));
        let after = &report["after"];
        assert!(after["worst_overshoot_mm"].as_f64().unwrap() <= 1.5);
        assert!(after["worst_simulated_torque_use_pct"].as_f64().unwrap() <= 100.0);
        assert_eq!(after["unsettled_gripper_stops"], json!(0));
        // The samples already meet 1.5 mm: never slower than they were.
        assert_eq!(report["already_met"], Value::Bool(true), "{name}");
        assert!(
            after["cycle_time_s"].as_f64().unwrap()
                <= report["before"]["cycle_time_s"].as_f64().unwrap()
        );
        assert!(report["binding"].is_string(), "{name}");
        assert!(report["before"]["cycle_time_s"].as_f64().is_some());
        assert_eq!(
            std::fs::read(&file).unwrap(),
            before_bytes,
            "the input is untouched"
        );
        let again = report_of("simulate", &out_file);
        for key in [
            "cycle_time_s",
            "worst_overshoot_mm",
            "worst_simulated_torque_use_pct",
        ] {
            let (a, b) = (again[key].as_f64().unwrap(), after[key].as_f64().unwrap());
            assert!(
                (a - b).abs() <= 1e-3 * (1.0 + b.abs()),
                "{name} {key}: {a} vs {b}"
            );
        }
    }
}

#[test]
fn a_target_the_servos_cannot_hold_exits_one_and_names_the_waypoint() {
    // 2 % of stall torque cannot hold the arm up against gravity, however slowly it moves.
    let file = sample("spacer-stacker");
    let out = armwright(&[
        "retime",
        file.to_str().unwrap(),
        "--max-overshoot",
        "1.5",
        "--torque-share",
        "0.02",
        "--json",
    ]);
    assert_eq!(out.status.code(), Some(1));
    let report = json_of(&out);
    assert_eq!(report["met"], Value::Bool(false));
    let error = report["error"].as_str().expect("error");
    assert!(
        error.contains("waypoint 0") && error.contains("joint"),
        "{error}"
    );
}

#[test]
fn bad_retime_options_exit_two() {
    let file = sample("pen-plotter");
    let out = armwright(&[
        "retime",
        file.to_str().unwrap(),
        "--max-overshoot",
        "1",
        "--torque-share",
        "1.5",
    ]);
    assert_eq!(out.status.code(), Some(2));
    let out = armwright(&[
        "plan",
        file.to_str().unwrap(),
        "--csv",
        "/nonexistent-dir/x.csv",
        "--rate",
        "10",
    ]);
    assert_eq!(out.status.code(), Some(2));
}

#[test]
fn an_out_of_range_option_says_its_range_and_the_rate_is_checked_without_csv() {
    let file = sample("pen-plotter");
    let out = armwright(&["plan", file.to_str().unwrap(), "--rate", "0"]);
    assert_eq!(out.status.code(), Some(2));
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(stderr.contains("--rate: 0 Hz is out of range"), "{stderr}");
    assert!(stderr.contains("50 to 1000 Hz"), "{stderr}");
    let out = armwright(&[
        "retime",
        file.to_str().unwrap(),
        "--max-overshoot",
        "1",
        "--torque-share",
        "1.5",
    ]);
    assert_eq!(out.status.code(), Some(2));
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(
        stderr.contains("--torque-share: 1.5 is out of range; it must be above 0 and at most 1"),
        "{stderr}"
    );
}

#[test]
fn a_shaped_scene_retimes_with_its_runs_shaped() {
    let mut scene = read_json(&sample("pen-plotter"));
    scene["timing"]["shaping"] = Value::from("zvd");
    let input = write_scene("shaped.armwright.json", &scene);
    let output = scratch("shaped.retimed.armwright.json");
    let report = retime_to(&input, &output);
    assert_eq!(report["shaping"], Value::from("zvd"));
    assert!(report["shaped_runs"].as_u64().unwrap() > 0, "{report}");
    let plan = report_of("plan", &output);
    assert_eq!(plan["shaped_runs"], report["shaped_runs"]);
    let again = report_of("simulate", &output);
    let (a, b) = (
        again["cycle_time_s"].as_f64().unwrap(),
        report["after"]["cycle_time_s"].as_f64().unwrap(),
    );
    assert!((a - b).abs() < 1e-3, "{a} vs {b}");
}

/// The scene's joint limits from `timing.joint_limits`, as `plan --json` reports them.
fn planned_limit(report: &Value, joint: &str, key: &str) -> f64 {
    report["joint_limits"]
        .as_array()
        .expect("joint_limits")
        .iter()
        .find(|entry| entry["joint"] == joint)
        .unwrap_or_else(|| panic!("no {joint} in {report}"))[key]
        .as_f64()
        .unwrap_or_else(|| panic!("no {key} for {joint} in {report}"))
}

#[test]
fn joint_limits_in_the_scene_bound_plan_simulate_and_retime() {
    // The peg sorter's shoulder turns and its lift slides: one limit in deg/s, one in mm/s².
    let original = sample("peg-sorter");
    let mut scene = read_json(&original);
    scene["timing"]["joint_limits"] = serde_json::json!([
        { "joint": "shoulder", "max_velocity_deg_per_s": 25.0, "max_jerk_deg_per_s3": 5000.0 },
        { "joint": "lift", "max_acceleration_mm_per_s2": 80.0 }
    ]);
    let input = write_scene("limited.armwright.json", &scene);

    let free = report_of("plan", &original);
    let limited = report_of("plan", &input);
    assert_eq!(
        planned_limit(&limited, "shoulder", "max_velocity_deg_per_s"),
        25.0
    );
    assert_eq!(
        planned_limit(&limited, "lift", "max_acceleration_mm_per_s2"),
        80.0
    );
    // The joints left alone keep the limits from their servos.
    assert_eq!(
        planned_limit(&limited, "elbow", "max_velocity_deg_per_s"),
        planned_limit(&free, "elbow", "max_velocity_deg_per_s")
    );
    assert!(planned_limit(&free, "shoulder", "max_velocity_deg_per_s") > 25.0);
    // Jerk: the scene's own for the shoulder, the acceleration ÷ 0.05 s for the others.
    assert_eq!(
        planned_limit(&limited, "shoulder", "max_jerk_deg_per_s3"),
        5000.0
    );
    let lift_jerk = planned_limit(&limited, "lift", "max_jerk_mm_per_s3");
    assert!((lift_jerk - 80.0 / 0.05).abs() < 1e-3, "{lift_jerk}");
    let elbow_jerk = planned_limit(&free, "elbow", "max_jerk_deg_per_s3");
    let elbow_acceleration = planned_limit(&free, "elbow", "max_acceleration_deg_per_s2");
    assert!(
        (elbow_jerk - elbow_acceleration / 0.05).abs() < 1e-2,
        "{elbow_jerk}"
    );
    let cycle = limited["cycle_time_s"].as_f64().unwrap();
    assert!(
        cycle > free["cycle_time_s"].as_f64().unwrap(),
        "slower limits, longer cycle"
    );

    // simulate and retime follow the same limited plan.
    let simulated = report_of("simulate", &input);
    assert_eq!(simulated["cycle_time_s"].as_f64().unwrap(), cycle);
    let output = scratch("limited.retimed.armwright.json");
    let report = retime_to(&input, &output);
    assert_eq!(report["before"]["cycle_time_s"].as_f64().unwrap(), cycle);
    // The retimed scene keeps the limits, and plans with them.
    let written = read_json(&output);
    assert_eq!(
        written["timing"]["joint_limits"],
        scene["timing"]["joint_limits"]
    );
    let replanned = report_of("plan", &output);
    assert_eq!(
        planned_limit(&replanned, "shoulder", "max_velocity_deg_per_s"),
        25.0
    );
}

#[test]
fn a_joint_limit_for_no_joint_is_refused_with_its_place() {
    let mut scene = read_json(&sample("pen-plotter"));
    scene["timing"]["joint_limits"] =
        serde_json::json!([{ "joint": "knee", "max_velocity_deg_per_s": 30.0 }]);
    let input = write_scene("no-such-joint.armwright.json", &scene);
    let file = input.to_str().unwrap();
    for args in [
        vec!["plan", file],
        vec!["simulate", file],
        vec!["retime", file, "--max-overshoot", "1.5"],
    ] {
        let command = args[0];
        let out = armwright(&args);
        // A problem in the scene: exit 1, the problem named at its place.
        assert_eq!(out.status.code(), Some(1), "{command}");
        let text = String::from_utf8_lossy(&out.stderr);
        assert!(
            text.contains("timing.joint_limits[0].joint") && text.contains("\"knee\""),
            "{command}: {text}"
        );
    }
}

#[test]
fn a_gripper_acting_before_the_arm_settles_exits_one_naming_the_waypoint() {
    // The spacer stacker's first pick with no dwell: the gripper closes on arrival.
    let mut document = read_json(&sample("spacer-stacker"));
    document["waypoints"][1]["dwell_ms"] = json!(0.0);
    let file = scratch("unsettled-pick.armwright.json");
    std::fs::write(&file, serde_json::to_string_pretty(&document).unwrap()).unwrap();
    let out = armwright(&["simulate", file.to_str().unwrap(), "--json"]);
    assert_eq!(out.status.code(), Some(1));
    let report = json_of(&out);
    assert_eq!(report["ok"], Value::Bool(false));
    assert_eq!(report["waypoints"][1]["settled"], Value::Bool(false));
    let problem = &report["problems"][0];
    assert_eq!(problem["waypoint"], json!(1));
    assert!(
        problem["message"]
            .as_str()
            .unwrap()
            .contains("grip spacer 1"),
        "{problem}"
    );
    // Retiming gives that stop a dwell to settle in, and then the gripper's own time.
    let retimed = scratch("unsettled-pick.retimed.armwright.json");
    let report = retime_to(&file, &retimed);
    assert_eq!(report["met"], Value::Bool(true));
    assert_eq!(report["already_met"], Value::Bool(false));
    assert_eq!(report["after"]["unsettled_gripper_stops"], json!(0));
    assert!(report["waypoints"][1]["dwell_ms_after"].as_f64().unwrap() >= 200.0);
    let out = armwright(&["simulate", retimed.to_str().unwrap()]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
}
