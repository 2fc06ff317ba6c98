//! Every stream starts with a planned approach, checked through `armwright device-sim` and
//! `stream` as processes on the pseudo-terminal's serial path: from a limp device the arm is
//! woken at its rest pose (each joint's home), held for the wake pause, then approaches the
//! first waypoint; from a device holding another pose, the first setpoint is the pulses the
//! device reported (to one pulse unit) and the approach starts there.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly
#![cfg(unix)]

mod common;

use armwright_test_support::reference::numbers;
use common::device_sim::{DeviceSim, binary, stream_child};
use std::io::Read;
use std::process::Stdio;

use serde_json::Value;

/// The shortest sample sequence (about 7.8 s); its rest pose is its last waypoint.
const SAMPLE: &str = "pen-plotter.armwright.json";

/// Real-time streams take turns, so they do not starve each other on a 2-core machine.
static REAL_TIME: std::sync::Mutex<()> = std::sync::Mutex::new(());

fn one_stream_at_a_time() -> std::sync::MutexGuard<'static, ()> {
    REAL_TIME
        .lock()
        .unwrap_or_else(std::sync::PoisonError::into_inner)
}

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
    let _turn = one_stream_at_a_time();
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

#[test]
fn a_limp_arm_is_woken_one_channel_at_a_time_slowest_first() {
    let _turn = one_stream_at_a_time();
    // The sample with its elbow's servo the slowest and the base's next, and a short pause.
    let text = std::fs::read_to_string(common::sample_path(SAMPLE)).expect("sample readable");
    let mut scene: Value = serde_json::from_str(&text).expect("sample is JSON");
    common::set(
        &mut scene,
        "/arm/joints/2/servo/no_load_speed_deg_per_s",
        serde_json::json!(200.0),
    );
    common::set(
        &mut scene,
        "/arm/joints/0/servo/no_load_speed_deg_per_s",
        serde_json::json!(300.0),
    );
    scene["timing"]["wake_pause_ms"] = serde_json::json!(300.0);
    let path = common::scene_file("wake-order", &scene);
    let device = DeviceSim::start();
    let output = binary()
        .args([
            "stream",
            &path,
            "--port",
            &device.path,
            "--rate",
            "50",
            "--yes",
            "--json",
        ])
        .stdin(Stdio::null())
        .output()
        .expect("the armwright binary runs");
    let stderr = String::from_utf8_lossy(&output.stderr);
    let out: Value = serde_json::from_slice(&output.stdout)
        .unwrap_or_else(|error| panic!("not JSON ({error}): {stderr}"));
    assert_eq!(out["ending"], "finished", "{out}\n{stderr}");
    let wake = &out["approach"]["wake"];
    assert_eq!(wake["together"], false, "{out}");
    let order: Vec<u64> = wake["order"]
        .as_array()
        .expect("the wake order")
        .iter()
        .map(|step| step["channel"].as_u64().expect("a channel"))
        .collect();
    // Slowest first (elbow 200°/s, base 300°/s), then equal speeds in chain order.
    assert_eq!(order, [2, 0, 1, 3], "{out}");
    let at: Vec<f64> = wake["order"]
        .as_array()
        .expect("the wake order")
        .iter()
        .map(|step| step["at_s"].as_f64().expect("a time"))
        .collect();
    assert_eq!(at, [0.0, 0.3, 0.6, 0.9], "{out}");
    assert!(
        stderr.contains("wake order, slowest first: elbow (channel 2)"),
        "{stderr}"
    );
    assert!(
        stderr.contains("a limp servo jumps to its first pulse"),
        "{stderr}"
    );
    // The first setpoint has a pulse on the elbow's channel only.
    let first = out["approach"]["first_setpoint_us"]
        .as_array()
        .expect("seven channels")
        .clone();
    let with_pulse: Vec<usize> = (0..first.len()).filter(|&c| !first[c].is_null()).collect();
    assert_eq!(with_pulse, [2], "{out}");

    // The device saw the channels start one at a time, in that order; the channels no joint
    // uses start with the last joint.
    let seen = common::wait_for_line(&device.changes, "pulses on channels [0, 1, 2, 3, 4, 5, 6]");
    let sets: Vec<&String> = seen
        .iter()
        .filter(|line| line.contains("pulses on channels ["))
        .collect();
    let expected = [
        "pulses on channels [2]",
        "pulses on channels [0, 2]",
        "pulses on channels [0, 1, 2]",
        "pulses on channels [0, 1, 2, 3, 4, 5, 6]",
    ];
    let sets: Vec<&String> = sets
        .into_iter()
        .filter(|line| !line.ends_with("pulses on channels []"))
        .collect();
    assert_eq!(sets.len(), expected.len(), "{seen:?}");
    for (line, want) in sets.iter().zip(expected) {
        assert!(line.ends_with(want), "{seen:?}");
    }
}
