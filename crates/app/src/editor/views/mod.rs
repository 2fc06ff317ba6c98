//! The two to-scale views of the arm and its workspace.
//!
//! Naming scheme: `<which>_view.rs` holds one view's plane (how a point in the base frame lands
//! on it and how a point on it becomes a drag target); `projection.rs` maps mm on a plane to
//! screen points with zoom and pan; `drawing.rs` draws grid, scale bar, workspace objects, the
//! arm and the tool point for any plane; `interaction.rs` turns pointer input into zoom, pan and
//! tool-point drags; `labels.rs` places names beside things free of each other; `reach_layer.rs`
//! computes the reach envelope and torque-use map off the UI
//! thread and holds their textures; `overlay.rs` draws extra arms (the dry run's, say) over the
//! edited one; `contacts.rs` shades the dry run's contacts.

mod contacts;
mod drawing;
mod interaction;
mod labels;
mod overlay;
mod projection;
mod reach_layer;
mod side_view;
mod top_view;

pub use drawing::ViewMaps;
pub use interaction::{Camera, VIEW_HINT, show_view};
#[cfg(test)]
pub(crate) use labels::place_labels;
pub use overlay::{ArmOverlay, DEVICE, SIMULATED};
pub use projection::Projection;
pub use reach_layer::{MapKey, MapLayer, OVER_RATING, ReachLayers, TorqueRamp, viridis};
pub use side_view::SidePlane;
pub use top_view::TopPlane;

use nalgebra::Vector3;

/// Which view.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ViewKind {
    /// Looking down the base's vertical axis: X to the right, Y up the screen.
    Top,
    /// Looking across the vertical plane at the current base yaw: distance from the base axis
    /// to the right, height up the screen.
    Side,
}

/// A view's drawing plane: where a point of the base frame lands and which 3D target a point
/// on the plane means.
pub trait Plane {
    /// The point (base frame, m) on the plane, in mm: (right, up).
    fn project(&self, point: &Vector3<f64>) -> [f64; 2];

    /// The drag target (base frame, m) for the plane point `at_mm` (right, up, mm), keeping the
    /// coordinate the plane does not show from `tool_point` (m).
    fn target(&self, at_mm: [f64; 2], tool_point: &Vector3<f64>) -> Vector3<f64>;
}
