//! Follow and jog in the editor against the in-process simulated device: the switch waits for
//! the caution, the device's arm follows a jogged joint and a nudged tool point, "Store pose"
//! stores what the arm is doing, the emergency stop turns follow off and the device reports the
//! stop, and turning follow off leaves the device holding.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

mod editor_common;

use armwright::editor::{
    ACKNOWLEDGE_LABEL, Command, Editor, FOLLOW_LABEL, FollowCommand, FollowPhase, JOG_ON_KEY,
    StopState,
};
use armwright_link::{DeviceMode, LinkState};
use egui::{Event, Key, Modifiers};
use egui_kittest::kittest::{NodeT, Queryable};

use editor_common::{
    EditorHarness, click_tab, device_mode, link_state, press_stop_key, sample_editor,
    step_until_slow,
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
    editor.state.device_pose.as_ref().is_some_and(|device| {
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
