//! The teaching flow on the built-in sample: drag the tool point in the top view and in the
//! side view, store a waypoint, undo and redo it with the keys; and the whole flow on a bundled
//! sample, from opening it to a confirmed reset after an emergency stop while streaming.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

mod editor_common;

use armwright::approach::{WakeMode, stream_plan_waking};
use armwright::editor::{
    EditorState, ReachStatus, RetimeRun, StopSource, StopState, StreamPhase, ToolsTab, ViewKind,
};
use armwright::scene::{build_arm, load};
use armwright::task::plan_of;
use armwright_link::{ChannelOutput, DeviceMode, LinkState};
use armwright_trajectory::CommandedMotion;
use egui::{Key, Modifiers, vec2};
use egui_kittest::kittest::{NodeT, Queryable};

use editor_common::{
    acknowledge_caution, assert_dry_run_ready, click_tab, connect, connection, device_mode, drag,
    hover_stop_button, link_state, open_through_dialog, press_stop_and_check_link,
    press_stop_button_at, sample_editor, start_retime, step_until, stream_until_sending,
    wait_for_dry_run, wait_for_retime,
};

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
    assert_reached(&editor.state);
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
    assert_reached(state);
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
        matches!(state.readout.reach, ReachStatus::OutOfReach { short_by_mm } if short_by_mm > 100.0),
        "{:?}",
        state.readout.reach
    );
    assert!(harness.query_by_label_contains("OUT OF REACH by").is_some());
    // The last reachable step is kept: the arm moved, but did not jump.
    assert_eq!(state.pose.len(), pose_before.len());
}

/// Checks that the arm reached the tool point asked for, listing the problems when not.
fn assert_reached(state: &EditorState) {
    assert_eq!(
        state.readout.reach,
        ReachStatus::Reached,
        "{:?}",
        state.reach_problems()
    );
}

/// Checks that the pose `taught` (file units) was stored as a new waypoint after the `count`
/// there were, that it is selected, and that the scene is marked changed.
fn assert_stored(state: &EditorState, count: usize, taught: &[f64]) {
    assert_eq!(state.scene.waypoints.len(), count + 1);
    let index = state
        .selected_waypoint
        .expect("the new waypoint is selected");
    assert_eq!(state.scene.waypoints[index].joints_deg_or_mm, taught);
    assert!(state.is_dirty());
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
    assert_stored(&harness.state().state, count, &pose);
    assert!(harness.state().window_title().starts_with("* "));
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

/// The flow in one session, through the window's own controls: open a bundled sample →
/// drag the tool point → store a waypoint → undo and redo → retime and apply → play → stream to
/// the simulated device → emergency stop (it reaches the link in the frame of the click) →
/// confirmed reset.
#[test]
fn open_teach_retime_play_stream_stop_and_reset() {
    let (mut harness, requests, _dir) = sample_editor("whole-flow");

    // Open a bundled sample through the Open dialog's typed path.
    let path = armwright_test_support::samples::sample_scene("spacer-stacker");
    let on_disk = load(&path).expect("the sample loads");
    open_through_dialog(&mut harness, &path);
    {
        let state = &harness.state().state;
        assert_eq!(state.view.dialog, None, "{:?}", state.messages.last());
        assert_eq!(state.document.file_path.as_deref(), Some(path.as_path()));
        assert_eq!(state.scene, on_disk);
        assert!(!state.is_dirty());
    }

    // Drag the tool point in the top view: it follows the pointer in its horizontal plane.
    let Some(from) = harness.state().camera(ViewKind::Top).tool_on_screen() else {
        panic!("the top view drew no tool point");
    };
    let to = from + vec2(12.0, -10.0);
    let expected = harness
        .state()
        .camera(ViewKind::Top)
        .projection()
        .expect("projection")
        .to_plane(to);
    let height = harness.state().state.tool_point().expect("tool point").z;
    drag(&mut harness, from, to);
    {
        let state = &harness.state().state;
        assert_reached(state);
        let after = state.tool_point().expect("tool point");
        assert!((after.x * 1e3 - expected[0]).abs() < 0.5, "x {}", after.x);
        assert!((after.y * 1e3 - expected[1]).abs() < 0.5, "y {}", after.y);
        assert!((after.z - height).abs() < 1e-6);
    }

    // Store it as a waypoint.
    let count = on_disk.waypoints.len();
    let taught = harness.state().state.pose_in_file_units();
    harness.get_by_label("Store pose").click();
    harness.run_steps(3);
    assert_stored(&harness.state().state, count, &taught);
    let with_waypoint = harness.state().state.scene.clone();

    // Undo and redo with the keys.
    harness.key_press_modifiers(Modifiers::COMMAND, Key::Z);
    harness.run_steps(3);
    assert_eq!(harness.state().state.scene, on_disk);
    assert!(!harness.state().state.is_dirty());
    harness.key_press_modifiers(Modifiers::COMMAND | Modifiers::SHIFT, Key::Z);
    harness.run_steps(3);
    assert_eq!(harness.state().state.scene, with_waypoint);
    assert!(harness.state().state.is_dirty());

    // Retime for the scene's own target on the worker, then apply.
    click_tab(&mut harness, "Retime");
    assert_eq!(harness.state().state.view.tools_tab, ToolsTab::Retime);
    start_retime(&mut harness);
    wait_for_retime(&mut harness);
    let report = match &harness.state().state.retime.run {
        RetimeRun::Finished(report) => report.clone(),
        other => panic!("no retime result: {other:?}"),
    };
    assert_eq!(report.base, with_waypoint);
    assert_eq!(report.waypoints.len(), count + 1);
    assert!(report.after.worst_overshoot_mm <= with_waypoint.timing.max_overshoot_mm);
    assert!(report.after.cycle_time_s <= report.before.cycle_time_s);
    assert_eq!(
        harness.state().state.scene,
        with_waypoint,
        "untouched until Apply"
    );
    harness.get_by_label("Apply").click();
    harness.run_steps(3);
    let retimed = harness.state().state.scene.clone();
    assert_eq!(retimed, report.retimed);
    assert_ne!(retimed, with_waypoint, "the retime changed the timing");
    assert!(harness.state().state.can_undo());

    // Play the retimed sequence's dry run: the cursor runs on the harness's clock and the arm
    // follows the plan, the dry run's arm drawn over it.
    wait_for_dry_run(&mut harness);
    let arm = build_arm(&retimed.arm).expect("the sample's arm");
    let plan = plan_of(&retimed, &arm).expect("the retimed sample plans");
    let unretimed = plan_of(&with_waypoint, &arm).expect("the taught sample plans");
    assert!(
        CommandedMotion::duration(&plan) < CommandedMotion::duration(&unretimed),
        "the retimed plan is the shorter one"
    );
    {
        let editor = harness.state();
        assert_dry_run_ready(editor, "the retimed sample");
        let timeline = editor.state.playback.timeline.as_ref().expect("a timeline");
        assert_eq!(timeline.generation, editor.dry_run_generation());
        assert_eq!(
            CommandedMotion::duration(&timeline.plan),
            CommandedMotion::duration(&plan),
            "the timeline shows the retimed plan"
        );
        assert_eq!(timeline.marks.len(), count + 1);
    }
    // The harness's frame interval, kept as an f32 by egui.
    let frame_s = f64::from(1.0_f32 / 60.0);
    harness.get_by_label("Play").click();
    // The frame that takes the click starts playback; the next one starts its clock.
    harness.run_steps(2);
    let start = harness.state().state.playback.cursor;
    harness.run_steps(30);
    {
        let state = &harness.state().state;
        assert!(state.playback.playing);
        let played = state.playback.cursor - start;
        assert!((played - 30.0 * frame_s).abs() < 1e-6, "played {played} s");
        let mut at_cursor = vec![0.0; state.pose.len()];
        plan.positions_at(state.playback.cursor, &mut at_cursor);
        for (joint, (got, want)) in state.pose.iter().zip(&at_cursor).enumerate() {
            assert!((got - want).abs() < 1e-12, "joint {joint}: {got} vs {want}");
        }
        assert!(state.playback.simulated_pose(&state.pose).is_some());
    }
    harness.get_by_label("Pause").click();
    harness.run_steps(2);
    assert!(!harness.state().state.playback.playing);

    // Stream the retimed sequence to the simulated device, after the caution.
    click_tab(&mut harness, "Link");
    connect(&mut harness);
    assert!(
        harness
            .get_by_label("Stream sequence")
            .accesskit_node()
            .is_disabled(),
        "streaming waits for the caution"
    );
    acknowledge_caution(&mut harness);
    assert!(harness.state().state.device.caution_acknowledged);
    stream_until_sending(&mut harness);
    assert_eq!(device_mode(harness.state()), Some(DeviceMode::Driving));
    assert_eq!(
        harness.state().device().view().phase,
        StreamPhase::Streaming
    );
    // What goes out is the approach (the simulated device was limp: woken at the rest pose
    // first), then the retimed sequence: one setpoint per period of its plan, sampled at the
    // scene's rate as `armwright stream` does.
    let samples = plan.sampler(retimed.link.rate_hz).expect("setpoints");
    let device = connection(harness.state()).info;
    let limp = ChannelOutput::limp(device.channel_count);
    // The simulated device plays setpoints ahead: the limp arm is woken one joint at a time.
    let streamed = stream_plan_waking(
        &retimed,
        &arm,
        &plan,
        Some(&limp),
        &device,
        retimed.link.rate_hz,
        false,
        WakeMode::OneAtATime,
    )
    .expect("the stream plans");
    assert_eq!(
        streamed.setpoints.values.len(),
        streamed.approach_frames + samples.len()
    );
    assert_eq!(
        harness.state().device().view().progress.1,
        streamed.setpoints.values.len()
    );

    // Emergency stop with one click on the stop button: the request reaches the link's
    // emergency-stop handle in the frame of the press.
    let centre = hover_stop_button(&mut harness);
    press_stop_and_check_link(&mut harness, &requests, StopSource::Button, |harness| {
        press_stop_button_at(harness, centre)
    });
    assert!(matches!(
        harness.state().state.stop,
        StopState::Latched { .. }
    ));
    assert!(harness.state().window_title().contains("STOPPED"));
    assert!(
        harness
            .get_by_label("Stream sequence")
            .accesskit_node()
            .is_disabled(),
        "streaming is refused while the stop is latched"
    );

    // A confirmed reset clears the editor's latch and the link's; streaming may start again.
    harness.get_by_label("Reset stop…").click();
    harness.run_steps(3);
    harness.get_by_label("Reset stop").click();
    step_until(&mut harness, "the link reset", |editor| {
        link_state(editor) == Some(LinkState::Idle)
    });
    assert_eq!(harness.state().state.stop, StopState::Clear);
    assert_eq!(device_mode(harness.state()), Some(DeviceMode::Keeping));
    assert!(!harness.state().window_title().contains("STOPPED"));
    assert!(
        !harness
            .get_by_label("Stream sequence")
            .accesskit_node()
            .is_disabled()
    );
    // Nothing was lost on the way: the scene is the retimed one with the taught waypoint.
    assert_eq!(harness.state().state.scene, retimed);
}
