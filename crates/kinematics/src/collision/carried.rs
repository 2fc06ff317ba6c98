//! An object carried in the gripper: a box fixed to the tool frame from the pick on, checked
//! against the workspace's other obstacles and against the arm's own links through
//! `parry3d-f64` (box against box, against the table's half-space, or against a link's
//! capsule).

use nalgebra::{Isometry3, Vector3};
use parry3d_f64::math::{Pose, Rotation, Vector};
use parry3d_f64::query;
use parry3d_f64::shape::{Capsule, Cuboid, HalfSpace, Shape};

use super::obstacle::{Obstacle, ObstacleShape};

/// A gap (m) counted when a query is not supported: far larger than any arm here.
const FARTHEST: f64 = 1.0e3;

/// A box carried in the gripper: its size and where it sits in the tool frame, as it was when
/// the gripper closed on it.
#[derive(Debug, Clone, PartialEq)]
pub struct CarriedBox {
    /// The obstacle it was, by its index in the obstacle list.
    pub obstacle: usize,
    /// Half its size along its own X, Y and Z, in m.
    pub half_size: Vector3<f64>,
    /// Its centre and axes in the tool frame, in m.
    pub grip: Isometry3<f64>,
    /// Farthest point of the box from the tool point, in m.
    pub extent: f64,
}

impl CarriedBox {
    /// The box obstacle `obstacle` (index `index`) as gripped by a tool at `tool` (base frame,
    /// m); `None` for the table, which cannot be carried.
    pub fn picked(index: usize, obstacle: &Obstacle, tool: &Isometry3<f64>) -> Option<CarriedBox> {
        let ObstacleShape::Box { centre, half_size } = obstacle.shape else {
            return None;
        };
        let grip = tool.inverse() * Isometry3::translation(centre.x, centre.y, centre.z);
        Some(CarriedBox {
            obstacle: index,
            half_size,
            grip,
            extent: grip.translation.vector.norm() + half_size.norm(),
        })
    }

    /// Where the box is (centre and axes, base frame, m) with the tool at `tool`.
    pub fn placed(&self, tool: &Isometry3<f64>) -> Isometry3<f64> {
        tool * self.grip
    }

    /// The box as parry sees it: where it is with the tool at `tool`, and its shape.
    fn solid(&self, tool: &Isometry3<f64>) -> (Pose, Cuboid) {
        let placed = self.placed(tool);
        let (t, q) = (placed.translation.vector, placed.rotation);
        let pose = Pose::from_parts(
            Vector::new(t.x, t.y, t.z),
            Rotation::from_xyzw(q.i, q.j, q.k, q.w),
        );
        let carried = Cuboid::new(Vector::new(
            self.half_size.x,
            self.half_size.y,
            self.half_size.z,
        ));
        (pose, carried)
    }

    /// Signed distance (m) from the box, with the tool at `tool`, to a link's capsule: the
    /// segment from `start` to `end` (base frame, m) grown by `radius` m. The gap when positive,
    /// the depth of the overlap when negative.
    pub fn distance_to_link(
        &self,
        tool: &Isometry3<f64>,
        start: &Vector3<f64>,
        end: &Vector3<f64>,
        radius: f64,
    ) -> f64 {
        let (pose, carried) = self.solid(tool);
        let capsule = Capsule::new(
            Vector::new(start.x, start.y, start.z),
            Vector::new(end.x, end.y, end.z),
            radius,
        );
        signed_distance(&pose, &carried, &Pose::identity(), &capsule)
    }

    /// Signed distance (m) from the box, with the tool at `tool`, to `obstacle`: the gap when
    /// positive, the depth of the overlap when negative.
    pub fn distance(&self, tool: &Isometry3<f64>, obstacle: &Obstacle) -> f64 {
        let (pose, carried) = self.solid(tool);
        // The obstacle goes first, as in `separation.rs` (parry 0.31 places a half-space given
        // second on the wrong side).
        match obstacle.shape {
            ObstacleShape::Table { height } => signed_distance(
                &Pose::translation(0.0, 0.0, height),
                &HalfSpace::new(Vector::Z),
                &pose,
                &carried,
            ),
            ObstacleShape::Box { centre, half_size } => signed_distance(
                &Pose::translation(centre.x, centre.y, centre.z),
                &Cuboid::new(Vector::new(half_size.x, half_size.y, half_size.z)),
                &pose,
                &carried,
            ),
        }
    }
}

/// Signed distance (m) between two placed shapes: the gap from the distance query (GJK), the
/// depth of an overlap from the contact query (EPA).
fn signed_distance(pose1: &Pose, first: &dyn Shape, pose2: &Pose, second: &dyn Shape) -> f64 {
    let gap = query::distance(pose1, first, pose2, second).map_or(FARTHEST, |d| d.distance);
    if gap > 0.0 {
        return gap;
    }
    match query::contact(pose1, first, pose2, second, 0.0) {
        Ok(Some(contact)) => contact.dist.min(0.0),
        Ok(None) | Err(_) => 0.0,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_carried_box_keeps_its_place_in_the_tool_frame_and_measures_to_the_table() {
        // A 20 mm cube standing on the table (top at z = 0), gripped at its centre by a tool
        // pointing down; lifted 50 mm and turned a quarter about the vertical, its bottom is 50
        // mm above the table (box against half-space: common practice geometry).
        let cube =
            Obstacle::standing_box("cube", Vector3::new(0.15, 0.0, 0.0), Vector3::repeat(0.02));
        let down = nalgebra::UnitQuaternion::from_euler_angles(std::f64::consts::PI, 0.0, 0.0);
        let tool = Isometry3::from_parts(nalgebra::Translation3::new(0.15, 0.0, 0.01), down);
        let carried = CarriedBox::picked(2, &cube, &tool).expect("a box");
        assert!((carried.grip.translation.vector.norm()) < 1e-12);
        let table = Obstacle::table(0.0);
        assert!(carried.distance(&tool, &table).abs() < 1e-9);
        let turn =
            nalgebra::UnitQuaternion::from_euler_angles(0.0, 0.0, 0.5 * std::f64::consts::PI);
        let lifted =
            Isometry3::from_parts(nalgebra::Translation3::new(0.15, 0.0, 0.06), turn * down);
        assert!((carried.distance(&lifted, &table) - 0.05).abs() < 1e-7);
        // Pushed 5 mm into a box beside it: 5 mm deep.
        let wall =
            Obstacle::standing_box("wall", Vector3::new(0.18, 0.0, 0.0), Vector3::repeat(0.03));
        let pushed = Isometry3::from_parts(nalgebra::Translation3::new(0.16, 0.0, 0.02), down);
        assert!((carried.distance(&pushed, &wall) + 0.005).abs() < 1e-6);
        assert!(CarriedBox::picked(0, &table, &tool).is_none());
        assert!((carried.extent - 0.01 * 3f64.sqrt()).abs() < 1e-12);
    }

    #[test]
    fn a_carried_box_measures_to_a_link_as_the_closed_forms_give() {
        // Common practice geometry: a capsule whose segment runs parallel to a box face, beyond
        // the face, is (distance from the segment to the face − radius) away; one whose end
        // lies out beyond a corner, along the corner's diagonal, is (distance from that end to
        // the corner − radius) away; one through the box overlaps by (radius + distance from
        // the segment to the face it is nearest).
        let cube =
            Obstacle::standing_box("bar", Vector3::new(0.15, 0.0, 0.0), Vector3::repeat(0.02));
        let down = nalgebra::UnitQuaternion::from_euler_angles(std::f64::consts::PI, 0.0, 0.0);
        let tool = Isometry3::from_parts(nalgebra::Translation3::new(0.15, 0.0, 0.01), down);
        let held = CarriedBox::picked(0, &cube, &tool).expect("a box");
        // Lifted 100 mm and turned 30° about the vertical, the box's faces are no longer
        // parallel to the base frame's planes; its top at z = 0.12.
        let turn = nalgebra::UnitQuaternion::from_euler_angles(0.0, 0.0, 30f64.to_radians());
        let lifted =
            Isometry3::from_parts(nalgebra::Translation3::new(0.15, 0.0, 0.11), turn * down);
        let radius = 0.008;
        // Parallel to the top face, 25 mm above it, running past both sides of the box.
        let above = |dz: f64| {
            held.distance_to_link(
                &lifted,
                &Vector3::new(0.05, -0.03, 0.12 + dz),
                &Vector3::new(0.25, 0.04, 0.12 + dz),
                radius,
            )
        };
        assert!((above(0.025) - (0.025 - radius)).abs() < 1e-7);
        // 3 mm above the top: the capsule sinks 5 mm into the box.
        assert!((above(0.003) - (0.003 - radius)).abs() < 1e-7);
        // A top corner of the box (its axes are the base frame's as it was picked, now turned
        // 30° about the vertical), and a capsule ending 30 mm out along the corner's diagonal,
        // pointing away.
        let placed = held.placed(&lifted);
        let corner_local = nalgebra::Point3::new(0.01, 0.01, 0.01);
        let corner = (placed * corner_local).coords;
        let outward = (placed.rotation * Vector3::new(1.0, 1.0, 1.0)).normalize();
        let near = corner + outward * 0.03;
        let far = near + outward * 0.05;
        let gap = held.distance_to_link(&lifted, &near, &far, radius);
        assert!((gap - (0.03 - radius)).abs() < 1e-7, "{gap}");
        assert!(corner.z > 0.119 && corner.z < 0.121);
    }
}
