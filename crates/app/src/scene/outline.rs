//! The scene file's outline: every object of the file with its numbers (rows of the field
//! table) and its other keys (text, words, objects, lists). The generated reference
//! (`reference.rs`) and JSON Schema (`schema.rs`) are printed from this outline, so that neither
//! repeats a key, a unit, a range or a word.

use super::document::*;
use super::field::{Access, Field, Key, Presence, Range, Unit};
use super::field_table as table;
use super::migrate::{CURRENT_VERSION, FORMAT_NAME};

/// A row of the field table without its document type: what the reference and the schema need.
#[derive(Debug, Clone)]
pub struct RowInfo {
    /// Key and, for keys that follow the joint's kind, the prismatic key and range.
    pub key: Key,
    /// Unit in the file.
    pub unit: Unit,
    /// Allowed range (for a revolute joint when the key follows the kind).
    pub range: Range,
    /// Where the range's ends come from.
    pub range_source: &'static str,
    /// Decimals kept on save; 0 for whole numbers.
    pub decimals: u32,
    /// One-line meaning.
    pub about: &'static str,
    /// Whether it must be given.
    pub presence: Presence,
    /// How many numbers: `None` for one, `Some(0)` for a list of any length, `Some(n)` for `n`.
    pub count: Option<usize>,
    /// The value taken when the key is left out, for a defaulted row.
    pub default: Option<String>,
}

impl<T: Default> Field<T> {
    /// The row without its document type.
    pub fn info(&self) -> RowInfo {
        let count = match self.access {
            Access::List { len, .. } => Some(len),
            _ => None,
        };
        let default = (self.presence == Presence::Defaulted).then(|| {
            self.values(&T::default())
                .iter()
                .map(|value| super::field::shown(*value))
                .collect::<Vec<_>>()
                .join(", ")
        });
        RowInfo {
            key: self.key,
            unit: self.unit,
            range: self.range,
            range_source: self.range_source,
            decimals: self.decimals,
            about: self.about,
            presence: self.presence,
            count,
            default,
        }
    }
}

/// A key of an object that is not a number.
#[derive(Debug, Clone)]
pub enum Other {
    /// Free text.
    Text,
    /// A whole number from 1 up.
    Whole,
    /// One of a few words.
    Word(Vec<&'static str>),
    /// An object (the section with this id).
    Object(&'static str),
    /// A list of objects (the section with this id).
    List(&'static str),
}

/// A key of an object that is not a number, with its meaning.
#[derive(Debug, Clone)]
pub struct OtherKey {
    /// The key.
    pub key: &'static str,
    /// What it holds.
    pub holds: Other,
    /// Whether it must be given.
    pub required: bool,
    /// The value taken when left out, in words.
    pub default: Option<String>,
    /// One-line meaning.
    pub about: &'static str,
}

/// One object of the file.
#[derive(Debug, Clone)]
pub struct Section {
    /// A short id the other sections refer to (`servo`).
    pub id: &'static str,
    /// Where it sits in the file (`arm.joints[i].servo`).
    pub path: &'static str,
    /// What it is, in one or two sentences.
    pub about: &'static str,
    /// Its keys that are not numbers, in file order before the numbers.
    pub others: Vec<OtherKey>,
    /// Its numbers, in file order.
    pub rows: Vec<RowInfo>,
}

fn other(key: &'static str, holds: Other, required: bool, about: &'static str) -> OtherKey {
    OtherKey {
        key,
        holds,
        required,
        default: None,
        about,
    }
}

fn words<W: FileWords>() -> Other {
    Other::Word(W::WORDS.iter().map(|(_, word)| *word).collect())
}

fn defaulted<W: FileWords>(key: &'static str, default: W, about: &'static str) -> OtherKey {
    OtherKey {
        default: Some(default.word().to_string()),
        ..other(key, words::<W>(), false, about)
    }
}

fn rows<T: Default>(rows: &[Field<T>]) -> Vec<RowInfo> {
    rows.iter().map(Field::info).collect()
}

fn section(
    id: &'static str,
    path: &'static str,
    about: &'static str,
    others: Vec<OtherKey>,
    numbers: Vec<RowInfo>,
) -> Section {
    Section {
        id,
        path,
        about,
        others,
        rows: numbers,
    }
}

/// The format's name and version, as every file starts.
pub fn header() -> (&'static str, u64) {
    (FORMAT_NAME, CURRENT_VERSION)
}

/// Every object of the file, the whole scene first.
pub fn sections() -> Vec<Section> {
    let waypoint = Waypoint::default();
    let timing = Timing::default();
    vec![
        section(
            "scene",
            "the file",
            "The whole scene. `format` and `version` come first; `$schema` may name the JSON \
             Schema for a text editor and is otherwise ignored.",
            vec![
                other("format", Other::Text, true, "always \"armwright-scene\""),
                other("version", Other::Whole, true, "format version"),
                other(
                    "description",
                    Other::Text,
                    false,
                    "a short, free description of the task",
                ),
                other("arm", Other::Object("arm"), true, "the arm"),
                other(
                    "waypoints",
                    Other::List("waypoint"),
                    false,
                    "the sequence: ordered waypoints (at least two to plan a move)",
                ),
                other(
                    "timing",
                    Other::Object("timing"),
                    false,
                    "timing settings (defaults below)",
                ),
                other(
                    "workspace",
                    Other::Object("workspace"),
                    false,
                    "objects on and around the table",
                ),
                other(
                    "link",
                    Other::Object("link"),
                    false,
                    "how to reach the device",
                ),
                other(
                    "inputs",
                    Other::List("input"),
                    false,
                    "the input arm: which analog input moves which joint",
                ),
            ],
            Vec::new(),
        ),
        section(
            "arm",
            "arm",
            "The arm: its type with its dimensions (`dimensions` for the built-in types, `chain` \
             for a chain), its joints base first, the tool's mass, the payload and the gripper.",
            vec![
                other("type", words::<ArmTypeWord>(), true, "the arm's type"),
                other(
                    "dimensions",
                    Other::Object("dimensions"),
                    false,
                    "for `scara`, `articulated4` and `articulated5`",
                ),
                other("chain", Other::Object("chain"), false, "for `chain`"),
                other(
                    "joints",
                    Other::List("joint"),
                    true,
                    "the movable joints, base first (4 for `scara` and `articulated4`, 5 for \
                     `articulated5`, one per row or axis for `chain`)",
                ),
                other("tool", Other::Object("tool"), true, "the tool's mass"),
                other(
                    "gripper",
                    Other::Object("gripper"),
                    false,
                    "the gripper channel; absent when there is none",
                ),
            ],
            rows(table::arm::ROWS),
        ),
        section(
            "dimensions",
            "arm.dimensions",
            "Sizes of a built-in arm type. `articulated4` and `articulated5` (base yaw, shoulder, \
             elbow, wrist pitch, and for 5 a wrist roll) take these:",
            Vec::new(),
            rows(table::articulated::ROWS),
        ),
        section(
            "dimensions_scara",
            "arm.dimensions (scara)",
            "`scara` (shoulder, elbow, a sliding lift, wrist roll) takes these instead:",
            Vec::new(),
            rows(table::scara::ROWS),
        ),
        section(
            "chain",
            "arm.chain",
            "A serial chain, given by standard Denavit–Hartenberg rows (`rows` and `tool`) or by \
             each joint's axis and a point on it with every joint at zero (`axes` and \
             `tool_home`).",
            vec![
                other(
                    "convention",
                    words::<ChainConvention>(),
                    true,
                    "how it is given",
                ),
                other(
                    "rows",
                    Other::List("dh_row"),
                    false,
                    "for `standard_dh`: one row per joint, base first",
                ),
                other(
                    "tool",
                    Other::Object("placement"),
                    false,
                    "for `standard_dh`: the tool point in the frame after the last row",
                ),
                other(
                    "axes",
                    Other::List("axis"),
                    false,
                    "for `origin_axis`: one per joint, base first",
                ),
                other(
                    "tool_home",
                    Other::Object("placement"),
                    false,
                    "for `origin_axis`: the tool frame with every joint at zero",
                ),
            ],
            Vec::new(),
        ),
        section(
            "dh_row",
            "arm.chain.rows[i]",
            "One standard (distal) Denavit–Hartenberg row: Rz(θ)·Tz(d)·Tx(a)·Rx(α).",
            vec![other(
                "kind",
                words::<JointKindDoc>(),
                true,
                "turning or sliding",
            )],
            rows(table::dh_row::ROWS),
        ),
        section(
            "axis",
            "arm.chain.axes[i]",
            "One joint by its axis, in the base frame with every joint at zero.",
            vec![other(
                "kind",
                words::<JointKindDoc>(),
                true,
                "turning or sliding",
            )],
            rows(table::axis::ROWS),
        ),
        section(
            "placement",
            "arm.chain.tool, arm.chain.tool_home",
            "A fixed placement: a shift, then turns about the fixed X, Y and Z axes.",
            Vec::new(),
            rows(table::placement::ROWS),
        ),
        section(
            "joint",
            "arm.joints[i]",
            "One movable joint. Positions are in degrees for a turning (revolute) joint and in \
             mm for a sliding (prismatic) one, and the keys say which: `min_deg` or `min_mm`.",
            vec![
                other(
                    "name",
                    Other::Text,
                    true,
                    "a name for reports, such as \"shoulder\"",
                ),
                other(
                    "servo",
                    Other::Object("servo"),
                    true,
                    "the servo that drives it",
                ),
                other(
                    "calibration",
                    Other::Object("calibration"),
                    true,
                    "its position ↔ pulse width map",
                ),
                other(
                    "link",
                    Other::Object("link_mass"),
                    true,
                    "the link it moves",
                ),
            ],
            rows(table::joint::ROWS),
        ),
        section(
            "servo",
            "arm.joints[i].servo",
            "A hobby servo's ratings, as a datasheet gives them.",
            vec![other(
                "proportional_band",
                Other::Object("band"),
                true,
                "the servo's proportional band",
            )],
            rows(table::servo::ROWS),
        ),
        section(
            "band",
            "arm.joints[i].servo.proportional_band",
            "The pulse-width error across which the servo's drive goes from zero to full: exactly \
             one of `us` or `deg`.",
            Vec::new(),
            rows(table::band::ROWS),
        ),
        section(
            "calibration",
            "arm.joints[i].calibration",
            "The straight-line map from joint position to pulse width through two measured \
             points, and the pulses the servo accepts. To measure a point, send a pulse width, \
             measure the angle (or travel) the joint takes, and write both down; do it at two \
             positions far apart.",
            vec![other(
                "points",
                Other::List("calibration_point"),
                true,
                "exactly two measured points",
            )],
            rows(table::calibration::ROWS),
        ),
        section(
            "calibration_point",
            "arm.joints[i].calibration.points[k]",
            "One measured point (`angle_deg` for a turning joint, `position_mm` for a sliding one).",
            Vec::new(),
            rows(table::calibration_point::ROWS),
        ),
        section(
            "link_mass",
            "arm.joints[i].link",
            "The mass of the link the joint moves, in the joint's frame.",
            Vec::new(),
            rows(table::link_mass::ROWS),
        ),
        section(
            "tool",
            "arm.tool",
            "The tool (gripper body and its servo) as one mass, in the tool frame.",
            Vec::new(),
            rows(table::tool::ROWS),
        ),
        section(
            "gripper",
            "arm.gripper",
            "The gripper channel's two pulse widths. The gripper is not a joint.",
            Vec::new(),
            rows(table::gripper::ROWS),
        ),
        section(
            "waypoint",
            "waypoints[i]",
            "A stored arm pose in the sequence, with how the arm gets there from the one before.",
            vec![
                other(
                    "name",
                    Other::Text,
                    true,
                    "a name, such as \"above feeder\"",
                ),
                defaulted("move", waypoint.move_kind, "joint move or straight move"),
                defaulted("profile", waypoint.profile, "velocity profile of the move"),
                defaulted("arrival", waypoint.arrival, "come to rest or flow through"),
                defaulted("gripper", waypoint.gripper, "the gripper's state here"),
            ],
            rows(table::waypoint::ROWS),
        ),
        section(
            "timing",
            "timing",
            "Timing settings for planning and retiming.",
            vec![
                defaulted(
                    "shaping",
                    timing.shaping,
                    "input shaping of each run from one stop to the next",
                ),
                other(
                    "joint_limits",
                    Other::List("joint_limit"),
                    false,
                    "limits of a joint's own, replacing those taken from its servo",
                ),
            ],
            rows(table::timing::ROWS),
        ),
        section(
            "joint_limit",
            "timing.joint_limits[i]",
            "A joint's own limits, in the unit of the joint it names (deg or mm): any of \
             velocity, acceleration and jerk. Without a jerk, the acceleration ÷ 0.05 s.",
            vec![other(
                "joint",
                Other::Text,
                true,
                "the joint's name, as in arm.joints",
            )],
            rows(table::joint_limit::ROWS),
        ),
        section(
            "workspace",
            "workspace",
            "Objects on and around the table, axis-aligned in the base frame.",
            vec![
                other(
                    "boxes",
                    Other::List("box"),
                    false,
                    "boxes: obstacles, feeders",
                ),
                other(
                    "trays",
                    Other::List("tray"),
                    false,
                    "trays with a grid of pockets",
                ),
            ],
            rows(table::workspace::ROWS),
        ),
        section(
            "box",
            "workspace.boxes[i]",
            "A box.",
            vec![other("name", Other::Text, true, "a name")],
            rows(table::boxes::ROWS),
        ),
        section(
            "tray",
            "workspace.trays[i]",
            "A tray with a grid of pockets.",
            vec![other("name", Other::Text, true, "a name")],
            rows(table::tray::ROWS),
        ),
        section(
            "link",
            "link",
            "How to reach the device that makes the pulses.",
            vec![OtherKey {
                default: Some("simulated".into()),
                ..other(
                    "device",
                    Other::Text,
                    false,
                    "\"simulated\" or a serial port path such as /dev/ttyUSB0",
                )
            }],
            rows(table::link::ROWS),
        ),
        section(
            "input",
            "inputs[i]",
            "An analog input of the input arm (a potentiometer a person turns, or a servo's \
             feedback wire) mapped to a joint through two or more measured points of reading \
             and joint position: a least-squares line, or a quadratic when four or more points \
             bow clearly (the same fit as a joint's calibration). One input per joint.",
            vec![
                other(
                    "joint",
                    Other::Text,
                    true,
                    "the joint it moves, as in arm.joints",
                ),
                other(
                    "points",
                    Other::List("input_point"),
                    true,
                    "two or more measured points, with different readings",
                ),
            ],
            rows(table::input::ROWS),
        ),
        section(
            "input_point",
            "inputs[i].points[j]",
            "What the input read with the joint at a known position, in the unit of the joint \
             (deg or mm).",
            Vec::new(),
            rows(table::input_point::ROWS),
        ),
    ]
}
