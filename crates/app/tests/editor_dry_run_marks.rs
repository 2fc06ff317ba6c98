//! What the dry run found wrong, on screen: a waypoint moved into the table gives a contact that
//! both views shade and name (a hover region named by the contact's sentence) and the timeline
//! lists and marks; a pick with no dwell gives an unsettled stop marked in the sequence with its
//! resting error and listed on the timeline; each pick and place shows in the sequence the
//! placement success `simulate --json` gives, and the retime tab the worst of them.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

mod editor_common;

use armwright::editor::{Command, Editor, Solid, WaypointField};
use egui_kittest::Harness;
use egui_kittest::kittest::Queryable;

use editor_common::{
    assert_dry_run_ready, click_tab, file_editor, sample_editor, sample_scene, wait_for_dry_run,
};

fn apply(harness: &mut Harness<'static, Editor>, command: Command) {
    let ctx = harness.ctx.clone();
    harness.state_mut().apply(&ctx, command, 0);
    harness.step();
}

#[test]
fn a_waypoint_moved_into_the_table_is_shaded_and_named_in_both_views_and_on_the_timeline() {
    let (mut harness, _requests, _dir) = sample_editor("marks-contact");
    wait_for_dry_run(&mut harness);
    assert_dry_run_ready(harness.state(), "the sample");
    let found = harness
        .state()
        .state
        .dry_run_found()
        .cloned()
        .expect("marks");
    assert!(found.contacts.is_empty(), "{:?}", found.contacts);
    // "corner A" with the shoulder level: the forearm, 110 mm long at 110° below the upper arm,
    // ends about 33 mm below the table top.
    apply(&mut harness, Command::JumpToWaypoint(2));
    apply(
        &mut harness,
        Command::SetJoint {
            joint: 1,
            position: 0.0,
        },
    );
    apply(&mut harness, Command::UpdateWaypointPose(2));
    wait_for_dry_run(&mut harness);
    harness.run_steps(2);
    let editor = harness.state();
    assert_dry_run_ready(editor, "the edited sample");
    let found = editor.state.dry_run_found().cloned().expect("marks");
    let contact = found
        .contacts
        .iter()
        .find(|c| c.object == "table" && c.waypoint == 2)
        .unwrap_or_else(|| panic!("no contact with the table: {:?}", found.contacts));
    assert!(matches!(contact.other, Solid::Table { .. }));
    assert!(matches!(contact.hitter, Solid::Capsule { .. }));
    assert!(contact.depth_mm > 10.0, "{}", contact.depth_mm);
    let timings = editor
        .state
        .playback
        .timeline
        .as_ref()
        .expect("a timeline")
        .plan
        .timings()
        .to_vec();
    assert!(contact.time > timings[1].departure && contact.time <= timings[2].departure);
    // The timeline lists it, naming link, object and time; both views carry a region named by
    // the same sentence (its tooltip).
    let sentence = contact.sentence(&editor.state.scene);
    assert!(sentence.contains(&contact.link) && sentence.contains("hits table"));
    let named = harness.query_all_by_label(&sentence).count();
    assert!(
        named >= 3,
        "the timeline and both views should name \"{sentence}\", found {named}"
    );
    // Undo: the contact goes.
    apply(&mut harness, Command::Undo);
    wait_for_dry_run(&mut harness);
    harness.run_steps(2);
    assert!(harness.query_by_label(&sentence).is_none());
}

#[test]
fn a_pick_with_no_dwell_is_marked_unsettled_in_the_sequence_and_on_the_timeline() {
    let mut harness = file_editor("marks-unsettled", sample_scene("spacer-stacker"));
    wait_for_dry_run(&mut harness);
    assert_dry_run_ready(harness.state(), "the spacer stacker");
    let found = harness
        .state()
        .state
        .dry_run_found()
        .cloned()
        .expect("marks");
    assert!(found.unsettled_at(1).is_none(), "{:?}", found.unsettled);
    // The first pick with no dwell: the gripper closes on arrival.
    apply(
        &mut harness,
        Command::EditWaypoint {
            index: 1,
            field: WaypointField::DwellMs(0.0),
        },
    );
    wait_for_dry_run(&mut harness);
    harness.run_steps(2);
    let editor = harness.state();
    let found = editor.state.dry_run_found().cloned().expect("marks");
    let stop = found
        .unsettled_at(1)
        .copied()
        .expect("waypoint 1 unsettled");
    assert!(stop.gripper_acts);
    let result = &editor
        .state
        .playback
        .timeline
        .as_ref()
        .expect("a timeline")
        .run
        .waypoints[1];
    assert!((stop.resting_error_mm - result.resting_error * 1e3).abs() < 1e-9);
    // The sequence's row: a marker with the resting error.
    let marker = format!("unsettled: {:.1} mm off", stop.resting_error_mm);
    assert!(harness.query_by_label(&marker).is_some(), "no \"{marker}\"");
    // The timeline's line.
    let sentence = stop.sentence(&editor.state.scene);
    assert!(sentence.contains("when the gripper acts"), "{sentence}");
    assert!(
        harness.query_by_label(&sentence).is_some(),
        "no \"{sentence}\""
    );
}

#[test]
fn each_pick_and_place_shows_the_placement_success_simulate_gives_and_retime_the_worst() {
    let path = sample_scene("spacer-stacker");
    let mut harness = file_editor("marks-placement", path.clone());
    wait_for_dry_run(&mut harness);
    harness.run_steps(2);
    assert_dry_run_ready(harness.state(), "the spacer stacker");
    let found = harness
        .state()
        .state
        .dry_run_found()
        .cloned()
        .expect("marks");
    // The same figures as `armwright simulate --json`, waypoint by waypoint (it rounds to 4
    // decimals).
    let output = std::process::Command::new(env!("CARGO_BIN_EXE_armwright"))
        .args(["simulate", "--json"])
        .arg(&path)
        .output()
        .expect("armwright simulate runs");
    let report: serde_json::Value =
        serde_json::from_slice(&output.stdout).expect("simulate prints JSON");
    let waypoints = report["waypoints"].as_array().expect("waypoints");
    assert_eq!(waypoints.len(), found.placements.len());
    let mut picks_and_places = 0;
    for (index, (entry, placement)) in waypoints.iter().zip(&found.placements).enumerate() {
        match (entry["placement_success"].as_f64(), placement) {
            (Some(share), Some(placement)) => {
                picks_and_places += 1;
                assert!(
                    (share - placement.estimate.success).abs() <= 0.5e-4,
                    "waypoint {index}: simulate {share}, editor {}",
                    placement.estimate.success
                );
                // The sequence's row shows it (the first pick's row is in view; the list lays
                // out only the rows in view).
                let label = armwright::editor::placement_text(placement);
                assert!(
                    picks_and_places > 1 || harness.query_all_by_label(&label).next().is_some(),
                    "no \"{label}\""
                );
            }
            (None, None) => {}
            (share, placement) => {
                panic!("waypoint {index}: simulate {share:?}, editor {placement:?}")
            }
        }
    }
    assert!(picks_and_places >= 2, "{picks_and_places} picks and places");
    // The retime tab's current timing names the worst of them.
    let (worst, placement) = found.worst_placement().expect("a worst placement");
    let share = report["worst_placement_success"].as_f64().expect("a worst");
    assert!((share - placement.estimate.success).abs() <= 0.5e-4);
    click_tab(&mut harness, "Retime");
    harness.run_steps(2);
    let name = &harness.state().state.scene.waypoints[worst].name;
    let line = format!(
        "current worst placement success: {:.0} % within {} mm, at waypoint {} \"{name}\"",
        placement.estimate.success * 100.0,
        placement.tolerance_mm,
        worst + 1
    );
    assert!(harness.query_by_label(&line).is_some(), "no \"{line}\"");
}
