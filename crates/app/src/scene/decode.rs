//! JSON → scene types, collecting every problem with its JSON path instead of stopping at the
//! first. A field that cannot be read gets a stand-in value so that reading goes on; the caller
//! throws the result away when any problem was found.
//!
//! Each object is read through [`Fields`], which remembers the keys asked for; keys left over
//! are reported as unknown, with the nearest known key suggested.

use serde_json::{Map, Value};

use super::document::*;
use super::field::{Access, Field, Presence};
use super::field_table as table;
use super::problem::{Problem, child, item, nearest};

/// Reads the (already migrated) document. Returns every problem found.
pub(crate) fn decode_scene(root: &Value) -> Result<Scene, Vec<Problem>> {
    let mut problems = Vec::new();
    let scene = read_scene(root, &mut problems);
    match scene {
        Some(scene) if problems.is_empty() => Ok(scene),
        _ => {
            if problems.is_empty() {
                problems.push(Problem::new("", "the scene must be a JSON object"));
            }
            Err(problems)
        }
    }
}

/// The keys of one JSON object being read, with the keys asked for so far.
struct Fields<'a> {
    map: &'a Map<String, Value>,
    path: String,
    known: Vec<&'static str>,
}

impl<'a> Fields<'a> {
    fn of(value: &'a Value, path: &str, problems: &mut Vec<Problem>) -> Option<Fields<'a>> {
        match value {
            Value::Object(map) => Some(Fields {
                map,
                path: path.to_string(),
                known: Vec::new(),
            }),
            other => {
                problems.push(Problem::new(
                    path,
                    format!("expected an object {{ … }}, found {}", kind_of(other)),
                ));
                None
            }
        }
    }

    fn at(&self, key: &str) -> String {
        child(&self.path, key)
    }

    /// Marks `key` as known without reading it.
    fn allow(&mut self, key: &'static str) {
        self.known.push(key);
    }

    fn optional(&mut self, key: &'static str) -> Option<&'a Value> {
        self.known.push(key);
        self.map.get(key).filter(|value| !value.is_null())
    }

    fn required(&mut self, key: &'static str, problems: &mut Vec<Problem>) -> Option<&'a Value> {
        let value = self.optional(key);
        if value.is_none() {
            problems.push(Problem::new(
                self.at(key),
                format!("missing field \"{key}\""),
            ));
        }
        value
    }

    fn text(&mut self, key: &'static str, problems: &mut Vec<Problem>) -> String {
        let path = self.at(key);
        self.required(key, problems)
            .map_or_else(String::new, |value| text(value, &path, problems))
    }

    fn word<T: Copy>(
        &mut self,
        key: &'static str,
        choices: &[(T, &str)],
        default: Option<T>,
        problems: &mut Vec<Problem>,
    ) -> Option<T> {
        let path = self.at(key);
        let value = match default {
            Some(_) => self.optional(key),
            None => self.required(key, problems),
        };
        match value {
            None => default,
            Some(value) => word(value, choices, &path, problems),
        }
    }

    fn list(&mut self, key: &'static str, problems: &mut Vec<Problem>) -> &'a [Value] {
        let path = self.at(key);
        match self.required(key, problems) {
            None => &[],
            Some(value) => list(value, &path, problems),
        }
    }

    fn optional_list(&mut self, key: &'static str, problems: &mut Vec<Problem>) -> &'a [Value] {
        let path = self.at(key);
        match self.optional(key) {
            None => &[],
            Some(value) => list(value, &path, problems),
        }
    }

    /// Reads every row of `rows` into a blank `T` (its `Default`, which also holds the value of
    /// a field left out); a joint's kind picks the keys that follow it.
    fn rows<T: Default>(
        &mut self,
        rows: &[Field<T>],
        kind: JointKindDoc,
        problems: &mut Vec<Problem>,
    ) -> T {
        let mut out = T::default();
        for row in rows {
            self.row(row, kind, &mut out, problems);
        }
        out
    }

    /// Reads one row into `out`.
    fn row<T>(
        &mut self,
        row: &Field<T>,
        kind: JointKindDoc,
        out: &mut T,
        problems: &mut Vec<Problem>,
    ) {
        if !row.applies(kind) {
            return;
        }
        let key = row.key(kind);
        let path = self.at(key);
        let value = match row.presence {
            Presence::Required | Presence::PrismaticOnly => self.required(key, problems),
            Presence::Defaulted | Presence::Optional => self.optional(key),
        };
        let Some(value) = value else {
            return;
        };
        match row.access {
            Access::Number(_, set) => set(out, number(value, &path, problems)),
            Access::Whole(_, set) => set(out, whole(value, &path, problems)),
            Access::Maybe(_, set) => set(out, Some(number(value, &path, problems))),
            Access::List { len, set, .. } => {
                let read = if row.decimals == 0 { whole } else { as_number };
                let items = list(value, &path, problems);
                if !value.is_array() {
                    return;
                }
                if len != 0 && items.len() != len {
                    let what = if row.decimals == 0 {
                        "whole numbers"
                    } else {
                        "numbers"
                    };
                    problems.push(Problem::new(
                        &path,
                        format!("expected {len} {what}, found {}", items.len()),
                    ));
                    return;
                }
                let numbers: Vec<f64> = items
                    .iter()
                    .enumerate()
                    .map(|(index, entry)| read(entry, &item(&path, index), problems))
                    .collect();
                set(out, &numbers);
            }
        }
    }

    /// Reports every key not asked for, with the nearest known key.
    fn finish(self, problems: &mut Vec<Problem>) {
        for key in self.map.keys() {
            if self.known.contains(&key.as_str()) {
                continue;
            }
            let message = match nearest(key, &self.known) {
                Some(near) => format!("unknown field \"{key}\"; did you mean \"{near}\"?"),
                None => format!(
                    "unknown field \"{key}\"; known fields here: {}",
                    self.known.join(", ")
                ),
            };
            problems.push(Problem::new(child(&self.path, key), message));
        }
    }
}

fn kind_of(value: &Value) -> &'static str {
    match value {
        Value::Null => "null",
        Value::Bool(_) => "true/false",
        Value::Number(_) => "a number",
        Value::String(_) => "text",
        Value::Array(_) => "a list",
        Value::Object(_) => "an object",
    }
}

fn number(value: &Value, path: &str, problems: &mut Vec<Problem>) -> f64 {
    match value.as_f64() {
        Some(number) if number.is_finite() => number,
        _ => {
            problems.push(Problem::new(
                path,
                format!("expected a number, found {}", kind_of(value)),
            ));
            0.0
        }
    }
}

/// [`number`] with the signature of [`whole`], for lists read either way.
fn as_number(value: &Value, path: &str, problems: &mut Vec<Problem>) -> f64 {
    number(value, path, problems)
}

fn whole<W: From<u32>>(value: &Value, path: &str, problems: &mut Vec<Problem>) -> W {
    let as_whole = value.as_u64().or_else(|| {
        value
            .as_f64()
            .filter(|v| v.fract() == 0.0 && *v >= 0.0 && *v <= f64::from(u32::MAX))
            .map(|v| v as u64)
    });
    match as_whole.and_then(|v| u32::try_from(v).ok()) {
        Some(number) => W::from(number),
        None => {
            problems.push(Problem::new(
                path,
                format!(
                    "expected a whole number from 0 to {}, found {}",
                    u32::MAX,
                    shown(value)
                ),
            ));
            W::from(0)
        }
    }
}

fn text(value: &Value, path: &str, problems: &mut Vec<Problem>) -> String {
    match value.as_str() {
        Some(text) => text.to_string(),
        None => {
            problems.push(Problem::new(
                path,
                format!("expected text in quotes, found {}", kind_of(value)),
            ));
            String::new()
        }
    }
}

fn list<'a>(value: &'a Value, path: &str, problems: &mut Vec<Problem>) -> &'a [Value] {
    match value.as_array() {
        Some(items) => items,
        None => {
            problems.push(Problem::new(
                path,
                format!("expected a list [ … ], found {}", kind_of(value)),
            ));
            &[]
        }
    }
}

fn word<T: Copy>(
    value: &Value,
    choices: &[(T, &str)],
    path: &str,
    problems: &mut Vec<Problem>,
) -> Option<T> {
    let words: Vec<&str> = choices.iter().map(|(_, name)| *name).collect();
    let Some(given) = value.as_str() else {
        problems.push(Problem::new(
            path,
            format!(
                "expected one of {}, found {}",
                words.join(", "),
                kind_of(value)
            ),
        ));
        return None;
    };
    if let Some((found, _)) = choices.iter().find(|(_, name)| *name == given) {
        return Some(*found);
    }
    let message = match nearest(given, &words) {
        Some(near) => format!("unknown value \"{given}\"; did you mean \"{near}\"?"),
        None => format!(
            "unknown value \"{given}\"; expected one of {}",
            words.join(", ")
        ),
    };
    problems.push(Problem::new(path, message));
    None
}

fn shown(value: &Value) -> String {
    match value {
        Value::Number(number) => number.to_string(),
        other => kind_of(other).to_string(),
    }
}

fn read_scene(root: &Value, problems: &mut Vec<Problem>) -> Option<Scene> {
    let mut fields = Fields::of(root, "", problems)?;
    // Checked by the migration step before decoding.
    fields.allow("format");
    fields.allow("version");
    // Names the JSON Schema for a text editor; not part of the scene.
    if let Some(value) = fields.optional("$schema") {
        text(value, "$schema", problems);
    }
    let description = match fields.optional("description") {
        Some(value) => text(value, "description", problems),
        None => String::new(),
    };
    let arm = fields
        .required("arm", problems)
        .and_then(|value| read_arm(value, "arm", problems));
    let waypoints = fields
        .optional_list("waypoints", problems)
        .iter()
        .enumerate()
        .filter_map(|(index, value)| read_waypoint(value, &item("waypoints", index), problems))
        .collect();
    let timing = match fields.optional("timing") {
        Some(value) => read_timing(value, "timing", arm.as_ref(), problems),
        None => Some(Timing::default()),
    };
    let workspace = match fields.optional("workspace") {
        Some(value) => read_workspace(value, "workspace", problems),
        None => Some(Workspace::default()),
    };
    let link = match fields.optional("link") {
        Some(value) => read_link(value, "link", problems),
        None => Some(LinkSettings::default()),
    };
    let inputs = fields
        .optional_list("inputs", problems)
        .iter()
        .enumerate()
        .filter_map(|(index, value)| {
            read_input(value, &item("inputs", index), arm.as_ref(), problems)
        })
        .collect();
    fields.finish(problems);
    Some(Scene {
        description,
        arm: arm?,
        waypoints,
        timing: timing?,
        workspace: workspace?,
        link: link?,
        inputs,
    })
}

/// One entry of `inputs`. Its points' position key carries the unit of the joint it names
/// (deg or mm); for a name that is not exactly one joint of the arm (validation reports it),
/// degrees are read.
fn read_input(
    value: &Value,
    path: &str,
    arm: Option<&ArmDoc>,
    problems: &mut Vec<Problem>,
) -> Option<InputDoc> {
    let mut fields = Fields::of(value, path, problems)?;
    let joint = fields.text("joint", problems);
    let kind = arm
        .and_then(|arm| {
            let index = arm.joints.iter().position(|j| j.name == joint)?;
            arm.shape.joint_kinds().get(index).copied()
        })
        .unwrap_or(JointKindDoc::Revolute);
    let mut input: InputDoc = fields.rows(table::input::ROWS, kind, problems);
    let points_path = fields.at("points");
    input.points = fields
        .list("points", problems)
        .iter()
        .enumerate()
        .filter_map(|(index, entry)| {
            let point_path = item(&points_path, index);
            let mut point_fields = Fields::of(entry, &point_path, problems)?;
            let point = point_fields.rows(table::input_point::ROWS, kind, problems);
            point_fields.finish(problems);
            Some(point)
        })
        .collect();
    fields.finish(problems);
    Some(InputDoc { joint, ..input })
}

/// Reads an object of `rows` only, at `path`.
fn read_object<T: Default>(
    value: &Value,
    path: &str,
    rows: &[Field<T>],
    problems: &mut Vec<Problem>,
) -> Option<T> {
    let mut fields = Fields::of(value, path, problems)?;
    let out = fields.rows(rows, JointKindDoc::Revolute, problems);
    fields.finish(problems);
    Some(out)
}

fn read_arm(value: &Value, path: &str, problems: &mut Vec<Problem>) -> Option<ArmDoc> {
    let mut fields = Fields::of(value, path, problems)?;
    use ArmTypeWord as Type;
    let arm_type = fields.word("type", Type::WORDS, None, problems);
    let dimensions = child(path, "dimensions");
    let shape = match arm_type {
        Some(Type::Scara) => fields
            .required("dimensions", problems)
            .and_then(|value| read_object(value, &dimensions, table::scara::ROWS, problems))
            .map(ArmShape::Scara),
        Some(Type::Articulated4) => fields
            .required("dimensions", problems)
            .and_then(|value| read_object(value, &dimensions, table::articulated::ROWS, problems))
            .map(ArmShape::Articulated4),
        Some(Type::Articulated5) => fields
            .required("dimensions", problems)
            .and_then(|value| read_object(value, &dimensions, table::articulated::ROWS, problems))
            .map(ArmShape::Articulated5),
        Some(Type::Chain) => fields
            .required("chain", problems)
            .and_then(|value| read_chain(value, &child(path, "chain"), problems)),
        None => {
            // The type is unreadable; accept either description so that only `type` is reported.
            fields.allow("dimensions");
            fields.allow("chain");
            None
        }
    };
    let kinds = shape
        .as_ref()
        .map(ArmShape::joint_kinds)
        .unwrap_or_default();
    let joints_path = child(path, "joints");
    let joints = fields
        .list("joints", problems)
        .iter()
        .enumerate()
        .filter_map(|(index, value)| {
            let kind = kinds.get(index).copied().unwrap_or(JointKindDoc::Revolute);
            read_joint(value, &item(&joints_path, index), kind, problems)
        })
        .collect();
    let tool = fields
        .required("tool", problems)
        .and_then(|value| read_object(value, &child(path, "tool"), table::tool::ROWS, problems));
    let mut arm = fields.rows(table::arm::ROWS, JointKindDoc::Revolute, problems);
    let gripper = match fields.optional("gripper") {
        Some(value) => Some(read_object(
            value,
            &child(path, "gripper"),
            table::gripper::ROWS,
            problems,
        )?),
        None => None,
    };
    fields.finish(problems);
    arm.shape = shape?;
    arm.joints = joints;
    arm.tool = tool?;
    arm.gripper = gripper;
    Some(arm)
}

fn read_chain(value: &Value, path: &str, problems: &mut Vec<Problem>) -> Option<ArmShape> {
    let mut fields = Fields::of(value, path, problems)?;
    use ChainConvention as Convention;
    let convention = fields.word("convention", Convention::WORDS, None, problems);
    let shape = match convention {
        Some(Convention::StandardDh) => {
            let rows_path = child(path, "rows");
            let rows: Vec<DhRowDoc> = fields
                .list("rows", problems)
                .iter()
                .enumerate()
                .filter_map(|(index, value)| read_dh_row(value, &item(&rows_path, index), problems))
                .collect();
            let tool = fields.required("tool", problems).and_then(|value| {
                read_object(
                    value,
                    &child(path, "tool"),
                    table::placement::ROWS,
                    problems,
                )
            });
            tool.map(|tool| ArmShape::ChainDh { rows, tool })
        }
        Some(Convention::OriginAxis) => {
            let axes_path = child(path, "axes");
            let axes: Vec<AxisDoc> = fields
                .list("axes", problems)
                .iter()
                .enumerate()
                .filter_map(|(index, value)| read_axis(value, &item(&axes_path, index), problems))
                .collect();
            let tool_home = fields.required("tool_home", problems).and_then(|value| {
                read_object(
                    value,
                    &child(path, "tool_home"),
                    table::placement::ROWS,
                    problems,
                )
            });
            tool_home.map(|tool_home| ArmShape::ChainOriginAxis { axes, tool_home })
        }
        None => {
            for key in ["rows", "tool", "axes", "tool_home"] {
                fields.allow(key);
            }
            None
        }
    };
    fields.finish(problems);
    shape
}

fn read_dh_row(value: &Value, path: &str, problems: &mut Vec<Problem>) -> Option<DhRowDoc> {
    let mut fields = Fields::of(value, path, problems)?;
    let kind = fields.word("kind", JointKindDoc::WORDS, None, problems);
    let mut row: DhRowDoc = fields.rows(table::dh_row::ROWS, JointKindDoc::Revolute, problems);
    fields.finish(problems);
    row.kind = kind?;
    Some(row)
}

fn read_axis(value: &Value, path: &str, problems: &mut Vec<Problem>) -> Option<AxisDoc> {
    let mut fields = Fields::of(value, path, problems)?;
    let kind = fields.word("kind", JointKindDoc::WORDS, None, problems);
    let mut axis: AxisDoc = fields.rows(table::axis::ROWS, JointKindDoc::Revolute, problems);
    fields.finish(problems);
    axis.kind = kind?;
    Some(axis)
}

fn read_joint(
    value: &Value,
    path: &str,
    kind: JointKindDoc,
    problems: &mut Vec<Problem>,
) -> Option<JointDoc> {
    let mut fields = Fields::of(value, path, problems)?;
    let name = fields.text("name", problems);
    let mut joint: JointDoc = fields.rows(table::joint::ROWS, kind, problems);
    let servo = fields
        .required("servo", problems)
        .and_then(|value| read_servo(value, &child(path, "servo"), kind, problems));
    let calibration = fields
        .required("calibration", problems)
        .and_then(|value| read_calibration(value, &child(path, "calibration"), kind, problems));
    let link = fields.required("link", problems).and_then(|value| {
        read_object(
            value,
            &child(path, "link"),
            table::link_mass::ROWS,
            problems,
        )
    });
    fields.finish(problems);
    joint.name = name;
    joint.servo = servo?;
    joint.calibration = calibration?;
    joint.link = link?;
    Some(joint)
}

fn read_servo(
    value: &Value,
    path: &str,
    kind: JointKindDoc,
    problems: &mut Vec<Problem>,
) -> Option<ServoDoc> {
    let mut fields = Fields::of(value, path, problems)?;
    let mut servo: ServoDoc = fields.rows(table::servo::ROWS, kind, problems);
    let band = fields
        .required("proportional_band", problems)
        .and_then(|value| read_band(value, &child(path, "proportional_band"), problems));
    fields.finish(problems);
    servo.proportional_band = band?;
    Some(servo)
}

fn read_band(value: &Value, path: &str, problems: &mut Vec<Problem>) -> Option<BandDoc> {
    let mut fields = Fields::of(value, path, problems)?;
    let given = table::band::ROWS
        .iter()
        .filter(|row| fields.map.contains_key(row.key(JointKindDoc::Revolute)))
        .count();
    let band: BandDoc = fields.rows(table::band::ROWS, JointKindDoc::Revolute, problems);
    fields.finish(problems);
    if given == 1 {
        Some(band)
    } else {
        problems.push(Problem::new(
            path,
            "give exactly one of { \"us\": … } or { \"deg\": … }",
        ));
        None
    }
}

fn read_calibration(
    value: &Value,
    path: &str,
    kind: JointKindDoc,
    problems: &mut Vec<Problem>,
) -> Option<CalibrationDoc> {
    let mut fields = Fields::of(value, path, problems)?;
    let points_path = child(path, "points");
    let entries = fields.list("points", problems);
    let mut complete = entries.len() == 2;
    if fields.map.get("points").is_some_and(Value::is_array) && entries.len() != 2 {
        problems.push(Problem::new(
            &points_path,
            format!("expected 2 calibration points, found {}", entries.len()),
        ));
    }
    let mut calibration: CalibrationDoc = fields.rows(table::calibration::ROWS, kind, problems);
    for (index, entry) in entries.iter().take(2).enumerate() {
        let point_path = item(&points_path, index);
        let point = Fields::of(entry, &point_path, problems).map(|mut point_fields| {
            let point = point_fields.rows(table::calibration_point::ROWS, kind, problems);
            point_fields.finish(problems);
            point
        });
        match point {
            Some(point) => calibration.points[index] = point,
            None => complete = false,
        }
    }
    fields.finish(problems);
    complete.then_some(calibration)
}

fn read_waypoint(value: &Value, path: &str, problems: &mut Vec<Problem>) -> Option<Waypoint> {
    let mut fields = Fields::of(value, path, problems)?;
    let name = fields.text("name", problems);
    let mut waypoint: Waypoint =
        fields.rows(table::waypoint::ROWS, JointKindDoc::Revolute, problems);
    let defaults = Waypoint::default();
    let move_kind = fields.word("move", MoveKind::WORDS, Some(defaults.move_kind), problems);
    let profile = fields.word(
        "profile",
        ProfileKind::WORDS,
        Some(defaults.profile),
        problems,
    );
    let arrival = fields.word("arrival", Arrival::WORDS, Some(defaults.arrival), problems);
    let gripper = fields.word(
        "gripper",
        GripperState::WORDS,
        Some(defaults.gripper),
        problems,
    );
    fields.finish(problems);
    waypoint.name = name;
    waypoint.move_kind = move_kind?;
    waypoint.profile = profile?;
    waypoint.arrival = arrival?;
    waypoint.gripper = gripper?;
    Some(waypoint)
}

fn read_timing(
    value: &Value,
    path: &str,
    arm: Option<&ArmDoc>,
    problems: &mut Vec<Problem>,
) -> Option<Timing> {
    let mut fields = Fields::of(value, path, problems)?;
    let limits_path = fields.at("joint_limits");
    let joint_limits = fields
        .optional_list("joint_limits", problems)
        .iter()
        .enumerate()
        .filter_map(|(index, value)| {
            read_joint_limit(value, &item(&limits_path, index), arm, problems)
        })
        .collect();
    let mut timing: Timing = fields.rows(table::timing::ROWS, JointKindDoc::Revolute, problems);
    let defaults = Timing::default();
    timing.shaping = fields
        .word("shaping", Shaping::WORDS, Some(defaults.shaping), problems)
        .unwrap_or(defaults.shaping);
    timing.joint_limits = joint_limits;
    fields.finish(problems);
    Some(timing)
}

/// One entry of `timing.joint_limits`. Its keys carry the unit of the joint it names (deg or
/// mm); for a name that is not exactly one joint of the arm (validation reports it), either
/// unit is read.
fn read_joint_limit(
    value: &Value,
    path: &str,
    arm: Option<&ArmDoc>,
    problems: &mut Vec<Problem>,
) -> Option<JointLimitDoc> {
    let mut fields = Fields::of(value, path, problems)?;
    let joint = fields.text("joint", problems);
    let kind = arm.and_then(|arm| {
        let kinds = arm.shape.joint_kinds();
        let mut named = arm
            .joints
            .iter()
            .enumerate()
            .filter(|(_, j)| j.name == joint);
        match (named.next(), named.next()) {
            (Some((index, _)), None) => kinds.get(index).copied(),
            _ => None,
        }
    });
    let limit = match kind {
        Some(kind) => fields.rows(table::joint_limit::ROWS, kind, problems),
        None => {
            // Read either unit; a value under the revolute key wins.
            let prismatic: JointLimitDoc =
                fields.rows(table::joint_limit::ROWS, JointKindDoc::Prismatic, problems);
            let revolute: JointLimitDoc =
                fields.rows(table::joint_limit::ROWS, JointKindDoc::Revolute, problems);
            JointLimitDoc {
                joint: String::new(),
                max_velocity_deg_or_mm_per_s: revolute
                    .max_velocity_deg_or_mm_per_s
                    .or(prismatic.max_velocity_deg_or_mm_per_s),
                max_acceleration_deg_or_mm_per_s2: revolute
                    .max_acceleration_deg_or_mm_per_s2
                    .or(prismatic.max_acceleration_deg_or_mm_per_s2),
                max_jerk_deg_or_mm_per_s3: revolute
                    .max_jerk_deg_or_mm_per_s3
                    .or(prismatic.max_jerk_deg_or_mm_per_s3),
            }
        }
    };
    fields.finish(problems);
    Some(JointLimitDoc { joint, ..limit })
}

fn read_workspace(value: &Value, path: &str, problems: &mut Vec<Problem>) -> Option<Workspace> {
    let mut fields = Fields::of(value, path, problems)?;
    let mut workspace: Workspace =
        fields.rows(table::workspace::ROWS, JointKindDoc::Revolute, problems);
    let boxes_path = fields.at("boxes");
    workspace.boxes = fields
        .optional_list("boxes", problems)
        .iter()
        .enumerate()
        .filter_map(|(index, value)| {
            let path = item(&boxes_path, index);
            let mut fields = Fields::of(value, &path, problems)?;
            let name = fields.text("name", problems);
            let object: BoxDoc = fields.rows(table::boxes::ROWS, JointKindDoc::Revolute, problems);
            fields.finish(problems);
            Some(BoxDoc { name, ..object })
        })
        .collect();
    let trays_path = fields.at("trays");
    workspace.trays = fields
        .optional_list("trays", problems)
        .iter()
        .enumerate()
        .filter_map(|(index, value)| {
            let path = item(&trays_path, index);
            let mut fields = Fields::of(value, &path, problems)?;
            let name = fields.text("name", problems);
            let tray: TrayDoc = fields.rows(table::tray::ROWS, JointKindDoc::Revolute, problems);
            fields.finish(problems);
            Some(TrayDoc { name, ..tray })
        })
        .collect();
    fields.finish(problems);
    Some(workspace)
}

fn read_link(value: &Value, path: &str, problems: &mut Vec<Problem>) -> Option<LinkSettings> {
    let mut fields = Fields::of(value, path, problems)?;
    let mut link: LinkSettings = fields.rows(table::link::ROWS, JointKindDoc::Revolute, problems);
    if let Some(value) = fields.optional("device") {
        let name = text(value, &child(path, "device"), problems);
        link.device = if name == "simulated" {
            Device::Simulated
        } else {
            Device::Port(name)
        };
    }
    fields.finish(problems);
    Some(link)
}
