//! The emergency stop: by button and by key, with a text field focused and with a dialog open;
//! the request leaves the editor in the frame of the press; the latch needs a confirmed reset.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

mod editor_common;

use armwright::editor::{Dialog, StopSource, StopState};
use egui_kittest::kittest::Queryable;

use editor_common::{press_stop_button, press_stop_key, sample_editor};

#[test]
fn button_press_sends_the_stop_in_the_same_frame() {
    let (mut harness, requests, _dir) = sample_editor("estop-button");
    assert!(requests.try_recv().is_err());
    let frame = press_stop_button(&mut harness);
    let request = requests
        .try_recv()
        .expect("stop sent in the frame of the press");
    assert_eq!(request.frame, frame);
    assert_eq!(request.source, StopSource::Button);
    assert!(matches!(
        harness.state().state.stop,
        StopState::Latched { .. }
    ));
}

#[test]
fn the_button_stop_goes_out_before_the_rest_of_the_window_is_drawn() {
    let (mut harness, requests, _dir) = sample_editor("estop-button-early");
    press_stop_button(&mut harness);
    assert!(requests.try_recv().is_ok());
    // The status bar, drawn right after the top bar, already tells of the stop in the frame
    // of the press: the stop was applied before the views, the sequence and the timeline were
    // drawn, so the link's thread writes the stop line while that frame is still being drawn
    // (as it does for the key, which is read before any panel).
    assert!(
        harness
            .query_by_label("emergency stop sent (button); latched until reset")
            .is_some(),
        "the stop was applied only after the whole window was drawn"
    );
}

#[test]
fn key_sends_the_stop_with_a_text_field_focused() {
    let (mut harness, requests, _dir) = sample_editor("estop-key-text");
    let name = harness.state().state.scene.waypoints[3].name.clone();
    harness.get_by_label("name of waypoint 4").focus();
    harness.run_steps(2);
    assert!(
        harness.ctx.egui_wants_keyboard_input(),
        "a text field has focus"
    );
    let frame = press_stop_key(&mut harness);
    let request = requests
        .try_recv()
        .expect("stop sent in the frame of the key");
    assert_eq!(request.frame, frame);
    assert_eq!(request.source, StopSource::Key);
    // The key typed nothing into the waypoint's name.
    assert_eq!(harness.state().state.scene.waypoints[3].name, name);
}

#[test]
fn key_and_button_work_with_a_dialog_open() {
    let (mut harness, requests, _dir) = sample_editor("estop-dialog");
    harness.get_by_label("Open…").click();
    harness.run_steps(3);
    assert!(matches!(
        harness.state().state.view.dialog,
        Some(Dialog::Open { .. })
    ));
    // Type into the dialog's path field so it holds keyboard focus.
    harness.get_by_label("scene path").focus();
    harness.run_steps(2);
    let frame = press_stop_key(&mut harness);
    assert_eq!(requests.try_recv().map(|r| r.frame), Ok(frame));
    let frame = press_stop_button(&mut harness);
    assert_eq!(
        requests.try_recv().map(|r| (r.frame, r.source)),
        Ok((frame, StopSource::Button))
    );
    // The dialog is still there: the stop did not need it out of the way.
    assert!(matches!(
        harness.state().state.view.dialog,
        Some(Dialog::Open { .. })
    ));
}

#[test]
fn the_latch_holds_until_a_confirmed_reset() {
    let (mut harness, requests, _dir) = sample_editor("estop-reset");
    press_stop_key(&mut harness);
    assert!(requests.try_recv().is_ok());
    harness.run_steps(2);
    assert!(harness.state().window_title().contains("STOPPED"));
    harness.get_by_label("Reset stop…").click();
    harness.run_steps(3);
    assert_eq!(
        harness.state().state.view.dialog,
        Some(Dialog::ConfirmStopReset)
    );
    // Declining keeps the latch.
    harness.get_by_label("Keep stopped").click();
    harness.run_steps(3);
    assert!(matches!(
        harness.state().state.stop,
        StopState::Latched { .. }
    ));
    harness.get_by_label("Reset stop…").click();
    harness.run_steps(3);
    harness.get_by_label("Reset stop").click();
    harness.run_steps(3);
    assert_eq!(harness.state().state.stop, StopState::Clear);
}
