//! Each validation rule, broken on its own, is reported at its JSON path; several broken rules
//! are all reported together.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

mod common;

use armwright::scene::{SceneError, load_bytes};
use common::{articulated5, bytes, remove, scara, set};
use serde_json::{Value, json};

fn paths(document: &Value) -> Vec<String> {
    match load_bytes(&bytes(document)) {
        Err(SceneError::Problems { problems }) => problems.into_iter().map(|p| p.path).collect(),
        Ok(_) => Vec::new(),
        Err(other) => panic!("expected problems, got {other:?}"),
    }
}

/// Breaks the articulated test scene at `edits` and expects a problem at `path`.
fn broken(edits: &[(&str, Value)], path: &str) {
    broken_from(articulated5(), edits, path);
}

fn broken_from(mut document: Value, edits: &[(&str, Value)], path: &str) {
    for (pointer, value) in edits {
        set(&mut document, pointer, value.clone());
    }
    let found = paths(&document);
    assert!(
        found.iter().any(|p| p == path),
        "expected {path} among {found:?}"
    );
}

#[test]
fn limits_must_be_ordered() {
    broken(
        &[("/arm/joints/1/max_deg", json!(-20.0))],
        "arm.joints[1].max_deg",
    );
}

#[test]
fn home_must_lie_inside_the_limits() {
    broken(
        &[("/arm/joints/3/home_deg", json!(120.0))],
        "arm.joints[3].home_deg",
    );
}

#[test]
fn a_prismatic_home_is_checked_in_mm() {
    broken_from(
        scara(),
        &[("/arm/joints/2/home_mm", json!(55.0))],
        "arm.joints[2].home_mm",
    );
}

#[test]
fn lengths_must_be_positive() {
    broken(
        &[("/arm/dimensions/upper_arm_mm", json!(0.0))],
        "arm.dimensions.upper_arm_mm",
    );
    broken(
        &[("/arm/dimensions/base_height_mm", json!(-5.0))],
        "arm.dimensions.base_height_mm",
    );
    broken_from(
        scara(),
        &[("/arm/dimensions/forearm_mm", json!(-1.0))],
        "arm.dimensions.forearm_mm",
    );
}

#[test]
fn masses_must_be_positive() {
    broken(
        &[("/arm/joints/2/servo/mass_g", json!(0.0))],
        "arm.joints[2].servo.mass_g",
    );
    broken(
        &[("/arm/joints/0/link/mass_g", json!(-3.0))],
        "arm.joints[0].link.mass_g",
    );
    broken(&[("/arm/tool/mass_g", json!(-1.0))], "arm.tool.mass_g");
    broken(&[("/arm/payload_g", json!(-10.0))], "arm.payload_g");
}

#[test]
fn servo_ratings_must_be_positive() {
    broken(
        &[("/arm/joints/2/servo/stall_torque_ncm", json!(0.0))],
        "arm.joints[2].servo.stall_torque_ncm",
    );
    broken(
        &[("/arm/joints/0/servo/no_load_speed_deg_per_s", json!(-1.0))],
        "arm.joints[0].servo.no_load_speed_deg_per_s",
    );
    broken(
        &[("/arm/joints/0/servo/deadband_us", json!(-1.0))],
        "arm.joints[0].servo.deadband_us",
    );
    broken(
        &[(
            "/arm/joints/4/servo/proportional_band",
            json!({ "deg": 0.0 }),
        )],
        "arm.joints[4].servo.proportional_band.deg",
    );
    broken(
        &[("/arm/joints/4/servo/backlash_deg", json!(-0.1))],
        "arm.joints[4].servo.backlash_deg",
    );
}

#[test]
fn a_proportional_band_needs_exactly_one_unit() {
    broken(
        &[(
            "/arm/joints/1/servo/proportional_band",
            json!({ "us": 40.0, "deg": 4.0 }),
        )],
        "arm.joints[1].servo.proportional_band",
    );
}

#[test]
fn a_prismatic_servo_needs_a_pinion_radius_and_a_revolute_one_none() {
    let mut document = scara();
    remove(&mut document, "/arm/joints/2/servo/pinion_radius_mm");
    assert!(paths(&document).contains(&"arm.joints[2].servo.pinion_radius_mm".to_string()));
    let mut document = scara();
    set(
        &mut document,
        "/arm/joints/2/servo/pinion_radius_mm",
        json!(0.0),
    );
    assert!(paths(&document).contains(&"arm.joints[2].servo.pinion_radius_mm".to_string()));
    // On a revolute joint the key is not known at all.
    let mut document = scara();
    set(
        &mut document,
        "/arm/joints/0/servo/mount_offset_mm",
        json!([0.0, 0.0, 0.0]),
    );
    document["arm"]["joints"][0]["servo"]["pinion_radius_mm"] = json!(5.0);
    assert!(paths(&document).contains(&"arm.joints[0].servo.pinion_radius_mm".to_string()));
}

#[test]
fn calibration_pulses_stay_within_500_to_2500_us() {
    broken(
        &[("/arm/joints/0/calibration/points/0/pulse_us", json!(450))],
        "arm.joints[0].calibration.points[0].pulse_us",
    );
    broken(
        &[("/arm/joints/0/calibration/pulse_max_us", json!(2600))],
        "arm.joints[0].calibration.pulse_max_us",
    );
}

#[test]
fn calibration_must_be_monotonic() {
    broken(
        &[("/arm/joints/2/calibration/points/1/pulse_us", json!(1000))],
        "arm.joints[2].calibration.points[1].pulse_us",
    );
    broken(
        &[(
            "/arm/joints/2/calibration/points/1/angle_deg",
            json!(-140.0),
        )],
        "arm.joints[2].calibration.points[1].angle_deg",
    );
}

#[test]
fn the_pulse_range_must_be_ordered() {
    broken(
        &[
            ("/arm/joints/3/calibration/pulse_min_us", json!(2000)),
            ("/arm/joints/3/calibration/pulse_max_us", json!(1000)),
        ],
        "arm.joints[3].calibration.pulse_max_us",
    );
}

#[test]
fn the_limits_must_map_to_accepted_pulses() {
    broken(
        &[("/arm/joints/0/max_deg", json!(130.0))],
        "arm.joints[0].calibration",
    );
}

#[test]
fn calibration_needs_two_points() {
    broken(
        &[(
            "/arm/joints/0/calibration/points",
            json!([{ "angle_deg": 0.0, "pulse_us": 1500 }]),
        )],
        "arm.joints[0].calibration.points",
    );
}

#[test]
fn the_joint_count_must_match_the_arm_type() {
    let mut document = articulated5();
    document["arm"]["joints"].as_array_mut().unwrap().pop();
    document["waypoints"] = json!([]);
    assert_eq!(paths(&document), ["arm.joints"]);
}

#[test]
fn a_chain_must_not_be_empty() {
    let mut document = articulated5();
    document["arm"]["type"] = json!("chain");
    remove(&mut document, "/arm/dimensions");
    document["arm"]["chain"] = json!({
        "convention": "standard_dh",
        "rows": [],
        "tool": { "position_mm": [0.0, 0.0, 0.0], "rotation_xyz_deg": [0.0, 0.0, 0.0] }
    });
    let found = paths(&document);
    assert!(found.contains(&"arm.chain.rows".to_string()), "{found:?}");
}

#[test]
fn a_chain_axis_must_have_a_direction() {
    let mut document = articulated5();
    document["arm"]["type"] = json!("chain");
    remove(&mut document, "/arm/dimensions");
    let axes: Vec<Value> = (0..5)
        .map(|i| json!({ "kind": "revolute", "axis": [0.0, 0.0, if i == 3 { 0.0 } else { 1.0 }], "origin_mm": [i as f64 * 50.0, 0.0, 0.0] }))
        .collect();
    document["arm"]["chain"] = json!({
        "convention": "origin_axis",
        "axes": axes,
        "tool_home": { "position_mm": [300.0, 0.0, 0.0], "rotation_xyz_deg": [0.0, 0.0, 0.0] }
    });
    assert_eq!(paths(&document), ["arm.chain.axes[3].axis"]);
}

#[test]
fn waypoints_must_lie_inside_the_limits() {
    broken(
        &[("/waypoints/1/joints_deg_or_mm/2", json!(150.0))],
        "waypoints[1].joints_deg_or_mm[2]",
    );
}

#[test]
fn waypoints_need_one_position_per_joint() {
    broken(
        &[("/waypoints/0/joints_deg_or_mm", json!([0.0, 10.0]))],
        "waypoints[0].joints_deg_or_mm",
    );
}

#[test]
fn waypoint_speed_share_and_dwell_are_checked() {
    broken(
        &[("/waypoints/1/speed_share_pct", json!(120.0))],
        "waypoints[1].speed_share_pct",
    );
    broken(
        &[("/waypoints/1/dwell_ms", json!(-5.0))],
        "waypoints[1].dwell_ms",
    );
    broken(&[("/waypoints/0/name", json!(" "))], "waypoints[0].name");
}

#[test]
fn gripper_pulses_must_differ_and_stay_in_range() {
    broken(
        &[("/arm/gripper/closed_pulse_us", json!(1200))],
        "arm.gripper.closed_pulse_us",
    );
    broken(
        &[("/arm/gripper/open_pulse_us", json!(3000))],
        "arm.gripper.open_pulse_us",
    );
}

#[test]
fn timing_workspace_and_link_settings_are_checked() {
    broken_from(
        scara(),
        &[("/timing/torque_derating_pct", json!(0.0))],
        "timing.torque_derating_pct",
    );
    broken_from(
        scara(),
        &[("/timing/settle_band_mm", json!(-1.0))],
        "timing.settle_band_mm",
    );
    broken_from(
        scara(),
        &[("/workspace/boxes/0/size_mm", json!([40.0, 0.0, 60.0]))],
        "workspace.boxes[0].size_mm",
    );
    broken_from(
        scara(),
        &[("/workspace/trays/0/pockets", json!([0, 3]))],
        "workspace.trays[0].pockets",
    );
    broken_from(scara(), &[("/link/rate_hz", json!(0.0))], "link.rate_hz");
    broken_from(scara(), &[("/link/device", json!(""))], "link.device");
}

#[test]
fn every_broken_rule_is_listed_not_only_the_first() {
    let mut document = articulated5();
    set(&mut document, "/arm/joints/1/max_deg", json!(-20.0));
    set(
        &mut document,
        "/arm/joints/2/servo/stall_torque_ncm",
        json!(-1.0),
    );
    set(&mut document, "/arm/payload_g", json!(-1.0));
    set(
        &mut document,
        "/waypoints/1/joints_deg_or_mm/0",
        json!(100.0),
    );
    let found = paths(&document);
    for path in [
        "arm.joints[1].max_deg",
        "arm.joints[2].servo.stall_torque_ncm",
        "arm.payload_g",
        "waypoints[1].joints_deg_or_mm[0]",
    ] {
        assert!(
            found.iter().any(|p| p == path),
            "{path} missing from {found:?}"
        );
    }
}

/// Every problem of a document: path and message.
fn problems(document: &Value) -> Vec<(String, String)> {
    match load_bytes(&bytes(document)) {
        Err(SceneError::Problems { problems }) => {
            problems.into_iter().map(|p| (p.path, p.message)).collect()
        }
        Ok(_) => Vec::new(),
        Err(other) => panic!("expected problems, got {other:?}"),
    }
}

/// The horizontal test arm (shoulder, elbow, lift in mm, roll) with `timing.joint_limits` set.
fn with_joint_limits(limits: Value) -> Value {
    let mut document = scara();
    document["timing"]["joint_limits"] = limits;
    document
}

#[test]
fn joint_limits_load_in_the_unit_of_their_joint() {
    let document = with_joint_limits(json!([
        { "joint": "elbow", "max_velocity_deg_per_s": 90.0 },
        { "joint": "lift", "max_velocity_mm_per_s": 40.0, "max_acceleration_mm_per_s2": 300.0 },
        { "joint": "roll", "max_acceleration_deg_per_s2": 500.0 }
    ]));
    let scene = load_bytes(&bytes(&document)).expect("valid limits load");
    let limits = &scene.timing.joint_limits;
    assert_eq!(limits.len(), 3);
    assert_eq!(limits[0].joint, "elbow");
    assert_eq!(limits[0].max_velocity_deg_or_mm_per_s, Some(90.0));
    assert_eq!(limits[0].max_acceleration_deg_or_mm_per_s2, None);
    assert_eq!(limits[1].max_velocity_deg_or_mm_per_s, Some(40.0));
    assert_eq!(limits[1].max_acceleration_deg_or_mm_per_s2, Some(300.0));
    assert_eq!(limits[2].max_velocity_deg_or_mm_per_s, None);
    // A scene without them has none, and saving it writes no `joint_limits` key.
    let plain = load_bytes(&bytes(&articulated5())).expect("test scene loads");
    assert!(plain.timing.joint_limits.is_empty());
    assert!(!armwright::scene::to_json(&plain).contains("joint_limits"));
}

#[test]
fn joint_limits_must_name_one_joint_once() {
    let found = problems(&with_joint_limits(json!([
        { "joint": "wrist", "max_velocity_deg_per_s": 90.0 }
    ])));
    let (path, message) = &found[0];
    assert_eq!(path, "timing.joint_limits[0].joint");
    assert!(
        message.contains("\"wrist\"") && message.contains("\"elbow\""),
        "{message}"
    );
    let twice = with_joint_limits(json!([
        { "joint": "elbow", "max_velocity_deg_per_s": 90.0 },
        { "joint": "elbow", "max_acceleration_deg_per_s2": 400.0 }
    ]));
    assert!(
        paths(&twice).contains(&"timing.joint_limits[1].joint".to_string()),
        "{:?}",
        paths(&twice)
    );
    let mut same_names = with_joint_limits(json!([
        { "joint": "elbow", "max_velocity_deg_per_s": 90.0 }
    ]));
    same_names["arm"]["joints"][0]["name"] = json!("elbow");
    let found = problems(&same_names);
    assert!(
        found
            .iter()
            .any(|(path, message)| path == "timing.joint_limits[0].joint"
                && message.contains("2 joints")),
        "{found:?}"
    );
}

#[test]
fn joint_limit_keys_carry_the_joint_unit() {
    // The lift slides: its limits are in mm; a revolute joint's in degrees.
    let found = problems(&with_joint_limits(json!([
        { "joint": "lift", "max_velocity_deg_per_s": 40.0 },
        { "joint": "elbow", "max_acceleration_mm_per_s2": 400.0 }
    ])));
    let at = |wanted: &str| {
        found
            .iter()
            .find(|(path, _)| path == wanted)
            .unwrap_or_else(|| panic!("no problem at {wanted} among {found:?}"))
            .1
            .clone()
    };
    assert!(at("timing.joint_limits[0].max_velocity_deg_per_s").contains("max_velocity_mm_per_s"));
    assert!(
        at("timing.joint_limits[1].max_acceleration_mm_per_s2")
            .contains("max_acceleration_deg_per_s2")
    );
}

#[test]
fn joint_limits_must_be_above_zero_and_give_at_least_one() {
    let document = with_joint_limits(json!([
        { "joint": "shoulder", "max_velocity_deg_per_s": 0.0 },
        { "joint": "lift", "max_acceleration_mm_per_s2": -5.0 },
        { "joint": "roll" }
    ]));
    let found = paths(&document);
    for path in [
        "timing.joint_limits[0].max_velocity_deg_per_s",
        "timing.joint_limits[1].max_acceleration_mm_per_s2",
        "timing.joint_limits[2]",
    ] {
        assert!(
            found.iter().any(|p| p == path),
            "{path} missing from {found:?}"
        );
    }
    let not_a_number = with_joint_limits(json!([
        { "joint": "shoulder", "max_velocity_deg_per_s": "fast" }
    ]));
    assert!(
        paths(&not_a_number).contains(&"timing.joint_limits[0].max_velocity_deg_per_s".to_string())
    );
}
