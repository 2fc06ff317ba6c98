//! Plane coordinates in mm ↔ screen points, with zoom and pan.

use egui::{Pos2, Rect, pos2, vec2};

/// Maps a plane's (right, up) mm to screen points inside `rect`.
#[derive(Debug, Clone, Copy)]
pub struct Projection {
    /// The screen area of the view.
    pub rect: Rect,
    /// The plane point (mm) at the centre of `rect`.
    pub centre_mm: [f64; 2],
    /// Screen points per mm.
    pub points_per_mm: f64,
}

impl Projection {
    /// The screen point of a plane point in mm.
    pub fn to_screen(&self, at_mm: [f64; 2]) -> Pos2 {
        let centre = self.rect.center();
        pos2(
            centre.x + ((at_mm[0] - self.centre_mm[0]) * self.points_per_mm) as f32,
            centre.y - ((at_mm[1] - self.centre_mm[1]) * self.points_per_mm) as f32,
        )
    }

    /// The plane point in mm under a screen point.
    pub fn to_plane(&self, pos: Pos2) -> [f64; 2] {
        let centre = self.rect.center();
        [
            self.centre_mm[0] + f64::from(pos.x - centre.x) / self.points_per_mm,
            self.centre_mm[1] - f64::from(pos.y - centre.y) / self.points_per_mm,
        ]
    }

    /// The plane's visible extent in mm: (left, right) and (bottom, top).
    pub fn visible_mm(&self) -> ([f64; 2], [f64; 2]) {
        let low = self.to_plane(self.rect.left_bottom());
        let high = self.to_plane(self.rect.right_top());
        ([low[0], high[0]], [low[1], high[1]])
    }

    /// A screen rectangle for plane extents (mm).
    pub fn rect_of(&self, x_mm: [f64; 2], y_mm: [f64; 2]) -> Rect {
        Rect::from_two_pos(
            self.to_screen([x_mm[0], y_mm[0]]),
            self.to_screen([x_mm[1], y_mm[1]]),
        )
    }

    /// Zooms by `factor` keeping the plane point under `pivot` where it is.
    pub fn zoom_about(&mut self, pivot: Pos2, factor: f64) {
        let before = self.to_plane(pivot);
        self.points_per_mm = (self.points_per_mm * factor).clamp(0.02, 50.0);
        let after = self.to_plane(pivot);
        self.centre_mm[0] += before[0] - after[0];
        self.centre_mm[1] += before[1] - after[1];
    }

    /// Moves the picture by a screen delta.
    pub fn pan_by(&mut self, delta: egui::Vec2) {
        self.centre_mm[0] -= f64::from(delta.x) / self.points_per_mm;
        self.centre_mm[1] += f64::from(delta.y) / self.points_per_mm;
    }
}

/// The "nice" length (1, 2 or 5 × 10ⁿ mm) nearest above `at_least_mm`.
pub fn nice_length_mm(at_least_mm: f64) -> f64 {
    if !at_least_mm.is_finite() || at_least_mm <= 0.0 {
        return 1.0;
    }
    let power = 10f64.powf(at_least_mm.log10().floor());
    [1.0, 2.0, 5.0, 10.0]
        .into_iter()
        .map(|step| step * power)
        .find(|length| *length >= at_least_mm)
        .unwrap_or(10.0 * power)
}

/// A square-ish default view showing `extent_mm` (left, right, bottom, top) inside `rect`.
pub fn fit(rect: Rect, extent_mm: [f64; 4]) -> Projection {
    let width = (extent_mm[1] - extent_mm[0]).max(1.0);
    let height = (extent_mm[3] - extent_mm[2]).max(1.0);
    let size = rect.size() - vec2(24.0, 24.0);
    let points_per_mm = (f64::from(size.x.max(10.0)) / width)
        .min(f64::from(size.y.max(10.0)) / height)
        .max(0.02);
    Projection {
        rect,
        centre_mm: [
            (extent_mm[0] + extent_mm[1]) / 2.0,
            (extent_mm[2] + extent_mm[3]) / 2.0,
        ],
        points_per_mm,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn projection() -> Projection {
        Projection {
            rect: Rect::from_min_size(pos2(10.0, 20.0), vec2(400.0, 300.0)),
            centre_mm: [50.0, -30.0],
            points_per_mm: 2.0,
        }
    }

    #[test]
    fn screen_and_plane_round_trip_with_up_being_up() {
        let p = projection();
        let screen = p.to_screen([60.0, -20.0]);
        assert_eq!(screen, pos2(210.0 + 20.0, 170.0 - 20.0));
        let back = p.to_plane(screen);
        assert!((back[0] - 60.0).abs() < 1e-4 && (back[1] + 20.0).abs() < 1e-4);
    }

    #[test]
    fn zoom_keeps_the_point_under_the_pivot() {
        let mut p = projection();
        let pivot = pos2(100.0, 60.0);
        let before = p.to_plane(pivot);
        p.zoom_about(pivot, 1.7);
        let after = p.to_plane(pivot);
        assert!((before[0] - after[0]).abs() < 1e-6 && (before[1] - after[1]).abs() < 1e-6);
        assert!((p.points_per_mm - 3.4).abs() < 1e-12);
    }

    #[test]
    fn nice_lengths_step_one_two_five() {
        assert_eq!(nice_length_mm(3.0), 5.0);
        assert_eq!(nice_length_mm(12.0), 20.0);
        assert_eq!(nice_length_mm(50.0), 50.0);
        assert_eq!(nice_length_mm(51.0), 100.0);
        assert_eq!(nice_length_mm(0.0), 1.0);
    }
}
