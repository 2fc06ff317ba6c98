//! A whole teach in the window, as a new user does it: from the sample, a new sequence; a
//! pick-and-place of ten waypoints taught by typed positions and by dragging the tool point in
//! both views, each drag to a spot the view's shading marks reachable at the held tool angle; the dry run; a retime (never slower than the start when the start already meets
//! the target), applied; saved through the path box; and the saved file passes `armwright
//! check` and `armwright simulate`.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

mod editor_common;

use armwright::editor::{MapKey, RetimeReport, RetimeRun, ViewKind};
use armwright::scene::{GripperState, MoveKind, load};
use egui_kittest::kittest::Queryable;

use editor_common::{
    EditorHarness, armwright_command, assert_dry_run_ready, assert_reached, click_tab, drag,
    sample_editor, save_as_with_enter, start_retime, store, type_position, wait_for_dry_run,
    wait_for_reach_maps, wait_for_retime,
};

/// Drags the tool point in `kind`'s view to a spot the view's shading marks reachable at the
/// held tool angle, `from_mm` to `to_mm` away from where it is (in the view's plane): the arm
/// must get there, as the shading promised.
fn drag_into_shading(harness: &mut EditorHarness, kind: ViewKind, from_mm: f64, to_mm: f64) {
    wait_for_reach_maps(harness);
    let editor = harness.state();
    let layer = editor.reach_layer(kind).expect("a reach map");
    assert_eq!(
        Some(layer.key),
        MapKey::for_view(&editor.state, kind),
        "the shading is for the plane and tool angle a drag holds"
    );
    let tool = editor.state.tool_point().expect("tool point");
    let here = match kind {
        ViewKind::Top => [tool.x, tool.y],
        ViewKind::Side => {
            let yaw = editor.state.side_view_yaw();
            [tool.x * yaw.cos() + tool.y * yaw.sin(), tool.z]
        }
    };
    let map = &layer.map;
    let cells = map.cells();
    // A cell well inside the shading (all its neighbours shaded too), nearest the middle of
    // the wanted distances.
    let inside = |column: usize, row: usize| {
        (column.saturating_sub(1)..=(column + 1).min(cells - 1)).all(|c| {
            (row.saturating_sub(1)..=(row + 1).min(cells - 1)).all(|r| map.reachable(c, r))
        })
    };
    let middle = (from_mm + to_mm) / 2.0;
    let target = (0..cells)
        .flat_map(|row| (0..cells).map(move |column| (column, row)))
        .filter(|&(column, row)| inside(column, row))
        .map(|(column, row)| map.cell_centre(column, row))
        .map(|[u, v]| ([u, v], (u - here[0]).hypot(v - here[1]) * 1e3))
        .filter(|(_, distance)| (from_mm..=to_mm).contains(distance))
        // In the side view, not lower than now: clear of the table and what stands on it.
        .filter(|([_, v], _)| kind == ViewKind::Top || *v >= here[1])
        .min_by(|a, b| (a.1 - middle).abs().total_cmp(&(b.1 - middle).abs()))
        .map(|(point, _)| point);
    let Some([u, v]) = target else {
        panic!("no shaded spot {from_mm}–{to_mm} mm from the tool point in the {kind:?} view");
    };
    let camera = editor.camera(kind);
    let to = camera
        .projection()
        .expect("the view was drawn")
        .to_screen([u * 1e3, v * 1e3]);
    let from = camera.tool_on_screen().expect("the tool point was drawn");
    drag(harness, from, to);
    assert_reached(
        harness.state(),
        &format!("a drag into the {kind:?} view's shading"),
    );
}

fn gripper(harness: &mut EditorHarness, state: GripperState) {
    let word = match state {
        GripperState::Open => "open",
        GripperState::Closed => "closed",
    };
    harness.get_by_label_contains(word).click();
    harness.run_steps(2);
    assert_eq!(harness.state().state.gripper, state);
}

fn tool_mm(harness: &EditorHarness) -> [f64; 3] {
    let point = harness.state().state.tool_point().expect("tool point");
    [point.x * 1e3, point.y * 1e3, point.z * 1e3]
}

/// Runs a retime at the target in the form and returns its report.
fn retime(harness: &mut EditorHarness) -> RetimeReport {
    start_retime(harness);
    wait_for_retime(harness);
    match &harness.state().state.retime.run {
        RetimeRun::Finished(report) => (**report).clone(),
        other => panic!("the retime gave no result: {other:?}"),
    }
}

#[test]
fn a_ten_waypoint_pick_and_place_is_taught_dry_run_retimed_saved_and_checked() {
    let (mut harness, _requests, dir) = sample_editor("teach-ten");
    let arm = harness.state().state.scene.arm.clone();
    harness.get_by_label("New sequence").click();
    harness.run_steps(2);
    assert!(harness.state().state.scene.waypoints.is_empty());
    assert_eq!(harness.state().state.scene.arm, arm, "the arm is kept");

    // Taught around where the sample starts, which its arm reaches: 30 mm over the start height
    // to travel, the start height to pick and place.
    let [x0, y0, z0] = tool_mm(&harness);
    let (high, low) = (z0 + 30.0, z0);
    // 1–4: above the pick (typed), down to it, grip, up again.
    type_position(&mut harness, "z", high);
    store(&mut harness);
    type_position(&mut harness, "z", low);
    store(&mut harness);
    gripper(&mut harness, GripperState::Closed);
    store(&mut harness);
    type_position(&mut harness, "z", high);
    store(&mut harness);
    // 5–8: over to the place by a drag in the top view, down (typed), release, up.
    drag_into_shading(&mut harness, ViewKind::Top, 40.0, 70.0);
    let [x_place, y_place, z_place] = tool_mm(&harness);
    assert!(
        (x_place - x0).hypot(y_place - y0) > 10.0,
        "the drag moved the tool point only to ({x_place:.1}, {y_place:.1})"
    );
    assert!(
        (z_place - high).abs() < 0.5,
        "a top-view drag keeps the height"
    );
    store(&mut harness);
    type_position(&mut harness, "z", low);
    store(&mut harness);
    gripper(&mut harness, GripperState::Open);
    store(&mut harness);
    type_position(&mut harness, "z", high);
    store(&mut harness);
    // 9: elsewhere by a drag in the side view; 10: back over the start, typed.
    drag_into_shading(&mut harness, ViewKind::Side, 20.0, 40.0);
    store(&mut harness);
    type_position(&mut harness, "x", x0);
    type_position(&mut harness, "y", y0);
    type_position(&mut harness, "z", high);
    store(&mut harness);

    let waypoints = harness.state().state.scene.waypoints.clone();
    let names: Vec<&str> = waypoints.iter().map(|w| w.name.as_str()).collect();
    assert_eq!(waypoints.len(), 10, "{names:?}");
    assert!(harness.query_by_label("Sequence (10 waypoints)").is_some());
    // Descents and climbs are straight moves named for what changed, never stacked.
    for index in [1, 3, 5, 7] {
        assert_eq!(
            waypoints[index].move_kind,
            MoveKind::Straight,
            "{}",
            names[index]
        );
    }
    assert_eq!(waypoints[4].move_kind, MoveKind::Joint, "sideways");
    assert_eq!(names[1], format!("30 mm below {}", names[0]));
    assert_eq!(names[2], format!("{}, gripper closed", names[1]));
    assert_eq!(names[3], format!("{}, gripper closed", names[0]));
    assert_eq!(names[5], format!("30 mm below {}", names[4]));
    for name in &names {
        assert!(name.matches(" mm ").count() <= 1, "a stacked name: {name}");
    }

    // The dry run of the taught sequence.
    wait_for_dry_run(&mut harness);
    assert_dry_run_ready(harness.state(), "the taught sequence");

    // Retime at the scene's own target and apply; a second retime from there starts at a
    // timing that meets the target, so it may not come back slower.
    click_tab(&mut harness, "Retime");
    let first = retime(&mut harness);
    assert!(
        first.after.worst_overshoot_mm <= first.max_overshoot_mm + 1e-9,
        "{} mm over a {} mm target",
        first.after.worst_overshoot_mm,
        first.max_overshoot_mm
    );
    if first.already_met {
        assert!(first.after.cycle_time_s <= first.before.cycle_time_s + 1e-9);
    }
    harness.get_by_label("Apply").click();
    harness.run_steps(3);
    assert_eq!(harness.state().state.scene, first.retimed);
    wait_for_dry_run(&mut harness);
    assert_dry_run_ready(harness.state(), "the retimed sequence");
    let second = retime(&mut harness);
    assert!(
        second.already_met,
        "the applied timing does not meet its own target"
    );
    assert!(
        second.after.cycle_time_s <= second.before.cycle_time_s + 1e-9,
        "retiming a timing that meets the target made it slower: {:.3} s → {:.3} s",
        second.before.cycle_time_s,
        second.after.cycle_time_s
    );
    assert!((second.before.cycle_time_s - first.after.cycle_time_s).abs() < 1e-6);
    eprintln!(
        "taught: {names:?}\nretime: {:.3} s → {:.3} s (start met the target: {}), again {:.3} s → {:.3} s",
        first.before.cycle_time_s,
        first.after.cycle_time_s,
        first.already_met,
        second.before.cycle_time_s,
        second.after.cycle_time_s
    );

    // Save through the path box, with Enter.
    let path = dir.join("taught-ten.armwright.json");
    save_as_with_enter(&mut harness, &path);
    let saved = load(&path).expect("the saved file loads");
    assert_eq!(saved.waypoints.len(), 10);

    // The command line agrees: the file checks and its dry run passes.
    let file = path.display().to_string();
    let (ok, text) = armwright_command(&["check", &file]);
    assert!(ok, "check: {text}");
    let (ok, text) = armwright_command(&["simulate", &file]);
    assert!(ok, "simulate: {text}");
}
