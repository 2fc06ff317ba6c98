//! Streams from the editor to the simulated device, which plays setpoints ahead (protocol 4 at
//! its 50 Hz pulse frame rate): a limp arm is woken one joint at a time at the rest pose, the
//! slowest first, with the wake pause between, as `armwright stream` does, and the approach and
//! the sequence then run to the end; a pause halts the frames sent ahead, so the arm stops at
//! once and holds, and a resume carries on to the end; the emergency stop stops the arm at once
//! though a second of setpoints waits in the device's queue, and the stream's line then counts
//! the setpoints played, not those sent ahead. Everything is read from the
//! simulated device itself: the pulse frame each channel got its first pulse in, and the frame
//! its output last changed in.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

mod editor_common;

use armwright::approach::{StartFrom, WakeMode, stream_plan_waking, wake_channels};
use armwright::editor::{StopSource, StreamPhase, sample_scene};
use armwright::scene::{Scene, build_arm, save};
use armwright::task::plan_of;
use armwright_link::{ChannelOutput, DeviceMode, SimDevice};
use egui_kittest::kittest::Queryable;

use editor_common::{
    EditorHarness, acknowledge_caution, connect, connection, file_editor,
    press_stop_and_check_link, press_stop_key, sample_editor, scratch, step_until, step_until_slow,
};

/// The wake pause these tests use, ms: 15 pulse frames of 20 ms.
const WAKE_PAUSE_MS: f64 = 300.0;

/// The pulse frames a pause may let the device play after the click, at most: 0.5 s, half the
/// second of setpoints it holds ahead (the editor's worker and the link's thread each take a
/// turn first, on a machine that may be busy). Measured unloaded: 1 frame.
const PAUSE_WITHIN_FRAMES: u64 = 25;

/// The pulse frames the emergency stop may let the device play after the key press, at most:
/// 0.1 s (the link writes the stop within a 20 ms frame of the press, which `assert_stop_reached_
/// link` checks; the device acts on it on arrival). Measured unloaded: 0 or 1 frame.
const STOP_WITHIN_FRAMES: u64 = 5;

/// The sample scene with the wake pause above and servos of different speeds (the elbow the
/// slowest, then the base), so the wake order is not the chain order.
fn wake_scene() -> Scene {
    let mut scene = sample_scene();
    scene.timing.wake_pause_ms = WAKE_PAUSE_MS;
    for (joint, speed) in [(2, 150.0), (0, 200.0)] {
        scene.arm.joints[joint].servo.no_load_speed_deg_per_s = speed;
    }
    scene
}

/// An editor on `scene` saved in its own scratch folder, connected to the simulated device
/// (limp at power-up), the caution acknowledged.
fn connected_on(name: &str, scene: &Scene) -> EditorHarness {
    let path = scratch(&format!("{name}-scene")).join("wake.armwright.json");
    save(scene, &path).expect("saves");
    let mut harness = file_editor(name, path);
    connect(&mut harness);
    acknowledge_caution(&mut harness);
    harness
}

/// Runs `look` on the simulated device.
fn on_device<T>(harness: &EditorHarness, look: impl FnOnce(&SimDevice) -> T) -> T {
    let device = harness
        .state()
        .device()
        .simulated_device()
        .expect("simulated device");
    let device = device.lock().expect("device");
    look(&device)
}

/// Whether the device has sent a pulse on every channel since it was woken, and played
/// `frames` more pulse frames since the last channel woke.
fn woken_and_playing(editor: &armwright::editor::Editor, frames: u64) -> bool {
    let Some(device) = editor.device().simulated_device() else {
        return false;
    };
    let device = device.lock().expect("device");
    let channels = usize::from(device.info().channel_count);
    let last = (0..channels).map(|channel| device.woken_at(channel)).max();
    matches!(last, Some(Some(last)) if device.frames_started() >= last + frames)
        && (0..channels).all(|channel| device.woken_at(channel).is_some())
}

/// Checks that the simulated device's output stopped changing within `within` pulse frames of
/// frame `at`, when `what` happened, and that it dropped the frames sent ahead; returns the frame
/// its output has held since.
fn assert_stopped_within(harness: &EditorHarness, what: &str, at: u64, within: u64) -> u64 {
    let (held_since, waiting) = on_device(harness, |device| {
        (device.output_since(), device.planned_waiting())
    });
    eprintln!(
        "the output stopped changing {} frames after {what}",
        held_since.saturating_sub(at)
    );
    assert!(
        held_since <= at + within,
        "the device played on until frame {held_since}; {what} at {at}"
    );
    assert_eq!(waiting, 0, "the frames sent ahead were dropped");
    held_since
}

#[test]
fn a_limp_arm_wakes_one_joint_at_a_time_then_the_stream_runs_to_its_end() {
    let mut scene = wake_scene();
    scene.waypoints.truncate(2);
    let mut harness = connected_on("wake-order", &scene);
    let info = connection(harness.state()).info;
    assert!(connection(harness.state()).plays_ahead);
    // The Link tab says how the arm will wake, before anything is sent.
    let words = StartFrom::Limp.describe_waking(WakeMode::OneAtATime);
    assert!(
        harness.query_by_label_contains(&words).is_some(),
        "no \"{words}\" on the Link tab"
    );
    // The timeline draws the approach the stream will make: woken one joint at a time.
    step_until_slow(&mut harness, "the approach drawn", |editor| {
        editor.timeline_approach().is_some()
    });
    let (from, drawn_s) = harness.state().timeline_approach().expect("drawn");
    assert_eq!(from, StartFrom::Limp);
    harness.run_steps(2);
    assert!(
        harness
            .query_by_label_contains(
                "woken at its rest pose (one joint at a time, a wake pause each)"
            )
            .is_some(),
        "the timeline's caption"
    );
    harness.get_by_label("Stream sequence").click_accesskit();
    step_until_slow(&mut harness, "the stream's end", |editor| {
        editor.device().view().phase == StreamPhase::Finished
    });
    // The planned order: the joints, slowest servo first, then the gripper on the last channel.
    let arm = build_arm(&scene.arm).expect("arm");
    let order = wake_channels(&arm, &info);

    // The editor said so as the stream started, as `armwright stream` does.
    let messages: Vec<String> = harness
        .state()
        .state
        .messages
        .iter()
        .map(|message| message.text.clone())
        .collect();
    let said = format!(
        "wake order, slowest first: {} at 0.00 s, {} at 0.30 s, ",
        arm.joints()[order[0]].name,
        arm.joints()[order[1]].name
    );
    assert!(
        messages
            .iter()
            .any(|text| text.contains(&words) && text.contains(&said)),
        "no \"{said}\" in {messages:?}"
    );
    assert!(
        messages
            .iter()
            .any(|text| text == "the sequence ran to its end"),
        "{messages:?}"
    );
    let speeds: Vec<f64> = order
        .iter()
        .filter_map(|&channel| arm.joints().get(channel))
        .map(|joint| joint.servo.no_load_speed)
        .collect();
    assert!(
        speeds.windows(2).all(|pair| pair[0] <= pair[1]),
        "slowest first: {speeds:?}"
    );
    assert_eq!(order[..2], [2, 0], "the elbow, then the base");
    let rate_hz = scene.link.rate_hz;
    let pause_frames = (WAKE_PAUSE_MS / 1e3 * rate_hz).round() as u64;

    // The device gave each channel its first pulse in that order, a wake pause apart (longer
    // only if this computer held the stream up for more than the second sent ahead); the
    // channels no joint uses with the last one.
    let (woken, output, output_since, waiting) = on_device(&harness, |device| {
        let channels = usize::from(device.info().channel_count);
        (
            (0..channels)
                .map(|channel| device.woken_at(channel).expect("woken"))
                .collect::<Vec<u64>>(),
            device.output(),
            device.output_since(),
            device.planned_waiting(),
        )
    });
    let first = woken[order[0]];
    let gaps: Vec<u64> = order
        .windows(2)
        .map(|pair| woken[pair[1]] - woken[pair[0]])
        .collect();
    eprintln!("woken at frames {woken:?}, in order {order:?}: gaps {gaps:?} frames");
    assert!(
        gaps.iter().all(|&gap| gap >= pause_frames),
        "gaps of {gaps:?} frames, the pause is {pause_frames}"
    );
    let last_woken = woken[*order.last().expect("a channel")];
    for (channel, &at) in woken.iter().enumerate() {
        if !order.contains(&channel) {
            assert_eq!(at, last_woken, "unused channel {channel}");
        }
    }

    // Then the approach and the sequence ran to their end: the device sends the last setpoint
    // and has nothing left to play; every frame was played, one a pulse frame, after the first.
    let plan = plan_of(&scene, &arm).expect("plans");
    let limp = ChannelOutput::limp(info.channel_count);
    let streamed = stream_plan_waking(
        &scene,
        &arm,
        &plan,
        Some(&limp),
        &info,
        rate_hz,
        false,
        WakeMode::OneAtATime,
    )
    .expect("the stream plans");
    let total = streamed.setpoints.values.len();
    assert_eq!(harness.state().device().view().progress.1, total);
    assert!(
        (drawn_s - streamed.approach.duration()).abs() < 1e-9,
        "the timeline drew {drawn_s} s of approach, the stream's is {} s",
        streamed.approach.duration()
    );
    let woken_s = (order.len() as u64 * pause_frames) as f64 / rate_hz;
    assert!(drawn_s > woken_s, "{drawn_s} s, the wake alone {woken_s} s");
    assert_eq!(Some(output), streamed.frame(total - 1), "the last setpoint");
    assert_eq!(waiting, 0);
    // The last frame that differs from the one before went out no sooner than its place in the
    // stream after the first.
    let last_change = (1..total)
        .rev()
        .find(|&index| streamed.frame(index) != streamed.frame(index - 1))
        .expect("the stream moves");
    assert!(
        output_since >= first + last_change as u64,
        "the output last changed in frame {output_since}, the stream's first frame played in \
         {first}, its last change is frame {last_change}"
    );
    assert_eq!(harness.state().device().view().sent, total);
}

#[test]
fn a_pause_stops_the_frames_sent_ahead_at_once_and_a_resume_runs_to_the_end() {
    let mut scene = wake_scene();
    scene.waypoints.truncate(3);
    let mut harness = connected_on("wake-pause", &scene);
    harness.get_by_label("Stream sequence").click_accesskit();
    // Paused once the arm is awake and moving.
    step_until_slow(&mut harness, "the arm awake", |editor| {
        woken_and_playing(editor, 20)
    });
    let clicked_at = on_device(&harness, SimDevice::frames_started);
    harness.get_by_label("Pause stream").click_accesskit();
    step_until(&mut harness, "the pause", |editor| {
        editor.device().view().phase == StreamPhase::Paused
    });
    let held_since = assert_stopped_within(
        &harness,
        "the pause was clicked",
        clicked_at,
        PAUSE_WITHIN_FRAMES,
    );
    let (held, mode) = on_device(&harness, |device| (device.output(), device.mode()));
    assert_eq!(mode, DeviceMode::Keeping);
    let view = harness.state().device().view().clone();
    let line = format!(
        "stream: paused at {} of {} setpoints, the device holding",
        view.sent, view.progress.1
    );
    assert!(harness.query_by_label(&line).is_some(), "no \"{line}\"");
    assert_eq!(
        view.sent, view.progress.0,
        "sent counts to where it resumes"
    );

    // It holds: half a second of pulse frames later the output has not changed.
    let looked_at = on_device(&harness, SimDevice::frames_started);
    step_until(&mut harness, "half a second of pulse frames", |editor| {
        let device = editor.device().simulated_device().expect("device");
        device.lock().expect("device").frames_started() >= looked_at + 25
    });
    on_device(&harness, |device| {
        assert_eq!(device.output(), held);
        assert_eq!(device.output_since(), held_since);
    });

    // Resumed, the device moves again from the frame after the one it held, to the end.
    harness.get_by_label("Resume stream").click_accesskit();
    step_until_slow(&mut harness, "the stream's end", |editor| {
        editor.device().view().phase == StreamPhase::Finished
    });
    let total = harness.state().device().view().progress.1;
    assert_eq!(harness.state().device().view().sent, total);
    on_device(&harness, |device| {
        assert!(device.output_since() > held_since);
        assert_eq!(device.planned_waiting(), 0);
    });
}

#[test]
fn the_emergency_stop_stops_the_frames_sent_ahead_at_once() {
    let (mut harness, requests, _dir) = sample_editor("wake-stop");
    connect(&mut harness);
    acknowledge_caution(&mut harness);
    harness.get_by_label("Stream sequence").click_accesskit();
    step_until_slow(&mut harness, "the arm awake", |editor| {
        woken_and_playing(editor, 20)
    });
    let waiting = on_device(&harness, SimDevice::planned_waiting);
    assert!(waiting > 10, "{waiting} frames sent ahead");
    let pressed_at = on_device(&harness, SimDevice::frames_started);
    press_stop_and_check_link(&mut harness, &requests, StopSource::Key, press_stop_key);
    assert_stopped_within(&harness, "the stop key", pressed_at, STOP_WITHIN_FRAMES);

    // The stream's line (checked above) counts the setpoints the device had played, from the
    // frame it holds, not those sent ahead of the arm.
    let view = harness.state().device().view().clone();
    let played = view.played_at_stop.expect("named");
    assert!(
        played + 10 <= view.sent,
        "{played} played of {} sent: over 10 were waiting in the device",
        view.sent
    );
}
