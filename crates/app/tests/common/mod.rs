//! Scenes shared by the app's tests: small, valid, invented documents to break one field at a
//! time, and a writer for scratch directories.
#![allow(dead_code)]

pub mod device_sim;

use serde_json::{Value, json};
use std::io::{BufRead, BufReader, Read};
use std::path::PathBuf;
use std::sync::mpsc;
use std::time::Duration;

fn joint(name: &str, min: f64, max: f64, mass_g: f64) -> Value {
    json!({
        "name": name,
        "min_deg": min,
        "max_deg": max,
        "home_deg": 0.0,
        "servo": {
            "stall_torque_ncm": 180.0,
            "no_load_speed_deg_per_s": 350.0,
            "deadband_us": 3.0,
            "proportional_band": { "us": 40.0 },
            "backlash_deg": 0.5,
            "mass_g": 55.0,
            "mount_offset_mm": [0.0, 0.0, 0.0]
        },
        "calibration": {
            "points": [
                { "angle_deg": min, "pulse_us": 1000 },
                { "angle_deg": max, "pulse_us": 2000 }
            ],
            "pulse_min_us": 900,
            "pulse_max_us": 2100
        },
        "link": { "mass_g": mass_g, "centre_mm": [50.0, 0.0, 0.0] }
    })
}

/// A valid 5-joint articulated arm with two waypoints.
pub fn articulated5() -> Value {
    json!({
        "format": "armwright-scene",
        "version": 1,
        "description": "test arm",
        "arm": {
            "type": "articulated5",
            "dimensions": {
                "base_height_mm": 90.0,
                "upper_arm_mm": 120.0,
                "forearm_mm": 110.0,
                "wrist_to_tool_mm": 70.0
            },
            "joints": [
                joint("base", -90.0, 90.0, 30.0),
                joint("shoulder", -10.0, 170.0, 50.0),
                joint("elbow", -140.0, 140.0, 40.0),
                joint("wrist", -90.0, 90.0, 20.0),
                joint("roll", -90.0, 90.0, 10.0)
            ],
            "tool": { "mass_g": 30.0, "centre_mm": [10.0, 0.0, 0.0] },
            "payload_g": 20.0,
            "gripper": { "open_pulse_us": 1200, "closed_pulse_us": 1800 }
        },
        "waypoints": [
            { "name": "start", "joints_deg_or_mm": [0.0, 45.0, -45.0, 0.0, 0.0] },
            {
                "name": "reach",
                "joints_deg_or_mm": [30.0, 30.0, -20.0, -10.0, 15.0],
                "move": "straight",
                "profile": "double_s",
                "speed_share_pct": 40.0,
                "dwell_ms": 250.0,
                "arrival": "pass_through",
                "gripper": "closed"
            }
        ]
    })
}

/// A valid horizontal-jointed arm: its third joint is a prismatic lift in mm.
pub fn scara() -> Value {
    let mut lift = joint("lift", 0.0, 0.0, 20.0);
    let map = lift.as_object_mut().unwrap();
    map.remove("min_deg");
    map.remove("max_deg");
    map.remove("home_deg");
    map.insert("min_mm".into(), json!(-40.0));
    map.insert("max_mm".into(), json!(40.0));
    map.insert("home_mm".into(), json!(0.0));
    map["servo"]["pinion_radius_mm"] = json!(10.0);
    map["calibration"] = json!({
        "points": [
            { "position_mm": -40.0, "pulse_us": 1100 },
            { "position_mm": 40.0, "pulse_us": 1900 }
        ],
        "pulse_min_us": 1000,
        "pulse_max_us": 2000
    });
    json!({
        "format": "armwright-scene",
        "version": 1,
        "arm": {
            "type": "scara",
            "dimensions": {
                "base_height_mm": 120.0,
                "upper_arm_mm": 150.0,
                "forearm_mm": 120.0,
                "tool_drop_mm": 40.0
            },
            "joints": [
                joint("shoulder", -135.0, 135.0, 80.0),
                joint("elbow", -150.0, 150.0, 60.0),
                lift,
                joint("roll", -90.0, 90.0, 10.0)
            ],
            "tool": { "mass_g": 40.0, "centre_mm": [0.0, 0.0, 0.0] },
            "payload_g": 10.0
        },
        "waypoints": [
            { "name": "over pocket", "joints_deg_or_mm": [10.0, 20.0, -30.0, 5.0] }
        ],
        "timing": {
            "torque_derating_pct": 75.0,
            "settle_band_mm": 0.3,
            "max_overshoot_mm": 0.8,
            "damping_ratio": 0.5,
            "joint_limits": [ { "joint": "lift", "max_velocity_mm_per_s": 60.0 } ]
        },
        "workspace": {
            "table_height_mm": 0.0,
            "boxes": [ { "name": "feeder", "position_mm": [150.0, 100.0, 0.0], "size_mm": [40.0, 40.0, 60.0] } ],
            "trays": [ { "name": "tray", "position_mm": [200.0, -80.0, 0.0], "size_mm": [90.0, 60.0, 15.0], "pockets": [4, 3] } ]
        },
        "link": { "device": "/dev/ttyUSB0", "baud": 115200, "rate_hz": 50.0 }
    })
}

/// Sets the value at a JSON pointer such as `/arm/joints/2/servo/mass_g`.
pub fn set(document: &mut Value, pointer: &str, value: Value) {
    *document
        .pointer_mut(pointer)
        .unwrap_or_else(|| panic!("no {pointer} in the test scene")) = value;
}

/// Removes the key at a JSON pointer.
pub fn remove(document: &mut Value, pointer: &str) {
    let (parent, key) = pointer.rsplit_once('/').unwrap();
    document
        .pointer_mut(parent)
        .and_then(Value::as_object_mut)
        .unwrap_or_else(|| panic!("no {parent} in the test scene"))
        .remove(key);
}

pub fn bytes(document: &Value) -> Vec<u8> {
    serde_json::to_vec_pretty(document).unwrap()
}

/// A fresh, empty directory under the system's temporary directory for one test.
pub fn scratch_dir(test: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("armwright-app-{test}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

/// Path of a sample scene in the repository.
pub fn sample(name: &str) -> PathBuf {
    armwright_test_support::samples::samples_dir().join(name)
}

/// Runs the `armwright` binary; returns its exit code, standard output and standard error.
pub fn armwright(args: &[&str]) -> (i32, String, String) {
    let output = std::process::Command::new(env!("CARGO_BIN_EXE_armwright"))
        .args(args)
        .output()
        .expect("the armwright binary runs");
    (
        output.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&output.stdout).into_owned(),
        String::from_utf8_lossy(&output.stderr).into_owned(),
    )
}

/// Runs the binary with `--json` among `args` and parses its standard output.
pub fn armwright_json(args: &[&str]) -> (i32, Value) {
    let (code, stdout, stderr) = armwright(args);
    let value = serde_json::from_str(&stdout)
        .unwrap_or_else(|e| panic!("not JSON ({e}): {stdout}\nstderr: {stderr}"));
    (code, value)
}

/// Writes a test document into a scratch directory and returns its path as text.
pub fn scene_file(test: &str, document: &Value) -> String {
    let path = scratch_dir(test).join("scene.armwright.json");
    std::fs::write(&path, bytes(document)).unwrap();
    path.to_string_lossy().into_owned()
}

/// A sample's path as text.
pub fn sample_path(name: &str) -> String {
    sample(name).to_string_lossy().into_owned()
}

/// Forwards a child's output (standard output or error) line by line, so a test can wait for a line.
pub fn lines_of(stream: impl Read + Send + 'static) -> mpsc::Receiver<String> {
    let (tx, rx) = mpsc::channel();
    std::thread::spawn(move || {
        for line in BufReader::new(stream).lines() {
            let Ok(line) = line else { break };
            if tx.send(line).is_err() {
                break;
            }
        }
    });
    rx
}

/// Waits (up to a minute) for a line containing `needle`; returns every line seen up to it.
pub fn wait_for_line(lines: &mpsc::Receiver<String>, needle: &str) -> Vec<String> {
    let mut seen = Vec::new();
    loop {
        match lines.recv_timeout(Duration::from_secs(60)) {
            Ok(line) => {
                let found = line.contains(needle);
                seen.push(line);
                if found {
                    return seen;
                }
            }
            Err(_) => panic!("no line with {needle:?}; saw:\n{}", seen.join("\n")),
        }
    }
}
