//! The approach in the editor: with no device the timeline says the approach is planned at
//! stream time; connected to the limp simulated device it draws the wake at the rest pose and
//! the approach before time 0 and counts it in the cycle; a stream starts with it; once the
//! device holds the arm (after a pause), the approach drawn starts from there.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

mod editor_common;

use armwright::approach::StartFrom;
use armwright::editor::StreamPhase;
use egui_kittest::kittest::Queryable;

use editor_common::{
    acknowledge_caution, connect, frames_sent, sample_editor, step_until_slow, wait_for_dry_run,
};

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
