//! The scene document as Rust types, in the file's own units (mm, degrees, g, N·cm, µs, ms, %).
//!
//! Joint positions are in degrees for a revolute joint and in mm for a prismatic one; the file's
//! keys say which (`min_deg` or `min_mm`). [`super::units`] converts to the SI arm model.

/// The whole scene: arm, sequence of waypoints, timing settings, workspace objects and link
/// settings.
#[derive(Debug, Clone, PartialEq)]
pub struct Scene {
    /// A short, free description of the task (shown to people, not interpreted).
    pub description: String,
    /// The arm: type, dimensions, joints, masses, gripper.
    pub arm: ArmDoc,
    /// The sequence: ordered waypoints.
    pub waypoints: Vec<Waypoint>,
    /// Timing settings for planning and retiming.
    pub timing: Timing,
    /// Objects on and around the table.
    pub workspace: Workspace,
    /// How to reach the device that makes the pulses.
    pub link: LinkSettings,
    /// The input arm: which analog input moves which joint, and how its readings map to the
    /// joint's positions. Empty when the scene has none.
    pub inputs: Vec<InputDoc>,
}

/// One analog input of the input arm (a potentiometer, or a servo's feedback wire) mapped to
/// a joint: measured points of reading ↔ joint position, fitted by least squares (a line; a
/// quadratic when four or more points bow clearly).
#[derive(Debug, Clone, PartialEq, Default)]
pub struct InputDoc {
    /// The input's number on the device, from 0: its place in the device's readings.
    pub input: u32,
    /// The joint it moves, by name, as in `arm.joints`.
    pub joint: String,
    /// Two or more measured points.
    pub points: Vec<InputPointDoc>,
}

/// One measured point of an input's mapping: what the input read with the joint at a known
/// position.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct InputPointDoc {
    /// The reading, 0 to 4095 (the link protocol's 12-bit scale).
    pub reading: u32,
    /// The joint's position at that reading: degrees (revolute) or mm (prismatic).
    pub position: f64,
}

/// Revolute or prismatic: decides whether a joint's positions are in degrees or mm.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum JointKindDoc {
    /// Turns; positions in degrees.
    #[default]
    Revolute,
    /// Slides; positions in mm.
    Prismatic,
}

/// An enum written in the file as one of a few words. The words sit beside each enum, once; the
/// decoder, the encoder, the generated reference and the editor's choices all read them here.
pub trait FileWords: Copy + PartialEq + Sized + 'static {
    /// Every value with its word in the file, in the order they are offered.
    const WORDS: &'static [(Self, &'static str)];

    /// The word in the file.
    fn word(self) -> &'static str {
        Self::WORDS
            .iter()
            .find(|(value, _)| *value == self)
            .map_or("", |(_, word)| *word)
    }

    /// The value a word stands for; `None` for a word that is not one of [`FileWords::WORDS`].
    fn from_word(word: &str) -> Option<Self> {
        Self::WORDS
            .iter()
            .find(|(_, known)| *known == word)
            .map(|(value, _)| *value)
    }

    /// What the editor shows for the value: the file's word unless an enum says otherwise.
    fn label(self) -> &'static str {
        self.word()
    }

    /// Every value with its label, in the order of [`FileWords::WORDS`], for a choice in the
    /// editor.
    fn choices() -> Vec<(Self, &'static str)> {
        Self::WORDS
            .iter()
            .map(|(value, _)| (*value, value.label()))
            .collect()
    }
}

impl FileWords for JointKindDoc {
    const WORDS: &'static [(Self, &'static str)] = &[
        (JointKindDoc::Revolute, "revolute"),
        (JointKindDoc::Prismatic, "prismatic"),
    ];
}

impl JointKindDoc {
    /// The unit suffix of this kind's positions: `deg` or `mm`.
    pub fn unit(self) -> &'static str {
        match self {
            JointKindDoc::Revolute => "deg",
            JointKindDoc::Prismatic => "mm",
        }
    }
}

/// Sizes of a horizontal-jointed arm (SCARA type), in mm.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct ScaraSize {
    /// Height of the arm's plane above the base, in mm (0 or more).
    pub base_height_mm: f64,
    /// Shoulder axis to elbow axis, in mm.
    pub upper_arm_mm: f64,
    /// Elbow axis to wrist axis, in mm.
    pub forearm_mm: f64,
    /// Wrist (at lift zero) down to the tool point, in mm (0 or more).
    pub tool_drop_mm: f64,
}

/// Sizes of a vertical articulated arm, in mm.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct ArticulatedSize {
    /// Base to the shoulder axis, in mm (0 or more).
    pub base_height_mm: f64,
    /// Shoulder axis to elbow axis, in mm.
    pub upper_arm_mm: f64,
    /// Elbow axis to wrist pitch axis, in mm.
    pub forearm_mm: f64,
    /// Wrist pitch axis to the tool point, in mm (0 or more).
    pub wrist_to_tool_mm: f64,
}

/// A fixed placement: a shift in mm, then a turn given as angles about the fixed X, Y and Z
/// axes in degrees, applied as Rz(z)·Ry(y)·Rx(x).
#[derive(Debug, Clone, PartialEq, Default)]
pub struct PlacementDoc {
    /// Shift, in mm.
    pub position_mm: [f64; 3],
    /// Turns about fixed X, Y, Z, in degrees.
    pub rotation_xyz_deg: [f64; 3],
}

/// One row of standard (distal) Denavit–Hartenberg parameters: Rz(θ)·Tz(d)·Tx(a)·Rx(α).
#[derive(Debug, Clone, PartialEq, Default)]
pub struct DhRowDoc {
    /// Revolute (position adds to θ) or prismatic (position adds to d).
    pub kind: JointKindDoc,
    /// Link length a, in mm.
    pub a_mm: f64,
    /// Link twist α, in degrees.
    pub alpha_deg: f64,
    /// Link offset d, in mm.
    pub d_mm: f64,
    /// Joint angle offset θ, in degrees.
    pub theta_deg: f64,
}

/// One joint of a chain given by its axis and a point on it, every joint at zero.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct AxisDoc {
    /// Revolute or prismatic.
    pub kind: JointKindDoc,
    /// Axis direction in the base frame (any non-zero length).
    pub axis: [f64; 3],
    /// A point on the axis in the base frame, in mm.
    pub origin_mm: [f64; 3],
}

/// The arm's type and dimensions.
#[derive(Debug, Clone, PartialEq)]
pub enum ArmShape {
    /// `scara`: shoulder, elbow, lift, wrist roll.
    Scara(ScaraSize),
    /// `articulated4`: base yaw, shoulder, elbow, wrist pitch.
    Articulated4(ArticulatedSize),
    /// `articulated5`: as `articulated4` plus a wrist roll.
    Articulated5(ArticulatedSize),
    /// `chain` with `convention: standard_dh`.
    ChainDh {
        /// One row per joint, base first.
        rows: Vec<DhRowDoc>,
        /// Tool point in the frame after the last row.
        tool: PlacementDoc,
    },
    /// `chain` with `convention: origin_axis`.
    ChainOriginAxis {
        /// One per joint, base first.
        axes: Vec<AxisDoc>,
        /// Tool frame in the base frame with every joint at zero.
        tool_home: PlacementDoc,
    },
}

impl Default for ArmShape {
    /// A blank 4-joint articulated arm, to be filled by the decoder.
    fn default() -> ArmShape {
        ArmShape::Articulated4(ArticulatedSize::default())
    }
}

/// The arm's type as the file's `arm.type` names it, without its dimensions.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ArmTypeWord {
    /// `scara`: horizontal-jointed, `arm.dimensions` as [`ScaraSize`].
    Scara,
    /// `articulated4`: `arm.dimensions` as [`ArticulatedSize`].
    Articulated4,
    /// `articulated5`: `arm.dimensions` as [`ArticulatedSize`].
    Articulated5,
    /// `chain`: `arm.chain` with its convention.
    Chain,
}

impl FileWords for ArmTypeWord {
    const WORDS: &'static [(Self, &'static str)] = &[
        (ArmTypeWord::Scara, "scara"),
        (ArmTypeWord::Articulated4, "articulated4"),
        (ArmTypeWord::Articulated5, "articulated5"),
        (ArmTypeWord::Chain, "chain"),
    ];
}

/// How a chain arm's geometry is given (`arm.chain.convention`).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ChainConvention {
    /// `standard_dh`: one standard Denavit–Hartenberg row per joint.
    StandardDh,
    /// `origin_axis`: each joint's axis and a point on it, every joint at zero.
    OriginAxis,
}

impl FileWords for ChainConvention {
    const WORDS: &'static [(Self, &'static str)] = &[
        (ChainConvention::StandardDh, "standard_dh"),
        (ChainConvention::OriginAxis, "origin_axis"),
    ];
}

impl ArmShape {
    /// The arm's type, as `arm.type` names it.
    pub fn type_word(&self) -> ArmTypeWord {
        match self {
            ArmShape::Scara(_) => ArmTypeWord::Scara,
            ArmShape::Articulated4(_) => ArmTypeWord::Articulated4,
            ArmShape::Articulated5(_) => ArmTypeWord::Articulated5,
            ArmShape::ChainDh { .. } | ArmShape::ChainOriginAxis { .. } => ArmTypeWord::Chain,
        }
    }

    /// The word in the file's `arm.type`.
    pub fn word(&self) -> &'static str {
        self.type_word().word()
    }

    /// The joint kinds this shape implies, base first.
    pub fn joint_kinds(&self) -> Vec<JointKindDoc> {
        use JointKindDoc::{Prismatic, Revolute};
        match self {
            ArmShape::Scara(_) => vec![Revolute, Revolute, Prismatic, Revolute],
            ArmShape::Articulated4(_) => vec![Revolute; 4],
            ArmShape::Articulated5(_) => vec![Revolute; 5],
            ArmShape::ChainDh { rows, .. } => rows.iter().map(|row| row.kind).collect(),
            ArmShape::ChainOriginAxis { axes, .. } => axes.iter().map(|axis| axis.kind).collect(),
        }
    }
}

/// The servo's proportional band: the pulse-width error across which its drive goes from zero
/// to full, given either in µs of pulse or in degrees of servo output.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum BandDoc {
    /// `{ "us": 40 }`.
    Us(f64),
    /// `{ "deg": 4 }`, degrees of servo output; converted through the joint's calibration.
    Deg(f64),
}

impl Default for BandDoc {
    /// A blank band in µs, to be filled by the decoder.
    fn default() -> BandDoc {
        BandDoc::Us(0.0)
    }
}

/// A hobby servo's ratings, in the units of a datasheet.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct ServoDoc {
    /// Stall torque, in N·cm (a "20 kg·cm" servo is about 196 N·cm).
    pub stall_torque_ncm: f64,
    /// No-load speed, in degrees per second (0.17 s per 60° is about 353 °/s).
    pub no_load_speed_deg_per_s: f64,
    /// Pulse-width change the servo ignores, in µs.
    pub deadband_us: f64,
    /// Proportional band, in µs or degrees.
    pub proportional_band: BandDoc,
    /// Gear play at the output, total, in degrees.
    pub backlash_deg: f64,
    /// Mass of the servo, in g.
    pub mass_g: f64,
    /// Where the servo's centre of mass sits from its joint's origin, in mm, in the frame of the
    /// link before the joint.
    pub mount_offset_mm: [f64; 3],
    /// For a prismatic joint only: rack pinion (or lead) radius, mm of travel per radian of servo
    /// output. Absent for a revolute joint.
    pub pinion_radius_mm: Option<f64>,
}

/// One measured calibration point: a joint position and the pulse width that holds it.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct CalibrationPoint {
    /// Joint position, in degrees (revolute) or mm (prismatic).
    pub position: f64,
    /// Pulse width, in µs.
    pub pulse_us: u32,
}

/// The straight-line map from joint position to pulse width, through two measured points, and
/// the pulse range the servo accepts.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct CalibrationDoc {
    /// Two measured points.
    pub points: [CalibrationPoint; 2],
    /// Shortest accepted pulse, in µs.
    pub pulse_min_us: u32,
    /// Longest accepted pulse, in µs.
    pub pulse_max_us: u32,
    /// How far the calibration may be off: the standard deviation of the joint's position
    /// error, in degrees (mm for a sliding joint). `armwright calibrate --write` sets it from
    /// the fit's residuals; absent: placement success takes a default (0.5° or 0.5 mm).
    pub uncertainty: Option<f64>,
}

/// The mass of the link a joint moves, in that joint's frame.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct LinkMassDoc {
    /// Mass, in g.
    pub mass_g: f64,
    /// Centre of mass in the joint's frame, in mm.
    pub centre_mm: [f64; 3],
    /// Inertia about the centre of mass, in g·mm²: [Ixx, Iyy, Izz, Ixy, Ixz, Iyz]. Absent means a
    /// point mass.
    pub inertia_g_mm2: Option<[f64; 6]>,
    /// Radius of the link's collision capsule (around the segment from this joint to the next,
    /// or to the tool point for the last joint: the gripper or tool), in mm. Absent: half the
    /// width of the larger servo at its ends, estimated from the servo's mass.
    pub radius_mm: Option<f64>,
}

/// One movable joint.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct JointDoc {
    /// Name for reports, such as "shoulder".
    pub name: String,
    /// Lowest position, degrees or mm.
    pub min: f64,
    /// Highest position, degrees or mm.
    pub max: f64,
    /// Home (parking) position, degrees or mm.
    pub home: f64,
    /// The servo that drives it.
    pub servo: ServoDoc,
    /// Its position ↔ pulse width map.
    pub calibration: CalibrationDoc,
    /// The link it moves.
    pub link: LinkMassDoc,
}

/// The tool (gripper body and its servo) as one mass, in the tool frame.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct ToolMassDoc {
    /// Mass, in g.
    pub mass_g: f64,
    /// Centre of mass in the tool frame, in mm.
    pub centre_mm: [f64; 3],
}

/// The gripper channel's two pulse widths. The gripper is not a joint.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct GripperDoc {
    /// Pulse that opens the jaws, in µs.
    pub open_pulse_us: u32,
    /// Pulse that closes the jaws, in µs.
    pub closed_pulse_us: u32,
}

/// The arm.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct ArmDoc {
    /// Type and dimensions.
    pub shape: ArmShape,
    /// Movable joints, base first.
    pub joints: Vec<JointDoc>,
    /// The tool's mass.
    pub tool: ToolMassDoc,
    /// Payload held at the tool point, in g.
    pub payload_g: f64,
    /// The gripper channel, if any.
    pub gripper: Option<GripperDoc>,
}

impl FileWords for MoveKind {
    const WORDS: &'static [(Self, &'static str)] =
        &[(MoveKind::Joint, "joint"), (MoveKind::Straight, "straight")];
}

impl FileWords for ProfileKind {
    const WORDS: &'static [(Self, &'static str)] = &[
        (ProfileKind::Trapezoid, "trapezoid"),
        (ProfileKind::DoubleS, "double_s"),
    ];

    fn label(self) -> &'static str {
        match self {
            ProfileKind::Trapezoid => "trapezoid",
            ProfileKind::DoubleS => "double-S",
        }
    }
}

impl FileWords for Arrival {
    const WORDS: &'static [(Self, &'static str)] = &[
        (Arrival::Stop, "stop"),
        (Arrival::PassThrough, "pass_through"),
    ];

    fn label(self) -> &'static str {
        match self {
            Arrival::Stop => "stop",
            Arrival::PassThrough => "pass through",
        }
    }
}

impl FileWords for GripperState {
    const WORDS: &'static [(Self, &'static str)] = &[
        (GripperState::Open, "open"),
        (GripperState::Closed, "closed"),
    ];
}

impl FileWords for Shaping {
    const WORDS: &'static [(Self, &'static str)] = &[
        (Shaping::None, "none"),
        (Shaping::Zv, "zv"),
        (Shaping::Zvd, "zvd"),
    ];
}

/// How the arm gets to a waypoint from the one before.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum MoveKind {
    /// `joint`: each joint interpolated on its own.
    Joint,
    /// `straight`: the tool point on a straight line.
    Straight,
}

/// The velocity profile of a move.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ProfileKind {
    /// `trapezoid`: limited velocity and acceleration.
    Trapezoid,
    /// `double_s`: limited jerk as well.
    DoubleS,
}

/// Whether the arm comes to rest at a waypoint or flows through it.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Arrival {
    /// `stop`: come to rest (and dwell).
    Stop,
    /// `pass_through`: flow through without stopping.
    PassThrough,
}

/// The gripper's state at a waypoint.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum GripperState {
    /// `open`.
    Open,
    /// `closed`.
    Closed,
}

/// A stored arm pose in the sequence.
#[derive(Debug, Clone, PartialEq)]
pub struct Waypoint {
    /// Name, such as "above feeder".
    pub name: String,
    /// One position per joint: degrees for a revolute joint, mm for a prismatic one.
    pub joints_deg_or_mm: Vec<f64>,
    /// Move kind from the previous waypoint.
    pub move_kind: MoveKind,
    /// Velocity profile.
    pub profile: ProfileKind,
    /// Share of each joint's limits the move may use, in % (above 0, at most 100).
    pub speed_share_pct: f64,
    /// Pause at a stop, in ms.
    pub dwell_ms: f64,
    /// Stop or pass-through.
    pub arrival: Arrival,
    /// Gripper state.
    pub gripper: GripperState,
    /// Radius of the circle a pick or place here must land within, in mm. Absent: 2 mm.
    pub placement_tolerance_mm: Option<f64>,
}

/// Timing settings used by planning and retiming.
#[derive(Debug, Clone, PartialEq)]
pub struct Timing {
    /// Share of each servo's stall torque counted as its rating, in % (above 0, at most 100).
    pub torque_derating_pct: f64,
    /// The tool point counts as settled inside this distance of its target, in mm.
    pub settle_band_mm: f64,
    /// Largest allowed overshoot of the tool point, in mm.
    pub max_overshoot_mm: f64,
    /// Damping ratio of the servo response model (no unit).
    pub damping_ratio: f64,
    /// Share of each joint's limits the approach to the first waypoint (and the park move to
    /// the rest pose) may use, in % (above 0, at most 100).
    pub approach_speed_share_pct: f64,
    /// How long the rest pose is held after a limp arm is woken there, in ms.
    pub wake_pause_ms: f64,
    /// Input shaping of each run from one stop to the next.
    pub shaping: Shaping,
    /// Limits the user sets for some joints, replacing those taken from their servos; at most
    /// one entry per joint.
    pub joint_limits: Vec<JointLimitDoc>,
}

/// A user's limits for one joint, replacing those the planner takes from its servo: in deg/s,
/// deg/s² and deg/s³ for a revolute joint, mm/s, mm/s² and mm/s³ for a prismatic one (the
/// file's keys say which: `max_velocity_deg_per_s` or `max_velocity_mm_per_s`, and so on).
#[derive(Debug, Clone, PartialEq, Default)]
pub struct JointLimitDoc {
    /// The joint's name, as in `arm.joints`.
    pub joint: String,
    /// Largest speed, in deg/s or mm/s; `None` keeps the one from the servo.
    pub max_velocity_deg_or_mm_per_s: Option<f64>,
    /// Largest acceleration, in deg/s² or mm/s²; `None` keeps the one from the servo.
    pub max_acceleration_deg_or_mm_per_s2: Option<f64>,
    /// Largest jerk, in deg/s³ or mm/s³; `None` keeps the acceleration limit ÷ 0.05 s.
    pub max_jerk_deg_or_mm_per_s3: Option<f64>,
}

impl JointLimitDoc {
    /// The file's keys for a joint of `kind`: velocity, then acceleration.
    pub fn keys(kind: JointKindDoc) -> (&'static str, &'static str) {
        use super::field_table::joint_limit::{ACCELERATION, VELOCITY};
        (VELOCITY.key(kind), ACCELERATION.key(kind))
    }
}

/// Input shaping of the moves (Singer & Seering, 1990), designed per joint for the natural
/// frequency and damping the servo model predicts.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Shaping {
    /// `none`: moves as planned.
    None,
    /// `zv`: zero vibration, two impulses.
    Zv,
    /// `zvd`: zero vibration and derivative, three impulses; more robust, a little slower.
    Zvd,
}

/// A box (an obstacle or a feeder), axis-aligned in the base frame.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct BoxDoc {
    /// Name, such as "peg feeder".
    pub name: String,
    /// Centre of its bottom face, in mm.
    pub position_mm: [f64; 3],
    /// Size along X, Y, Z, in mm.
    pub size_mm: [f64; 3],
}

/// A tray with a grid of pockets, axis-aligned in the base frame.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct TrayDoc {
    /// Name, such as "sorting tray".
    pub name: String,
    /// Centre of its bottom face, in mm.
    pub position_mm: [f64; 3],
    /// Size along X, Y, Z, in mm.
    pub size_mm: [f64; 3],
    /// Pockets along X and along Y.
    pub pockets: [u32; 2],
}

/// Objects on and around the table.
#[derive(Debug, Clone, PartialEq)]
pub struct Workspace {
    /// Height of the table plane in the base frame, in mm; absent when there is no table.
    pub table_height_mm: Option<f64>,
    /// Boxes.
    pub boxes: Vec<BoxDoc>,
    /// Trays.
    pub trays: Vec<TrayDoc>,
}

/// Which device makes the pulses.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Device {
    /// `"simulated"`: the built-in simulated device.
    Simulated,
    /// A serial port path such as `/dev/ttyUSB0`.
    Port(String),
}

/// Link settings.
#[derive(Debug, Clone, PartialEq)]
pub struct LinkSettings {
    /// The device.
    pub device: Device,
    /// Serial line speed, in baud.
    pub baud: u32,
    /// Setpoints sent per second, in Hz.
    pub rate_hz: f64,
}

impl Default for Waypoint {
    /// An unnamed waypoint with no joints: a joint move, trapezoid profile, 50 % speed share,
    /// no dwell, a stop, gripper open. Decoding fills absent optional fields from here.
    fn default() -> Waypoint {
        Waypoint {
            name: String::new(),
            joints_deg_or_mm: Vec::new(),
            move_kind: MoveKind::Joint,
            profile: ProfileKind::Trapezoid,
            speed_share_pct: 50.0,
            dwell_ms: 0.0,
            arrival: Arrival::Stop,
            gripper: GripperState::Open,
            placement_tolerance_mm: None,
        }
    }
}

impl Default for Timing {
    /// 80 % torque derating, 0.5 mm settle band, 1 mm largest overshoot, damping ratio 0.6, a
    /// 15 % approach speed share, a 1 s wake pause, no shaping, every joint's limits from its servo (our defaults; a user changes them per
    /// scene).
    fn default() -> Timing {
        Timing {
            torque_derating_pct: 80.0,
            settle_band_mm: 0.5,
            max_overshoot_mm: 1.0,
            damping_ratio: 0.6,
            approach_speed_share_pct: 15.0,
            wake_pause_ms: 1000.0,
            shaping: Shaping::None,
            joint_limits: Vec::new(),
        }
    }
}

impl Default for Workspace {
    /// No table, no objects.
    fn default() -> Workspace {
        Workspace {
            table_height_mm: None,
            boxes: Vec::new(),
            trays: Vec::new(),
        }
    }
}

impl Default for LinkSettings {
    /// The simulated device at 115200 baud, 50 setpoints a second (one per 20 ms servo frame).
    fn default() -> LinkSettings {
        LinkSettings {
            device: Device::Simulated,
            baud: 115_200,
            rate_hz: 50.0,
        }
    }
}
