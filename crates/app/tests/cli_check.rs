//! `armwright check`: exit codes, problems with paths, and an arm description from which the
//! forward kinematics can be recomputed by the product of exponentials.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

mod common;

use armwright_test_support::reference::numbers;
use common::{armwright, armwright_json, articulated5, sample_path, scara, scene_file, set};
use nalgebra::{Isometry3, Matrix3, Rotation3, Translation3, Unit, UnitQuaternion, Vector3};
use serde_json::{Value, json};

fn vector(value: &Value) -> Vector3<f64> {
    let v = numbers(value);
    Vector3::new(v[0], v[1], v[2])
}

#[test]
fn a_good_scene_passes_with_exit_0() {
    let (code, stdout, _) = armwright(&["check", &sample_path("spacer-stacker.armwright.json")]);
    assert_eq!(code, 0);
    assert!(stdout.contains("no problems"), "{stdout}");
}

#[test]
fn a_scene_with_problems_exits_1_and_lists_every_path() {
    let mut document = articulated5();
    set(&mut document, "/arm/joints/1/max_deg", json!(-20.0));
    set(
        &mut document,
        "/arm/joints/2/servo/stall_torque_ncm",
        json!(-1.0),
    );
    let file = scene_file("check-problems", &document);
    let (code, out) = armwright_json(&["check", &file, "--json"]);
    assert_eq!(code, 1);
    assert_eq!(out["ok"], json!(false));
    let paths: Vec<&str> = out["problems"]
        .as_array()
        .unwrap()
        .iter()
        .map(|p| p["path"].as_str().unwrap())
        .collect();
    assert_eq!(
        paths,
        [
            "arm.joints[1].max_deg",
            "arm.joints[2].servo.stall_torque_ncm"
        ]
    );
    let (code, stdout, _) = armwright(&["check", &file]);
    assert_eq!(code, 1);
    assert!(stdout.contains("2 problem(s)"), "{stdout}");
    assert!(
        stdout.contains("  arm.joints[1].max_deg: max_deg (-20) must be above min_deg (-10)"),
        "{stdout}"
    );
}

#[test]
fn unreadable_input_exits_2() {
    let dir = common::scratch_dir("check-unreadable");
    let broken = dir.join("broken.armwright.json");
    std::fs::write(&broken, "{\n  \"format\": \"armwright-scene\",\n  oops\n}").unwrap();
    let (code, out) = armwright_json(&["check", broken.to_str().unwrap(), "--json"]);
    assert_eq!(code, 2);
    assert_eq!(out["line"], json!(3));
    assert_eq!(out["column"], json!(3));
    let (code, _, stderr) = armwright(&["check", dir.join("missing.json").to_str().unwrap()]);
    assert_eq!(code, 2);
    assert!(stderr.contains("cannot read"), "{stderr}");
    let mut newer = articulated5();
    set(&mut newer, "/version", json!(2));
    let (code, out) = armwright_json(&["check", &scene_file("check-newer", &newer), "--json"]);
    assert_eq!(code, 2);
    assert!(out["error"].as_str().unwrap().contains("newer"), "{out}");
    let (code, _, _) = armwright(&["check"]);
    assert_eq!(code, 2, "a missing argument is unreadable input");
}

#[test]
fn the_json_description_names_every_joint_with_units_in_its_keys() {
    let (code, out) = armwright_json(&["check", &scene_file("check-scara", &scara()), "--json"]);
    assert_eq!(code, 0);
    let arm = &out["arm"];
    assert_eq!(arm["type"], json!("scara"));
    let joints = arm["joints"].as_array().unwrap();
    assert_eq!(joints.len(), 4, "the gripper is not a joint");
    assert_eq!(joints[2]["name"], json!("lift"));
    assert_eq!(joints[2]["kind"], json!("prismatic"));
    assert_eq!(joints[2]["min_mm"], json!(-40.0));
    assert_eq!(joints[2]["max_mm"], json!(40.0));
    assert_eq!(joints[0]["kind"], json!("revolute"));
    assert_eq!(joints[0]["min_deg"], json!(-135.0));
    // Horizontal-jointed arm at zero: every axis vertical; the elbow axis 150 mm out at the
    // arm's plane (120 mm up); the tool point 40 mm below the wrist, 270 mm out.
    for joint in joints {
        assert_eq!(numbers(&joint["axis"]), [0.0, 0.0, 1.0]);
    }
    assert_eq!(numbers(&joints[1]["origin_mm"]), [150.0, 0.0, 120.0]);
    assert_eq!(numbers(&arm["tool_at_zero_mm"]), [270.0, 0.0, 80.0]);
}

/// Forward kinematics by the product of exponentials in the space frame, T(θ) =
/// e^[S1]θ1 · … · e^[Sn]θn · M (Lynch & Park, *Modern Robotics*, 2017, ch. 4.1), from the
/// screw axes that `check --json` prints: a revolute joint with unit axis ω through point q is
/// a rotation about that line; a prismatic joint a translation along its axis.
fn product_of_exponentials(arm: &Value, positions_deg_or_mm: &[f64]) -> Vector3<f64> {
    let mut transform = Isometry3::identity();
    for (joint, &value) in arm["joints"]
        .as_array()
        .unwrap()
        .iter()
        .zip(positions_deg_or_mm)
    {
        let axis = Unit::new_normalize(vector(&joint["axis"]));
        let point = vector(&joint["origin_mm"]);
        let motion = if joint["kind"] == json!("revolute") {
            let rotation = Rotation3::from_axis_angle(&axis, value.to_radians());
            let shift = (Matrix3::identity() - rotation.matrix()) * point;
            Isometry3::from_parts(Translation3::from(shift), UnitQuaternion::from(rotation))
        } else {
            Isometry3::translation(axis.x * value, axis.y * value, axis.z * value)
        };
        transform *= motion;
    }
    transform
        .transform_point(&vector(&arm["tool_at_zero_mm"]).into())
        .coords
}

#[test]
fn the_description_recomputes_forward_kinematics_by_product_of_exponentials() {
    let poses: [(&str, &[&[f64]]); 3] = [
        (
            "spacer-stacker.armwright.json",
            &[
                &[30.0, 60.0, -80.0, -40.0, 20.0],
                &[-75.0, 120.0, -140.0, 90.0, -60.0],
            ],
        ),
        (
            "pen-plotter.armwright.json",
            &[&[10.0, 40.0, -90.0, -30.0], &[-60.0, 150.0, 20.0, 80.0]],
        ),
        (
            "peg-sorter.armwright.json",
            &[&[45.0, -60.0, -12.5, 30.0], &[-110.0, 125.0, 25.0, -80.0]],
        ),
    ];
    for (sample, sample_poses) in poses {
        let file = sample_path(sample);
        let (code, described) = armwright_json(&["check", &file, "--json"]);
        assert_eq!(code, 0);
        for pose in sample_poses {
            let joints = pose
                .iter()
                .map(|v| v.to_string())
                .collect::<Vec<_>>()
                .join(",");
            let (code, out) =
                armwright_json(&["pose", &file, &format!("--joints={joints}"), "--json"]);
            assert_eq!(code, 0, "{out}");
            let expected = vector(&out["tool_mm"]);
            let recomputed = product_of_exponentials(&described["arm"], pose);
            assert!(
                (recomputed - expected).norm() < 1e-3,
                "{sample} {pose:?}: {recomputed} vs {expected}"
            );
        }
    }
}

#[test]
fn the_description_gives_the_tool_point_at_the_home_pose_as_well_as_at_zero() {
    for sample in [
        "spacer-stacker.armwright.json",
        "pen-plotter.armwright.json",
        "peg-sorter.armwright.json",
    ] {
        let file = sample_path(sample);
        let (code, described) = armwright_json(&["check", &file, "--json"]);
        assert_eq!(code, 0, "{described}");
        let arm = &described["arm"];
        let home: Vec<f64> = arm["joints"]
            .as_array()
            .unwrap()
            .iter()
            .map(|joint| {
                joint
                    .get("home_deg")
                    .or_else(|| joint.get("home_mm"))
                    .and_then(Value::as_f64)
                    .unwrap()
            })
            .collect();
        let joints = home
            .iter()
            .map(|v| v.to_string())
            .collect::<Vec<_>>()
            .join(",");
        let (code, out) = armwright_json(&["pose", &file, &format!("--joints={joints}"), "--json"]);
        assert_eq!(code, 0, "{out}");
        let at_home = vector(&arm["tool_at_home_mm"]);
        assert!(
            (at_home - vector(&out["tool_mm"])).norm() < 1e-3,
            "{sample}: {at_home} is not the home pose's tool point"
        );
        assert!(
            (at_home - product_of_exponentials(arm, &home)).norm() < 1e-3,
            "{sample}: the zero-pose description does not carry to the home pose"
        );
        assert_eq!(arm["tool_at_home_rotation"].as_array().unwrap().len(), 3);
        if home.iter().any(|&v| v != 0.0) {
            assert!(
                (at_home - vector(&arm["tool_at_zero_mm"])).norm() > 1.0,
                "{sample}: a home pose away from zero must not report the zero pose's tool point"
            );
        }
    }
}

/// The articulated test arm's joints on a general chain, in the given convention.
fn as_chain(chain: Value) -> Value {
    let mut document = articulated5();
    document["arm"]["type"] = json!("chain");
    document["arm"]
        .as_object_mut()
        .unwrap()
        .remove("dimensions");
    document["arm"]["chain"] = chain;
    document["waypoints"] = json!([]);
    let joints = document["arm"]["joints"].as_array_mut().unwrap();
    joints.truncate(3);
    document
}

#[test]
fn chains_in_both_conventions_describe_themselves_consistently() {
    // Standard Denavit–Hartenberg: a base yaw, then two pitch joints (α = 90° turns the second
    // axis horizontal), 100 mm and 80 mm links.
    let dh = as_chain(json!({
        "convention": "standard_dh",
        "rows": [
            { "kind": "revolute", "a_mm": 0.0, "alpha_deg": 90.0, "d_mm": 60.0, "theta_deg": 0.0 },
            { "kind": "revolute", "a_mm": 100.0, "alpha_deg": 0.0, "d_mm": 0.0, "theta_deg": 0.0 },
            { "kind": "revolute", "a_mm": 80.0, "alpha_deg": 0.0, "d_mm": 0.0, "theta_deg": 0.0 }
        ],
        "tool": { "position_mm": [0.0, 0.0, 0.0], "rotation_xyz_deg": [0.0, 0.0, 0.0] }
    }));
    // The same arm by origin and axis: axes z, then −y twice (a positive angle lifts).
    let origin_axis = as_chain(json!({
        "convention": "origin_axis",
        "axes": [
            { "kind": "revolute", "axis": [0.0, 0.0, 1.0], "origin_mm": [0.0, 0.0, 0.0] },
            { "kind": "revolute", "axis": [0.0, -1.0, 0.0], "origin_mm": [0.0, 0.0, 60.0] },
            { "kind": "revolute", "axis": [0.0, -1.0, 0.0], "origin_mm": [100.0, 0.0, 60.0] }
        ],
        "tool_home": { "position_mm": [180.0, 0.0, 60.0], "rotation_xyz_deg": [0.0, 0.0, 0.0] }
    }));
    for (name, document) in [("dh", dh), ("origin-axis", origin_axis)] {
        let file = common::scene_file(&format!("check-chain-{name}"), &document);
        let (code, described) = armwright_json(&["check", &file, "--json"]);
        assert_eq!(code, 0, "{described}");
        assert_eq!(described["arm"]["type"], json!("chain"));
        assert_eq!(
            numbers(&described["arm"]["tool_at_zero_mm"]),
            [180.0, 0.0, 60.0],
            "{name}"
        );
        for pose in [[30.0, 40.0, -70.0], [-80.0, 10.0, 60.0]] {
            let joints = pose.map(|v| v.to_string()).join(",");
            let (code, out) =
                armwright_json(&["pose", &file, &format!("--joints={joints}"), "--json"]);
            assert_eq!(code, 0, "{out}");
            let recomputed = product_of_exponentials(&described["arm"], &pose);
            assert!(
                (recomputed - vector(&out["tool_mm"])).norm() < 1e-3,
                "{name} {pose:?}"
            );
        }
        // Damped least squares finds its way back to a reachable point.
        let (code, out) = armwright_json(&["reach", &file, "--to=120,40,90", "--json"]);
        assert_eq!(code, 0, "{name}: {out}");
        let chosen = numbers(&out["chosen_deg"]);
        let joints = chosen
            .iter()
            .map(|v| v.to_string())
            .collect::<Vec<_>>()
            .join(",");
        let (_, back) = armwright_json(&["pose", &file, &format!("--joints={joints}"), "--json"]);
        assert!((vector(&back["tool_mm"]) - Vector3::new(120.0, 40.0, 90.0)).norm() < 1e-2);
    }
}

/// `check --json` on `document`: exit code and the problems' paths and messages.
fn checked(name: &str, document: &Value) -> (i32, Vec<(String, String)>) {
    let (code, out) = armwright_json(&["check", &scene_file(name, document), "--json"]);
    let problems = out["problems"]
        .as_array()
        .unwrap()
        .iter()
        .map(|p| {
            (
                p["path"].as_str().unwrap().to_string(),
                p["message"].as_str().unwrap().to_string(),
            )
        })
        .collect();
    (code, problems)
}

#[test]
fn implausible_sizes_are_refused_at_their_paths_with_the_range() {
    // 1e308 mm passes as a number but no bench arm has it; a forearm of 5000 mm is a length in
    // metres typed as mm (5 m) or a slip of the keyboard.
    let mut document = articulated5();
    set(&mut document, "/arm/dimensions/upper_arm_mm", json!(1e308));
    set(&mut document, "/arm/dimensions/forearm_mm", json!(5000.0));
    let (code, problems) = checked("check-implausible", &document);
    assert_eq!(code, 1);
    assert_eq!(
        problems,
        [
            (
                "arm.dimensions.upper_arm_mm".to_string(),
                "must be above 0 mm and at most 1000 mm, got 1e308 mm".to_string()
            ),
            (
                "arm.dimensions.forearm_mm".to_string(),
                "must be above 0 mm and at most 1000 mm, got 5000 mm".to_string()
            ),
        ]
    );
    // The text form says the same on standard output.
    let (code, stdout, _) = armwright(&["check", &scene_file("check-implausible", &document)]);
    assert_eq!(code, 1);
    assert!(
        stdout.contains("arm.dimensions.forearm_mm: must be above 0 mm and at most 1000 mm"),
        "{stdout}"
    );
}

#[test]
fn a_key_given_twice_is_refused_at_its_path() {
    let document = articulated5();
    let text = serde_json::to_string_pretty(&document).unwrap();
    // The second payload would silently win in a plain JSON reader.
    let doubled = text.replacen(
        "\"payload_g\": 20.0",
        "\"payload_g\": 20.0,\n    \"payload_g\": 2000.0",
        1,
    );
    assert_ne!(doubled, text);
    let dir = common::scratch_dir("check-duplicate");
    let file = dir.join("twice.armwright.json");
    std::fs::write(&file, doubled).unwrap();
    let (code, out) = armwright_json(&["check", file.to_str().unwrap(), "--json"]);
    assert_eq!(code, 1);
    assert_eq!(out["problems"][0]["path"], json!("arm.payload_g"));
    assert!(
        out["problems"][0]["message"]
            .as_str()
            .unwrap()
            .contains("more than once"),
        "{out}"
    );
}

#[test]
fn a_sequence_of_fewer_than_two_waypoints_is_noted() {
    // The arm alone serves pose, reach and envelope, so check passes it, but says why plan,
    // simulate, retime and stream will refuse it.
    for count in [0, 1] {
        let mut document = articulated5();
        document["waypoints"]
            .as_array_mut()
            .unwrap()
            .truncate(count);
        let file = scene_file(&format!("check-{count}-waypoints"), &document);
        let (code, out) = armwright_json(&["check", &file, "--json"]);
        assert_eq!(code, 0, "{count} waypoint(s)");
        assert_eq!(out["notes"][0]["path"], json!("waypoints"));
        let note = out["notes"][0]["message"].as_str().unwrap();
        assert!(note.contains("at least two waypoints"), "{note}");
        let (_, stdout, _) = armwright(&["check", &file]);
        assert!(
            stdout.contains("note: waypoints: the sequence needs at least two waypoints"),
            "{stdout}"
        );
    }
    let (_, out) = armwright_json(&[
        "check",
        &scene_file("check-2-waypoints", &articulated5()),
        "--json",
    ]);
    assert_eq!(out["notes"], json!([]));
}

#[test]
fn a_link_rate_the_link_cannot_stream_is_refused_at_link_rate_hz() {
    let mut document = articulated5();
    document["link"] = json!({ "rate_hz": 20.0 });
    let (code, problems) = checked("check-rate", &document);
    assert_eq!(code, 1);
    assert_eq!(
        problems,
        [(
            "link.rate_hz".to_string(),
            "must be from 50 Hz to 1000 Hz, got 20 Hz".to_string()
        )]
    );
}

#[test]
fn a_link_rate_above_what_the_baud_rate_carries_is_noted() {
    // Five joints and a gripper: 6-channel setpoints of 34 bytes (PROTOCOL.md §7); 115 200
    // baud carries 11 520 bytes a second, 338 such lines. 1000 Hz is in range but too fast.
    let mut document = articulated5();
    document["link"] = json!({ "baud": 115200, "rate_hz": 1000.0 });
    let file = scene_file("check-rate-capacity", &document);
    let (code, out) = armwright_json(&["check", &file, "--json"]);
    assert_eq!(code, 0, "{out}");
    assert_eq!(out["notes"][0]["path"], json!("link.rate_hz"));
    let note = out["notes"][0]["message"].as_str().unwrap();
    assert!(
        note.contains("34 bytes a line") && note.contains("at most 338 of them a second"),
        "{note}"
    );
    let (_, stdout, _) = armwright(&["check", &file]);
    assert!(
        stdout.contains("note: link.rate_hz: 1000 Hz is more than the link carries"),
        "{stdout}"
    );
    document["link"] = json!({ "baud": 115200, "rate_hz": 300.0 });
    let (_, out) = armwright_json(&[
        "check",
        &scene_file("check-rate-within", &document),
        "--json",
    ]);
    assert_eq!(out["notes"], json!([]));
}

#[test]
fn text_that_is_not_plain_json_says_what_was_found() {
    let dir = common::scratch_dir("check-not-plain");
    let text = serde_json::to_string_pretty(&articulated5()).unwrap();
    let mut with_mark = vec![0xEF, 0xBB, 0xBF];
    with_mark.extend_from_slice(text.as_bytes());
    let mut utf16 = vec![0xFF, 0xFE];
    for unit in text.encode_utf16() {
        utf16.extend_from_slice(&unit.to_le_bytes());
    }
    let commented = format!("// my arm\n{text}");
    let cases: [(&str, Vec<u8>, &str); 3] = [
        ("mark", with_mark, "byte-order mark"),
        ("utf16", utf16, "UTF-16"),
        ("comment", commented.into_bytes(), "comment (\"//\")"),
    ];
    for (name, bytes, said) in cases {
        let file = dir.join(format!("{name}.armwright.json"));
        std::fs::write(&file, bytes).unwrap();
        let (code, out) = armwright_json(&["check", file.to_str().unwrap(), "--json"]);
        assert_eq!(code, 2, "{name}");
        let error = out["error"].as_str().unwrap();
        assert!(error.contains(said), "{name}: {error}");
        assert!(!error.contains("expected value"), "{name}: {error}");
    }
}
