//! Follow and jog in the editor against the in-process simulated device: the switch waits for
//! the caution, the device's arm follows a jogged joint and a nudged tool point, "Store pose"
//! stores what the arm is doing, the emergency stop turns follow off and the device reports the
//! stop, and turning follow off leaves the device holding. Following the input arm (the
//! simulated device's scripted readings on a scene that maps them), the device's arm tracks the
//! input arm at the speed share set, holds when left, holds and says so when the readings stop,
//! and stops on the emergency stop.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

mod editor_common;

use std::time::{Duration, Instant};

use armwright::editor::{
    ACKNOWLEDGE_LABEL, Command, Editor, FOLLOW_INPUT_LABEL, FOLLOW_LABEL, FollowCommand,
    FollowPhase, FollowSource, JOG_ON_KEY, Level, StopState,
};
use armwright_link::{DeviceMode, LinkState, ReadingsSource};
use egui::{Event, Key, Modifiers};
use egui_kittest::kittest::{NodeT, Queryable};

use editor_common::{
    EditorHarness, click_tab, connected_with_inputs, device_mode, link_state, press_stop_key,
    sample_editor, step_until_slow,
};

fn press(harness: &mut EditorHarness, key: Key, modifiers: Modifiers) {
    harness.event(Event::Key {
        key,
        physical_key: None,
        pressed: true,
        repeat: false,
        modifiers,
    });
    harness.event(Event::Key {
        key,
        physical_key: None,
        pressed: false,
        repeat: false,
        modifiers,
    });
    harness.step();
}

/// Whether the simulated device's arm is within `tolerance` (rad or m) of the edited pose on
/// every joint.
fn device_near_edited(editor: &Editor, tolerance: f64) -> bool {
    editor
        .state
        .device
        .device_pose
        .as_ref()
        .is_some_and(|device| {
            device
                .iter()
                .zip(&editor.state.pose)
                .all(|(a, b)| (a - b).abs() <= tolerance)
        })
}

/// Sets the follow speed share (%) as the panel's slider does.
fn share(harness: &mut EditorHarness, pct: f64) {
    let ctx = harness.ctx.clone();
    let frame = ctx.cumulative_frame_nr();
    harness
        .state_mut()
        .apply(&ctx, Command::Follow(FollowCommand::SharePct(pct)), frame);
    harness.step();
}

fn switch_follow(harness: &mut EditorHarness) {
    harness.get_by_label(FOLLOW_LABEL).click_accesskit();
    harness.run_steps(2);
}

#[test]
fn follow_jog_store_stop_and_leave() {
    let (mut harness, _requests, _dir) = sample_editor("follow-flow");
    harness.get_by_label("Connect").click_accesskit();
    step_until_slow(&mut harness, "the connection", |editor| {
        link_state(editor) == Some(LinkState::Idle)
    });
    click_tab(&mut harness, "Follow");
    assert!(
        !harness.state().state.follow.on,
        "off when the editor opens"
    );

    // The switch waits for the caution.
    assert!(
        harness
            .get_by_label(FOLLOW_LABEL)
            .accesskit_node()
            .is_disabled()
    );
    harness.get_by_label(ACKNOWLEDGE_LABEL).click_accesskit();
    harness.run_steps(2);
    switch_follow(&mut harness);
    assert!(harness.state().state.follow.on);
    step_until_slow(&mut harness, "following", |editor| {
        editor.device().view().follow.phase == FollowPhase::Following
    });
    // The device's arm settles on the edited pose (its servos started limp).
    let near = 2f64.to_radians();
    step_until_slow(&mut harness, "the arm on the edited pose", |editor| {
        device_near_edited(editor, near)
    });

    // Jog the first joint 40° with the keys (a long move at 10 %); the arm follows.
    let before = harness.state().state.pose[0];
    press(&mut harness, Key::Num1, Modifiers::NONE);
    // At 1 % the move takes tens of seconds: "Store pose" comes while the arm is on its way
    // however slowly the frames of this debug build run.
    share(&mut harness, 1.0);
    // Forty presses in one frame: one step of 40°.
    for _ in 0..40 {
        for pressed in [true, false] {
            harness.event(Event::Key {
                key: JOG_ON_KEY,
                physical_key: None,
                pressed,
                repeat: false,
                modifiers: Modifiers::NONE,
            });
        }
    }
    harness.step();
    let target = harness.state().state.pose[0];
    assert!(
        (target - before - 40f64.to_radians()).abs() < 1e-9,
        "{before} → {target}"
    );
    // "Store pose" while the arm is on its way stores the arm's pose, not the edited one.
    harness.get_by_label("Store pose").click_accesskit();
    harness.run_steps(2);
    let stored = harness.state().state.pose[0];
    assert!(
        (stored - target).abs() > 1f64.to_radians() && stored >= before - 1e-6,
        "stored {stored}, the edited pose was {target}, from {before}; follow {:?}; messages {:?}",
        harness.state().device().view().follow,
        harness.state().state.messages
    );
    share(&mut harness, 100.0);
    // Jog on again, then nudge the tool point up 10 mm (Shift: 10 tool steps of 1 mm).
    for _ in 0..10 {
        press(&mut harness, JOG_ON_KEY, Modifiers::NONE);
    }
    let z_before = harness.state().state.tool_point().expect("tool point").z;
    press(&mut harness, Key::PageUp, Modifiers::SHIFT);
    let z_after = harness.state().state.tool_point().expect("tool point").z;
    assert!(
        (z_after - z_before - 0.010).abs() < 1e-4,
        "{z_before} → {z_after}"
    );
    step_until_slow(&mut harness, "the arm on the jogged pose", |editor| {
        device_near_edited(editor, near)
    });

    // The emergency stop: follow turns off and the device reports the stop.
    press_stop_key(&mut harness);
    assert!(matches!(
        harness.state().state.stop,
        StopState::Latched { .. }
    ));
    step_until_slow(&mut harness, "the device stopped", |editor| {
        device_mode(editor) == Some(DeviceMode::Stopped)
            && editor.device().view().follow.phase == FollowPhase::Off
    });
    assert!(!harness.state().state.follow.on);
    assert!(
        harness
            .get_by_label(FOLLOW_LABEL)
            .accesskit_node()
            .is_disabled(),
        "no follow while the stop is latched"
    );

    // Reset, follow again, then leave: the arm comes to rest and the device holds.
    harness.get_by_label("Reset stop…").click();
    harness.run_steps(3);
    harness.get_by_label("Reset stop").click();
    step_until_slow(&mut harness, "the link reset", |editor| {
        link_state(editor) == Some(LinkState::Idle)
    });
    switch_follow(&mut harness);
    step_until_slow(&mut harness, "following again", |editor| {
        editor.device().view().follow.phase == FollowPhase::Following
    });
    for _ in 0..5 {
        press(&mut harness, JOG_ON_KEY, Modifiers::NONE);
    }
    switch_follow(&mut harness);
    assert!(!harness.state().state.follow.on);
    step_until_slow(&mut harness, "follow left", |editor| {
        editor.device().view().follow.phase == FollowPhase::Off
            && link_state(editor) == Some(LinkState::Idle)
    });
    // The hold goes out on the link's thread after the run ended: wait for the device's word.
    step_until_slow(&mut harness, "the device holding", |editor| {
        device_mode(editor) == Some(DeviceMode::Keeping)
    });
    assert!(!harness.state().state.follow.on);
}

/// The largest difference (rad or m) between the simulated device's arm and the input arm over
/// the joints the scene maps (all four of the sample's).
fn device_from_input_arm(editor: &Editor) -> Option<f64> {
    let device = editor.state.device.device_pose.as_ref()?;
    let input = editor.state.device.input_pose.as_ref()?;
    Some(
        device
            .iter()
            .zip(input)
            .map(|(a, b)| (a - b).abs())
            .fold(0.0, f64::max),
    )
}

/// Plugs the simulated device's analog inputs in (the editor's own scripted sweep) or out.
fn plug_inputs(editor: &Editor, plugged: bool) {
    let device = editor
        .device()
        .simulated_device()
        .expect("simulated device");
    device
        .lock()
        .expect("device")
        .set_readings(plugged.then_some(ReadingsSource::Scripted {
            inputs: 6,
            period: Duration::from_secs(8),
        }));
}

fn switch_input_follow(harness: &mut EditorHarness) {
    harness.get_by_label(FOLLOW_INPUT_LABEL).click_accesskit();
    harness.run_steps(2);
}

#[test]
fn follow_the_input_arm_then_leave_lose_readings_and_stop() {
    let mut harness = connected_with_inputs("follow-inputs-scene", "inputs", "follow-inputs");
    click_tab(&mut harness, "Follow");
    assert!(
        !harness.state().state.follow.on,
        "off when the editor opens"
    );
    assert!(
        harness
            .get_by_label(FOLLOW_INPUT_LABEL)
            .accesskit_node()
            .is_disabled(),
        "the switch waits for the caution"
    );
    harness.get_by_label(ACKNOWLEDGE_LABEL).click_accesskit();
    harness.run_steps(2);

    // Follow the input arm at full share: the device's arm comes onto it (each input turns
    // round at the ends of its sweep, where the arm catches up) while the edited pose stays.
    share(&mut harness, 100.0);
    let edited = harness.state().state.pose.clone();
    switch_input_follow(&mut harness);
    assert!(harness.state().state.follow.on);
    assert_eq!(harness.state().state.follow.source, FollowSource::InputArm);
    step_until_slow(&mut harness, "following the input arm", |editor| {
        let view = &editor.device().view().follow;
        view.phase == FollowPhase::Following && view.inputs
    });
    assert!(
        harness
            .query_by_label("the device follows the input arm at 100 % of the joints' limits")
            .is_some()
    );
    // Each joint on its own: the inputs sweep a sixth of a turn apart, so they never rest
    // together, and a busy machine's slow frames add their lag to a moving one.
    let caught = std::cell::RefCell::new(vec![false; edited.len()]);
    step_until_slow(&mut harness, "each joint on the input arm", |editor| {
        let mut caught = caught.borrow_mut();
        if let (Some(device), Some(input)) = (
            &editor.state.device.device_pose,
            &editor.state.device.input_pose,
        ) {
            for (joint, (a, b)) in device.iter().zip(input).enumerate() {
                caught[joint] |= (a - b).abs() < 5f64.to_radians();
            }
        }
        caught.iter().all(|&on| on)
    });
    assert_eq!(harness.state().state.pose, edited, "the edited pose stays");

    // At 1 % the cap binds: the input arm sweeps away faster than the arm may follow.
    share(&mut harness, 1.0);
    step_until_slow(&mut harness, "the share in use", |editor| {
        (editor.device().view().follow.share - 0.01).abs() < 1e-9
    });
    step_until_slow(
        &mut harness,
        "the arm left behind by the input arm",
        |editor| device_from_input_arm(editor).is_some_and(|off| off > 10f64.to_radians()),
    );
    share(&mut harness, 100.0);

    // Leaving: the arm comes to rest and the device holds it.
    switch_input_follow(&mut harness);
    assert!(!harness.state().state.follow.on);
    step_until_slow(&mut harness, "follow of the input arm left", |editor| {
        editor.device().view().follow.phase == FollowPhase::Off
            && link_state(editor) == Some(LinkState::Idle)
    });
    assert_eq!(device_mode(harness.state()), Some(DeviceMode::Keeping));

    // The readings stop while following: the arm comes to rest, the device holds, and the
    // editor says why and turns the switch off.
    switch_input_follow(&mut harness);
    step_until_slow(&mut harness, "following the input arm again", |editor| {
        editor.device().view().follow.phase == FollowPhase::Following
    });
    plug_inputs(harness.state(), false);
    step_until_slow(&mut harness, "the hold for want of readings", |editor| {
        !editor.state.follow.on
    });
    assert!(
        harness.state().state.messages.iter().any(|message| {
            message.level == Level::Error
                && message
                    .text
                    .starts_with("no readings from the input arm for")
        }),
        "{:?}",
        harness.state().state.messages
    );
    step_until_slow(&mut harness, "the device holding", |editor| {
        editor.device().view().follow.phase == FollowPhase::Off
            && link_state(editor) == Some(LinkState::Idle)
            && device_mode(editor) == Some(DeviceMode::Keeping)
    });
    let held = harness
        .state()
        .state
        .device
        .device_pose
        .clone()
        .expect("device arm");
    let since = Instant::now();
    while since.elapsed() < Duration::from_millis(500) {
        std::thread::sleep(Duration::from_millis(10));
        harness.step();
    }
    let now = harness
        .state()
        .state
        .device
        .device_pose
        .clone()
        .expect("device arm");
    for (a, b) in held.iter().zip(&now) {
        assert!((a - b).abs() < 0.5f64.to_radians(), "{held:?} → {now:?}");
    }

    // Plugged in again, follow again; the emergency stop ends it and the device latches.
    plug_inputs(harness.state(), true);
    switch_input_follow(&mut harness);
    step_until_slow(
        &mut harness,
        "following after the readings came back",
        |editor| editor.device().view().follow.phase == FollowPhase::Following,
    );
    press_stop_key(&mut harness);
    step_until_slow(&mut harness, "the device stopped", |editor| {
        device_mode(editor) == Some(DeviceMode::Stopped)
            && editor.device().view().follow.phase == FollowPhase::Off
    });
    assert!(!harness.state().state.follow.on);
    assert!(
        harness
            .get_by_label(FOLLOW_INPUT_LABEL)
            .accesskit_node()
            .is_disabled(),
        "no follow while the stop is latched"
    );
}
