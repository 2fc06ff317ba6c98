//! `armwright pose`: tool point, holding torque and its share of the rating, accuracy budget
//! and pulse widths, with the exit codes for bad input.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

mod common;

use armwright_test_support::reference::numbers;
use common::{armwright, armwright_json, articulated5, scene_file, set};
use serde_json::json;

fn close(a: f64, b: f64, tolerance: f64) -> bool {
    (a - b).abs() <= tolerance
}

#[test]
fn the_stretched_arm_holds_what_statics_says() {
    let file = scene_file("pose-stretched", &articulated5());
    let (code, out) = armwright_json(&["pose", &file, "--joints", "0,0,0,0,0", "--json"]);
    assert_eq!(code, 0, "{out}");
    // Stretched along +X: base 90 mm up, links 120 + 110 + 70 mm.
    assert_eq!(numbers(&out["tool_mm"]), [300.0, 0.0, 90.0]);
    assert_eq!(out["tool_pitch_deg"], json!(0.0));
    assert_eq!(out["tool_yaw_deg"], json!(0.0));
    assert_eq!(out["tool_roll_deg"], json!(0.0));
    // Holding torque τ = g·Σ m·r over everything beyond the joint (common practice statics,
    // g = 9.80665 m/s²). Shoulder, in g·mm: upper arm 50·50, elbow servo 55·120, forearm
    // 40·170, wrist servo 55·230, wrist link 20·280, roll servo 55·230, roll link 10·280, tool
    // 30·310, payload 20·300 = 64 900 g·mm → 0.0649 kg·m × 9.80665 = 63.645 N·cm.
    let torque = numbers(&out["joint_torque_ncm"]);
    assert!(
        close(torque[1].abs(), 64_900e-6 * 9.80665 * 100.0, 1e-3),
        "{torque:?}"
    );
    // Elbow, from x = 120 mm: 40·50 + 55·110 + 20·160 + 55·110 + 10·160 + 30·190 + 20·180.
    assert!(
        close(torque[2].abs(), 28_200e-6 * 9.80665 * 100.0, 1e-3),
        "{torque:?}"
    );
    // The base turns about the vertical: gravity needs nothing from it.
    assert!(torque[0].abs() < 1e-9);
    // Torque use = |τ| / (stall × derating): 180 N·cm stall, 80 % default derating.
    let share = numbers(&out["holding_torque_use_pct"]);
    assert!(
        close(share[1], 100.0 * torque[1].abs() / (180.0 * 0.8), 1e-3),
        "{share:?}"
    );
    assert_eq!(out["torque_derating_pct"], json!(80.0));
    assert!(
        out["torque_use_basis"]
            .as_str()
            .unwrap()
            .contains("derated stall torque")
    );
    // Heaviest payload (τ = m·g·r, common practice): the shoulder has 144 N·cm to give; without
    // the payload it holds 58 900 g·mm; the payload sits 300 mm out. So at most
    // (1.44 − 0.0589·g) / (g·0.3) kg from the shoulder, less where another joint runs out first.
    let g = 9.80665;
    let shoulder_g = (1.44 - 0.0589 * g) / (g * 0.3) * 1e3;
    let payload = out["max_payload_g"].as_f64().unwrap();
    assert!(
        payload > 0.0 && payload <= shoulder_g + 0.1,
        "{payload} vs {shoulder_g}"
    );
    if out["max_payload_joint"] == json!(1) {
        assert!(close(payload, shoulder_g, 0.1), "{payload} vs {shoulder_g}");
    }
    // Calibration: shoulder 1000 µs at −10°, 2000 µs at 170°, so 0° is 1055.6 → 1056 µs.
    assert_eq!(
        numbers(&out["pulse_us"]),
        [1500.0, 1056.0, 1500.0, 1500.0, 1500.0]
    );
    let worst = out["accuracy_mm"]["worst"].as_f64().unwrap();
    let rss = out["accuracy_mm"]["rss"].as_f64().unwrap();
    assert!(worst >= rss && rss > 0.0, "{worst} {rss}");
}

#[test]
fn an_angular_error_of_0_4_degrees_at_300_mm_is_about_2_1_mm() {
    // Common practice: an angular error of 0.4° at 300 mm moves the tool point about 2.1 mm
    // (300 · 0.4 · π/180 = 2.094 mm). Only the base servo has play here: 0.8° of backlash in
    // total, ± 0.4° about the command; no deadband anywhere. Stretched, the tool point is
    // 300 mm from the base axis.
    let mut document = articulated5();
    for joint in 0..5 {
        set(
            &mut document,
            &format!("/arm/joints/{joint}/servo/deadband_us"),
            json!(0.0),
        );
        set(
            &mut document,
            &format!("/arm/joints/{joint}/servo/backlash_deg"),
            json!(0.0),
        );
    }
    set(
        &mut document,
        "/arm/joints/0/servo/backlash_deg",
        json!(0.8),
    );
    let file = scene_file("pose-accuracy", &document);
    let (code, out) = armwright_json(&["pose", &file, "--joints", "0,0,0,0,0", "--json"]);
    assert_eq!(code, 0, "{out}");
    let expected = 300.0 * 0.4_f64.to_radians();
    for key in ["worst", "rss"] {
        let value = out["accuracy_mm"][key].as_f64().unwrap();
        assert!(close(value, expected, 1e-3), "{key}: {value} vs {expected}");
    }
    // Folded in, the same play moves the tool point less.
    let (_, folded) = armwright_json(&["pose", &file, "--joints", "0,90,-140,0,0", "--json"]);
    assert!(folded["accuracy_mm"]["worst"].as_f64().unwrap() < expected);
}

#[test]
fn text_output_lists_every_joint() {
    let file = scene_file("pose-text", &articulated5());
    let (code, stdout, _) = armwright(&["pose", &file, "--joints=10,45,-30,-15,20"]);
    assert_eq!(code, 0);
    for name in [
        "base",
        "shoulder",
        "elbow",
        "wrist",
        "roll",
        "tool point",
        "accuracy",
    ] {
        assert!(stdout.contains(name), "{name} missing: {stdout}");
    }
}

#[test]
fn positions_outside_the_limits_exit_1_and_say_which_joint() {
    let file = scene_file("pose-outside", &articulated5());
    let (code, out) = armwright_json(&["pose", &file, "--joints=0,0,150,0,0", "--json"]);
    assert_eq!(code, 1);
    assert_eq!(out["ok"], json!(false));
    let error = out["error"].as_str().unwrap();
    assert!(error.contains("joint 2 (elbow) at 150 deg"), "{error}");
}

#[test]
fn a_wrong_joint_count_is_unreadable_input() {
    let file = scene_file("pose-count", &articulated5());
    let (code, out) = armwright_json(&["pose", &file, "--joints", "0,0,0", "--json"]);
    assert_eq!(code, 2);
    assert!(out["error"].as_str().unwrap().contains("needs 5 positions"));
    let (code, _, _) = armwright(&["pose", &file, "--joints", "a,b"]);
    assert_eq!(code, 2, "numbers that do not parse");
}
