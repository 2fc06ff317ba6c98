//! The link panel against the in-process simulated device: connect, the caution before the
//! first stream, stream, the emergency stop by key with a text field focused (it reaches the
//! link in the frame of the key and the device latches), a confirmed reset, and streaming again.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

mod editor_common;

use std::time::Duration;

use armwright::editor::{StopSource, StreamPhase};
use armwright_link::{DeviceMode, LinkState};
use egui_kittest::kittest::{NodeT, Queryable};

use editor_common::{
    acknowledge_caution, connect, device_mode, frames_sent, link_state, press_stop_and_check_link,
    press_stop_key, sample_editor, step_until, stream_until_sending,
};

// The link panel's buttons are pressed through accessibility actions: the panel grows as the
// device's status arrives, so a pointer aimed in one frame may miss in the next.

#[test]
fn connect_acknowledge_stream_stop_by_key_reset_and_stream_again() {
    let (mut harness, requests, _dir) = sample_editor("link-flow");

    // Connect to the simulated device (the default choice).
    connect(&mut harness);
    let joints = harness.state().state.joint_count();
    step_until(&mut harness, "the device's arm pose", |editor| {
        editor.state.device.device_pose.as_ref().map(Vec::len) == Some(joints)
    });

    // Streaming waits for the caution: the button is disabled, and clicking it sends nothing.
    let stream = harness.get_by_label("Stream sequence");
    assert!(stream.accesskit_node().is_disabled());
    stream.click_accesskit();
    harness.run_steps(5);
    assert_eq!(harness.state().device().view().phase, StreamPhase::Idle);
    assert_eq!(frames_sent(harness.state()), 0);
    acknowledge_caution(&mut harness);
    assert!(harness.state().state.device.caution_acknowledged);

    // Stream.
    stream_until_sending(&mut harness);
    assert_eq!(device_mode(harness.state()), Some(DeviceMode::Driving));

    // The stop key, with a text field holding the keyboard.
    harness.get_by_label("name of waypoint 4").focus();
    harness.run_steps(2);
    assert!(harness.ctx.egui_wants_keyboard_input());
    // In that frame the request was handed to the link's emergency-stop handle, the link's
    // thread wrote the stop line and the device latched it and holds.
    press_stop_and_check_link(&mut harness, &requests, StopSource::Key, press_stop_key);

    // Streaming is refused while the stop is latched.
    assert!(
        harness
            .get_by_label("Stream sequence")
            .accesskit_node()
            .is_disabled()
    );

    // A confirmed reset clears the editor's latch and the link's.
    harness.get_by_label("Reset stop…").click();
    harness.run_steps(3);
    harness.get_by_label("Reset stop").click();
    step_until(&mut harness, "the link reset", |editor| {
        link_state(editor) == Some(LinkState::Idle)
    });
    assert_eq!(device_mode(harness.state()), Some(DeviceMode::Keeping));

    // Streaming works again.
    let sent = frames_sent(harness.state());
    harness.get_by_label("Stream sequence").click_accesskit();
    step_until(&mut harness, "streaming again", |editor| {
        frames_sent(editor) > sent + 10
    });
    assert_eq!(device_mode(harness.state()), Some(DeviceMode::Driving));
}

#[test]
fn a_stop_latched_before_connecting_stops_the_device_connected_after() {
    let (mut harness, _requests, _dir) = sample_editor("link-stop-first");
    press_stop_key(&mut harness);
    assert!(harness.state().device().last_stop_handed().is_none());
    harness.get_by_label("Connect").click_accesskit();
    step_until(&mut harness, "the device latched", |editor| {
        device_mode(editor) == Some(DeviceMode::Stopped)
    });
}

#[test]
fn pause_holds_the_device_and_resume_carries_on() {
    let (mut harness, _requests, _dir) = sample_editor("link-pause");
    connect(&mut harness);
    acknowledge_caution(&mut harness);
    stream_until_sending(&mut harness);
    harness.get_by_label("Pause stream").click_accesskit();
    step_until(&mut harness, "the pause", |editor| {
        editor.device().view().phase == StreamPhase::Paused
            && device_mode(editor) == Some(DeviceMode::Keeping)
    });
    let (pushed, total) = harness.state().device().view().progress;
    assert!(pushed < total, "paused part way: {pushed} of {total}");
    let sent = frames_sent(harness.state());
    std::thread::sleep(Duration::from_millis(100));
    harness.run_steps(2);
    assert_eq!(
        frames_sent(harness.state()),
        sent,
        "nothing sent while paused"
    );
    harness.get_by_label("Resume stream").click_accesskit();
    step_until(&mut harness, "streaming again", |editor| {
        frames_sent(editor) > sent + 5 && device_mode(editor) == Some(DeviceMode::Driving)
    });
    assert!(harness.state().device().view().progress.0 > pushed);
}

#[test]
fn serial_ports_are_listed_off_the_ui_thread() {
    let (mut harness, _requests, _dir) = sample_editor("link-ports");
    harness.get_by_label("List serial ports").click_accesskit();
    step_until(&mut harness, "the port listing", |editor| {
        editor.state.messages.iter().any(|message| {
            message.text.ends_with(" serial port found")
                || message.text.ends_with(" serial ports found")
        })
    });
    // Every port found is offered with its description.
    let ports = harness.state().device().view().ports.clone();
    for port in ports {
        harness.get_by_label_contains(&port.path);
    }
}

#[test]
fn the_device_pose_is_withdrawn_when_the_arm_is_edited() {
    let (mut harness, _requests, _dir) = sample_editor("link-arm-changed");
    harness.get_by_label("Connect").click_accesskit();
    let joints = harness.state().state.joint_count();
    step_until(&mut harness, "the device's arm pose", |editor| {
        editor.state.device.device_pose.as_ref().map(Vec::len) == Some(joints)
    });
    // A wrist roll added in the arm settings: the simulated device still moves the old arm.
    let ctx = harness.ctx.clone();
    let frame = ctx.cumulative_frame_nr();
    harness.state_mut().apply(
        &ctx,
        armwright::editor::Command::ChangeArmType(armwright::editor::ArmTypeChoice::Articulated5),
        frame,
    );
    harness.run_steps(2);
    assert_eq!(harness.state().state.joint_count(), joints + 1);
    assert_eq!(harness.state().state.device.device_pose, None);
    assert!(harness.state().device().view().arm_changed);
    harness.get_by_label_contains("Disconnect and connect again");
}

#[test]
fn opening_another_scene_moves_the_simulated_device_onto_its_arm() {
    let (mut harness, _requests, _dir) = sample_editor("link-reattach");
    connect(&mut harness);
    let path = editor_common::sample_scene("peg-sorter");
    let joints = armwright::scene::load(&path)
        .expect("the sample loads")
        .arm
        .joints
        .len();
    editor_common::open_through_dialog(&mut harness, &path);
    assert_eq!(harness.state().state.joint_count(), joints);
    step_until(&mut harness, "the device moving the new arm", |editor| {
        !editor.device().view().arm_changed
            && link_state(editor) == Some(LinkState::Idle)
            && editor.state.device.device_pose.as_ref().map(Vec::len) == Some(joints)
    });
    assert!(harness.state().state.messages.iter().any(|message| {
        message
            .text
            .contains("simulated device was connected again")
    }));
}
