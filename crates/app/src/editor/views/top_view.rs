//! The top view's plane: looking down the base's vertical axis.

use nalgebra::Vector3;

use super::Plane;

/// Base-frame X to the right, Y up the screen; a drag moves the tool point in the horizontal
/// plane at its current height.
#[derive(Debug, Clone, Copy, Default)]
pub struct TopPlane;

impl Plane for TopPlane {
    fn project(&self, point: &Vector3<f64>) -> [f64; 2] {
        [point.x * 1e3, point.y * 1e3]
    }

    fn target(&self, at_mm: [f64; 2], tool_point: &Vector3<f64>) -> Vector3<f64> {
        Vector3::new(at_mm[0] * 1e-3, at_mm[1] * 1e-3, tool_point.z)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_drag_keeps_the_height() {
        let tool = Vector3::new(0.1, 0.2, 0.05);
        let target = TopPlane.target([150.0, -20.0], &tool);
        assert_eq!(target, Vector3::new(0.15, -0.02, 0.05));
        assert_eq!(TopPlane.project(&target), [150.0, -20.0]);
    }
}
