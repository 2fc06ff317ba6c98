//! Capturing a pose from the input arm: the editor connected to the simulated device, whose six
//! analog inputs sweep slowly, on a scene that maps four of them to the joints; the input arm
//! follows the readings, the capture key stores the mapped pose as a waypoint (one undo step),
//! and with no inputs mapped the key says why nothing was stored.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

mod editor_common;

use armwright::editor::{CAPTURE_KEY, Level, NO_INPUT_ARM, input_arm_pose};
use armwright::scene::{pose_to_file_units, save};
use armwright_link::{READING_FULL_SCALE, SCRIPTED_AMPLITUDE};
use egui::{Event, Modifiers};

use editor_common::{
    EditorHarness, connect, file_editor, sample_editor, scene_with_inputs, scratch, step_until,
};

fn press_capture_key(harness: &mut EditorHarness) {
    harness.event(Event::Key {
        key: CAPTURE_KEY,
        physical_key: None,
        pressed: true,
        repeat: false,
        modifiers: Modifiers::NONE,
    });
    harness.step();
}

fn newest_readings(harness: &EditorHarness) -> Option<Vec<u16>> {
    let view = harness.state().device().view();
    view.stats
        .as_ref()
        .and_then(|stats| stats.readings)
        .map(|readings| readings.as_slice().to_vec())
}

#[test]
fn the_capture_key_stores_the_input_arms_pose_as_a_waypoint() {
    let dir = scratch("capture-scene");
    let path = dir.join("inputs.armwright.json");
    save(&scene_with_inputs(), &path).expect("saves");
    let mut harness = file_editor("capture", path);
    connect(&mut harness);
    step_until(&mut harness, "the input arm", |editor| {
        editor.state.device.input_pose.is_some()
    });

    // The readings come from the sweep: six inputs within its swing around mid-scale, and
    // they move.
    let first = newest_readings(&harness).expect("readings");
    assert_eq!(first.len(), 6);
    let middle = f64::from(READING_FULL_SCALE) / 2.0;
    for reading in &first {
        assert!(
            (f64::from(*reading) - middle).abs() <= SCRIPTED_AMPLITUDE + 1.0,
            "{first:?}"
        );
    }
    step_until(&mut harness, "the input arm to move", |editor| {
        editor
            .device()
            .view()
            .stats
            .as_ref()
            .and_then(|stats| stats.readings)
            .is_some_and(|now| now.as_slice() != first.as_slice())
    });

    // Capture: the key stores what the input arm showed in the frame it was pressed, which is
    // the mapping of the newest readings the link had.
    let before = harness.state().state.scene.waypoints.len();
    let shown = harness
        .state()
        .state
        .device
        .input_pose
        .clone()
        .expect("input arm");
    let readings = newest_readings(&harness).expect("readings");
    let mapped = input_arm_pose(&harness.state().state, &readings).expect("mapped");
    for (a, b) in shown.iter().zip(&mapped) {
        assert!((a - b).abs() < 1e-12, "{shown:?} vs {mapped:?}");
    }
    press_capture_key(&mut harness);
    let state = &harness.state().state;
    assert_eq!(state.scene.waypoints.len(), before + 1);
    let index = state
        .selected_waypoint
        .expect("the new waypoint is selected");
    let stored = &state.scene.waypoints[index].joints_deg_or_mm;
    let expected = pose_to_file_units(&state.scene.arm, &shown);
    for (joint, (got, want)) in stored.iter().zip(&expected).enumerate() {
        assert!(
            (got - want).abs() < 1e-9,
            "joint {joint}: stored {got}°, mapped {want}°"
        );
    }
    // Each joint is on its line: base −30°…30° over readings 1048…3048.
    let base = -30.0 + 60.0 * (f64::from(readings[0]) - 1048.0) / 2000.0;
    assert!((stored[0] - base).abs() < 1e-9, "{} vs {base}", stored[0]);
    assert!(
        state
            .messages
            .iter()
            .any(|m| m.text == "captured the input arm's pose")
    );

    // One undo step takes it back.
    editor_common::undo(&mut harness);
    assert_eq!(harness.state().state.scene.waypoints.len(), before);
}

#[test]
fn without_inputs_the_capture_key_says_why_nothing_was_stored() {
    let (mut harness, _requests, _dir) = sample_editor("capture-none");
    connect(&mut harness);
    harness.run_steps(5);
    assert!(harness.state().state.device.input_pose.is_none());
    let before = harness.state().state.scene.waypoints.len();
    press_capture_key(&mut harness);
    let state = &harness.state().state;
    assert_eq!(state.scene.waypoints.len(), before);
    assert!(
        state
            .messages
            .iter()
            .any(|m| m.level == Level::Warning && m.text == NO_INPUT_ARM),
        "{:?}",
        state.messages
    );
}
