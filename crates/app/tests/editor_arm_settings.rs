//! The arm tab: a changed link length reaches the arm and its reach map; a value that makes the
//! scene invalid is listed with its field, kept as typed and not applied; undo restores the arm.
//! The same for a chain arm's geometry, given as Denavit–Hartenberg rows or as joint axes.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

mod common;
mod editor_common;

use std::time::{Duration, Instant};

use armwright::editor::{ArmField, ChainField, Editor, ViewKind};
use armwright::scene::ArmShape;
use egui::{Key, Modifiers};
use egui_kittest::Harness;
use egui_kittest::kittest::Queryable;
use serde_json::{Value, json};

use editor_common::{click_tab, file_editor, sample_editor, sample_scene, undo};

const UPPER_ARM: &str = "upper arm (mm)";

fn upper_arm_mm(harness: &Harness<'static, Editor>) -> f64 {
    match &harness.state().state.scene.arm.shape {
        ArmShape::Articulated4(size) | ArmShape::Articulated5(size) => size.upper_arm_mm,
        other => panic!("the sample is articulated, not {other:?}"),
    }
}

/// The side view's farthest reach once its map is for the arm as it is now (at most 60 s).
fn side_reach_after(harness: &mut Harness<'static, Editor>, other_than: Option<f64>) -> f64 {
    let start = Instant::now();
    loop {
        harness.step();
        let reach = harness
            .state()
            .reach_layer(ViewKind::Side)
            .map(|layer| layer.map.farthest_reach());
        if !harness.state().is_mapping()
            && let Some(reach) = reach
            && Some(reach) != other_than
        {
            return reach;
        }
        assert!(
            start.elapsed() < Duration::from_secs(60),
            "no new side map after 60 s"
        );
        std::thread::sleep(Duration::from_millis(10));
    }
}

/// Waits for the side map of the lengthened arm and checks that it reaches more than 20 mm
/// farther than `before` (m); returns its reach, m.
fn reaches_farther(harness: &mut Harness<'static, Editor>, before: f64) -> f64 {
    let after = side_reach_after(harness, Some(before));
    assert!(after > before + 0.02, "{before} m → {after} m");
    after
}

/// Waits for the side map after an undo and checks that it reaches `before` (m) again, not the
/// `after` (m) of the undone change.
fn reach_is_back(harness: &mut Harness<'static, Editor>, before: f64, after: f64) {
    let undone = side_reach_after(harness, Some(after));
    assert!((undone - before).abs() < 1e-9);
}

/// Focuses a field, selects its text and types `pieces` one after another, a frame each.
fn retype(harness: &mut Harness<'static, Editor>, label: &str, pieces: &[&str]) {
    harness.get_by_label(label).focus();
    harness.run_steps(2);
    harness.key_press_modifiers(Modifiers::COMMAND, Key::A);
    harness.run_steps(1);
    for piece in pieces {
        harness.get_by_label(label).type_text(piece);
        harness.run_steps(1);
    }
    harness.run_steps(1);
}

#[test]
fn a_longer_upper_arm_reaches_farther_and_undo_takes_it_back() {
    let (mut harness, _requests, _dir) = sample_editor("arm-length");
    click_tab(&mut harness, "Arm");
    let original = harness.state().state.scene.clone();
    let reach_before = side_reach_after(&mut harness, None);
    let tool_before = harness.state().state.tool_point().expect("tool point");
    let length = upper_arm_mm(&harness);
    let longer = length + 30.0;

    // Typed a character at a time: each prefix is a valid length and is applied at once.
    let text = format!("{longer}");
    let pieces: Vec<String> = text.chars().map(String::from).collect();
    let pieces: Vec<&str> = pieces.iter().map(String::as_str).collect();
    retype(&mut harness, UPPER_ARM, &pieces);
    assert_eq!(upper_arm_mm(&harness), longer);
    assert!(harness.state().state.arm_form.problems().is_empty());
    let tool_after = harness.state().state.tool_point().expect("tool point");
    assert!(
        (tool_after - tool_before).norm() > 1e-3,
        "the arm as drawn did not change"
    );
    // The map is made again for the new arm: 30 mm more upper arm reaches farther.
    let reach_after = reaches_farther(&mut harness, reach_before);

    // The typing was one edit of one field: one undo step restores the arm.
    undo(&mut harness);
    assert_eq!(harness.state().state.scene, original);
    assert!(!harness.state().state.can_undo());
    assert!(
        harness
            .get_by_label(UPPER_ARM)
            .value()
            .is_some_and(|v| v == format!("{length}")),
        "{:?}",
        harness.get_by_label(UPPER_ARM).value()
    );
    reach_is_back(&mut harness, reach_before, reach_after);
}

#[test]
fn an_invalid_value_is_listed_kept_and_not_applied() {
    let (mut harness, _requests, _dir) = sample_editor("arm-invalid");
    click_tab(&mut harness, "Arm");
    let original = harness.state().state.scene.clone();
    let arm_before = harness.state().state.arm().cloned();

    // A valid payload first, so there is something to undo.
    retype(&mut harness, "payload (g)", &["25"]);
    assert_eq!(harness.state().state.scene.arm.payload_g, 25.0);
    let with_payload = harness.state().state.scene.clone();

    retype(&mut harness, UPPER_ARM, &["-20"]);
    let state = &harness.state().state;
    assert_eq!(
        state.scene, with_payload,
        "the invalid length is not applied"
    );
    let path = ArmField::UpperArm.path(&state.scene.arm);
    assert_eq!(path, "arm.dimensions.upper_arm_mm");
    assert!(
        state.arm_form.problems().iter().any(|p| p.path == path),
        "{:?}",
        state.arm_form.problems()
    );
    // Listed on screen with its field, and the field keeps what was typed.
    assert!(
        harness
            .query_by_label(&format!(
                "{path}: must be above 0 mm and at most 1000 mm, got -20 mm"
            ))
            .is_some()
    );
    assert_eq!(
        harness.get_by_label(UPPER_ARM).value().as_deref(),
        Some("-20")
    );
    assert!(
        harness
            .query_by_label_contains("1 problem, not applied")
            .is_some()
    );

    // Undo takes back the payload; the typed length stays listed and unapplied.
    undo(&mut harness);
    let state = &harness.state().state;
    assert_eq!(state.scene, original);
    assert_eq!(state.arm().cloned(), arm_before);
    assert_eq!(
        harness.get_by_label(UPPER_ARM).value().as_deref(),
        Some("-20")
    );
    assert_eq!(
        harness.get_by_label("payload (g)").value().as_deref(),
        Some(format!("{}", original.arm.payload_g).as_str())
    );

    // Fixing the value applies it.
    retype(&mut harness, UPPER_ARM, &["110"]);
    assert_eq!(upper_arm_mm(&harness), 110.0);
    assert!(harness.state().state.arm_form.problems().is_empty());
}

#[test]
fn a_fifth_joint_is_added_and_removed_with_the_waypoints() {
    let (mut harness, _requests, _dir) = sample_editor("arm-type");
    click_tab(&mut harness, "Arm");
    let original = harness.state().state.scene.clone();
    harness.get_by_label("articulated, 5 joints").click();
    harness.run_steps(3);
    let state = &harness.state().state;
    assert_eq!(state.joint_count(), 5);
    assert_eq!(state.pose.len(), 5);
    assert!(state.arm().is_some());
    assert!(
        state
            .scene
            .waypoints
            .iter()
            .all(|w| w.joints_deg_or_mm.len() == 5)
    );
    assert!(
        harness
            .query_by_label_contains("Joint 5 wrist roll")
            .is_some()
    );
    undo(&mut harness);
    assert_eq!(harness.state().state.scene, original);
    assert_eq!(harness.state().state.pose.len(), 4);
}

#[test]
fn every_sample_shows_its_arm_in_the_file_units() {
    for (name, sliding) in [
        ("pen-plotter", None),
        ("spacer-stacker", None),
        ("peg-sorter", Some(2)),
    ] {
        let mut harness = file_editor(&format!("arm-{name}"), sample_scene(name));
        click_tab(&mut harness, "Arm");
        let arm = harness.state().state.scene.arm.clone();
        assert_eq!(
            harness.get_by_label(UPPER_ARM).value(),
            ArmField::UpperArm.value(&arm).map(|v| v.to_string()),
            "{name}"
        );
        // Every joint opens to its limits, in mm for a sliding joint and degrees otherwise.
        for (index, joint) in arm.joints.iter().enumerate() {
            let header = format!("Joint {} {}", index + 1, joint.name);
            harness.get_by_label(&header).click();
            harness.run_steps(2);
            let unit = if sliding == Some(index) { "mm" } else { "°" };
            let label = format!("joint {} lowest position ({unit})", index + 1);
            assert_eq!(
                harness.get_by_label(&label).value(),
                Some(joint.min.to_string()),
                "{name}: {label}"
            );
            harness.get_by_label(&header).click();
            harness.run_steps(2);
        }
        assert!(
            harness.state().state.arm_form.problems().is_empty(),
            "{name}"
        );
    }
}

/// The test arm of `common::articulated5` as a chain of five revolute joints: standard
/// Denavit–Hartenberg rows (a, α, d, θ in mm and degrees) for base yaw, shoulder, elbow, wrist
/// pitch and wrist roll, the 70 mm wrist-to-tool length as the last row's offset d.
fn dh_chain() -> Value {
    let mut document = common::articulated5();
    document["arm"]["type"] = json!("chain");
    common::remove(&mut document, "/arm/dimensions");
    let row = |a: f64, alpha: f64, d: f64| json!({ "kind": "revolute", "a_mm": a, "alpha_deg": alpha, "d_mm": d, "theta_deg": 0.0 });
    document["arm"]["chain"] = json!({
        "convention": "standard_dh",
        "rows": [
            row(0.0, 90.0, 90.0),
            row(120.0, 0.0, 0.0),
            row(110.0, 0.0, 0.0),
            row(0.0, 90.0, 0.0),
            row(0.0, 0.0, 70.0)
        ],
        "tool": { "position_mm": [0.0, 0.0, 0.0], "rotation_xyz_deg": [0.0, 0.0, 0.0] }
    });
    document
}

/// An editor harness on `document`, written to a scratch file, on the arm tab.
fn editor_on(test: &str, document: &Value) -> Harness<'static, Editor> {
    let mut harness = file_editor(test, common::scene_file(test, document).into());
    assert_eq!(
        Some(harness.state().state.scene.arm.shape.word()),
        document["arm"]["type"].as_str(),
        "the test scene did not load: {:?}",
        harness.state().state.messages
    );
    click_tab(&mut harness, "Arm");
    harness
}

/// Link length a of Denavit–Hartenberg row `row` (0-based), in mm.
fn dh_a_mm(harness: &Harness<'static, Editor>, row: usize) -> f64 {
    match &harness.state().state.scene.arm.shape {
        ArmShape::ChainDh { rows, .. } => rows[row].a_mm,
        other => panic!("a Denavit–Hartenberg chain, not {other:?}"),
    }
}

#[test]
fn a_longer_chain_row_reaches_farther_and_undo_takes_it_back() {
    let mut harness = editor_on("arm-chain-length", &dh_chain());
    let original = harness.state().state.scene.clone();
    let reach_before = side_reach_after(&mut harness, None);
    let tool_before = harness.state().state.tool_point().expect("tool point");
    let label = "row 2 link length a (mm)";
    assert_eq!(harness.get_by_label(label).value().as_deref(), Some("120"));

    // 150 typed a key at a time: "1" and "15" are valid lengths too and applied at once.
    retype(&mut harness, label, &["1", "5", "0"]);
    assert_eq!(dh_a_mm(&harness, 1), 150.0);
    assert!(harness.state().state.arm_form.problems().is_empty());
    let tool_after = harness.state().state.tool_point().expect("tool point");
    // Forward kinematics of a planar link (common practice): lengthening the upper arm by 30 mm
    // moves the tool point by 30 mm along that link, whatever the pose.
    assert!(
        ((tool_after - tool_before).norm() - 0.030).abs() < 1e-9,
        "the tool point moved {} m",
        (tool_after - tool_before).norm()
    );
    let reach_after = reaches_farther(&mut harness, reach_before);

    // Three keystrokes in one field are one undo step.
    undo(&mut harness);
    assert_eq!(harness.state().state.scene, original);
    assert!(!harness.state().state.can_undo());
    assert_eq!(harness.get_by_label(label).value().as_deref(), Some("120"));
    reach_is_back(&mut harness, reach_before, reach_after);
}

#[test]
fn a_chain_value_that_is_no_number_is_listed_kept_and_not_applied() {
    let mut harness = editor_on("arm-chain-invalid", &dh_chain());
    let original = harness.state().state.scene.clone();

    // A valid twist first, so there is something to undo.
    retype(&mut harness, "row 4 link twist α (°)", &["80"]);
    let with_twist = harness.state().state.scene.clone();
    assert_ne!(with_twist, original);

    let label = "row 3 link length a (mm)";
    retype(&mut harness, label, &["11o"]);
    let state = &harness.state().state;
    assert_eq!(state.scene, with_twist, "the bad length is not applied");
    let path = "arm.chain.rows[2].a_mm";
    assert!(
        harness
            .query_by_label(&format!("{path}: \"11o\" is not a number"))
            .is_some(),
        "{:?}",
        state.arm_form.problems()
    );
    assert_eq!(harness.get_by_label(label).value().as_deref(), Some("11o"));

    // Undo takes back the twist; the typed length stays, listed and unapplied.
    undo(&mut harness);
    assert_eq!(harness.state().state.scene, original);
    assert_eq!(harness.get_by_label(label).value().as_deref(), Some("11o"));
    assert_eq!(
        harness
            .get_by_label("row 4 link twist α (°)")
            .value()
            .as_deref(),
        Some("90")
    );
    assert!(
        harness
            .query_by_label_contains("1 problem, not applied")
            .is_some()
    );

    retype(&mut harness, label, &["115"]);
    assert_eq!(dh_a_mm(&harness, 2), 115.0);
    assert!(harness.state().state.arm_form.problems().is_empty());
}

#[test]
fn a_chain_axis_of_zero_length_is_refused_at_its_joint() {
    // The same arm given by each joint's axis and a point on it, every joint at zero.
    let mut document = common::articulated5();
    document["arm"]["type"] = json!("chain");
    common::remove(&mut document, "/arm/dimensions");
    let axis = |axis: [f64; 3], origin: [f64; 3]| json!({ "kind": "revolute", "axis": axis, "origin_mm": origin });
    document["arm"]["chain"] = json!({
        "convention": "origin_axis",
        "axes": [
            axis([0.0, 0.0, 1.0], [0.0, 0.0, 0.0]),
            axis([0.0, -1.0, 0.0], [0.0, 0.0, 90.0]),
            axis([0.0, -1.0, 0.0], [120.0, 0.0, 90.0]),
            axis([0.0, -1.0, 0.0], [230.0, 0.0, 90.0]),
            axis([1.0, 0.0, 0.0], [230.0, 0.0, 90.0])
        ],
        "tool_home": { "position_mm": [300.0, 0.0, 90.0], "rotation_xyz_deg": [0.0, 0.0, 0.0] }
    });
    let mut harness = editor_on("arm-chain-axis", &document);
    let original = harness.state().state.scene.clone();

    retype(&mut harness, "joint 2 axis y", &["0"]);
    let state = &harness.state().state;
    assert_eq!(state.scene, original, "a zero axis is not applied");
    let field = ArmField::Chain(ChainField::Axis {
        joint: 1,
        component: 1,
    });
    assert_eq!(field.path(&state.scene.arm), "arm.chain.axes[1].axis[1]");
    // The validator names the axis as a whole; the component typed into is the one at fault.
    let problem = state
        .arm_form
        .problem_at(field, &state.scene.arm)
        .expect("the axis field has the problem");
    assert_eq!(problem.path, "arm.chain.axes[1].axis");
    assert_eq!(
        harness.get_by_label("joint 2 axis y").value().as_deref(),
        Some("0")
    );

    // A point on the axis moves the joints after it: a longer upper arm, applied at once.
    retype(&mut harness, "joint 2 axis y", &["1"]);
    assert!(harness.state().state.arm_form.problems().is_empty());
    retype(&mut harness, "joint 3 point on axis x (mm)", &["150"]);
    match &harness.state().state.scene.arm.shape {
        ArmShape::ChainOriginAxis { axes, .. } => assert_eq!(axes[2].origin_mm[0], 150.0),
        other => panic!("{other:?}"),
    }
}

#[test]
fn switching_to_the_horizontal_type_keeps_lengths_and_undo_takes_it_back() {
    let mut document = common::articulated5();
    document["waypoints"] = json!([]);
    let mut harness = editor_on("arm-to-scara", &document);
    let original = harness.state().state.scene.clone();
    harness
        .get_by_label("horizontal-jointed (SCARA type)")
        .click();
    harness.run_steps(3);
    let state = &harness.state().state;
    let ArmShape::Scara(size) = &state.scene.arm.shape else {
        panic!("not switched: {:?}", state.messages.last());
    };
    assert_eq!(size.upper_arm_mm, 120.0);
    assert_eq!(size.tool_drop_mm, 70.0);
    assert!(state.arm().is_some(), "the new arm builds");
    // The lift slides: its home is 0 mm, the top of its travel.
    assert_eq!(state.pose.len(), 4);
    assert_eq!(state.pose[2], 0.0);
    assert!(
        state
            .messages
            .last()
            .is_some_and(|m| m.text.contains("joint 3 \"lift\" is new")
                && m.text
                    .contains("joint 5 \"roll\" and its settings were removed")),
        "{:?}",
        state.messages.last()
    );
    assert!(harness.query_by_label_contains("Joint 3 lift").is_some());

    undo(&mut harness);
    assert_eq!(harness.state().state.scene, original);
    assert_eq!(harness.state().state.pose.len(), 5);
}

#[test]
fn a_switch_that_would_lose_waypoints_is_refused_with_the_reason() {
    let mut harness = editor_on("arm-from-scara", &common::scara());
    let original = harness.state().state.scene.clone();
    harness.get_by_label("articulated, 4 joints").click();
    harness.run_steps(3);
    let state = &harness.state().state;
    assert_eq!(state.scene, original, "nothing changed");
    assert!(!state.can_undo());
    let said = state
        .messages
        .last()
        .map(|m| m.text.clone())
        .unwrap_or_default();
    assert!(
        said.contains("not switched") && said.contains("1 taught waypoint(s)"),
        "{said}"
    );
}
