//! The teaching flow on the built-in sample: drag the tool point in the top view and in the
//! side view, store a waypoint, undo and redo it with the keys.

mod editor_common;

use armwright::editor::{ReachStatus, ViewKind};
use egui::{Key, Modifiers, vec2};
use egui_kittest::kittest::Queryable;

use editor_common::{drag, sample_editor};

#[test]
fn drag_in_the_top_view_moves_the_tool_point_in_its_horizontal_plane() {
    let (mut harness, _requests, _dir) = sample_editor("drag-top");
    let before = harness.state().state.tool_point().expect("tool point");
    let Some(from) = harness.state().camera(ViewKind::Top).tool_on_screen() else {
        panic!("the top view drew no tool point");
    };
    let to = from + vec2(-25.0, 30.0);
    let projection = *harness
        .state()
        .camera(ViewKind::Top)
        .projection()
        .expect("projection");
    let expected = projection.to_plane(to);
    drag(&mut harness, from, to);
    let editor = harness.state();
    assert_eq!(
        editor.state.reach,
        ReachStatus::Reached,
        "{:?}",
        editor.state.reach_problems()
    );
    let after = editor.state.tool_point().expect("tool point");
    // The tool point follows the pointer in X and Y and keeps its height.
    assert!(
        (after.x * 1e3 - expected[0]).abs() < 0.5,
        "x {} vs {}",
        after.x * 1e3,
        expected[0]
    );
    assert!(
        (after.y * 1e3 - expected[1]).abs() < 0.5,
        "y {} vs {}",
        after.y * 1e3,
        expected[1]
    );
    assert!((after.z - before.z).abs() < 1e-6);
}

#[test]
fn drag_in_the_side_view_keeps_the_base_yaw() {
    let (mut harness, _requests, _dir) = sample_editor("drag-side");
    let yaw_before = harness.state().state.side_view_yaw();
    let Some(from) = harness.state().camera(ViewKind::Side).tool_on_screen() else {
        panic!("the side view drew no tool point");
    };
    drag(&mut harness, from, from + vec2(-20.0, -25.0));
    let state = &harness.state().state;
    assert_eq!(
        state.reach,
        ReachStatus::Reached,
        "{:?}",
        state.reach_problems()
    );
    assert!((state.side_view_yaw() - yaw_before).abs() < 1e-9);
}

#[test]
fn dragging_far_out_says_out_of_reach_and_leaves_the_arm() {
    let (mut harness, _requests, _dir) = sample_editor("drag-far");
    let pose_before = harness.state().state.pose.clone();
    let Some(from) = harness.state().camera(ViewKind::Side).tool_on_screen() else {
        panic!("the side view drew no tool point");
    };
    // Far up and away: well beyond the stretched arm (the side view shows about 1.5 reaches).
    let projection = *harness
        .state()
        .camera(ViewKind::Side)
        .projection()
        .expect("projection");
    let far = projection.to_screen([700.0, 600.0]);
    drag(&mut harness, from, far);
    let state = &harness.state().state;
    assert!(
        matches!(state.reach, ReachStatus::OutOfReach { short_by_mm } if short_by_mm > 100.0),
        "{:?}",
        state.reach
    );
    assert!(harness.query_by_label_contains("OUT OF REACH by").is_some());
    // The last reachable step is kept: the arm moved, but did not jump.
    assert_eq!(state.pose.len(), pose_before.len());
}

#[test]
fn store_a_waypoint_then_undo_and_redo_with_the_keys() {
    let (mut harness, _requests, _dir) = sample_editor("store-undo");
    let Some(from) = harness.state().camera(ViewKind::Top).tool_on_screen() else {
        panic!("no tool point");
    };
    drag(&mut harness, from, from + vec2(15.0, 15.0));
    let count = harness.state().state.scene.waypoints.len();
    let pose = harness.state().state.pose_in_file_units();
    harness.get_by_label("Store pose").click();
    harness.run_steps(4);
    {
        let state = &harness.state().state;
        assert_eq!(state.scene.waypoints.len(), count + 1);
        let index = state
            .selected_waypoint
            .expect("the new waypoint is selected");
        assert_eq!(state.scene.waypoints[index].joints_deg_or_mm, pose);
        assert!(state.is_dirty());
        assert!(harness.state().window_title().starts_with("* "));
    }
    // Nothing has keyboard focus after a button click, so the keys reach the editor.
    harness.key_press_modifiers(Modifiers::COMMAND, Key::Z);
    harness.run_steps(3);
    assert_eq!(harness.state().state.scene.waypoints.len(), count);
    assert!(
        !harness.state().state.is_dirty(),
        "undo back to the file's scene is clean"
    );
    harness.key_press_modifiers(Modifiers::COMMAND | Modifiers::SHIFT, Key::Z);
    harness.run_steps(3);
    assert_eq!(harness.state().state.scene.waypoints.len(), count + 1);
    assert!(harness.state().state.is_dirty());
}

#[test]
fn renaming_by_typing_is_one_undo_step() {
    let (mut harness, _requests, _dir) = sample_editor("rename");
    let original = harness.state().state.scene.waypoints[2].name.clone();
    harness.get_by_label("name of waypoint 3").focus();
    harness.run_steps(2);
    harness.get_by_label("name of waypoint 3").type_text("!!");
    harness.run_steps(3);
    let typed = harness.state().state.scene.waypoints[2].name.clone();
    assert!(
        typed == format!("{original}!!") || typed == format!("!!{original}"),
        "{typed}"
    );
    harness.get_by_label("Undo").click();
    harness.run_steps(3);
    assert_eq!(harness.state().state.scene.waypoints[2].name, original);
}
