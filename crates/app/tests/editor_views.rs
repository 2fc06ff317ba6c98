//! The two views in the whole window: a drag in the top view turns the arm's base, but the side
//! view holds its plane until the drag ends and turns then; a double-click fits the arm again
//! after a zoom.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

mod editor_common;

use armwright::editor::ViewKind;
use egui::{Event, Modifiers, PointerButton, vec2};

use editor_common::sample_editor;

#[test]
fn the_side_view_holds_its_plane_while_dragging_and_turns_after() {
    let (mut harness, _requests, _dir) = sample_editor("views-hold");
    let yaw_before = harness.state().state.side_view_yaw();
    let from = harness
        .state()
        .camera(ViewKind::Top)
        .tool_on_screen()
        .expect("the tool point is drawn");
    // Sideways in the top view (screen y is the plan's −y): the base turns.
    let to = from + vec2(0.0, 40.0);
    harness.hover_at(from);
    harness.step();
    harness.event(Event::PointerButton {
        pos: from,
        button: PointerButton::Primary,
        pressed: true,
        modifiers: Modifiers::NONE,
    });
    harness.step();
    for i in 1..=10 {
        harness.hover_at(from + (to - from) * (i as f32 / 10.0));
        harness.step();
    }
    let live = harness.state().state.side_view_yaw();
    assert!(
        (live - yaw_before).abs() > 0.05,
        "the base turned: {yaw_before} → {live} rad"
    );
    assert_eq!(
        harness.state().camera(ViewKind::Side).held_yaw(),
        Some(yaw_before),
        "the side view keeps its plane during the drag"
    );
    harness.event(Event::PointerButton {
        pos: to,
        button: PointerButton::Primary,
        pressed: false,
        modifiers: Modifiers::NONE,
    });
    harness.run_steps(2);
    assert_eq!(harness.state().camera(ViewKind::Side).held_yaw(), None);
}

#[test]
fn a_double_click_fits_the_arm_again_after_a_zoom() {
    let (mut harness, _requests, _dir) = sample_editor("views-fit");
    let view = |harness: &editor_common::EditorHarness| {
        let projection = *harness
            .state()
            .camera(ViewKind::Top)
            .projection()
            .expect("drawn");
        (projection.centre_mm, projection.points_per_mm)
    };
    let fitted = view(&harness);
    let rect = harness
        .state()
        .camera(ViewKind::Top)
        .projection()
        .expect("drawn")
        .rect;
    // Zoom in with the wheel away from the tool point.
    let at = rect.left_top() + vec2(30.0, rect.height() - 60.0);
    harness.hover_at(at);
    harness.step();
    harness.event(Event::MouseWheel {
        unit: egui::MouseWheelUnit::Point,
        delta: vec2(0.0, 240.0),
        modifiers: Modifiers::NONE,
        phase: egui::TouchPhase::Move,
        source: egui::MouseWheelSource::Wheel,
    });
    // egui spreads a wheel step over several frames: let it finish.
    harness.run_steps(60);
    assert_ne!(view(&harness), fitted, "the wheel zoomed");
    for _ in 0..2 {
        harness.event(Event::PointerButton {
            pos: at,
            button: PointerButton::Primary,
            pressed: true,
            modifiers: Modifiers::NONE,
        });
        harness.event(Event::PointerButton {
            pos: at,
            button: PointerButton::Primary,
            pressed: false,
            modifiers: Modifiers::NONE,
        });
        harness.step();
    }
    harness.run_steps(2);
    assert_eq!(view(&harness), fitted, "fitted as at the start");
}
