//! The retime tab: retime for a target on a worker thread with a progress bar, look at before
//! and after, apply as one undo step; cancel; a result for a scene that has changed since cannot
//! be applied.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

mod common;
mod editor_common;

use armwright::editor::{Command, Editor, RetimeRun};
use armwright::scene::{Scene, load};
use egui_kittest::Harness;
use egui_kittest::kittest::Queryable;

use editor_common::{click_tab, file_editor, scratch, start_retime, wait_for_retime};

/// The pen-plotter sample with its sequence repeated `times` times (names made unique), written
/// to a scratch folder: a longer sequence makes a retime take long enough to watch and cancel.
fn long_sample(test: &str, times: usize) -> std::path::PathBuf {
    let text = std::fs::read_to_string(common::sample("pen-plotter.armwright.json")).unwrap();
    let mut document: serde_json::Value = serde_json::from_str(&text).unwrap();
    let waypoints = document["waypoints"].as_array().unwrap().clone();
    let repeated: Vec<serde_json::Value> = (0..times)
        .flat_map(|round| {
            waypoints.iter().map(move |waypoint| {
                let mut waypoint = waypoint.clone();
                let name = format!("{} {}", waypoint["name"].as_str().unwrap(), round + 1);
                waypoint["name"] = serde_json::Value::String(name);
                waypoint
            })
        })
        .collect();
    document["waypoints"] = serde_json::Value::Array(repeated);
    let path = scratch(test).join("long.armwright.json");
    std::fs::write(&path, serde_json::to_vec_pretty(&document).unwrap()).unwrap();
    path
}

/// An editor harness on the scene at `path`, showing the Retime tab.
fn editor_on(test: &str, path: std::path::PathBuf) -> Harness<'static, Editor> {
    let mut harness = file_editor(&format!("{test}-editor"), path);
    click_tab(&mut harness, "Retime");
    harness
}

#[test]
fn retime_for_a_target_apply_and_undo() {
    let path = long_sample("retime-apply", 3);
    let original: Scene = load(&path).unwrap();
    let mut harness = editor_on("retime-apply", path);
    // The target starts at the scene's own and is set through the form.
    assert_eq!(
        harness.state().state.retime.max_overshoot_mm,
        original.timing.max_overshoot_mm
    );
    harness
        .get_by_label("target overshoot (mm)")
        .set_value_accesskit(0.4);
    harness
        .get_by_label("torque share (% of stall torque)")
        .set_value_accesskit(45.0);
    harness.run_steps(2);
    assert_eq!(harness.state().state.retime.max_overshoot_mm, 0.4);
    assert_eq!(harness.state().state.retime.torque_share_pct, 45.0);

    start_retime(&mut harness);
    harness.step();
    assert!(
        harness.query_by_label_contains("retiming…").is_some(),
        "no progress bar while running: {:?}",
        harness.state().state.retime.run
    );
    assert!(harness.query_by_label("Cancel").is_some());
    wait_for_retime(&mut harness);

    let report = match &harness.state().state.retime.run {
        RetimeRun::Finished(report) => report.clone(),
        other => panic!("no result: {other:?}"),
    };
    assert!(report.after.worst_overshoot_mm <= 0.4);
    assert!(report.after.cycle_time_s < report.before.cycle_time_s);
    assert_eq!(report.waypoints.len(), original.waypoints.len());
    // The headline never says "met" unless every gripper stop settled; a start that already
    // met the target says so, and is never made slower.
    assert_eq!(report.after.unsettled_gripper_stops, 0);
    let headline = if report.already_met && report.after.cycle_time_s < report.before.cycle_time_s {
        "already meets the target; a faster timing does too"
    } else if report.already_met {
        "already meets the target: the current timing is kept"
    } else {
        "target met:"
    };
    assert!(
        harness.query_by_label_contains(headline).is_some(),
        "{headline}"
    );
    assert!(harness.query_by_label_contains("binding: ").is_some());
    // The current timing's figures stand above the run, against the target.
    assert!(
        harness
            .query_by_label_contains("current timing: cycle")
            .is_some()
    );
    for row in ["cycle time", "worst overshoot", "worst torque use"] {
        assert!(harness.query_by_label(row).is_some(), "{row} not shown");
    }
    let before_after = format!("{:.3} s", report.before.cycle_time_s);
    assert!(harness.query_by_label(&before_after).is_some());
    // The scene is untouched until Apply.
    assert_eq!(harness.state().state.scene, original);

    harness.get_by_label("Apply").click();
    harness.run_steps(3);
    let applied = harness.state().state.scene.clone();
    assert_ne!(applied, original);
    assert_eq!(applied, report.retimed);
    let shares: Vec<f64> = applied
        .waypoints
        .iter()
        .map(|w| w.speed_share_pct)
        .collect();
    let shares_before: Vec<f64> = original
        .waypoints
        .iter()
        .map(|w| w.speed_share_pct)
        .collect();
    assert_ne!(shares, shares_before);
    assert_eq!(applied.timing.max_overshoot_mm, 0.4);
    assert!(harness.state().state.is_dirty());

    // One undo step brings the whole timing back.
    harness.get_by_label("Undo").click();
    harness.run_steps(3);
    assert_eq!(harness.state().state.scene, original);
    assert!(!harness.state().state.can_undo());
    assert!(!harness.state().state.is_dirty());
}

#[test]
fn cancel_stops_the_retime_and_leaves_the_scene() {
    let path = long_sample("retime-cancel", 6);
    let original: Scene = load(&path).unwrap();
    let mut harness = editor_on("retime-cancel", path);
    start_retime(&mut harness);
    harness.step();
    assert!(harness.state().state.retime.run.is_running());
    harness.get_by_label("Cancel").click();
    harness.step();
    // Asked in this frame; the worker stops after the dry run it is in.
    assert!(
        matches!(
            harness.state().state.retime.run,
            RetimeRun::Running {
                cancelling: true,
                ..
            } | RetimeRun::Cancelled
        ),
        "{:?}",
        harness.state().state.retime.run
    );
    wait_for_retime(&mut harness);
    assert_eq!(harness.state().state.retime.run, RetimeRun::Cancelled);
    assert!(
        harness
            .query_by_label_contains("the scene is unchanged")
            .is_some()
    );
    assert!(harness.query_by_label("Apply").is_none());
    assert_eq!(harness.state().state.scene, original);
    assert!(!harness.state().state.can_undo());
}

#[test]
fn a_result_for_a_changed_scene_cannot_be_applied() {
    let path = common::sample("pen-plotter.armwright.json");
    let mut harness = editor_on("retime-stale", path);
    start_retime(&mut harness);
    // The scene changes while the retime runs: a waypoint is stored.
    harness.get_by_label("Store pose").click();
    harness.run_steps(1);
    wait_for_retime(&mut harness);
    let changed = harness.state().state.scene.clone();
    let RetimeRun::Finished(report) = &harness.state().state.retime.run else {
        panic!("no result: {:?}", harness.state().state.retime.run);
    };
    assert_ne!(report.base, changed);
    assert!(harness.state().state.retime.is_stale(&changed));
    assert!(harness.query_by_label_contains("STALE").is_some());

    // The button is disabled, and the command is refused too.
    harness.get_by_label("Apply").click();
    harness.run_steps(2);
    assert_eq!(harness.state().state.scene, changed);
    let ctx = harness.ctx.clone();
    harness.state_mut().apply(&ctx, Command::ApplyRetime, 0);
    assert_eq!(harness.state().state.scene, changed);
    assert!(
        harness
            .state()
            .state
            .messages
            .last()
            .is_some_and(|m| m.text.contains("stale")),
        "{:?}",
        harness.state().state.messages.last()
    );

    // Undoing the change makes the result fit the scene again.
    harness.get_by_label("Undo").click();
    harness.run_steps(2);
    assert!(harness.query_by_label_contains("STALE").is_none());
    harness.get_by_label("Apply").click();
    harness.run_steps(2);
    assert_ne!(harness.state().state.scene.waypoints, changed.waypoints);
}

#[test]
fn every_sample_retimes_for_its_own_target() {
    for name in [
        "pen-plotter.armwright.json",
        "spacer-stacker.armwright.json",
        "peg-sorter.armwright.json",
    ] {
        let path = common::sample(name);
        let original: Scene = load(&path).unwrap();
        let mut harness = editor_on(&format!("retime-{name}"), path);
        start_retime(&mut harness);
        harness.step();
        wait_for_retime(&mut harness);
        let RetimeRun::Finished(report) = &harness.state().state.retime.run else {
            panic!("{name}: {:?}", harness.state().state.retime.run);
        };
        assert!(
            report.after.worst_overshoot_mm <= original.timing.max_overshoot_mm,
            "{name}"
        );
        assert!(report.after.worst_torque_use_pct <= 100.0, "{name}");
        assert!(
            report.after.cycle_time_s <= report.before.cycle_time_s,
            "{name}"
        );
        let retimed = report.retimed.clone();
        harness.get_by_label("Apply").click();
        harness.run_steps(2);
        assert_eq!(harness.state().state.scene, retimed, "{name}");
        assert_eq!(harness.state().state.retime.run, RetimeRun::Idle);
    }
}
