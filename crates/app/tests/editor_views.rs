//! The two views in the whole window: a drag in the top view turns the arm's base, but the side
//! view holds its plane, its shading and its title until the drag ends and turns then (keys
//! turn it at once); a double-click fits the arm again after a zoom.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

mod editor_common;

use armwright::editor::ViewKind;
use armwright_kinematics::MapView;
use egui::{Event, Modifiers, PointerButton, Shape, vec2};

use editor_common::{sample_editor, wait_for_reach_maps};

/// The yaw (rad) of the side view's newest shaded reach map.
fn side_map_yaw(harness: &editor_common::EditorHarness) -> f64 {
    match harness
        .state()
        .reach_layer(ViewKind::Side)
        .map(|layer| layer.key.view)
    {
        Some(MapView::Side { yaw }) => yaw,
        other => panic!("no side-view map: {other:?}"),
    }
}

/// Whether the last frame painted `words` (a view's title, say).
fn painted(harness: &editor_common::EditorHarness, words: &str) -> bool {
    fn any(shape: &Shape, words: &str) -> bool {
        match shape {
            Shape::Vec(shapes) => shapes.iter().any(|shape| any(shape, words)),
            Shape::Text(text) => text.galley.text() == words,
            _ => false,
        }
    }
    harness
        .output()
        .shapes
        .iter()
        .any(|clipped| any(&clipped.shape, words))
}

fn side_title(yaw: f64) -> String {
    format!("Side view at base yaw {:.1}°", yaw.to_degrees())
}

#[test]
fn the_side_view_holds_its_plane_while_dragging_and_turns_after() {
    let (mut harness, _requests, _dir) = sample_editor("views-hold");
    wait_for_reach_maps(&mut harness);
    let yaw_before = harness.state().state.side_view_yaw();
    assert!(painted(&harness, &side_title(yaw_before)));
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
    // The sample's arm is articulated: its base joint is the first.
    let base = harness.state().state.pose[0];
    assert!(
        (base - yaw_before).abs() > 0.05,
        "the base turned: {yaw_before} → {base} rad"
    );
    // Still pressed: the side view, its shading and its title keep the plane the drag began in,
    // however long the maps take.
    wait_for_reach_maps(&mut harness);
    let state = &harness.state().state;
    assert!(state.side_view_held());
    assert_eq!(
        state.side_view_yaw(),
        yaw_before,
        "the side view keeps its plane"
    );
    assert!((side_map_yaw(&harness) - yaw_before).abs() < 0.5f64.to_radians());
    assert!(painted(&harness, &side_title(yaw_before)));
    harness.event(Event::PointerButton {
        pos: to,
        button: PointerButton::Primary,
        pressed: false,
        modifiers: Modifiers::NONE,
    });
    harness.run_steps(2);
    // Released: the side view turns to the base, and its shading follows.
    let state = &harness.state().state;
    assert!(!state.side_view_held());
    assert_eq!(state.side_view_yaw(), state.pose[0]);
    wait_for_reach_maps(&mut harness);
    assert!((side_map_yaw(&harness) - base).abs() < 0.5f64.to_radians());
    assert!(painted(&harness, &side_title(base)));
}

#[test]
fn keys_turn_the_side_view_at_once() {
    let (mut harness, _requests, _dir) = sample_editor("views-keys");
    let yaw_before = harness.state().state.side_view_yaw();
    // Ten nudges sideways (Shift: 10 mm each) with no button down: the side view turns with
    // the base as it goes.
    for _ in 0..10 {
        harness.key_press_modifiers(Modifiers::SHIFT, egui::Key::ArrowUp);
        harness.step();
        let state = &harness.state().state;
        assert!(!state.side_view_held());
        assert_eq!(state.side_view_yaw(), state.pose[0]);
    }
    assert!((harness.state().state.side_view_yaw() - yaw_before).abs() > 0.05);
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
