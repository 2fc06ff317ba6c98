//! The side view's plane: the vertical plane through the base axis at the current base yaw.

use nalgebra::Vector3;

use super::Plane;

/// Distance along the yaw direction to the right (negative behind the base axis), height up the
/// screen; a drag moves the tool point in this vertical plane.
#[derive(Debug, Clone, Copy)]
pub struct SidePlane {
    /// The plane's direction about the base's vertical axis, in rad.
    pub yaw: f64,
}

impl Plane for SidePlane {
    fn project(&self, point: &Vector3<f64>) -> [f64; 2] {
        let (sin, cos) = self.yaw.sin_cos();
        [(point.x * cos + point.y * sin) * 1e3, point.z * 1e3]
    }

    fn target(&self, at_mm: [f64; 2], _tool_point: &Vector3<f64>) -> Vector3<f64> {
        let (sin, cos) = self.yaw.sin_cos();
        let along = at_mm[0] * 1e-3;
        Vector3::new(along * cos, along * sin, at_mm[1] * 1e-3)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_drag_stays_in_the_plane_at_the_yaw() {
        let plane = SidePlane {
            yaw: std::f64::consts::FRAC_PI_2,
        };
        let target = plane.target([200.0, 30.0], &Vector3::zeros());
        assert!((target - Vector3::new(0.0, 0.2, 0.03)).norm() < 1e-12);
        let back = plane.project(&target);
        assert!((back[0] - 200.0).abs() < 1e-9 && (back[1] - 30.0).abs() < 1e-9);
    }
}
