//! Clearance for `plan` and `simulate`: the arm against the workspace and itself along the
//! commanded plan (and, for `simulate`, along the dry run), as JSON keys and text lines. A
//! contact makes either command exit 1. The geometry and the clearance itself are the editor's
//! too: [`SceneCell`] in `workcell.rs`.

use armwright_kinematics::Other;
use armwright_trajectory::{Clearance, Contact};
use serde_json::{Value, json};

use super::report::rounded;
use crate::scene::Scene;
use crate::workcell::SceneCell;

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

/// One contact as JSON: waypoint (name and index), time, link, object, depth.
fn contact_json(cell: &SceneCell, scene: &Scene, contact: &Contact, motion: Motion) -> Value {
    json!({
        "motion": motion.word(),
        "waypoint": scene.waypoints.get(contact.waypoint).map(|w| w.name.as_str()),
        "waypoint_index": contact.waypoint,
        "time_s": rounded(contact.time, 3),
        "link": cell.hitter_name(contact.pair.link, contact.carried),
        "carried_object": contact
            .carried
            .map(|object| cell.object_name(Other::Obstacle(object))),
        "object": cell.object_name(contact.pair.other),
        "depth_mm": rounded(contact.depth * 1e3, 2),
    })
}

/// One line of text for a contact.
fn contact_line(cell: &SceneCell, scene: &Scene, contact: &Contact, motion: Motion) -> String {
    format!(
        "contact ({}): {} hits {} at {:.3} s on the move into \"{}\", {:.1} mm deep",
        motion.word(),
        cell.hitter_name(contact.pair.link, contact.carried),
        cell.object_name(contact.pair.other),
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
pub(crate) fn add_clearance_json(
    cell: &SceneCell,
    scene: &Scene,
    out: &mut Value,
    looked: &[(Motion, &Clearance)],
) {
    let collisions: Vec<Value> = looked
        .iter()
        .flat_map(|(motion, clearance)| {
            clearance
                .contacts()
                .map(|c| contact_json(cell, scene, c, *motion))
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
pub(crate) fn clearance_lines(
    cell: &SceneCell,
    scene: &Scene,
    looked: &[(Motion, &Clearance)],
) -> Vec<String> {
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
                cell.hitter_name(pair.link, m.closest_carried),
                cell.object_name(pair.other),
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
                .map(|c| contact_line(cell, scene, c, *motion)),
        );
    }
    lines
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
