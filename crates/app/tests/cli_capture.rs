//! `armwright capture`: the pose the input arm gives, from the in-process simulated device
//! playing a recording, and as processes through `device-sim` sweeping its inputs behind a
//! pseudo-terminal; and what it says when it cannot.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

mod common;

use std::io::{BufRead, BufReader};
use std::process::{Child, Command, Stdio};

use serde_json::{Value, json};

const SAMPLE: &str = "pen-plotter.armwright.json";

/// The pen plotter with inputs 0, 1 and 3 on base, shoulder and wrist pitch: base −45° at
/// reading 1000 to 45° at 3000, shoulder 20°…100° over 1000…3000, wrist pitch 10° at 500 to
/// −30° at 3500 (an input wired the other way round). The elbow has no input.
fn scene_with_inputs(test: &str) -> String {
    let text = std::fs::read_to_string(common::sample(SAMPLE)).expect("sample");
    let mut document: Value = serde_json::from_str(&text).expect("JSON");
    document["inputs"] = json!([
        { "joint": "base", "input": 0, "points": [
            { "reading": 1000, "angle_deg": -45.0 }, { "reading": 3000, "angle_deg": 45.0 } ] },
        { "joint": "shoulder", "input": 1, "points": [
            { "reading": 1000, "angle_deg": 20.0 }, { "reading": 3000, "angle_deg": 100.0 } ] },
        { "joint": "wrist pitch", "input": 3, "points": [
            { "reading": 500, "angle_deg": 10.0 }, { "reading": 3500, "angle_deg": -30.0 } ] },
    ]);
    common::scene_file(test, &document)
}

/// Each mapped joint's angle for its input's reading, along the lines of [`scene_with_inputs`].
fn expected_angles(readings: &[u16]) -> [f64; 3] {
    let r = |i: usize| f64::from(readings[i]);
    [
        -45.0 + 90.0 * (r(0) - 1000.0) / 2000.0,
        20.0 + 80.0 * (r(1) - 1000.0) / 2000.0,
        10.0 - 40.0 * (r(3) - 500.0) / 3000.0,
    ]
}

fn readings_of(out: &Value) -> Vec<u16> {
    out["readings"]
        .as_array()
        .expect("readings")
        .iter()
        .map(|v| v.as_u64().expect("whole") as u16)
        .collect()
}

fn joint_deg(out: &Value, index: usize) -> f64 {
    out["joints_deg"][index].as_f64().expect("an angle")
}

#[test]
fn a_recorded_reading_gives_the_mapped_pose_with_unmapped_joints_at_home() {
    let scene = scene_with_inputs("capture-recorded");
    let recording = common::scratch_dir("capture-recorded-readings").join("still.txt");
    std::fs::write(
        &recording,
        "# time_s  in0 in1 in2 in3 in4 in5\n0.0  2000 1500 0 2000 4095 0\n",
    )
    .expect("writes");
    let (code, out) = common::armwright_json(&[
        "capture",
        &scene,
        "--simulated",
        "--readings",
        &recording.to_string_lossy(),
        "--json",
    ]);
    assert_eq!(code, 0, "{out}");
    assert_eq!(readings_of(&out), [2000, 1500, 0, 2000, 4095, 0]);
    // 2000 is midway on the base's line, 1500 a quarter along the shoulder's, 2000 midway
    // along the wrist's reversed one.
    assert_eq!(joint_deg(&out, 0), 0.0);
    assert_eq!(joint_deg(&out, 1), 40.0);
    assert_eq!(joint_deg(&out, 3), -10.0);
    // The elbow has no input: its home position (the sample's home, −100°… read from the file).
    let text = std::fs::read_to_string(&scene).expect("scene");
    let document: Value = serde_json::from_str(&text).expect("JSON");
    let home = document["arm"]["joints"][2]["home_deg"]
        .as_f64()
        .expect("home");
    assert_eq!(joint_deg(&out, 2), home);
    assert_eq!(out["inputs"], json!([0, 1, null, 3]));
    assert_eq!(out["outside_limits"], json!([]));
    assert_eq!(out["poor_fits"], json!([]));
    assert_eq!(out["joints"][3], "wrist pitch");

    // The text form names every joint, its input and its reading.
    let (code, stdout, stderr) = common::armwright(&[
        "capture",
        &scene,
        "--simulated",
        "--readings",
        &recording.to_string_lossy(),
    ]);
    assert_eq!(code, 0, "{stderr}");
    assert!(
        stdout.contains("readings 2000, 1500, 0, 2000, 4095, 0"),
        "{stdout}"
    );
    assert!(stdout.contains("(input 1, reading 1500)"), "{stdout}");
    assert!(stdout.contains("(no input: home)"), "{stdout}");
}

#[test]
fn a_poor_fit_is_named_and_the_pose_given_all_the_same() {
    // The shoulder's input turns 80° over 50 counts: one step of a 10-bit converter (4 counts)
    // is 6.4° of shoulder, over the 2° the form and check call poor.
    let scene = scene_with_inputs("capture-poor-fit");
    let text = std::fs::read_to_string(&scene).expect("scene");
    let mut document: Value = serde_json::from_str(&text).expect("JSON");
    document["inputs"][1]["points"][1]["reading"] = json!(1050);
    std::fs::write(&scene, document.to_string()).expect("writes");
    let recording = common::scratch_dir("capture-poor-fit-readings").join("still.txt");
    std::fs::write(&recording, "0 2000 1025 0 2000\n").expect("writes");
    let args = ["capture", &scene, "--simulated", "--readings"];
    let recorded = recording.to_string_lossy();
    let (code, out) = common::armwright_json(&[&args[..], &[&recorded, "--json"]].concat());
    assert_eq!(code, 0, "{out}");
    assert_eq!(joint_deg(&out, 1), 60.0, "halfway along the coarse line");
    let poor = out["poor_fits"].as_array().expect("poor fits");
    assert_eq!(poor.len(), 1, "{out}");
    assert_eq!(poor[0]["path"], "inputs[1]");
    let message = poor[0]["message"].as_str().expect("words");
    assert!(
        message.starts_with("input 1 (joint \"shoulder\"): 1.600° per count"),
        "{message}"
    );
    let (code, stdout, stderr) = common::armwright(&[&args[..], &[&recorded]].concat());
    assert_eq!(code, 0, "{stderr}");
    assert!(stdout.contains("(input 1, reading 1025)"), "{stdout}");
    assert!(
        stderr.contains("warning: poor fit: inputs[1]: input 1 (joint \"shoulder\")"),
        "{stderr}"
    );
    // check names it too, as a note: the file has no problem.
    let (code, stdout, stderr) = common::armwright(&["check", &scene]);
    assert_eq!(code, 0, "{stderr}");
    assert!(
        stdout.contains("note: inputs[1]: input 1 (joint \"shoulder\"): 1.600° per count"),
        "{stdout}"
    );
}

#[test]
fn a_pose_outside_the_limits_is_reported_and_exits_1() {
    let scene = scene_with_inputs("capture-outside");
    let recording = common::scratch_dir("capture-outside-readings").join("far.txt");
    // Reading 4000 puts the base at 90°, its limit; 4095 past it.
    std::fs::write(&recording, "0 4095 2000 2000 2000\n").expect("writes");
    let (code, out) = common::armwright_json(&[
        "capture",
        &scene,
        "--simulated",
        "--readings",
        &recording.to_string_lossy(),
        "--json",
    ]);
    assert_eq!(code, 1, "{out}");
    assert_eq!(out["outside_limits"], json!(["base"]));
    assert_eq!(out["ok"], false);
}

#[test]
fn capture_says_what_is_missing() {
    // No inputs in the scene.
    let (code, _, stderr) = common::armwright(&[
        "capture",
        &common::sample_path(SAMPLE),
        "--simulated",
        "--sweep-inputs",
        "4",
    ]);
    assert_eq!(code, 1, "{stderr}");
    assert!(stderr.contains("maps no analog input"), "{stderr}");
    let scene = scene_with_inputs("capture-missing");
    // A simulated device with nothing to play.
    let (code, _, stderr) = common::armwright(&["capture", &scene, "--simulated"]);
    assert_eq!(code, 2, "{stderr}");
    assert!(
        stderr.contains("--readings FILE or --sweep-inputs N"),
        "{stderr}"
    );
    // A recording that does not read, naming its line.
    let recording = common::scratch_dir("capture-missing-readings").join("bad.txt");
    std::fs::write(&recording, "0 100 200\n0.5 100 9000\n").expect("writes");
    let (code, _, stderr) = common::armwright(&[
        "capture",
        &scene,
        "--simulated",
        "--readings",
        &recording.to_string_lossy(),
    ]);
    assert_eq!(code, 2, "{stderr}");
    assert!(
        stderr.contains("line 2: reading 1 \"9000\" is not a whole number from 0 to 4095"),
        "{stderr}"
    );
    // A scene whose input names no joint: the problem at its path.
    let text = std::fs::read_to_string(&scene).expect("scene");
    let mut document: Value = serde_json::from_str(&text).expect("JSON");
    document["inputs"][1]["joint"] = json!("sholder");
    let broken = common::scene_file("capture-missing-broken", &document);
    let (code, _, stderr) =
        common::armwright(&["capture", &broken, "--simulated", "--sweep-inputs", "4"]);
    assert_eq!(code, 1, "{stderr}");
    assert!(
        stderr.contains("inputs[1].joint: no joint is named \"sholder\""),
        "{stderr}"
    );
}

fn interrupt(child: &Child) {
    let status = Command::new("kill")
        .args(["-INT", &child.id().to_string()])
        .status()
        .expect("the kill command runs");
    assert!(status.success());
}

#[cfg(unix)]
#[test]
fn capture_reads_device_sim_sweeping_its_inputs_through_the_pty() {
    let mut device = Command::new(env!("CARGO_BIN_EXE_armwright"))
        .args(["device-sim", "--sweep-inputs", "6", "--sweep-period", "20"])
        .stdin(Stdio::null())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("the armwright binary runs");
    let mut path = String::new();
    BufReader::new(device.stdout.take().expect("stdout"))
        .read_line(&mut path)
        .expect("the device prints its path");
    let path = path.trim().to_owned();
    let scene = scene_with_inputs("capture-pty");
    let mut seen = Vec::new();
    for _ in 0..2 {
        let (code, out) = common::armwright_json(&["capture", &scene, "--port", &path, "--json"]);
        assert_eq!(code, 0, "{out}");
        let readings = readings_of(&out);
        assert_eq!(readings.len(), 6, "{out}");
        // The sweep swings ±1000 around mid-scale.
        assert!(
            readings.iter().all(|r| (1047..=3048).contains(r)),
            "{readings:?}"
        );
        let expected = expected_angles(&readings);
        for (joint, want) in [(0, expected[0]), (1, expected[1]), (3, expected[2])] {
            // JSON angles are rounded to 0.001°.
            assert!(
                (joint_deg(&out, joint) - want).abs() <= 0.0005 + 1e-9,
                "joint {joint}: {} vs {want}",
                joint_deg(&out, joint)
            );
        }
        assert_eq!(out["device"], path.as_str());
        seen.push(readings);
    }
    interrupt(&device);
    let status = device.wait().expect("device-sim ends");
    assert_eq!(status.code(), Some(0));
    // The second capture connected afresh to the same device, which was still sweeping.
    assert_ne!(seen[0], seen[1], "the sweep moved between captures");
}

#[test]
fn capture_and_device_sim_answer_help_with_units_in_their_value_names() {
    for (subcommand, needles) in [
        (
            "capture",
            &[
                "--port <PATH>",
                "--simulated",
                "--readings <FILE>",
                "--sweep-inputs <N>",
                "--sweep-period <S>",
                "Moves nothing",
            ][..],
        ),
        (
            "device-sim",
            &["--readings <FILE>", "--sweep-inputs <N>"][..],
        ),
    ] {
        let (code, stdout, _) = common::armwright(&[subcommand, "--help"]);
        assert_eq!(code, 0, "{subcommand}");
        for needle in needles {
            assert!(
                stdout.contains(needle),
                "{subcommand}: {needle} missing from:\n{stdout}"
            );
        }
    }
}
