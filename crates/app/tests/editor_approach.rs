//! The approach in the editor: with no device the timeline says the approach is planned at
//! stream time; connected to the limp simulated device it draws the wake at the rest pose and
//! the approach before time 0 and counts it in the cycle; a stream starts with it; once the
//! device holds the arm (after a pause), the approach drawn starts from there. With "End at the
//! rest pose" ticked, a stream ends with the park move and the device holds the rest pose.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

mod editor_common;

use armwright::approach::StartFrom;
use armwright::editor::{Editor, PARK_LABEL, Quantity, Series, StreamPhase, sample_scene};
use armwright::scene::save;
use armwright_link::device_pose;
use egui_kittest::kittest::Queryable;

use editor_common::{
    acknowledge_caution, connect, file_editor, frames_sent, sample_editor, scratch,
    step_until_slow, wait_for_dry_run,
};

/// The middle of bucket `index` of `series`, in the display unit.
fn middle(series: &Series, index: usize) -> f64 {
    f64::from(series.min[index] + series.max[index]) / 2.0
}

/// The timeline's approach has a dry run over its whole length, and where the joint that
/// travels furthest moves fastest the simulated servo lags its command (by more than it is
/// off at rest at the start, where the model starts settled under gravity).
fn assert_approach_dry_run_lags(editor: &Editor, duration: f64) {
    let traces = editor.timeline_approach_traces().expect("approach traces");
    let buckets = ((duration / traces.bucket).floor() as usize).max(1);
    let series = |joint| {
        (
            traces.commanded(Quantity::Angle, joint).expect("commanded"),
            traces.simulated(Quantity::Angle, joint).expect("dry run"),
            traces
                .commanded(Quantity::Velocity, joint)
                .expect("velocity"),
        )
    };
    for joint in 0..traces.joints {
        let (commanded, simulated, _) = series(joint);
        assert!(
            commanded.len() >= buckets && simulated.len() >= buckets,
            "joint {joint}: {} and {} buckets of {} s over {duration} s",
            commanded.len(),
            simulated.len(),
            traces.bucket
        );
    }
    let travel = |joint| {
        let (commanded, _, _) = series(joint);
        middle(commanded, buckets - 1) - middle(commanded, 0)
    };
    let joint = (0..traces.joints)
        .max_by(|a, b| travel(*a).abs().total_cmp(&travel(*b).abs()))
        .expect("a joint");
    let direction = travel(joint).signum();
    let (commanded, simulated, velocity) = series(joint);
    let fastest = (0..buckets)
        .max_by(|a, b| {
            middle(velocity, *a)
                .abs()
                .total_cmp(&middle(velocity, *b).abs())
        })
        .expect("a bucket");
    let behind = |index| (middle(commanded, index) - middle(simulated, index)) * direction;
    assert!(
        behind(fastest) > behind(0) + 0.1,
        "joint {joint} travels {:.1}°: behind its command by {:.3}° at {:.2} s (fastest), \
         {:.3}° at the start",
        travel(joint),
        behind(fastest),
        fastest as f64 * traces.bucket,
        behind(0)
    );
}

#[test]
fn the_timeline_draws_the_approach_from_what_the_device_sends() {
    let (mut harness, _requests, _dir) = sample_editor("approach-timeline");
    wait_for_dry_run(&mut harness);
    assert!(harness.state().timeline_approach().is_none());
    assert!(
        harness
            .query_by_label(
                "a stream starts with an approach planned from what the device reports at \
                 stream time"
            )
            .is_some()
    );

    // The simulated device is limp at power-up: woken at the rest pose, held, then approach.
    connect(&mut harness);
    step_until_slow(&mut harness, "the approach drawn", |editor| {
        editor.timeline_approach().is_some()
    });
    let (from, woken_s) = harness.state().timeline_approach().expect("drawn");
    assert_eq!(from, StartFrom::Limp);
    let pause_s = harness.state().state.scene.timing.wake_pause_ms / 1e3;
    assert!(woken_s > pause_s, "{woken_s} s");
    assert_approach_dry_run_lags(harness.state(), woken_s);
    harness.run_steps(2);
    let cycle = harness
        .state()
        .state
        .playback
        .timeline
        .as_ref()
        .map(|timeline| armwright_trajectory::CommandedMotion::duration(&timeline.plan))
        .expect("a timeline");
    let label = format!(
        "cycle {cycle:.2} s + approach {woken_s:.2} s = {:.2} s",
        cycle + woken_s
    );
    assert!(harness.query_by_label(&label).is_some(), "no \"{label}\"");

    // The stream starts with that approach: its setpoints come first.
    acknowledge_caution(&mut harness);
    harness.get_by_label("Stream sequence").click_accesskit();
    step_until_slow(&mut harness, "the approach streamed", |editor| {
        let rate = editor.state.scene.link.rate_hz;
        frames_sent(editor) as f64 > (woken_s + 0.5) * rate
    });
    let total = harness.state().device().view().progress.1 as f64;
    let rate = harness.state().state.scene.link.rate_hz;
    assert!(
        total >= ((cycle + woken_s) * rate).floor(),
        "{total} setpoints for {cycle} s + {woken_s} s"
    );

    // Paused, the device holds the arm: the next approach starts from its pulses.
    harness.get_by_label("Pause stream").click_accesskit();
    step_until_slow(&mut harness, "the pause", |editor| {
        editor.device().view().phase == StreamPhase::Paused
    });
    step_until_slow(&mut harness, "the approach from the held pose", |editor| {
        editor
            .timeline_approach()
            .is_some_and(|(from, _)| from == StartFrom::Held)
    });
    let (_, held_s) = harness.state().timeline_approach().expect("drawn");
    assert!(held_s < woken_s, "no wake pause: {held_s} s");
}

#[test]
fn a_stream_can_end_at_the_rest_pose() {
    // The sample's first two waypoints: a short stream.
    let mut scene = sample_scene();
    scene.waypoints.truncate(2);
    let dir = scratch("park-scene");
    let path = dir.join("short.armwright.json");
    save(&scene, &path).expect("saves");
    let mut harness = file_editor("park", path);
    connect(&mut harness);
    acknowledge_caution(&mut harness);
    harness.get_by_label(PARK_LABEL).click_accesskit();
    harness.run_steps(2);
    assert!(harness.state().state.device.park_after_stream);
    harness.get_by_label("Stream sequence").click_accesskit();
    step_until_slow(&mut harness, "the stream's end", |editor| {
        editor.device().view().phase == StreamPhase::Finished
    });
    assert!(
        harness
            .state()
            .state
            .messages
            .iter()
            .any(|message| message.text.contains("then the park move to the rest pose")),
        "{:?}",
        harness.state().state.messages
    );

    // The device holds the rest pose: each joint's home, to within one pulse unit.
    let editor = harness.state();
    let arm = editor.state.arm().expect("arm");
    let device = editor.device().simulated_device().expect("simulated");
    let device = device.lock().expect("device");
    let held = device_pose(arm, &device.output(), &device.info()).expect("held, not limp");
    let unit_us = device.info().us_from_units(1);
    for (joint, position) in arm.joints().iter().zip(&held.positions) {
        let off_us =
            (joint.calibration.pulse_us(*position) - joint.calibration.pulse_us(joint.home)).abs();
        assert!(
            off_us <= unit_us + 1e-9,
            "{position} vs home {}",
            joint.home
        );
    }
}
