//! JSON → scene types, collecting every problem with its JSON path instead of stopping at the
//! first. A field that cannot be read gets a stand-in value so that reading goes on; the caller
//! throws the result away when any problem was found.
//!
//! Each object is read through [`Fields`], which remembers the keys asked for; keys left over
//! are reported as unknown, with the nearest known key suggested.

use serde_json::{Map, Value};

use super::document::*;
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

    fn number(&mut self, key: &'static str, problems: &mut Vec<Problem>) -> f64 {
        let path = self.at(key);
        self.required(key, problems)
            .map_or(0.0, |value| number(value, &path, problems))
    }

    fn number_or(&mut self, key: &'static str, default: f64, problems: &mut Vec<Problem>) -> f64 {
        let path = self.at(key);
        self.optional(key)
            .map_or(default, |value| number(value, &path, problems))
    }

    fn optional_number(&mut self, key: &'static str, problems: &mut Vec<Problem>) -> Option<f64> {
        let path = self.at(key);
        self.optional(key)
            .map(|value| number(value, &path, problems))
    }

    fn whole(&mut self, key: &'static str, problems: &mut Vec<Problem>) -> u32 {
        let path = self.at(key);
        self.required(key, problems)
            .map_or(0, |value| whole(value, &path, problems))
    }

    fn text(&mut self, key: &'static str, problems: &mut Vec<Problem>) -> String {
        let path = self.at(key);
        self.required(key, problems)
            .map_or_else(String::new, |value| text(value, &path, problems))
    }

    fn triple(&mut self, key: &'static str, problems: &mut Vec<Problem>) -> [f64; 3] {
        let path = self.at(key);
        self.required(key, problems)
            .map_or([0.0; 3], |value| numbers::<3>(value, &path, problems))
    }

    fn word<T: Copy>(
        &mut self,
        key: &'static str,
        choices: &[(&str, T)],
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

fn whole(value: &Value, path: &str, problems: &mut Vec<Problem>) -> u32 {
    let as_whole = value.as_u64().or_else(|| {
        value
            .as_f64()
            .filter(|v| v.fract() == 0.0 && *v >= 0.0 && *v <= f64::from(u32::MAX))
            .map(|v| v as u64)
    });
    match as_whole.and_then(|v| u32::try_from(v).ok()) {
        Some(number) => number,
        None => {
            problems.push(Problem::new(
                path,
                format!(
                    "expected a whole number from 0 to {}, found {}",
                    u32::MAX,
                    shown(value)
                ),
            ));
            0
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

fn numbers<const N: usize>(value: &Value, path: &str, problems: &mut Vec<Problem>) -> [f64; N] {
    let mut out = [0.0; N];
    let items = list(value, path, problems);
    if !items.is_empty() && items.len() != N {
        problems.push(Problem::new(
            path,
            format!("expected {N} numbers, found {}", items.len()),
        ));
        return out;
    }
    if items.is_empty() && value.is_array() {
        problems.push(Problem::new(path, format!("expected {N} numbers, found 0")));
    }
    for (index, entry) in items.iter().enumerate() {
        out[index] = number(entry, &item(path, index), problems);
    }
    out
}

fn word<T: Copy>(
    value: &Value,
    choices: &[(&str, T)],
    path: &str,
    problems: &mut Vec<Problem>,
) -> Option<T> {
    let words: Vec<&str> = choices.iter().map(|(name, _)| *name).collect();
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
    if let Some((_, found)) = choices.iter().find(|(name, _)| *name == given) {
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
    fields.finish(problems);
    Some(Scene {
        description,
        arm: arm?,
        waypoints,
        timing: timing?,
        workspace: workspace?,
        link: link?,
    })
}

const KIND_WORDS: [(&str, JointKindDoc); 2] = [
    ("revolute", JointKindDoc::Revolute),
    ("prismatic", JointKindDoc::Prismatic),
];

fn read_arm(value: &Value, path: &str, problems: &mut Vec<Problem>) -> Option<ArmDoc> {
    let mut fields = Fields::of(value, path, problems)?;
    #[derive(Clone, Copy)]
    enum Type {
        Scara,
        Articulated4,
        Articulated5,
        Chain,
    }
    let arm_type = fields.word(
        "type",
        &[
            ("scara", Type::Scara),
            ("articulated4", Type::Articulated4),
            ("articulated5", Type::Articulated5),
            ("chain", Type::Chain),
        ],
        None,
        problems,
    );
    let shape = match arm_type {
        Some(Type::Scara) => fields
            .required("dimensions", problems)
            .and_then(|value| read_scara(value, &child(path, "dimensions"), problems))
            .map(ArmShape::Scara),
        Some(Type::Articulated4) => fields
            .required("dimensions", problems)
            .and_then(|value| read_articulated(value, &child(path, "dimensions"), problems))
            .map(ArmShape::Articulated4),
        Some(Type::Articulated5) => fields
            .required("dimensions", problems)
            .and_then(|value| read_articulated(value, &child(path, "dimensions"), problems))
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
        .and_then(|value| read_tool(value, &child(path, "tool"), problems));
    let payload_g = fields.number("payload_g", problems);
    let gripper = match fields.optional("gripper") {
        Some(value) => Some(read_gripper(value, &child(path, "gripper"), problems)?),
        None => None,
    };
    fields.finish(problems);
    Some(ArmDoc {
        shape: shape?,
        joints,
        tool: tool?,
        payload_g,
        gripper,
    })
}

fn read_scara(value: &Value, path: &str, problems: &mut Vec<Problem>) -> Option<ScaraSize> {
    let mut fields = Fields::of(value, path, problems)?;
    let size = ScaraSize {
        base_height_mm: fields.number("base_height_mm", problems),
        upper_arm_mm: fields.number("upper_arm_mm", problems),
        forearm_mm: fields.number("forearm_mm", problems),
        tool_drop_mm: fields.number("tool_drop_mm", problems),
    };
    fields.finish(problems);
    Some(size)
}

fn read_articulated(
    value: &Value,
    path: &str,
    problems: &mut Vec<Problem>,
) -> Option<ArticulatedSize> {
    let mut fields = Fields::of(value, path, problems)?;
    let size = ArticulatedSize {
        base_height_mm: fields.number("base_height_mm", problems),
        upper_arm_mm: fields.number("upper_arm_mm", problems),
        forearm_mm: fields.number("forearm_mm", problems),
        wrist_to_tool_mm: fields.number("wrist_to_tool_mm", problems),
    };
    fields.finish(problems);
    Some(size)
}

fn read_chain(value: &Value, path: &str, problems: &mut Vec<Problem>) -> Option<ArmShape> {
    let mut fields = Fields::of(value, path, problems)?;
    #[derive(Clone, Copy)]
    enum Convention {
        Dh,
        OriginAxis,
    }
    let convention = fields.word(
        "convention",
        &[
            ("standard_dh", Convention::Dh),
            ("origin_axis", Convention::OriginAxis),
        ],
        None,
        problems,
    );
    let shape = match convention {
        Some(Convention::Dh) => {
            let rows_path = child(path, "rows");
            let rows: Vec<DhRowDoc> = fields
                .list("rows", problems)
                .iter()
                .enumerate()
                .filter_map(|(index, value)| read_dh_row(value, &item(&rows_path, index), problems))
                .collect();
            let tool = fields
                .required("tool", problems)
                .and_then(|value| read_placement(value, &child(path, "tool"), problems));
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
            let tool_home = fields
                .required("tool_home", problems)
                .and_then(|value| read_placement(value, &child(path, "tool_home"), problems));
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
    let kind = fields.word("kind", &KIND_WORDS, None, problems);
    let row = DhRowDoc {
        kind: kind.unwrap_or(JointKindDoc::Revolute),
        a_mm: fields.number("a_mm", problems),
        alpha_deg: fields.number("alpha_deg", problems),
        d_mm: fields.number("d_mm", problems),
        theta_deg: fields.number("theta_deg", problems),
    };
    fields.finish(problems);
    kind.map(|_| row)
}

fn read_axis(value: &Value, path: &str, problems: &mut Vec<Problem>) -> Option<AxisDoc> {
    let mut fields = Fields::of(value, path, problems)?;
    let kind = fields.word("kind", &KIND_WORDS, None, problems);
    let axis = AxisDoc {
        kind: kind.unwrap_or(JointKindDoc::Revolute),
        axis: fields.triple("axis", problems),
        origin_mm: fields.triple("origin_mm", problems),
    };
    fields.finish(problems);
    kind.map(|_| axis)
}

fn read_placement(value: &Value, path: &str, problems: &mut Vec<Problem>) -> Option<PlacementDoc> {
    let mut fields = Fields::of(value, path, problems)?;
    let placement = PlacementDoc {
        position_mm: fields.triple("position_mm", problems),
        rotation_xyz_deg: fields.triple("rotation_xyz_deg", problems),
    };
    fields.finish(problems);
    Some(placement)
}

fn read_joint(
    value: &Value,
    path: &str,
    kind: JointKindDoc,
    problems: &mut Vec<Problem>,
) -> Option<JointDoc> {
    let mut fields = Fields::of(value, path, problems)?;
    let (min_key, max_key, home_key) = match kind {
        JointKindDoc::Revolute => ("min_deg", "max_deg", "home_deg"),
        JointKindDoc::Prismatic => ("min_mm", "max_mm", "home_mm"),
    };
    let name = fields.text("name", problems);
    let min = fields.number(min_key, problems);
    let max = fields.number(max_key, problems);
    let home = fields.number(home_key, problems);
    let servo = fields
        .required("servo", problems)
        .and_then(|value| read_servo(value, &child(path, "servo"), kind, problems));
    let calibration = fields
        .required("calibration", problems)
        .and_then(|value| read_calibration(value, &child(path, "calibration"), kind, problems));
    let link = fields
        .required("link", problems)
        .and_then(|value| read_link_mass(value, &child(path, "link"), problems));
    fields.finish(problems);
    Some(JointDoc {
        name,
        min,
        max,
        home,
        servo: servo?,
        calibration: calibration?,
        link: link?,
    })
}

fn read_servo(
    value: &Value,
    path: &str,
    kind: JointKindDoc,
    problems: &mut Vec<Problem>,
) -> Option<ServoDoc> {
    let mut fields = Fields::of(value, path, problems)?;
    let stall_torque_ncm = fields.number("stall_torque_ncm", problems);
    let no_load_speed_deg_per_s = fields.number("no_load_speed_deg_per_s", problems);
    let deadband_us = fields.number("deadband_us", problems);
    let proportional_band = fields
        .required("proportional_band", problems)
        .and_then(|value| read_band(value, &child(path, "proportional_band"), problems));
    let backlash_deg = fields.number("backlash_deg", problems);
    let mass_g = fields.number("mass_g", problems);
    let mount_offset_mm = fields.triple("mount_offset_mm", problems);
    let pinion_radius_mm = match kind {
        JointKindDoc::Prismatic => Some(fields.number("pinion_radius_mm", problems)),
        JointKindDoc::Revolute => None,
    };
    fields.finish(problems);
    Some(ServoDoc {
        stall_torque_ncm,
        no_load_speed_deg_per_s,
        deadband_us,
        proportional_band: proportional_band?,
        backlash_deg,
        mass_g,
        mount_offset_mm,
        pinion_radius_mm,
    })
}

fn read_band(value: &Value, path: &str, problems: &mut Vec<Problem>) -> Option<BandDoc> {
    let mut fields = Fields::of(value, path, problems)?;
    let us = fields.optional_number("us", problems);
    let deg = fields.optional_number("deg", problems);
    fields.finish(problems);
    match (us, deg) {
        (Some(us), None) => Some(BandDoc::Us(us)),
        (None, Some(deg)) => Some(BandDoc::Deg(deg)),
        _ => {
            problems.push(Problem::new(
                path,
                "give exactly one of { \"us\": … } or { \"deg\": … }",
            ));
            None
        }
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
    let mut points = [CalibrationPoint {
        position: 0.0,
        pulse_us: 0,
    }; 2];
    let mut complete = entries.len() == 2;
    if fields.map.contains_key("points") && entries.len() != 2 && fields.map["points"].is_array() {
        problems.push(Problem::new(
            &points_path,
            format!("expected 2 calibration points, found {}", entries.len()),
        ));
    }
    for (index, entry) in entries.iter().take(2).enumerate() {
        match read_calibration_point(entry, &item(&points_path, index), kind, problems) {
            Some(point) => points[index] = point,
            None => complete = false,
        }
    }
    let pulse_min_us = fields.whole("pulse_min_us", problems);
    let pulse_max_us = fields.whole("pulse_max_us", problems);
    fields.finish(problems);
    complete.then_some(CalibrationDoc {
        points,
        pulse_min_us,
        pulse_max_us,
    })
}

fn read_calibration_point(
    value: &Value,
    path: &str,
    kind: JointKindDoc,
    problems: &mut Vec<Problem>,
) -> Option<CalibrationPoint> {
    let mut fields = Fields::of(value, path, problems)?;
    let key = match kind {
        JointKindDoc::Revolute => "angle_deg",
        JointKindDoc::Prismatic => "position_mm",
    };
    let point = CalibrationPoint {
        position: fields.number(key, problems),
        pulse_us: fields.whole("pulse_us", problems),
    };
    fields.finish(problems);
    Some(point)
}

fn read_link_mass(value: &Value, path: &str, problems: &mut Vec<Problem>) -> Option<LinkMassDoc> {
    let mut fields = Fields::of(value, path, problems)?;
    let mass_g = fields.number("mass_g", problems);
    let centre_mm = fields.triple("centre_mm", problems);
    let inertia_path = fields.at("inertia_g_mm2");
    let inertia_g_mm2 = fields
        .optional("inertia_g_mm2")
        .map(|value| numbers::<6>(value, &inertia_path, problems));
    fields.finish(problems);
    Some(LinkMassDoc {
        mass_g,
        centre_mm,
        inertia_g_mm2,
    })
}

fn read_tool(value: &Value, path: &str, problems: &mut Vec<Problem>) -> Option<ToolMassDoc> {
    let mut fields = Fields::of(value, path, problems)?;
    let tool = ToolMassDoc {
        mass_g: fields.number("mass_g", problems),
        centre_mm: fields.triple("centre_mm", problems),
    };
    fields.finish(problems);
    Some(tool)
}

fn read_gripper(value: &Value, path: &str, problems: &mut Vec<Problem>) -> Option<GripperDoc> {
    let mut fields = Fields::of(value, path, problems)?;
    let gripper = GripperDoc {
        open_pulse_us: fields.whole("open_pulse_us", problems),
        closed_pulse_us: fields.whole("closed_pulse_us", problems),
    };
    fields.finish(problems);
    Some(gripper)
}

fn read_waypoint(value: &Value, path: &str, problems: &mut Vec<Problem>) -> Option<Waypoint> {
    let mut fields = Fields::of(value, path, problems)?;
    let name = fields.text("name", problems);
    let joints_path = fields.at("joints_deg_or_mm");
    let joints_deg_or_mm = fields
        .list("joints_deg_or_mm", problems)
        .iter()
        .enumerate()
        .map(|(index, value)| number(value, &item(&joints_path, index), problems))
        .collect();
    let defaults = Waypoint::default();
    let move_kind = fields.word(
        "move",
        &[("joint", MoveKind::Joint), ("straight", MoveKind::Straight)],
        Some(defaults.move_kind),
        problems,
    );
    let profile = fields.word(
        "profile",
        &[
            ("trapezoid", ProfileKind::Trapezoid),
            ("double_s", ProfileKind::DoubleS),
        ],
        Some(defaults.profile),
        problems,
    );
    let speed_share_pct = fields.number_or("speed_share_pct", defaults.speed_share_pct, problems);
    let dwell_ms = fields.number_or("dwell_ms", defaults.dwell_ms, problems);
    let arrival = fields.word(
        "arrival",
        &[
            ("stop", Arrival::Stop),
            ("pass_through", Arrival::PassThrough),
        ],
        Some(defaults.arrival),
        problems,
    );
    let gripper = fields.word(
        "gripper",
        &[
            ("open", GripperState::Open),
            ("closed", GripperState::Closed),
        ],
        Some(defaults.gripper),
        problems,
    );
    fields.finish(problems);
    Some(Waypoint {
        name,
        joints_deg_or_mm,
        move_kind: move_kind?,
        profile: profile?,
        speed_share_pct,
        dwell_ms,
        arrival: arrival?,
        gripper: gripper?,
    })
}

fn read_timing(
    value: &Value,
    path: &str,
    arm: Option<&ArmDoc>,
    problems: &mut Vec<Problem>,
) -> Option<Timing> {
    let mut fields = Fields::of(value, path, problems)?;
    let defaults = Timing::default();
    let limits_path = fields.at("joint_limits");
    let joint_limits = fields
        .optional_list("joint_limits", problems)
        .iter()
        .enumerate()
        .filter_map(|(index, value)| {
            read_joint_limit(value, &item(&limits_path, index), arm, problems)
        })
        .collect();
    let timing = Timing {
        torque_derating_pct: fields.number_or(
            "torque_derating_pct",
            defaults.torque_derating_pct,
            problems,
        ),
        settle_band_mm: fields.number_or("settle_band_mm", defaults.settle_band_mm, problems),
        max_overshoot_mm: fields.number_or("max_overshoot_mm", defaults.max_overshoot_mm, problems),
        damping_ratio: fields.number_or("damping_ratio", defaults.damping_ratio, problems),
        shaping: fields
            .word(
                "shaping",
                &[
                    ("none", Shaping::None),
                    ("zv", Shaping::Zv),
                    ("zvd", Shaping::Zvd),
                ],
                Some(defaults.shaping),
                problems,
            )
            .unwrap_or(defaults.shaping),
        joint_limits,
    };
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
    let mut read = |pick: fn((&'static str, &'static str)) -> &'static str| match kind {
        Some(kind) => fields.optional_number(pick(JointLimitDoc::keys(kind)), problems),
        None => {
            let revolute =
                fields.optional_number(pick(JointLimitDoc::keys(JointKindDoc::Revolute)), problems);
            let prismatic = fields
                .optional_number(pick(JointLimitDoc::keys(JointKindDoc::Prismatic)), problems);
            revolute.or(prismatic)
        }
    };
    let max_velocity_deg_or_mm_per_s = read(|(velocity, _)| velocity);
    let max_acceleration_deg_or_mm_per_s2 = read(|(_, acceleration)| acceleration);
    fields.finish(problems);
    Some(JointLimitDoc {
        joint,
        max_velocity_deg_or_mm_per_s,
        max_acceleration_deg_or_mm_per_s2,
    })
}

fn read_workspace(value: &Value, path: &str, problems: &mut Vec<Problem>) -> Option<Workspace> {
    let mut fields = Fields::of(value, path, problems)?;
    let table_height_mm = fields.optional_number("table_height_mm", problems);
    let boxes_path = fields.at("boxes");
    let boxes = fields
        .optional_list("boxes", problems)
        .iter()
        .enumerate()
        .filter_map(|(index, value)| {
            let path = item(&boxes_path, index);
            let mut fields = Fields::of(value, &path, problems)?;
            let object = BoxDoc {
                name: fields.text("name", problems),
                position_mm: fields.triple("position_mm", problems),
                size_mm: fields.triple("size_mm", problems),
            };
            fields.finish(problems);
            Some(object)
        })
        .collect();
    let trays_path = fields.at("trays");
    let trays = fields
        .optional_list("trays", problems)
        .iter()
        .enumerate()
        .filter_map(|(index, value)| {
            let path = item(&trays_path, index);
            let mut fields = Fields::of(value, &path, problems)?;
            let pockets_path = fields.at("pockets");
            let pockets = fields
                .required("pockets", problems)
                .map(|value| {
                    let items = list(value, &pockets_path, problems);
                    if items.len() != 2 {
                        problems.push(Problem::new(
                            &pockets_path,
                            format!(
                                "expected 2 whole numbers (along X, along Y), found {}",
                                items.len()
                            ),
                        ));
                        return [0; 2];
                    }
                    [
                        whole(&items[0], &item(&pockets_path, 0), problems),
                        whole(&items[1], &item(&pockets_path, 1), problems),
                    ]
                })
                .unwrap_or([0; 2]);
            let tray = TrayDoc {
                name: fields.text("name", problems),
                position_mm: fields.triple("position_mm", problems),
                size_mm: fields.triple("size_mm", problems),
                pockets,
            };
            fields.finish(problems);
            Some(tray)
        })
        .collect();
    fields.finish(problems);
    Some(Workspace {
        table_height_mm,
        boxes,
        trays,
    })
}

fn read_link(value: &Value, path: &str, problems: &mut Vec<Problem>) -> Option<LinkSettings> {
    let mut fields = Fields::of(value, path, problems)?;
    let defaults = LinkSettings::default();
    let device = match fields.optional("device") {
        None => defaults.device,
        Some(value) => {
            let name = text(value, &child(path, "device"), problems);
            if name == "simulated" {
                Device::Simulated
            } else {
                Device::Port(name)
            }
        }
    };
    let baud = match fields.optional("baud") {
        None => defaults.baud,
        Some(value) => whole(value, &child(path, "baud"), problems),
    };
    let rate_hz = fields.number_or("rate_hz", defaults.rate_hz, problems);
    fields.finish(problems);
    Some(LinkSettings {
        device,
        baud,
        rate_hz,
    })
}
