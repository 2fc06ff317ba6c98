//! Teaching a new task in the whole window: a new sequence keeps the arm, typed positions are
//! stored as waypoints that follow the one before (a descent is a straight move named for what
//! changed, a gripper change is named for it), a waypoint is duplicated, the scene is saved
//! through the path box with Enter, and the saved file passes `armwright check` and, once
//! retimed, `armwright simulate`.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

mod editor_common;

use armwright::scene::MoveKind;
use egui_kittest::kittest::Queryable;

use editor_common::{
    EditorHarness, armwright_command, sample_editor, save_as_with_enter, store, type_position,
};

#[test]
fn a_new_pick_and_place_is_taught_by_typed_positions_saved_and_checked() {
    let (mut harness, _requests, dir) = sample_editor("sequence-teach");
    let arm = harness.state().state.scene.arm.clone();
    harness.get_by_label("New sequence").click();
    harness.run_steps(2);
    assert!(harness.state().state.scene.waypoints.is_empty());
    assert_eq!(harness.state().state.scene.arm, arm);

    // Above the pick, down to it, grip, up again, over to the place, down, release, up.
    let (pick, place) = ([170.0, -30.0], [150.0, 40.0]);
    let (high, low) = (40.0, 15.0);
    for (at, down_and_up) in [(pick, "closed"), (place, "open")] {
        type_position(&mut harness, "x", at[0]);
        type_position(&mut harness, "y", at[1]);
        type_position(&mut harness, "z", high);
        store(&mut harness);
        type_position(&mut harness, "z", low);
        store(&mut harness);
        harness.get_by_label_contains(down_and_up).click();
        harness.run_steps(2);
        store(&mut harness);
        type_position(&mut harness, "z", high);
        store(&mut harness);
    }
    let waypoints = harness.state().state.scene.waypoints.clone();
    assert_eq!(waypoints.len(), 8, "{:?}", names(&harness));
    assert_eq!(waypoints[1].move_kind, MoveKind::Straight);
    assert_eq!(
        waypoints[1].name,
        format!("25 mm below {}", waypoints[0].name)
    );
    assert_eq!(
        waypoints[2].name,
        format!("{}, gripper closed", waypoints[1].name)
    );
    assert_eq!(waypoints[3].move_kind, MoveKind::Straight);
    // Back up: named from the first, not stacked on the one before.
    assert_eq!(
        waypoints[3].name,
        format!("{}, gripper closed", waypoints[0].name)
    );
    assert_eq!(
        waypoints[4].move_kind,
        MoveKind::Joint,
        "sideways is a joint move"
    );

    // Duplicate the last: a copy right after it, selected.
    harness.get_by_label("Duplicate").click();
    harness.run_steps(2);
    assert_eq!(harness.state().state.scene.waypoints.len(), 9);
    assert!(harness.query_by_label("Sequence (9 waypoints)").is_some());

    // Save through the path box, with Enter.
    let path = dir.join("taught.armwright.json");
    save_as_with_enter(&mut harness, &path);

    // The taught file passes `check`. Its gripper stops were stored with the dwell of the
    // waypoint before them, too short for the arm to settle before the gripper acts, so the dry
    // run must say so; retiming adds the dwell, and the retimed file passes the dry run.
    let file = path.display().to_string();
    let (ok, text) = armwright_command(&["check", &file]);
    assert!(ok, "check: {text}");
    let (ok, text) = armwright_command(&["simulate", &file]);
    assert!(ok || text.contains("has settled"), "simulate: {text}");
    let retimed_path = dir.join("taught-retimed.armwright.json");
    let retimed_file = retimed_path.display().to_string();
    let (ok, text) = armwright_command(&[
        "retime",
        &file,
        "--max-overshoot",
        "1.5",
        "--write",
        &retimed_file,
    ]);
    assert!(ok, "retime: {text}");
    let (ok, text) = armwright_command(&["simulate", &retimed_file]);
    assert!(ok, "simulate: {text}");
}

fn names(harness: &EditorHarness) -> Vec<String> {
    harness
        .state()
        .state
        .scene
        .waypoints
        .iter()
        .map(|waypoint| waypoint.name.clone())
        .collect()
}
