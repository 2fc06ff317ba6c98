//! The reach envelope and torque-use map arrive from a worker thread for both views, for the
//! plane each view shows, and the arm's own tool point lies inside its envelope.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

mod editor_common;

use std::time::{Duration, Instant};

use armwright::editor::{MapKey, ViewKind};

use editor_common::sample_editor;

#[test]
fn both_views_get_a_map_for_their_plane_from_a_worker() {
    let (mut harness, _requests, _dir) = sample_editor("reach");
    let start = Instant::now();
    while (harness.state().reach_layer(ViewKind::Top).is_none()
        || harness.state().reach_layer(ViewKind::Side).is_none())
        && start.elapsed() < Duration::from_secs(60)
    {
        std::thread::sleep(Duration::from_millis(20));
        harness.step();
    }
    let editor = harness.state();
    for kind in [ViewKind::Top, ViewKind::Side] {
        let Some(layer) = editor.reach_layer(kind) else {
            panic!("no map for the {kind:?} view after 60 s");
        };
        assert_eq!(Some(layer.key), MapKey::for_view(&editor.state, kind));
        assert!(
            !layer.map.boundary().is_empty(),
            "{kind:?}: no envelope boundary"
        );
        assert!(layer.map.reachable_share() > 0.0);
        // The cell under the current tool point (or one next to it, on the rim) is reachable.
        let tool = editor.state.tool_point().expect("tool point");
        let (u, v) = match kind {
            ViewKind::Top => (tool.x, tool.y),
            ViewKind::Side => (tool.x.hypot(tool.y), tool.z),
        };
        let extent = layer.map.extent();
        let size = layer.map.cell_size();
        let column = ((u - extent.u_min) / size).floor() as usize;
        let row = ((v - extent.v_min) / size).floor() as usize;
        let near = (column.saturating_sub(1)..=column + 1)
            .flat_map(|c| (row.saturating_sub(1)..=row + 1).map(move |r| (c, r)))
            .any(|(c, r)| layer.map.reachable(c, r));
        assert!(
            near,
            "{kind:?}: the tool point's cell is outside the envelope"
        );
    }
}
