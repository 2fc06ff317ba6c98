//! The arm tab: a changed link length reaches the arm and its reach map; a value that makes the
//! scene invalid is listed with its field, kept as typed and not applied; undo restores the arm.

mod editor_common;

use std::time::{Duration, Instant};

use armwright::editor::{ArmField, Editor, ViewKind};
use armwright::scene::ArmShape;
use egui::accesskit::Role;
use egui::{Key, Modifiers};
use egui_kittest::Harness;
use egui_kittest::kittest::Queryable;

use editor_common::sample_editor;

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
    harness.get_by_role_and_label(Role::Button, "Arm").click();
    harness.run_steps(2);
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
    let reach_after = side_reach_after(&mut harness, Some(reach_before));
    assert!(
        reach_after > reach_before + 0.02,
        "{reach_before} m → {reach_after} m"
    );

    // The typing was one edit of one field: one undo step restores the arm.
    harness.get_by_label("Undo").click();
    harness.run_steps(3);
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
    let reach_undone = side_reach_after(&mut harness, Some(reach_after));
    assert!((reach_undone - reach_before).abs() < 1e-9);
}

#[test]
fn an_invalid_value_is_listed_kept_and_not_applied() {
    let (mut harness, _requests, _dir) = sample_editor("arm-invalid");
    harness.get_by_role_and_label(Role::Button, "Arm").click();
    harness.run_steps(2);
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
            .query_by_label(&format!("{path}: must be above 0 mm, got -20"))
            .is_some()
    );
    assert_eq!(
        harness.get_by_label(UPPER_ARM).value().as_deref(),
        Some("-20")
    );
    assert!(harness.query_by_label_contains("1 problem(s)").is_some());

    // Undo takes back the payload; the typed length stays listed and unapplied.
    harness.get_by_label("Undo").click();
    harness.run_steps(3);
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
    harness.get_by_role_and_label(Role::Button, "Arm").click();
    harness.run_steps(2);
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
    harness.get_by_label("Undo").click();
    harness.run_steps(3);
    assert_eq!(harness.state().state.scene, original);
    assert_eq!(harness.state().state.pose.len(), 4);
}

#[test]
fn every_sample_shows_its_arm_in_the_file_units() {
    for (name, sliding) in [
        ("pen-plotter", None),
        ("cube-stacker", None),
        ("peg-sorter", Some(2)),
    ] {
        let path = std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
            .join("../../sample-scenes")
            .join(format!("{name}.armwright.json"));
        let dir = editor_common::scratch(&format!("arm-{name}"));
        let (link, _requests) = armwright::editor::ChannelStopLink::new();
        let editor = Editor::open(
            Some(path),
            Box::new(link),
            editor_common::options(&dir, 3600),
        );
        let mut harness = editor_common::harness(editor);
        harness.run_steps(3);
        harness.get_by_role_and_label(Role::Button, "Arm").click();
        harness.run_steps(2);
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
