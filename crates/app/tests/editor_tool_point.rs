//! Typed and nudged tool-point positions in the whole window: a typed z and the nudge keys move
//! the arm by the same inverse kinematics as a drag (the same reach messages), the keys are
//! listed in the window, and a focused text field keeps its own arrow keys.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

mod editor_common;

use armwright::editor::{NUDGE_KEYS, ReachStatus};
use egui::{Key, Modifiers};
use egui_kittest::kittest::Queryable;

use editor_common::{EditorHarness, sample_editor};

/// The tool point in mm.
fn tool_mm(harness: &EditorHarness) -> [f64; 3] {
    let point = harness.state().state.tool_point().expect("tool point") * 1e3;
    [point.x, point.y, point.z]
}

fn close(a: [f64; 3], b: [f64; 3]) -> bool {
    a.iter().zip(&b).all(|(a, b)| (a - b).abs() < 0.01)
}

#[test]
fn a_typed_height_and_the_nudge_keys_move_the_tool_point() {
    let (mut harness, _requests, _dir) = sample_editor("tool-point-typed");
    assert!(harness.query_by_label(NUDGE_KEYS).is_some(), "keys listed");
    let [x, y, z] = tool_mm(&harness);

    // Typed: 10 mm higher.
    harness
        .get_by_label("tool point z (mm)")
        .set_value_accesskit(z + 10.0);
    harness.run_steps(2);
    assert_eq!(harness.state().state.readout.reach, ReachStatus::Reached);
    assert!(
        close(tool_mm(&harness), [x, y, z + 10.0]),
        "{:?}",
        tool_mm(&harness)
    );

    // Nudged: 10 mm along x with Shift, then 1 mm back down.
    harness.key_press_modifiers(Modifiers::SHIFT, Key::ArrowRight);
    harness.run_steps(2);
    harness.key_press(Key::PageDown);
    harness.run_steps(2);
    assert_eq!(harness.state().state.readout.reach, ReachStatus::Reached);
    assert!(
        close(tool_mm(&harness), [x + 10.0, y, z + 9.0]),
        "{:?}",
        tool_mm(&harness)
    );

    // Nudged on until out of reach: the last press leaves the arm where it was and says by
    // how much, as a drag does.
    let mut before = harness.state().state.pose.clone();
    for _ in 0..60 {
        before = harness.state().state.pose.clone();
        harness.key_press_modifiers(Modifiers::SHIFT, Key::ArrowRight);
        harness.run_steps(1);
        if harness.state().state.readout.reach != ReachStatus::Reached {
            break;
        }
    }
    harness.run_steps(1);
    assert!(
        matches!(
            harness.state().state.readout.reach,
            ReachStatus::OutOfReach { .. }
        ),
        "{:?}",
        harness.state().state.readout.reach
    );
    assert_eq!(harness.state().state.pose, before);
    assert!(harness.query_by_label_contains("OUT OF REACH by").is_some());

    // A text field with the keyboard keeps its arrow keys.
    harness.get_by_label("name of waypoint 1").focus();
    harness.run_steps(2);
    let pose = harness.state().state.pose.clone();
    harness.key_press(Key::ArrowLeft);
    harness.run_steps(2);
    assert_eq!(harness.state().state.pose, pose);
}
