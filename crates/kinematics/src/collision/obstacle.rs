//! Workspace obstacles: the table plane and axis-aligned boxes (boxes, trays, feeders).

use nalgebra::Vector3;

/// The solid shape of an obstacle, in the base frame, in m.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum ObstacleShape {
    /// Everything below the horizontal plane at `height` (m): the table top and what is under it.
    Table {
        /// Height of the table top in the base frame, in m.
        height: f64,
    },
    /// A solid box whose faces are parallel to the base frame's planes.
    Box {
        /// Centre of the box, in m.
        centre: Vector3<f64>,
        /// Half the size along X, Y and Z, in m (each above 0).
        half_size: Vector3<f64>,
    },
}

/// One obstacle of the workspace: a name for reports and its solid shape.
#[derive(Debug, Clone, PartialEq)]
pub struct Obstacle {
    /// A name for reports, such as "table" or "peg feeder".
    pub name: String,
    /// The solid shape, in the base frame.
    pub shape: ObstacleShape,
}

impl Obstacle {
    /// The table: everything below the plane at `height` m.
    pub fn table(height: f64) -> Obstacle {
        Obstacle {
            name: "table".into(),
            shape: ObstacleShape::Table { height },
        }
    }

    /// A box standing with the centre of its bottom face at `bottom_centre` (m), of `size` (m)
    /// along X, Y and Z.
    pub fn standing_box(name: &str, bottom_centre: Vector3<f64>, size: Vector3<f64>) -> Obstacle {
        let half_size = size / 2.0;
        Obstacle {
            name: name.into(),
            shape: ObstacleShape::Box {
                centre: bottom_centre + Vector3::new(0.0, 0.0, half_size.z),
                half_size,
            },
        }
    }

    /// Whether this is the table.
    pub fn is_table(&self) -> bool {
        matches!(self.shape, ObstacleShape::Table { .. })
    }

    /// Whether `point` (m, base frame) lies inside the obstacle grown by `margin` m on every
    /// side.
    pub fn holds(&self, point: &Vector3<f64>, margin: f64) -> bool {
        match self.shape {
            ObstacleShape::Table { height } => point.z <= height + margin,
            ObstacleShape::Box { centre, half_size } => (point - centre)
                .iter()
                .zip(half_size.iter())
                .all(|(d, h)| d.abs() <= h + margin),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_standing_box_holds_points_inside_it_and_within_the_margin() {
        let crate_box = Obstacle::standing_box(
            "crate",
            Vector3::new(0.1, 0.0, 0.0),
            Vector3::new(0.02, 0.02, 0.04),
        );
        assert!(crate_box.holds(&Vector3::new(0.1, 0.0, 0.039), 0.0));
        assert!(!crate_box.holds(&Vector3::new(0.1, 0.0, 0.045), 0.0));
        assert!(crate_box.holds(&Vector3::new(0.1, 0.0, 0.045), 0.01));
        assert!(!crate_box.holds(&Vector3::new(0.1, 0.0, -0.001), 0.0));
    }
}
