//! Every bundled sample opens in the editor, its tool point can be dragged in both views on the
//! current branch, a waypoint can be stored, and both views get a reach map.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

mod editor_common;

use std::time::{Duration, Instant};

use armwright::editor::{ReachStatus, ViewKind};
use egui::vec2;
use egui_kittest::kittest::Queryable;

use editor_common::{drag, file_editor, sample_scene};

fn teach_on(name: &str) {
    let mut harness = file_editor(&format!("sample-{name}"), sample_scene(name));
    assert_eq!(
        harness.state().state.view.dialog,
        None,
        "{name} opened with a dialog"
    );
    for (kind, step) in [
        (ViewKind::Top, vec2(12.0, -10.0)),
        (ViewKind::Side, vec2(-10.0, 12.0)),
    ] {
        let Some(from) = harness.state().camera(kind).tool_on_screen() else {
            panic!("{name}: no tool point drawn in the {kind:?} view");
        };
        let branch_before = harness.state().state.readout.branch.clone();
        drag(&mut harness, from, from + step);
        let state = &harness.state().state;
        assert_eq!(
            state.readout.reach,
            ReachStatus::Reached,
            "{name}, {kind:?}: {:?}",
            state.reach_problems()
        );
        if let Some(before) = branch_before {
            assert_eq!(
                state.readout.branch.as_ref(),
                Some(&before),
                "{name}: the branch changed"
            );
        }
    }
    let count = harness.state().state.scene.waypoints.len();
    harness.get_by_label("Store pose").click();
    harness.run_steps(3);
    assert_eq!(harness.state().state.scene.waypoints.len(), count + 1);
    let start = Instant::now();
    while (harness.state().reach_layer(ViewKind::Top).is_none()
        || harness.state().reach_layer(ViewKind::Side).is_none())
        && start.elapsed() < Duration::from_secs(60)
    {
        std::thread::sleep(Duration::from_millis(20));
        harness.step();
    }
    for kind in [ViewKind::Top, ViewKind::Side] {
        let layer = harness.state().reach_layer(kind);
        assert!(
            layer.is_some_and(|layer| layer.map.reachable_share() > 0.0),
            "{name}: no reach map in the {kind:?} view"
        );
    }
}

#[test]
fn pen_plotter() {
    teach_on("pen-plotter");
}

#[test]
fn peg_sorter() {
    teach_on("peg-sorter");
}

#[test]
fn spacer_stacker() {
    teach_on("spacer-stacker");
}
