//! The scene's workspace and arm as collision geometry: the table, boxes and trays as obstacles
//! (mm → m), the arm's links as capsules, and the pairs a pick or place leaves out. The one
//! place that turns the workspace part of the file's units into SI.
//!
//! How the scene marks an object as gripped: by the gripper, with no field of its own. A
//! waypoint whose gripper state differs from the waypoint before (it closes: a pick; it opens:
//! a place) grips the boxes and trays whose box, grown by the gripper's radius, holds its tool
//! point; the gripper may touch them on the moves into and out of that waypoint, and an object
//! picked rides in the gripper from then on, so no link is checked against where it stood. The
//! table is never gripped. (`armwright_trajectory::grip_exemptions` states the rule.)
//!
//! What the gripper carries is marked the same way: at a pick, the smallest of the boxes and
//! trays it grips there (a part, not the tray it lies in) moves with the tool from the move after
//! the pick up to and including the move into the next waypoint where the gripper opens, and is
//! checked against the other obstacles on those moves, except what the gripper itself may touch
//! there. (`armwright_trajectory::carried_objects` states the rule.)

use armwright_kinematics::{Arm, ArmShape, KinematicsError, Obstacle};
use armwright_trajectory::{Carry, Exemption, carried_objects, grip_exemptions};
use nalgebra::Vector3;

use crate::scene::Scene;
use crate::scene::field_table as table;
use crate::task::task_of;

/// The scene's obstacles in the base frame, in m: the table (when it has one) first, then the
/// boxes, then the trays (each a solid box; the pockets are not modelled), in file order.
pub fn obstacles_of(scene: &Scene) -> Vec<Obstacle> {
    let workspace = &scene.workspace;
    let metres = |v: [f64; 3]| Vector3::new(v[0], v[1], v[2]) / 1e3;
    let table = workspace
        .table_height_mm
        .map(|height_mm| Obstacle::table(height_mm / 1e3));
    let boxes = workspace
        .boxes
        .iter()
        .map(|b| Obstacle::standing_box(&b.name, metres(b.position_mm), metres(b.size_mm)));
    let trays = workspace
        .trays
        .iter()
        .map(|t| Obstacle::standing_box(&t.name, metres(t.position_mm), metres(t.size_mm)));
    table.into_iter().chain(boxes).chain(trays).collect()
}

/// The arm's links as capsules: each joint's `link.radius_mm` where the scene gives one (mm →
/// m through its field-table row), else the default from the servo sizes
/// ([`ArmShape::of`]). A radius the table's range lets through is always usable; one that were
/// not would keep its default.
pub fn arm_shape_of(scene: &Scene, arm: &Arm) -> ArmShape {
    let row = &table::link_mass::RADIUS;
    let kinds = scene.arm.shape.joint_kinds();
    scene.arm.joints.iter().zip(kinds).enumerate().fold(
        ArmShape::of(arm),
        |shape, (joint, (doc, kind))| {
            if row.value(&doc.link).is_none() {
                return shape;
            }
            let radius = row.si(&doc.link, kind);
            shape
                .clone()
                .with_radius(arm, joint, radius)
                .unwrap_or(shape)
        },
    )
}

/// The pairs the scene's picks and places leave out (see the module's note).
///
/// # Errors
/// [`KinematicsError`] for a waypoint the arm cannot take.
pub fn exemptions_of(
    scene: &Scene,
    arm: &Arm,
    shape: &ArmShape,
    obstacles: &[Obstacle],
) -> Result<Vec<Exemption>, KinematicsError> {
    grip_exemptions(arm, shape, obstacles, &task_of(scene, arm).waypoints)
}

/// The objects the gripper carries, and on which moves (see the module's note).
///
/// # Errors
/// [`KinematicsError`] for a waypoint the arm cannot take.
pub fn carried_of(
    scene: &Scene,
    arm: &Arm,
    shape: &ArmShape,
    obstacles: &[Obstacle],
) -> Result<Vec<Carry>, KinematicsError> {
    carried_objects(arm, shape, obstacles, &task_of(scene, arm).waypoints)
}
