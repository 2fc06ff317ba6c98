//! Scene types → JSON, keys in a fixed, readable order (format and version first), each number
//! rounded to the decimals its row in the field table keeps. The mirror of `decode.rs`: whatever
//! is written here reads back to the same scene, at the file's precision.

use serde::ser::{Serialize, SerializeMap, SerializeSeq, Serializer};

use super::document::*;
use super::field::{Access, Field, round_to};
use super::field_table as table;
use super::migrate::{CURRENT_VERSION, FORMAT_NAME};

/// A JSON value whose object keys keep the order they were added in. A number carries the
/// decimals it is written with (`None`: every digit).
pub(crate) enum Out {
    Number(f64, Option<u32>),
    Whole(u64),
    Text(String),
    List(Vec<Out>),
    Object(Vec<(String, Out)>),
}

impl Serialize for Out {
    fn serialize<S: Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        match self {
            Out::Number(value, Some(decimals)) => {
                serializer.serialize_f64(round_to(*value, *decimals))
            }
            Out::Number(value, None) => serializer.serialize_f64(*value),
            Out::Whole(value) => serializer.serialize_u64(*value),
            Out::Text(value) => serializer.serialize_str(value),
            Out::List(items) => {
                let mut seq = serializer.serialize_seq(Some(items.len()))?;
                for entry in items {
                    seq.serialize_element(entry)?;
                }
                seq.end()
            }
            Out::Object(entries) => {
                let mut map = serializer.serialize_map(Some(entries.len()))?;
                for (key, value) in entries {
                    map.serialize_entry(key, value)?;
                }
                map.end()
            }
        }
    }
}

impl Out {
    /// The same value with every number written in full, as a recovery copy needs.
    pub(crate) fn unrounded(self) -> Out {
        match self {
            Out::Number(value, _) => Out::Number(value, None),
            Out::List(items) => Out::List(items.into_iter().map(Out::unrounded).collect()),
            Out::Object(entries) => Out::Object(
                entries
                    .into_iter()
                    .map(|(key, value)| (key, value.unrounded()))
                    .collect(),
            ),
            other => other,
        }
    }
}

/// Builds one object, key by key.
struct Obj(Vec<(String, Out)>);

impl Obj {
    fn new() -> Obj {
        Obj(Vec::new())
    }
    fn put(mut self, key: &str, value: Out) -> Obj {
        self.0.push((key.to_string(), value));
        self
    }
    fn text(self, key: &str, value: &str) -> Obj {
        self.put(key, Out::Text(value.to_string()))
    }
    fn word<W: FileWords>(self, key: &str, value: W) -> Obj {
        self.text(key, value.word())
    }
    /// Every row of `rows` that `doc` has, in table order, each rounded to its decimals.
    fn rows<T>(mut self, rows: &[Field<T>], doc: &T, kind: JointKindDoc) -> Obj {
        for row in rows.iter().filter(|row| row.applies(kind)) {
            let number = |value: f64| Out::Number(value, Some(row.decimals));
            let value = match row.access {
                Access::Number(get, _) => Some(number(get(doc))),
                Access::Whole(get, _) => Some(Out::Whole(u64::from(get(doc)))),
                Access::Maybe(get, _) => get(doc).map(number),
                Access::List { get, .. } => get(doc).map(|values| {
                    Out::List(
                        values
                            .into_iter()
                            .map(|value| {
                                if row.decimals == 0 {
                                    Out::Whole(value.max(0.0) as u64)
                                } else {
                                    number(value)
                                }
                            })
                            .collect(),
                    )
                }),
            };
            if let Some(value) = value {
                self = self.put(row.key(kind), value);
            }
        }
        self
    }
    fn done(self) -> Out {
        Out::Object(self.0)
    }
}

/// An object of `rows` only.
fn object<T>(rows: &[Field<T>], doc: &T) -> Out {
    Obj::new().rows(rows, doc, JointKindDoc::Revolute).done()
}

/// The whole scene as an ordered JSON value.
pub(crate) fn encode_scene(scene: &Scene) -> Out {
    let out = Obj::new()
        .text("format", FORMAT_NAME)
        .put("version", Out::Whole(CURRENT_VERSION))
        .text("description", &scene.description)
        .put("arm", arm(&scene.arm))
        .put(
            "waypoints",
            Out::List(scene.waypoints.iter().map(waypoint).collect()),
        )
        .put("timing", timing(&scene.timing, &scene.arm))
        .put("workspace", workspace(&scene.workspace))
        .put("link", link(&scene.link));
    match inputs(&scene.inputs, &scene.arm) {
        Some(inputs) => out.put("inputs", inputs).done(),
        None => out.done(),
    }
}

fn arm(arm: &ArmDoc) -> Out {
    let mut out = Obj::new().text("type", arm.shape.word());
    out = match &arm.shape {
        ArmShape::Scara(size) => out.put("dimensions", object(table::scara::ROWS, size)),
        ArmShape::Articulated4(size) | ArmShape::Articulated5(size) => {
            out.put("dimensions", object(table::articulated::ROWS, size))
        }
        ArmShape::ChainDh { rows, tool } => out.put(
            "chain",
            Obj::new()
                .word("convention", ChainConvention::StandardDh)
                .put(
                    "rows",
                    Out::List(
                        rows.iter()
                            .map(|row| {
                                Obj::new()
                                    .word("kind", row.kind)
                                    .rows(table::dh_row::ROWS, row, JointKindDoc::Revolute)
                                    .done()
                            })
                            .collect(),
                    ),
                )
                .put("tool", object(table::placement::ROWS, tool))
                .done(),
        ),
        ArmShape::ChainOriginAxis { axes, tool_home } => out.put(
            "chain",
            Obj::new()
                .word("convention", ChainConvention::OriginAxis)
                .put(
                    "axes",
                    Out::List(
                        axes.iter()
                            .map(|axis| {
                                Obj::new()
                                    .word("kind", axis.kind)
                                    .rows(table::axis::ROWS, axis, JointKindDoc::Revolute)
                                    .done()
                            })
                            .collect(),
                    ),
                )
                .put("tool_home", object(table::placement::ROWS, tool_home))
                .done(),
        ),
    };
    let kinds = arm.shape.joint_kinds();
    let joints = arm
        .joints
        .iter()
        .enumerate()
        .map(|(index, spec)| {
            let kind = kinds.get(index).copied().unwrap_or(JointKindDoc::Revolute);
            joint(spec, kind)
        })
        .collect();
    out = out
        .put("joints", Out::List(joints))
        .put("tool", object(table::tool::ROWS, &arm.tool))
        .rows(table::arm::ROWS, arm, JointKindDoc::Revolute);
    if let Some(gripper) = &arm.gripper {
        out = out.put("gripper", object(table::gripper::ROWS, gripper));
    }
    out.done()
}

fn joint(joint: &JointDoc, kind: JointKindDoc) -> Out {
    let points = joint
        .calibration
        .points
        .iter()
        .map(|point| {
            Obj::new()
                .rows(table::calibration_point::ROWS, point, kind)
                .done()
        })
        .collect();
    Obj::new()
        .text("name", &joint.name)
        .rows(table::joint::ROWS, joint, kind)
        .put(
            "servo",
            Obj::new()
                .rows(table::servo::ROWS, &joint.servo, kind)
                .put(
                    "proportional_band",
                    object(table::band::ROWS, &joint.servo.proportional_band),
                )
                .done(),
        )
        .put(
            "calibration",
            Obj::new()
                .put("points", Out::List(points))
                .rows(table::calibration::ROWS, &joint.calibration, kind)
                .done(),
        )
        .put("link", object(table::link_mass::ROWS, &joint.link))
        .done()
}

fn waypoint(waypoint: &Waypoint) -> Out {
    Obj::new()
        .text("name", &waypoint.name)
        .rows(table::waypoint::ROWS, waypoint, JointKindDoc::Revolute)
        .word("move", waypoint.move_kind)
        .word("profile", waypoint.profile)
        .word("arrival", waypoint.arrival)
        .word("gripper", waypoint.gripper)
        .done()
}

fn timing(timing: &Timing, arm: &ArmDoc) -> Out {
    let out = Obj::new()
        .rows(table::timing::ROWS, timing, JointKindDoc::Revolute)
        .word("shaping", timing.shaping);
    if timing.joint_limits.is_empty() {
        // Left out when unused, so that scenes without them read as before.
        return out.done();
    }
    let kinds = arm.shape.joint_kinds();
    let limits = timing
        .joint_limits
        .iter()
        .map(|limit| {
            let kind = arm
                .joints
                .iter()
                .position(|joint| joint.name == limit.joint)
                .and_then(|index| kinds.get(index).copied())
                .unwrap_or(JointKindDoc::Revolute);
            Obj::new()
                .text("joint", &limit.joint)
                .rows(table::joint_limit::ROWS, limit, kind)
                .done()
        })
        .collect();
    out.put("joint_limits", Out::List(limits)).done()
}

fn workspace(workspace: &Workspace) -> Out {
    let boxes = workspace
        .boxes
        .iter()
        .map(|object| {
            Obj::new()
                .text("name", &object.name)
                .rows(table::boxes::ROWS, object, JointKindDoc::Revolute)
                .done()
        })
        .collect();
    let trays = workspace
        .trays
        .iter()
        .map(|tray| {
            Obj::new()
                .text("name", &tray.name)
                .rows(table::tray::ROWS, tray, JointKindDoc::Revolute)
                .done()
        })
        .collect();
    Obj::new()
        .rows(table::workspace::ROWS, workspace, JointKindDoc::Revolute)
        .put("boxes", Out::List(boxes))
        .put("trays", Out::List(trays))
        .done()
}

/// `inputs`, or `None` when the scene has none, so that scenes without them read as before.
fn inputs(inputs: &[InputDoc], arm: &ArmDoc) -> Option<Out> {
    if inputs.is_empty() {
        return None;
    }
    let kinds = arm.shape.joint_kinds();
    let entries = inputs
        .iter()
        .map(|input| {
            let kind = arm
                .joints
                .iter()
                .position(|joint| joint.name == input.joint)
                .and_then(|index| kinds.get(index).copied())
                .unwrap_or(JointKindDoc::Revolute);
            let points = input
                .points
                .iter()
                .map(|point| {
                    Obj::new()
                        .rows(table::input_point::ROWS, point, kind)
                        .done()
                })
                .collect();
            Obj::new()
                .text("joint", &input.joint)
                .rows(table::input::ROWS, input, kind)
                .put("points", Out::List(points))
                .done()
        })
        .collect();
    Some(Out::List(entries))
}

fn link(link: &LinkSettings) -> Out {
    let device = match &link.device {
        Device::Simulated => "simulated",
        Device::Port(path) => path.as_str(),
    };
    Obj::new()
        .text("device", device)
        .rows(table::link::ROWS, link, JointKindDoc::Revolute)
        .done()
}
