//! The timeline on the built-in sample: the dry run arrives off the UI thread, the plot shows,
//! the time cursor moves the arm to the plan, play / pause / speed, and an edit starts a new dry
//! run whose older result is dropped; every bundled sample gets its plot.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

mod editor_common;

use armwright::editor::{Command, DryRunStatus, Editor, PlaybackCommand, Quantity, WaypointField};
use armwright::scene::{Arrival, build_arm};
use armwright::task::plan_of;
use armwright_trajectory::CommandedMotion;
use egui::{Pos2, pos2};
use egui_kittest::Harness;
use egui_kittest::kittest::Queryable;
use egui_plot::PlotPoint;

use editor_common::{
    assert_dry_run_ready, drag, file_editor, sample_editor, sample_scene, wait_for_dry_run,
};

/// The screen point of time `t` (s) on the timeline plot, halfway up.
fn plot_point(harness: &Harness<'static, Editor>, t: f64) -> Pos2 {
    let transform = harness
        .state()
        .timeline_transform()
        .expect("the timeline plot was drawn");
    let x = transform.position_from_point(&PlotPoint::new(t, 0.0)).x;
    pos2(x, transform.frame().center().y)
}

/// The length of the timeline's run, s; 0 without a timeline.
fn timeline_span(harness: &Harness<'static, Editor>) -> f64 {
    harness
        .state()
        .state
        .playback
        .timeline
        .as_ref()
        .map_or(0.0, |timeline| timeline.span())
}

fn apply(harness: &mut Harness<'static, Editor>, command: Command) {
    let ctx = harness.ctx.clone();
    harness.state_mut().apply(&ctx, command, 0);
    harness.step();
}

#[test]
fn the_dry_run_arrives_and_the_plot_shows_it() {
    let (mut harness, _requests, _dir) = sample_editor("timeline-arrives");
    wait_for_dry_run(&mut harness);
    let editor = harness.state();
    assert_dry_run_ready(editor, "the sample");
    let timeline = editor.state.playback.timeline.clone().expect("a timeline");
    assert_eq!(timeline.generation, editor.dry_run_generation());
    assert_eq!(timeline.marks.len(), editor.state.scene.waypoints.len());
    assert!(editor.timeline_transform().is_some());
    assert!(editor.timeline_column_count() > 0);
    // One cycle time: the plan's length, as `armwright plan` reports it.
    let cycle = CommandedMotion::duration(&timeline.plan);
    assert!(
        harness
            .query_by_label(&format!("cycle {cycle:.2} s"))
            .is_some(),
        "no \"cycle {cycle:.2} s\""
    );
    let editor = harness.state();
    // The plot is bounded by its pixel columns whatever the run's length: at most one column
    // per two pixels (and one beyond each edge), for the commanded and the simulated line of
    // each joint.
    let width = editor
        .timeline_transform()
        .map_or(0.0, |transform| transform.frame().width());
    let joints = editor.state.joint_count();
    assert!(
        editor.timeline_column_count() <= 2 * joints * (width as usize / 2 + 4),
        "{} columns",
        editor.timeline_column_count()
    );
    for quantity in Quantity::ALL {
        assert!(
            harness.query_by_label(quantity.label()).is_some(),
            "no selector for {}",
            quantity.label()
        );
    }
    // Another quantity replaces the lines.
    harness.get_by_label("torque use").click();
    harness.run_steps(2);
    assert_eq!(harness.state().state.playback.quantity, Quantity::TorqueUse);
    assert!(harness.state().timeline_column_count() > 0);
}

#[test]
fn dragging_the_cursor_puts_the_arm_at_the_plan_without_an_edit() {
    let (mut harness, _requests, _dir) = sample_editor("timeline-cursor");
    wait_for_dry_run(&mut harness);
    let span = timeline_span(&harness);
    assert!(span > 0.5, "span {span}");
    let from = plot_point(&harness, span * 0.2);
    let to = plot_point(&harness, span * 0.45);
    drag(&mut harness, from, to);
    let state = &harness.state().state;
    let cursor = state.playback.cursor;
    // Within a couple of pixel columns of where the pointer let go.
    let seconds_per_point = f64::from(to.x - from.x).recip() * span * 0.25;
    assert!(
        (cursor - span * 0.45).abs() <= 2.0 * seconds_per_point,
        "cursor {cursor} s, wanted {} s",
        span * 0.45
    );
    // The pose is the plan's at that time, planned again here from the scene as the command
    // line does.
    let arm = build_arm(&state.scene.arm).expect("sample arm");
    let plan = plan_of(&state.scene, &arm).expect("sample plans");
    let mut expected = vec![0.0; state.pose.len()];
    plan.positions_at(cursor.min(CommandedMotion::duration(&plan)), &mut expected);
    for (joint, (got, want)) in state.pose.iter().zip(&expected).enumerate() {
        assert!((got - want).abs() < 1e-12, "joint {joint}: {got} vs {want}");
    }
    // A preview: no edit, no undo step; the dry run's arm is drawn over it.
    assert!(!state.is_dirty());
    assert!(!state.can_undo());
    let simulated = state
        .playback
        .simulated_pose(&state.pose)
        .expect("the simulated arm is shown while the arm is at the cursor");
    assert_eq!(simulated.len(), state.pose.len());
    // Typing a time moves it too.
    apply(
        &mut harness,
        Command::Playback(PlaybackCommand::SetCursor(span * 0.1)),
    );
    assert!((harness.state().state.playback.cursor - span * 0.1).abs() < 1e-12);
    // Moving a joint by hand ends the preview: no simulated arm any more.
    apply(
        &mut harness,
        Command::SetJoint {
            joint: 0,
            position: 0.1,
        },
    );
    let state = &harness.state().state;
    assert_eq!(state.playback.simulated_pose(&state.pose), None);
}

#[test]
fn play_advances_pause_stops_and_speed_changes_the_rate() {
    let (mut harness, _requests, _dir) = sample_editor("timeline-play");
    wait_for_dry_run(&mut harness);
    // The harness's frame interval, kept as an f32 by egui.
    let frame = f64::from(1.0_f32 / 60.0);
    harness.get_by_label("Play").click();
    // The frame that takes the click starts playback; the next one starts its clock.
    harness.run_steps(2);
    let start = harness.state().state.playback.cursor;
    harness.run_steps(30);
    let played = harness.state().state.playback.cursor - start;
    // 30 frames of 1/60 s at 1×: the harness's clock, not the wall clock.
    assert!((played - 30.0 * frame).abs() < 1e-6, "played {played} s");
    assert!(harness.state().state.playback.playing);

    harness.get_by_label("Pause").click();
    harness.run_steps(2);
    let paused_at = harness.state().state.playback.cursor;
    harness.run_steps(20);
    assert_eq!(harness.state().state.playback.cursor, paused_at);
    assert!(!harness.state().state.playback.playing);

    // 2× through the speed selector.
    harness.get_by_value("1×").click();
    harness.run_steps(2);
    harness.get_by_label("2×").click();
    harness.run_steps(2);
    assert_eq!(harness.state().state.playback.speed, 2.0);
    harness.get_by_label("Play").click();
    harness.run_steps(2);
    let start = harness.state().state.playback.cursor;
    harness.run_steps(15);
    let played = harness.state().state.playback.cursor - start;
    assert!(
        (played - 2.0 * 15.0 * frame).abs() < 1e-6,
        "played {played} s"
    );
}

#[test]
fn playback_stops_at_the_end_when_not_looping() {
    let (mut harness, _requests, _dir) = sample_editor("timeline-end");
    wait_for_dry_run(&mut harness);
    let span = timeline_span(&harness);
    harness.get_by_label("loop").click();
    harness.step();
    apply(
        &mut harness,
        Command::Playback(PlaybackCommand::SetCursor(span - 0.05)),
    );
    harness.get_by_label("Play").click();
    harness.run_steps(10);
    let playback = &harness.state().state.playback;
    assert!(!playback.playing);
    assert_eq!(playback.cursor, span);
}

#[test]
fn an_edit_starts_a_new_dry_run_and_the_older_result_is_dropped() {
    let (mut harness, _requests, _dir) = sample_editor("timeline-edit");
    wait_for_dry_run(&mut harness);
    let first = harness.state().dry_run_generation();
    let old = harness
        .state()
        .state
        .playback
        .timeline
        .clone()
        .expect("a timeline");
    let stop = harness
        .state()
        .state
        .scene
        .waypoints
        .iter()
        .position(|waypoint| waypoint.arrival == Arrival::Stop)
        .expect("the sample has a stop");
    let dwell = harness.state().state.scene.waypoints[stop].dwell_ms;
    // Two edits in two frames: the first one's dry run is still running when the second comes.
    let edit = |ms: f64| Command::EditWaypoint {
        index: stop,
        field: WaypointField::DwellMs(ms),
    };
    apply(&mut harness, edit(dwell + 200.0));
    assert_eq!(harness.state().dry_run_generation(), first + 1);
    assert!(harness.state().is_dry_running());
    apply(&mut harness, edit(dwell + 500.0));
    assert_eq!(harness.state().dry_run_generation(), first + 2);
    wait_for_dry_run(&mut harness);
    let editor = harness.state();
    assert_eq!(editor.dropped_dry_runs(), 1);
    let new = editor.state.playback.timeline.clone().expect("a timeline");
    assert_eq!(new.generation, first + 2);
    // The shown plan has the new dwell: the cycle is 0.5 s longer (a stop's dwell adds to the
    // cycle time as it is; common practice in sequence planning).
    let grown = CommandedMotion::duration(&new.plan) - CommandedMotion::duration(&old.plan);
    assert!((grown - 0.5).abs() < 1e-9, "grew by {grown} s");
}

#[test]
fn a_sequence_that_cannot_be_planned_says_why_in_the_timeline() {
    let (mut harness, _requests, _dir) = sample_editor("timeline-error");
    wait_for_dry_run(&mut harness);
    while harness.state().state.scene.waypoints.len() > 1 {
        apply(&mut harness, Command::DeleteWaypoint(0));
    }
    wait_for_dry_run(&mut harness);
    let playback = &harness.state().state.playback;
    let DryRunStatus::Failed(reason) = playback.status.clone() else {
        panic!("{:?}", playback.status);
    };
    assert!(reason.starts_with("cannot plan:"), "{reason}");
    assert!(playback.timeline.is_none());
    assert!(harness.query_by_label(&reason).is_some());
}

#[test]
fn every_bundled_sample_gets_a_dry_run_and_a_plot() {
    for name in ["pen-plotter", "spacer-stacker", "peg-sorter"] {
        let mut harness = file_editor(&format!("timeline-sample-{name}"), sample_scene(name));
        wait_for_dry_run(&mut harness);
        let editor = harness.state();
        assert_dry_run_ready(editor, name);
        assert!(
            editor.timeline_column_count() > 0,
            "{name}: nothing plotted"
        );
    }
}
