//! Clearance for `plan` and `simulate`: the arm against the workspace and itself along the
//! commanded plan (and, for `simulate`, along the dry run), as JSON keys and text lines. A
//! contact makes either command exit 1.

use armwright_kinematics::{Arm, ArmShape, Obstacle, Other};
use armwright_trajectory::{
    Carry, Clearance, ClearanceOptions, Contact, Exemption, ServoTrace, TaskPlan, Workcell,
    dry_run_clearance, plan_clearance,
};
use serde_json::{Value, json};

use super::report::rounded;
use crate::scene::Scene;
use crate::workcell::{arm_shape_of, carried_of, exemptions_of, obstacles_of};

/// Which motion a clearance was looked at along.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Motion {
    /// The plan, as commanded.
    Commanded,
    /// The dry run: the servo model's motion.
    Simulated,
}

impl Motion {
    fn word(self) -> &'static str {
        match self {
            Motion::Commanded => "commanded",
            Motion::Simulated => "simulated",
        }
    }
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

    /// One contact as JSON: waypoint (name and index), time, link, object, depth.
    fn contact_json(&self, scene: &Scene, contact: &Contact, motion: Motion) -> Value {
        json!({
            "motion": motion.word(),
            "waypoint": scene.waypoints.get(contact.waypoint).map(|w| w.name.as_str()),
            "waypoint_index": contact.waypoint,
            "time_s": rounded(contact.time, 3),
            "link": self.hitter_name(contact.pair.link, contact.carried),
            "carried_object": contact
                .carried
                .map(|object| self.object_name(Other::Obstacle(object))),
            "object": self.object_name(contact.pair.other),
            "depth_mm": rounded(contact.depth * 1e3, 2),
        })
    }

    /// One line of text for a contact.
    fn contact_line(&self, scene: &Scene, contact: &Contact, motion: Motion) -> String {
        format!(
            "contact ({}): {} hits {} at {:.3} s on the move into \"{}\", {:.1} mm deep",
            motion.word(),
            self.hitter_name(contact.pair.link, contact.carried),
            self.object_name(contact.pair.other),
            contact.time,
            scene
                .waypoints
                .get(contact.waypoint)
                .map_or("?", |w| w.name.as_str()),
            contact.depth * 1e3
        )
    }

    /// Adds `collisions` (every move's first contact along each motion) and `min_clearance_mm`
    /// (overall, and per entry of `out["waypoints"]`: the smallest over the motions given) to a
    /// report. Clearances are signed: negative is the depth of the deepest overlap; `null` when
    /// nothing is checked (no obstacles, no pair of links apart).
    pub(crate) fn add_json(&self, scene: &Scene, out: &mut Value, looked: &[(Motion, &Clearance)]) {
        let collisions: Vec<Value> = looked
            .iter()
            .flat_map(|(motion, clearance)| {
                clearance
                    .contacts()
                    .map(|c| self.contact_json(scene, c, *motion))
            })
            .collect();
        out["collisions"] = Value::Array(collisions);
        out["min_clearance_mm"] = millimetres(smallest(looked, None));
        if let Some(Value::Array(waypoints)) = out.get_mut("waypoints") {
            for (index, entry) in waypoints.iter_mut().enumerate() {
                entry["min_clearance_mm"] = millimetres(smallest(looked, Some(index)));
            }
        }
    }

    /// Text lines: the smallest clearance and where, then every contact.
    pub(crate) fn lines(&self, scene: &Scene, looked: &[(Motion, &Clearance)]) -> Vec<String> {
        let mut lines = Vec::new();
        let closest = looked
            .iter()
            .flat_map(|(motion, c)| c.moves.iter().map(move |m| (*motion, m)))
            .filter_map(|(motion, m)| m.closest.map(|pair| (motion, m, pair)))
            .min_by(|a, b| a.1.min_clearance.total_cmp(&b.1.min_clearance));
        match closest {
            Some((motion, m, pair)) => {
                lines.push(format!(
                    "smallest clearance {:.1} mm ({}): {} to {} at {:.3} s on the move into \"{}\"",
                    m.min_clearance * 1e3,
                    motion.word(),
                    self.hitter_name(pair.link, m.closest_carried),
                    self.object_name(pair.other),
                    m.closest_time,
                    scene
                        .waypoints
                        .get(m.waypoint)
                        .map_or("?", |w| w.name.as_str()),
                ));
            }
            None => lines.push("clearance: nothing to check (no obstacles)".into()),
        }
        for (motion, clearance) in looked {
            lines.extend(
                clearance
                    .contacts()
                    .map(|c| self.contact_line(scene, c, *motion)),
            );
        }
        lines
    }
}

/// Whether any motion has a contact.
pub(crate) fn any_contact(looked: &[(Motion, &Clearance)]) -> bool {
    looked.iter().any(|(_, c)| c.contacts().next().is_some())
}

/// The smallest clearance over the motions, of every move or of one move, in m.
fn smallest(looked: &[(Motion, &Clearance)], waypoint: Option<usize>) -> f64 {
    looked
        .iter()
        .map(|(_, clearance)| match waypoint {
            None => clearance.min_clearance(),
            Some(index) => clearance
                .moves
                .get(index)
                .map_or(f64::INFINITY, |m| m.min_clearance),
        })
        .fold(f64::INFINITY, f64::min)
}

fn millimetres(metres: f64) -> Value {
    if metres.is_finite() {
        json!(rounded(metres * 1e3, 2))
    } else {
        Value::Null
    }
}
