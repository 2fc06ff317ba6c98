//! The scene's workspace and arm as collision geometry: the table, boxes and trays as obstacles
//! (mm → m), the arm's links as capsules, and the pairs a pick or place leaves out. The one
//! place that turns the workspace part of the file's units into SI. `SceneCell` gathers that
//! geometry for one scene and looks at the clearance along a plan or a dry run, the same for
//! `armwright plan` and `simulate` and for the editor's dry-run marks.
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

use armwright_kinematics::{Arm, ArmShape, KinematicsError, Obstacle, Other};
use armwright_trajectory::{
    Carry, Clearance, ClearanceOptions, Exemption, ServoTrace, TaskPlan, Workcell, carried_objects,
    dry_run_clearance, grip_exemptions, plan_clearance,
};
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

/// The scene's collision geometry: the arm's shape and the obstacles, what picks leave out and
/// what the gripper carries.
pub(crate) struct SceneCell {
    shape: ArmShape,
    obstacles: Vec<Obstacle>,
    exemptions: Vec<Exemption>,
    carried: Vec<Carry>,
}

impl SceneCell {
    /// The geometry of `scene` on `arm`; a waypoint the arm cannot take leaves no exemptions
    /// and nothing carried (planning has refused such a scene already).
    pub(crate) fn of(scene: &Scene, arm: &Arm) -> SceneCell {
        let shape = arm_shape_of(scene, arm);
        let obstacles = obstacles_of(scene);
        let exemptions = exemptions_of(scene, arm, &shape, &obstacles).unwrap_or_default();
        let carried = carried_of(scene, arm, &shape, &obstacles).unwrap_or_default();
        SceneCell {
            shape,
            obstacles,
            exemptions,
            carried,
        }
    }

    /// The arm's links as capsules.
    pub(crate) fn shape(&self) -> &ArmShape {
        &self.shape
    }

    /// The workspace's obstacles.
    pub(crate) fn obstacles(&self) -> &[Obstacle] {
        &self.obstacles
    }

    /// The objects the gripper carries, and on which moves.
    pub(crate) fn carried(&self) -> &[Carry] {
        &self.carried
    }

    fn workcell<'a>(&'a self, arm: &'a Arm) -> Workcell<'a> {
        Workcell {
            arm,
            shape: &self.shape,
            obstacles: &self.obstacles,
            exemptions: &self.exemptions,
            carried: &self.carried,
        }
    }

    /// Clearance along the commanded plan, looked at every 1 ms or closer.
    pub(crate) fn along_plan(&self, arm: &Arm, plan: &TaskPlan) -> Clearance {
        let cell = self.workcell(arm);
        plan_clearance(&cell, plan, plan.timings(), &ClearanceOptions::default())
    }

    /// Clearance along the dry run's motion (every 1 ms step of the servo model).
    pub(crate) fn along_dry_run(
        &self,
        arm: &Arm,
        plan: &TaskPlan,
        trace: &ServoTrace,
    ) -> Clearance {
        let cell = self.workcell(arm);
        dry_run_clearance(&cell, trace, plan.timings(), &ClearanceOptions::default())
    }

    /// What a pair's other side is called: an obstacle's name or a link's.
    pub(crate) fn object_name(&self, other: Other) -> &str {
        match other {
            Other::Obstacle(index) => self.obstacles.get(index).map_or("?", |o| &o.name),
            Other::Link(index) => self.shape.links().get(index).map_or("?", |l| &l.name),
        }
    }

    fn link_name(&self, link: usize) -> &str {
        self.shape.links().get(link).map_or("?", |l| &l.name)
    }

    /// What hits: the link's name, or for an object carried in the gripper "`<object>` (carried
    /// by the `<link>`)".
    pub(crate) fn hitter_name(&self, link: usize, carried: Option<usize>) -> String {
        match carried {
            None => self.link_name(link).to_string(),
            Some(object) => format!(
                "{} (carried by the {})",
                self.object_name(Other::Obstacle(object)),
                self.link_name(link)
            ),
        }
    }
}
