//! Every stream starts with a planned approach, checked through `armwright device-sim` and
//! `stream` as processes on the pseudo-terminal's serial path: from a limp device the arm is
//! woken at its rest pose (each joint's home), held for the wake pause, then approaches the
//! first waypoint; from a device holding another pose, the first setpoint is the pulses the
//! device reported (to one pulse unit) and the approach starts there.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly
#![cfg(unix)]

mod common;

use common::device_sim::{DeviceSim, stream_child};
use std::io::Read;

use serde_json::Value;

/// The shortest sample sequence (about 7.8 s); its rest pose is its last waypoint.
const SAMPLE: &str = "pen-plotter.armwright.json";

/// Streams the sample to `device` at 50 Hz with --yes and --json; returns the exit code, the
/// JSON report and standard error.
fn stream(device: &DeviceSim) -> (i32, Value, String) {
    let mut child = stream_child(SAMPLE, device);
    let mut stderr = String::new();
    let mut err = child.stderr.take().expect("piped");
    let reader = std::thread::spawn(move || {
        let _ = err.read_to_string(&mut stderr);
        stderr
    });
    let mut stdout = String::new();
    child
        .stdout
        .take()
        .expect("piped")
        .read_to_string(&mut stdout)
        .expect("stdout readable");
    let code = child.wait().expect("the stream ends").code().unwrap_or(-1);
    let stderr = reader.join().expect("stderr read");
    let json = serde_json::from_str(&stdout)
        .unwrap_or_else(|error| panic!("not JSON ({error}): {stdout}\n{stderr}"));
    (code, json, stderr)
}

fn numbers(value: &Value) -> Vec<f64> {
    value
        .as_array()
        .unwrap_or_else(|| panic!("a list: {value}"))
        .iter()
        .map(|v| v.as_f64().unwrap_or_else(|| panic!("a number: {v}")))
        .collect()
}

/// The sample's home positions, in degrees: its rest pose.
fn homes() -> Vec<f64> {
    let text = std::fs::read_to_string(common::sample_path(SAMPLE)).expect("sample readable");
    let scene: Value = serde_json::from_str(&text).expect("sample is JSON");
    scene["arm"]["joints"]
        .as_array()
        .expect("joints")
        .iter()
        .map(|joint| joint["home_deg"].as_f64().expect("home_deg"))
        .collect()
}

#[test]
fn a_limp_device_is_woken_at_the_rest_pose_then_a_held_one_is_approached_from_its_pulses() {
    let device = DeviceSim::start();

    // Limp at power-up: the pose is unknown, so the arm wakes at its rest pose first.
    let (code, out, stderr) = stream(&device);
    assert_eq!(code, 0, "{out}\n{stderr}");
    assert_eq!(out["ending"], "finished", "{out}");
    let approach = &out["approach"];
    assert_eq!(approach["from"], "limp", "{out}");
    assert!(stderr.contains("the arm's pose is unknown"), "{stderr}");
    assert!(
        stderr.contains("a limp servo jumps to its first pulse"),
        "{stderr}"
    );
    let rest = numbers(&approach["wake"]["rest_joints_deg_or_mm"]);
    for (got, home) in rest.iter().zip(homes()) {
        assert!((got - home).abs() < 1e-3, "rest {rest:?}");
    }
    let pause_s = approach["wake"]["pause_s"].as_f64().expect("pause");
    assert_eq!(pause_s, 1.0, "the default wake pause");
    let approach_s = approach["duration_s"].as_f64().expect("duration");
    assert!(approach_s > pause_s, "{approach}");
    // The whole stream counts the approach: its frames, then the sequence's.
    let frames = approach["frames"].as_u64().expect("frames");
    let sequence_s = approach["sequence_s"].as_f64().expect("sequence");
    assert_eq!(
        out["frames_planned"].as_u64().expect("planned"),
        frames + (sequence_s * 50.0).ceil() as u64 + 1,
        "{out}"
    );
    assert!(
        (approach["cycle_s"].as_f64().expect("cycle") - (approach_s + sequence_s)).abs() < 2e-3
    );
    // The device said it was limp on every channel.
    assert!(
        out["start_pulses_us"]
            .as_array()
            .expect("protocol 2 reports the output")
            .iter()
            .all(Value::is_null),
        "{out}"
    );

    // Now the device holds the last waypoint's pulses: the approach starts exactly there.
    let (code, out, stderr) = stream(&device);
    assert_eq!(code, 0, "{out}\n{stderr}");
    let approach = &out["approach"];
    assert_eq!(approach["from"], "held", "{out}");
    assert!(approach["wake"].is_null(), "{out}");
    let reported = numbers(&out["start_pulses_us"]);
    let first = numbers(&approach["first_setpoint_us"]);
    assert_eq!(reported.len(), first.len(), "{out}");
    for (channel, (r, f)) in reported.iter().zip(&first).enumerate() {
        assert!(
            (r - f).abs() <= 1.0,
            "channel {channel}: reported {r} µs, first setpoint {f} µs"
        );
    }
    let start = numbers(&approach["start_joints_deg_or_mm"]);
    for (got, home) in start.iter().zip(homes()) {
        assert!((got - home).abs() < 0.2, "start {start:?}");
    }
    assert!(
        approach["duration_s"].as_f64().expect("duration") > 0.5,
        "{approach}"
    );
}
