//! The field table: every number of the scene file, one row each, grouped by the document type
//! that holds it. A row gives the key (with its unit suffix), the unit, the allowed range and
//! where its ends come from, the decimals a save keeps, the editor's label, a one-line meaning
//! and the accessor. Everything else — decoding, encoding, range checks, SI conversion, the arm
//! form, `docs/` and the JSON Schema — reads these rows. Adding a number to the file is one row
//! here plus the field in `document.rs`.
//!
//! Each group's `ROWS` lists its rows in the order they are written and shown.

use armwright_trajectory::{MAX_SAMPLE_RATE_HZ, MIN_SAMPLE_RATE_HZ};

use super::document::*;
use super::field::{Access, Field, Presence, Range, Unit};

/// A bench arm fits inside a metre; a length typed in metres where mm are asked is caught.
const BENCH: &str = "a bench arm fits within about a metre (from memory)";
/// An angle of one turn either way.
const TURN: &str = "one turn either way";
/// Hobby-servo datasheets, with room to spare.
const HOBBY: &str = "hobby-servo datasheets (common practice), with room to spare";
/// The hobby-servo pulse range.
const PULSE: &str = "the hobby-servo pulse range (common practice)";
/// A share in percent.
const SHARE: &str = "a share of the whole";
/// A direction's components.
const ANY_DIRECTION: &str = "any direction; only its way counts";
/// Masses of a bench arm's parts.
const MASSES: &str = "parts of a bench arm weigh grams to a few kilograms (from memory)";

/// Decimals for lengths in mm: a micrometre.
const MM_DECIMALS: u32 = 3;
/// Decimals for angles in degrees: a ten-thousandth of a degree (0.35 µm at 200 mm).
const DEG_DECIMALS: u32 = 4;

/// Sizes of a horizontal-jointed arm (`arm.dimensions` when `arm.type` is `scara`).
pub mod scara {
    use super::*;

    /// Height of the arm's plane above the base.
    pub const BASE_HEIGHT: Field<ScaraSize> = Field::<ScaraSize>::new(
        "base_height_mm",
        Unit::Mm,
        Range::within(0.0, 1000.0),
        BENCH,
        MM_DECIMALS,
        "base height",
        "height of the arm's plane above the base",
        Access::Number(|s| s.base_height_mm, |s, v| s.base_height_mm = v),
    );
    /// Shoulder axis to elbow axis.
    pub const UPPER_ARM: Field<ScaraSize> = Field::<ScaraSize>::new(
        "upper_arm_mm",
        Unit::Mm,
        Range::above(0.0, 1000.0),
        BENCH,
        MM_DECIMALS,
        "upper arm",
        "shoulder axis to elbow axis",
        Access::Number(|s| s.upper_arm_mm, |s, v| s.upper_arm_mm = v),
    );
    /// Elbow axis to wrist axis.
    pub const FOREARM: Field<ScaraSize> = Field::<ScaraSize>::new(
        "forearm_mm",
        Unit::Mm,
        Range::above(0.0, 1000.0),
        BENCH,
        MM_DECIMALS,
        "forearm",
        "elbow axis to wrist axis",
        Access::Number(|s| s.forearm_mm, |s, v| s.forearm_mm = v),
    );
    /// Wrist down to the tool point at lift zero.
    pub const TOOL_DROP: Field<ScaraSize> = Field::<ScaraSize>::new(
        "tool_drop_mm",
        Unit::Mm,
        Range::within(0.0, 1000.0),
        BENCH,
        MM_DECIMALS,
        "tool drop",
        "wrist (at lift zero) down to the tool point",
        Access::Number(|s| s.tool_drop_mm, |s, v| s.tool_drop_mm = v),
    );
    /// In file order.
    pub const ROWS: &[Field<ScaraSize>] = &[BASE_HEIGHT, UPPER_ARM, FOREARM, TOOL_DROP];
}

/// Sizes of a vertical articulated arm (`arm.dimensions` for `articulated4` and `articulated5`).
pub mod articulated {
    use super::*;

    /// Base to the shoulder axis.
    pub const BASE_HEIGHT: Field<ArticulatedSize> = Field::<ArticulatedSize>::new(
        "base_height_mm",
        Unit::Mm,
        Range::within(0.0, 1000.0),
        BENCH,
        MM_DECIMALS,
        "base height",
        "base to the shoulder axis",
        Access::Number(|s| s.base_height_mm, |s, v| s.base_height_mm = v),
    );
    /// Shoulder axis to elbow axis.
    pub const UPPER_ARM: Field<ArticulatedSize> = Field::<ArticulatedSize>::new(
        "upper_arm_mm",
        Unit::Mm,
        Range::above(0.0, 1000.0),
        BENCH,
        MM_DECIMALS,
        "upper arm",
        "shoulder axis to elbow axis",
        Access::Number(|s| s.upper_arm_mm, |s, v| s.upper_arm_mm = v),
    );
    /// Elbow axis to wrist pitch axis.
    pub const FOREARM: Field<ArticulatedSize> = Field::<ArticulatedSize>::new(
        "forearm_mm",
        Unit::Mm,
        Range::above(0.0, 1000.0),
        BENCH,
        MM_DECIMALS,
        "forearm",
        "elbow axis to wrist pitch axis",
        Access::Number(|s| s.forearm_mm, |s, v| s.forearm_mm = v),
    );
    /// Wrist pitch axis to the tool point.
    pub const WRIST_TO_TOOL: Field<ArticulatedSize> = Field::<ArticulatedSize>::new(
        "wrist_to_tool_mm",
        Unit::Mm,
        Range::within(0.0, 1000.0),
        BENCH,
        MM_DECIMALS,
        "wrist to tool point",
        "wrist pitch axis to the tool point",
        Access::Number(|s| s.wrist_to_tool_mm, |s, v| s.wrist_to_tool_mm = v),
    );
    /// In file order.
    pub const ROWS: &[Field<ArticulatedSize>] = &[BASE_HEIGHT, UPPER_ARM, FOREARM, WRIST_TO_TOOL];
}

/// One standard Denavit–Hartenberg row (`arm.chain.rows[i]`).
pub mod dh_row {
    use super::*;

    /// Link length a.
    pub const A: Field<DhRowDoc> = Field::<DhRowDoc>::new(
        "a_mm",
        Unit::Mm,
        Range::within(-1000.0, 1000.0),
        BENCH,
        MM_DECIMALS,
        "link length a",
        "link length a: along the new X axis",
        Access::Number(|r| r.a_mm, |r, v| r.a_mm = v),
    );
    /// Link twist α.
    pub const ALPHA: Field<DhRowDoc> = Field::<DhRowDoc>::new(
        "alpha_deg",
        Unit::Deg,
        Range::within(-360.0, 360.0),
        TURN,
        DEG_DECIMALS,
        "link twist α",
        "link twist α: about the new X axis",
        Access::Number(|r| r.alpha_deg, |r, v| r.alpha_deg = v),
    );
    /// Link offset d.
    pub const D: Field<DhRowDoc> = Field::<DhRowDoc>::new(
        "d_mm",
        Unit::Mm,
        Range::within(-1000.0, 1000.0),
        BENCH,
        MM_DECIMALS,
        "link offset d",
        "link offset d: along the joint's Z axis (a sliding joint's position adds to it)",
        Access::Number(|r| r.d_mm, |r, v| r.d_mm = v),
    );
    /// Joint angle offset θ.
    pub const THETA: Field<DhRowDoc> = Field::<DhRowDoc>::new(
        "theta_deg",
        Unit::Deg,
        Range::within(-360.0, 360.0),
        TURN,
        DEG_DECIMALS,
        "angle offset θ",
        "joint angle offset θ: about the joint's Z axis (a turning joint's position adds to it)",
        Access::Number(|r| r.theta_deg, |r, v| r.theta_deg = v),
    );
    /// In file order.
    pub const ROWS: &[Field<DhRowDoc>] = &[A, ALPHA, D, THETA];
}

/// One joint given by its axis (`arm.chain.axes[i]`).
pub mod axis {
    use super::*;

    /// Axis direction.
    pub const AXIS: Field<AxisDoc> = Field::<AxisDoc>::new(
        "axis",
        Unit::Ratio,
        Range::within(-1000.0, 1000.0),
        ANY_DIRECTION,
        6,
        "axis",
        "axis direction in the base frame, every joint at zero (any non-zero length)",
        Access::List {
            len: 3,
            get: |a| Some(a.axis.to_vec()),
            set: |a, v| a.axis = triple(v),
        },
    );
    /// A point on the axis.
    pub const ORIGIN: Field<AxisDoc> = Field::<AxisDoc>::new(
        "origin_mm",
        Unit::Mm,
        Range::within(-1000.0, 1000.0),
        BENCH,
        MM_DECIMALS,
        "point on axis",
        "a point on the axis in the base frame, every joint at zero",
        Access::List {
            len: 3,
            get: |a| Some(a.origin_mm.to_vec()),
            set: |a, v| a.origin_mm = triple(v),
        },
    );
    /// In file order.
    pub const ROWS: &[Field<AxisDoc>] = &[AXIS, ORIGIN];
}

/// A fixed placement: `arm.chain.tool` or `arm.chain.tool_home`.
pub mod placement {
    use super::*;

    /// Shift.
    pub const POSITION: Field<PlacementDoc> = Field::<PlacementDoc>::new(
        "position_mm",
        Unit::Mm,
        Range::within(-1000.0, 1000.0),
        BENCH,
        MM_DECIMALS,
        "tool shift",
        "shift along X, Y, Z",
        Access::List {
            len: 3,
            get: |p| Some(p.position_mm.to_vec()),
            set: |p, v| p.position_mm = triple(v),
        },
    );
    /// Turn.
    pub const ROTATION: Field<PlacementDoc> = Field::<PlacementDoc>::new(
        "rotation_xyz_deg",
        Unit::Deg,
        Range::within(-360.0, 360.0),
        TURN,
        DEG_DECIMALS,
        "tool turn",
        "turns about the fixed X, Y and Z axes, applied as Rz·Ry·Rx",
        Access::List {
            len: 3,
            get: |p| Some(p.rotation_xyz_deg.to_vec()),
            set: |p, v| p.rotation_xyz_deg = triple(v),
        },
    );
    /// In file order.
    pub const ROWS: &[Field<PlacementDoc>] = &[POSITION, ROTATION];
}

/// A joint's limits and home (`arm.joints[i]`); keys in `_deg` or `_mm` by the joint's kind.
pub mod joint {
    use super::*;

    /// Travel of a sliding joint either way.
    const SLIDE: Range = Range::within(-1000.0, 1000.0);

    /// Lowest position.
    pub const MIN: Field<JointDoc> = Field::<JointDoc>::new(
        "min_deg",
        Unit::Position,
        Range::within(-360.0, 360.0),
        TURN,
        DEG_DECIMALS,
        "lowest position",
        "lowest position the joint may take",
        Access::Number(|j| j.min, |j, v| j.min = v),
    )
    .prismatic("min_mm", SLIDE);
    /// Highest position.
    pub const MAX: Field<JointDoc> = Field::<JointDoc>::new(
        "max_deg",
        Unit::Position,
        Range::within(-360.0, 360.0),
        TURN,
        DEG_DECIMALS,
        "highest position",
        "highest position the joint may take",
        Access::Number(|j| j.max, |j, v| j.max = v),
    )
    .prismatic("max_mm", SLIDE);
    /// Home position.
    pub const HOME: Field<JointDoc> = Field::<JointDoc>::new(
        "home_deg",
        Unit::Position,
        Range::within(-360.0, 360.0),
        TURN,
        DEG_DECIMALS,
        "home position",
        "home position, inside the limits: the rest pose a limp arm is woken at and a stream may \
         park in",
        Access::Number(|j| j.home, |j, v| j.home = v),
    )
    .prismatic("home_mm", SLIDE);
    /// In file order.
    pub const ROWS: &[Field<JointDoc>] = &[MIN, MAX, HOME];
}

/// A joint's servo (`arm.joints[i].servo`).
pub mod servo {
    use super::*;

    /// Stall torque.
    pub const STALL_TORQUE: Field<ServoDoc> = Field::<ServoDoc>::new(
        "stall_torque_ncm",
        Unit::NCm,
        Range::above(0.0, 5000.0),
        HOBBY,
        2,
        "stall torque",
        "torque at which the servo stalls at its rated voltage (a \"20 kg·cm\" servo is about 196 N·cm)",
        Access::Number(|s| s.stall_torque_ncm, |s, v| s.stall_torque_ncm = v),
    );
    /// No-load speed.
    pub const NO_LOAD_SPEED: Field<ServoDoc> = Field::<ServoDoc>::new(
        "no_load_speed_deg_per_s",
        Unit::DegPerS,
        Range::above(0.0, 3000.0),
        HOBBY,
        2,
        "no-load speed",
        "output speed with no load (0.17 s per 60° is about 353 °/s)",
        Access::Number(
            |s| s.no_load_speed_deg_per_s,
            |s, v| s.no_load_speed_deg_per_s = v,
        ),
    );
    /// Deadband.
    pub const DEADBAND: Field<ServoDoc> = Field::<ServoDoc>::new(
        "deadband_us",
        Unit::Us,
        Range::within(0.0, 100.0),
        HOBBY,
        2,
        "deadband",
        "pulse-width change the servo ignores",
        Access::Number(|s| s.deadband_us, |s, v| s.deadband_us = v),
    );
    /// Backlash.
    pub const BACKLASH: Field<ServoDoc> = Field::<ServoDoc>::new(
        "backlash_deg",
        Unit::Deg,
        Range::within(0.0, 20.0),
        HOBBY,
        DEG_DECIMALS,
        "backlash",
        "gear play at the output, total",
        Access::Number(|s| s.backlash_deg, |s, v| s.backlash_deg = v),
    );
    /// Mass.
    pub const MASS: Field<ServoDoc> = Field::<ServoDoc>::new(
        "mass_g",
        Unit::G,
        Range::above(0.0, 2000.0),
        HOBBY,
        2,
        "servo mass",
        "mass of the servo",
        Access::Number(|s| s.mass_g, |s, v| s.mass_g = v),
    );
    /// Mount offset.
    pub const MOUNT_OFFSET: Field<ServoDoc> = Field::<ServoDoc>::new(
        "mount_offset_mm",
        Unit::Mm,
        Range::within(-1000.0, 1000.0),
        BENCH,
        MM_DECIMALS,
        "servo mount offset",
        "where the servo's centre of mass sits from its joint's origin, in the frame of the link before the joint",
        Access::List {
            len: 3,
            get: |s| Some(s.mount_offset_mm.to_vec()),
            set: |s, v| s.mount_offset_mm = triple(v),
        },
    );
    /// Pinion radius, sliding joints only.
    pub const PINION_RADIUS: Field<ServoDoc> = Field::<ServoDoc>::new(
        "pinion_radius_mm",
        Unit::Mm,
        Range::above(0.0, 200.0),
        BENCH,
        MM_DECIMALS,
        "pinion radius",
        "for a sliding joint only: rack pinion (or lead) radius, mm of travel per radian of servo output",
        Access::Maybe(|s| s.pinion_radius_mm, |s, v| s.pinion_radius_mm = v),
    )
    .presence(Presence::PrismaticOnly);
    /// In file order; `proportional_band` is an object of its own ([`band`]).
    pub const ROWS: &[Field<ServoDoc>] = &[
        STALL_TORQUE,
        NO_LOAD_SPEED,
        DEADBAND,
        BACKLASH,
        MASS,
        MOUNT_OFFSET,
        PINION_RADIUS,
    ];
}

/// The servo's proportional band (`arm.joints[i].servo.proportional_band`): exactly one of the
/// two.
pub mod band {
    use super::*;

    /// Band in µs of pulse.
    pub const US: Field<BandDoc> = Field::<BandDoc>::new(
        "us",
        Unit::Us,
        Range::above(0.0, 1000.0),
        HOBBY,
        2,
        "proportional band",
        "pulse-width error across which the servo's drive goes from zero to full, in µs",
        Access::Maybe(
            |b| match b {
                BandDoc::Us(us) => Some(*us),
                BandDoc::Deg(_) => None,
            },
            |b, v| {
                if let Some(us) = v {
                    *b = BandDoc::Us(us);
                }
            },
        ),
    )
    .presence(Presence::Optional);
    /// Band in degrees of servo output.
    pub const DEG: Field<BandDoc> = Field::<BandDoc>::new(
        "deg",
        Unit::Deg,
        Range::above(0.0, 180.0),
        HOBBY,
        DEG_DECIMALS,
        "proportional band",
        "the same band in degrees of servo output, converted through the calibration",
        Access::Maybe(
            |b| match b {
                BandDoc::Deg(deg) => Some(*deg),
                BandDoc::Us(_) => None,
            },
            |b, v| {
                if let Some(deg) = v {
                    *b = BandDoc::Deg(deg);
                }
            },
        ),
    )
    .presence(Presence::Optional);
    /// In file order.
    pub const ROWS: &[Field<BandDoc>] = &[US, DEG];
}

/// One measured calibration point (`arm.joints[i].calibration.points[k]`).
pub mod calibration_point {
    use super::*;

    /// Joint position.
    pub const POSITION: Field<CalibrationPoint> = Field::<CalibrationPoint>::new(
        "angle_deg",
        Unit::Position,
        Range::within(-360.0, 360.0),
        TURN,
        DEG_DECIMALS,
        "position",
        "joint position measured at this point",
        Access::Number(|p| p.position, |p, v| p.position = v),
    )
    .prismatic("position_mm", Range::within(-1000.0, 1000.0));
    /// Pulse width.
    pub const PULSE: Field<CalibrationPoint> = Field::<CalibrationPoint>::new(
        "pulse_us",
        Unit::Us,
        Range::within(500.0, 2500.0),
        super::PULSE,
        0,
        "pulse",
        "pulse width that holds the joint at that position",
        Access::Whole(|p| p.pulse_us, |p, v| p.pulse_us = v),
    );
    /// In file order.
    pub const ROWS: &[Field<CalibrationPoint>] = &[POSITION, PULSE];
}

/// A joint's calibration (`arm.joints[i].calibration`), besides its two points.
pub mod calibration {
    use super::*;

    /// Shortest accepted pulse.
    pub const PULSE_MIN: Field<CalibrationDoc> = Field::<CalibrationDoc>::new(
        "pulse_min_us",
        Unit::Us,
        Range::within(500.0, 2500.0),
        PULSE,
        0,
        "shortest pulse",
        "shortest pulse the servo accepts",
        Access::Whole(|c| c.pulse_min_us, |c, v| c.pulse_min_us = v),
    );
    /// Longest accepted pulse.
    pub const PULSE_MAX: Field<CalibrationDoc> = Field::<CalibrationDoc>::new(
        "pulse_max_us",
        Unit::Us,
        Range::within(500.0, 2500.0),
        PULSE,
        0,
        "longest pulse",
        "longest pulse the servo accepts",
        Access::Whole(|c| c.pulse_max_us, |c, v| c.pulse_max_us = v),
    );
    /// Calibration uncertainty, optional.
    pub const UNCERTAINTY: Field<CalibrationDoc> = Field::<CalibrationDoc>::new(
        "uncertainty_deg",
        Unit::Position,
        Range::within(0.0, 45.0),
        "a calibration off by more than an eighth of a turn is no calibration (our choice)",
        DEG_DECIMALS,
        "calibration uncertainty",
        "standard deviation of the joint's position error after calibration (calibrate --write sets it from the fit's residuals); placement success counts it as a Gaussian error of the joint; absent: 0.5° (0.5 mm), a stated default",
        Access::Maybe(|c| c.uncertainty, |c, v| c.uncertainty = v),
    )
    .prismatic("uncertainty_mm", Range::within(0.0, 50.0))
    .presence(Presence::Optional);
    /// In file order, after `points`.
    pub const ROWS: &[Field<CalibrationDoc>] = &[PULSE_MIN, PULSE_MAX, UNCERTAINTY];
}

/// The link a joint moves (`arm.joints[i].link`).
pub mod link_mass {
    use super::*;

    /// Mass.
    pub const MASS: Field<LinkMassDoc> = Field::<LinkMassDoc>::new(
        "mass_g",
        Unit::G,
        Range::within(0.0, 5000.0),
        MASSES,
        2,
        "link mass",
        "mass of the link the joint moves",
        Access::Number(|l| l.mass_g, |l, v| l.mass_g = v),
    );
    /// Centre of mass.
    pub const CENTRE: Field<LinkMassDoc> = Field::<LinkMassDoc>::new(
        "centre_mm",
        Unit::Mm,
        Range::within(-1000.0, 1000.0),
        BENCH,
        MM_DECIMALS,
        "link centre of mass",
        "centre of mass in the joint's frame",
        Access::List {
            len: 3,
            get: |l| Some(l.centre_mm.to_vec()),
            set: |l, v| l.centre_mm = triple(v),
        },
    );
    /// Inertia, optional.
    pub const INERTIA: Field<LinkMassDoc> = Field::<LinkMassDoc>::new(
        "inertia_g_mm2",
        Unit::GMm2,
        Range::within(-1e9, 1e9),
        "a 5 kg link a metre long has about 4e8 g·mm² about its centre (textbook rod, m·L²/12)",
        1,
        "link inertia",
        "inertia about the centre of mass: [Ixx, Iyy, Izz, Ixy, Ixz, Iyz]; absent means a point mass",
        Access::List {
            len: 6,
            get: |l| l.inertia_g_mm2.map(|i| i.to_vec()),
            set: |l, v| {
                let mut inertia = [0.0; 6];
                for (slot, value) in inertia.iter_mut().zip(v) {
                    *slot = *value;
                }
                l.inertia_g_mm2 = Some(inertia);
            },
        },
    )
    .presence(Presence::Optional);
    /// Collision radius.
    pub const RADIUS: Field<LinkMassDoc> = Field::<LinkMassDoc>::new(
        "radius_mm",
        Unit::Mm,
        Range::above(0.0, 200.0),
        "hobby-servo brackets are 10–60 mm across (from memory), with room to spare",
        MM_DECIMALS,
        "collision radius",
        "radius of the link's collision capsule (the last joint's link is the gripper or tool); absent: half the width of its servos, estimated from their mass",
        Access::Maybe(|l| l.radius_mm, |l, v| l.radius_mm = v),
    )
    .presence(Presence::Optional);
    /// In file order.
    pub const ROWS: &[Field<LinkMassDoc>] = &[MASS, CENTRE, INERTIA, RADIUS];
}

/// The tool's mass (`arm.tool`).
pub mod tool {
    use super::*;

    /// Mass.
    pub const MASS: Field<ToolMassDoc> = Field::<ToolMassDoc>::new(
        "mass_g",
        Unit::G,
        Range::within(0.0, 5000.0),
        MASSES,
        2,
        "tool mass",
        "mass of the tool (gripper body and its servo)",
        Access::Number(|t| t.mass_g, |t, v| t.mass_g = v),
    );
    /// Centre of mass.
    pub const CENTRE: Field<ToolMassDoc> = Field::<ToolMassDoc>::new(
        "centre_mm",
        Unit::Mm,
        Range::within(-1000.0, 1000.0),
        BENCH,
        MM_DECIMALS,
        "tool centre of mass",
        "the tool's centre of mass in the tool frame",
        Access::List {
            len: 3,
            get: |t| Some(t.centre_mm.to_vec()),
            set: |t, v| t.centre_mm = triple(v),
        },
    );
    /// In file order.
    pub const ROWS: &[Field<ToolMassDoc>] = &[MASS, CENTRE];
}

/// The gripper channel (`arm.gripper`).
pub mod gripper {
    use super::*;

    /// Open pulse.
    pub const OPEN: Field<GripperDoc> = Field::<GripperDoc>::new(
        "open_pulse_us",
        Unit::Us,
        Range::within(500.0, 2500.0),
        PULSE,
        0,
        "gripper open pulse",
        "pulse that opens the jaws",
        Access::Whole(|g| g.open_pulse_us, |g, v| g.open_pulse_us = v),
    );
    /// Closed pulse.
    pub const CLOSED: Field<GripperDoc> = Field::<GripperDoc>::new(
        "closed_pulse_us",
        Unit::Us,
        Range::within(500.0, 2500.0),
        PULSE,
        0,
        "gripper closed pulse",
        "pulse that closes the jaws",
        Access::Whole(|g| g.closed_pulse_us, |g, v| g.closed_pulse_us = v),
    );
    /// In file order.
    pub const ROWS: &[Field<GripperDoc>] = &[OPEN, CLOSED];
}

/// The arm's own numbers (`arm`).
pub mod arm {
    use super::*;

    /// Payload.
    pub const PAYLOAD: Field<ArmDoc> = Field::<ArmDoc>::new(
        "payload_g",
        Unit::G,
        Range::within(0.0, 5000.0),
        MASSES,
        2,
        "payload",
        "payload held at the tool point",
        Access::Number(|a| a.payload_g, |a, v| a.payload_g = v),
    );
    /// In file order, after `tool`.
    pub const ROWS: &[Field<ArmDoc>] = &[PAYLOAD];
}

/// A waypoint's numbers (`waypoints[i]`).
pub mod waypoint {
    use super::*;

    /// Joint positions.
    pub const JOINTS: Field<Waypoint> = Field::<Waypoint>::new(
        "joints_deg_or_mm",
        Unit::Position,
        Range::within(-1000.0, 1000.0),
        "each also lies inside its joint's limits",
        DEG_DECIMALS,
        "joint positions",
        "one position per joint, base first: degrees for a turning joint, mm for a sliding one",
        Access::List {
            len: 0,
            get: |w| Some(w.joints_deg_or_mm.clone()),
            set: |w, v| w.joints_deg_or_mm = v.to_vec(),
        },
    );
    /// Speed share. Four decimals: the retimer finds shares to a fine step, and the dry run's
    /// peak torque use of the peg sorter moved from 0.955 to 0.969 when its shares were cut to
    /// two.
    pub const SPEED_SHARE: Field<Waypoint> = Field::<Waypoint>::new(
        "speed_share_pct",
        Unit::Percent,
        Range::above(0.0, 100.0),
        SHARE,
        4,
        "speed share",
        "share of each joint's speed and acceleration limits the move may use",
        Access::Number(|w| w.speed_share_pct, |w, v| w.speed_share_pct = v),
    )
    .presence(Presence::Defaulted);
    /// Dwell.
    pub const DWELL: Field<Waypoint> = Field::<Waypoint>::new(
        "dwell_ms",
        Unit::Ms,
        Range::within(0.0, 600_000.0),
        "ten minutes, our choice",
        1,
        "dwell",
        "pause at a stop",
        Access::Number(|w| w.dwell_ms, |w, v| w.dwell_ms = v),
    )
    .presence(Presence::Defaulted);
    /// Placement tolerance, optional.
    pub const PLACEMENT_TOLERANCE: Field<Waypoint> = Field::<Waypoint>::new(
        "placement_tolerance_mm",
        Unit::Mm,
        Range::above(0.0, 100.0),
        "a hobby arm places to a few mm; 100 mm is no tolerance at all (our choice)",
        MM_DECIMALS,
        "placement tolerance",
        "radius of the circle (horizontal) a pick or place at this waypoint must land within, for placement success; absent: 2 mm",
        Access::Maybe(
            |w| w.placement_tolerance_mm,
            |w, v| w.placement_tolerance_mm = v,
        ),
    )
    .presence(Presence::Optional);
    /// In file order; `name`, `move`, `profile`, `arrival` and `gripper` are words.
    pub const ROWS: &[Field<Waypoint>] = &[JOINTS, SPEED_SHARE, DWELL, PLACEMENT_TOLERANCE];
}

/// Timing settings (`timing`).
pub mod timing {
    use super::*;

    /// Torque derating.
    pub const TORQUE_DERATING: Field<Timing> = Field::<Timing>::new(
        "torque_derating_pct",
        Unit::Percent,
        Range::above(0.0, 100.0),
        SHARE,
        2,
        "torque share",
        "share of each servo's stall torque counted as its rating",
        Access::Number(|t| t.torque_derating_pct, |t, v| t.torque_derating_pct = v),
    )
    .presence(Presence::Defaulted);
    /// Settle band.
    pub const SETTLE_BAND: Field<Timing> = Field::<Timing>::new(
        "settle_band_mm",
        Unit::Mm,
        Range::above(0.0, 50.0),
        "a bench arm settles to well under 50 mm (from memory)",
        MM_DECIMALS,
        "settle band",
        "the tool point counts as settled inside this distance of its target",
        Access::Number(|t| t.settle_band_mm, |t, v| t.settle_band_mm = v),
    )
    .presence(Presence::Defaulted);
    /// Largest overshoot.
    pub const MAX_OVERSHOOT: Field<Timing> = Field::<Timing>::new(
        "max_overshoot_mm",
        Unit::Mm,
        Range::above(0.0, 100.0),
        "a tenth of a metre-long arm's reach (our choice)",
        MM_DECIMALS,
        "largest overshoot",
        "largest allowed overshoot of the tool point (the retiming target)",
        Access::Number(|t| t.max_overshoot_mm, |t, v| t.max_overshoot_mm = v),
    )
    .presence(Presence::Defaulted);
    /// Damping ratio.
    pub const DAMPING_RATIO: Field<Timing> = Field::<Timing>::new(
        "damping_ratio",
        Unit::Ratio,
        Range::above(0.0, 10.0),
        "servo position loops run from lightly damped to heavily overdamped (from memory)",
        3,
        "damping ratio",
        "damping ratio of the servo response model",
        Access::Number(|t| t.damping_ratio, |t, v| t.damping_ratio = v),
    )
    .presence(Presence::Defaulted);
    /// Speed share of the approach that starts every stream.
    pub const APPROACH_SPEED_SHARE: Field<Timing> = Field::<Timing>::new(
        "approach_speed_share_pct",
        Unit::Percent,
        Range::above(0.0, 100.0),
        SHARE,
        2,
        "approach speed share",
        "share of each joint's limits the approach from where the device holds the arm to the \
         first waypoint may use (and the park move to the rest pose)",
        Access::Number(
            |t| t.approach_speed_share_pct,
            |t, v| t.approach_speed_share_pct = v,
        ),
    )
    .presence(Presence::Defaulted);
    /// Pause after waking a limp arm at its rest pose.
    pub const WAKE_PAUSE: Field<Timing> = Field::<Timing>::new(
        "wake_pause_ms",
        Unit::Ms,
        Range::within(0.0, 10_000.0),
        "ten seconds, our choice; a hobby servo crosses its whole travel in under a second \
         (common practice)",
        1,
        "wake pause",
        "how long the rest pose is held after a limp arm is woken there, before the approach",
        Access::Number(|t| t.wake_pause_ms, |t, v| t.wake_pause_ms = v),
    )
    .presence(Presence::Defaulted);
    /// In file order; `shaping` is a word and `joint_limits` a list of [`joint_limit`]s.
    pub const ROWS: &[Field<Timing>] = &[
        TORQUE_DERATING,
        SETTLE_BAND,
        MAX_OVERSHOOT,
        DAMPING_RATIO,
        APPROACH_SPEED_SHARE,
        WAKE_PAUSE,
    ];
}

/// A joint's own limits (`timing.joint_limits[i]`); keys by the named joint's kind.
pub mod joint_limit {
    use super::*;

    /// Largest speed.
    pub const VELOCITY: Field<JointLimitDoc> = Field::<JointLimitDoc>::new(
        "max_velocity_deg_per_s",
        Unit::Rate,
        Range::above(0.0, 3000.0),
        HOBBY,
        3,
        "largest speed",
        "largest speed, replacing the one from the servo",
        Access::Maybe(
            |l| l.max_velocity_deg_or_mm_per_s,
            |l, v| l.max_velocity_deg_or_mm_per_s = v,
        ),
    )
    .prismatic("max_velocity_mm_per_s", Range::above(0.0, 3000.0))
    .presence(Presence::Optional);
    /// Largest acceleration.
    pub const ACCELERATION: Field<JointLimitDoc> = Field::<JointLimitDoc>::new(
        "max_acceleration_deg_per_s2",
        Unit::Acceleration,
        Range::above(0.0, 100_000.0),
        HOBBY,
        2,
        "largest acceleration",
        "largest acceleration, replacing the one from the servo",
        Access::Maybe(
            |l| l.max_acceleration_deg_or_mm_per_s2,
            |l, v| l.max_acceleration_deg_or_mm_per_s2 = v,
        ),
    )
    .prismatic("max_acceleration_mm_per_s2", Range::above(0.0, 100_000.0))
    .presence(Presence::Optional);
    /// Largest jerk; without it, the acceleration limit ÷ 0.05 s.
    pub const JERK: Field<JointLimitDoc> = Field::<JointLimitDoc>::new(
        "max_jerk_deg_per_s3",
        Unit::Jerk,
        Range::above(0.0, 10_000_000.0),
        "the largest acceleration built up within half a 20 ms servo frame (from memory)",
        1,
        "largest jerk",
        "largest rate of change of acceleration, replacing the acceleration limit ÷ 0.05 s",
        Access::Maybe(
            |l| l.max_jerk_deg_or_mm_per_s3,
            |l, v| l.max_jerk_deg_or_mm_per_s3 = v,
        ),
    )
    .prismatic("max_jerk_mm_per_s3", Range::above(0.0, 10_000_000.0))
    .presence(Presence::Optional);
    /// In file order, after `joint`.
    pub const ROWS: &[Field<JointLimitDoc>] = &[VELOCITY, ACCELERATION, JERK];
}

/// An input of the input arm (`inputs[i]`), besides its joint and points.
pub mod input {
    use super::*;

    /// The input's number.
    pub const INPUT: Field<InputDoc> = Field::<InputDoc>::new(
        "input",
        Unit::Ratio,
        Range::within(0.0, 7.0),
        "a readings line of the link protocol carries 1 to 8 inputs",
        0,
        "input",
        "the input's number on the device, from 0 (its place in the device's readings)",
        Access::Whole(|i| i.input, |i, v| i.input = v),
    );
    /// In file order, after `joint`.
    pub const ROWS: &[Field<InputDoc>] = &[INPUT];
}

/// A measured point of an input's mapping (`inputs[i].points[j]`).
pub mod input_point {
    use super::*;

    /// The reading.
    pub const READING: Field<InputPointDoc> = Field::<InputPointDoc>::new(
        "reading",
        Unit::Ratio,
        Range::within(0.0, 4095.0),
        "the link protocol's 12-bit readings scale",
        0,
        "reading",
        "what the input read with the joint at this position",
        Access::Whole(|p| p.reading, |p, v| p.reading = v),
    );
    /// Joint position.
    pub const POSITION: Field<InputPointDoc> = Field::<InputPointDoc>::new(
        "angle_deg",
        Unit::Position,
        Range::within(-360.0, 360.0),
        TURN,
        DEG_DECIMALS,
        "position",
        "joint position at that reading",
        Access::Number(|p| p.position, |p, v| p.position = v),
    )
    .prismatic("position_mm", Range::within(-1000.0, 1000.0));
    /// In file order.
    pub const ROWS: &[Field<InputPointDoc>] = &[READING, POSITION];
}

/// The workspace's own numbers (`workspace`).
pub mod workspace {
    use super::*;

    /// Table height, optional.
    pub const TABLE_HEIGHT: Field<Workspace> = Field::<Workspace>::new(
        "table_height_mm",
        Unit::Mm,
        Range::within(-1000.0, 1000.0),
        BENCH,
        MM_DECIMALS,
        "table height",
        "height of the table plane in the base frame; absent when there is no table",
        Access::Maybe(|w| w.table_height_mm, |w, v| w.table_height_mm = v),
    )
    .presence(Presence::Optional);
    /// In file order, before `boxes` and `trays`.
    pub const ROWS: &[Field<Workspace>] = &[TABLE_HEIGHT];
}

/// A box (`workspace.boxes[i]`).
pub mod boxes {
    use super::*;

    /// Position.
    pub const POSITION: Field<BoxDoc> = Field::<BoxDoc>::new(
        "position_mm",
        Unit::Mm,
        Range::within(-2000.0, 2000.0),
        BENCH,
        MM_DECIMALS,
        "position",
        "centre of its bottom face in the base frame",
        Access::List {
            len: 3,
            get: |b| Some(b.position_mm.to_vec()),
            set: |b, v| b.position_mm = triple(v),
        },
    );
    /// Size.
    pub const SIZE: Field<BoxDoc> = Field::<BoxDoc>::new(
        "size_mm",
        Unit::Mm,
        Range::above(0.0, 2000.0),
        BENCH,
        MM_DECIMALS,
        "size",
        "size along X, Y and Z",
        Access::List {
            len: 3,
            get: |b| Some(b.size_mm.to_vec()),
            set: |b, v| b.size_mm = triple(v),
        },
    );
    /// In file order, after `name`.
    pub const ROWS: &[Field<BoxDoc>] = &[POSITION, SIZE];
}

/// A tray (`workspace.trays[i]`).
pub mod tray {
    use super::*;

    /// Position.
    pub const POSITION: Field<TrayDoc> = Field::<TrayDoc>::new(
        "position_mm",
        Unit::Mm,
        Range::within(-2000.0, 2000.0),
        BENCH,
        MM_DECIMALS,
        "position",
        "centre of its bottom face in the base frame",
        Access::List {
            len: 3,
            get: |t| Some(t.position_mm.to_vec()),
            set: |t, v| t.position_mm = triple(v),
        },
    );
    /// Size.
    pub const SIZE: Field<TrayDoc> = Field::<TrayDoc>::new(
        "size_mm",
        Unit::Mm,
        Range::above(0.0, 2000.0),
        BENCH,
        MM_DECIMALS,
        "size",
        "size along X, Y and Z",
        Access::List {
            len: 3,
            get: |t| Some(t.size_mm.to_vec()),
            set: |t, v| t.size_mm = triple(v),
        },
    );
    /// Pockets.
    pub const POCKETS: Field<TrayDoc> = Field::<TrayDoc>::new(
        "pockets",
        Unit::Ratio,
        Range::within(1.0, 100.0),
        "our choice",
        0,
        "pockets",
        "pockets along X and along Y, whole numbers",
        Access::List {
            len: 2,
            get: |t| Some(t.pockets.map(f64::from).to_vec()),
            set: |t, v| {
                for (slot, value) in t.pockets.iter_mut().zip(v) {
                    // The decoder hands over whole numbers only.
                    *slot = *value as u32;
                }
            },
        },
    );
    /// In file order, after `name`.
    pub const ROWS: &[Field<TrayDoc>] = &[POSITION, SIZE, POCKETS];
}

/// Link settings (`link`).
pub mod link {
    use super::*;

    /// Baud.
    pub const BAUD: Field<LinkSettings> = Field::<LinkSettings>::new(
        "baud",
        Unit::Baud,
        Range::within(300.0, 4_000_000.0),
        "serial line speeds in use run from 300 baud to 4 Mbaud (common practice)",
        0,
        "baud",
        "serial line speed",
        Access::Whole(|l| l.baud, |l, v| l.baud = v),
    )
    .presence(Presence::Defaulted);
    /// Setpoint rate.
    pub const RATE: Field<LinkSettings> = Field::<LinkSettings>::new(
        "rate_hz",
        Unit::Hz,
        Range::within(MIN_SAMPLE_RATE_HZ, MAX_SAMPLE_RATE_HZ),
        "the rates the planner samples and the link streams at",
        3,
        "setpoint rate",
        "setpoints sent per second",
        Access::Number(|l| l.rate_hz, |l, v| l.rate_hz = v),
    )
    .presence(Presence::Defaulted);
    /// In file order, after `device`.
    pub const ROWS: &[Field<LinkSettings>] = &[BAUD, RATE];
}

/// The first three numbers read (the decoder has checked the count).
fn triple(values: &[f64]) -> [f64; 3] {
    let mut out = [0.0; 3];
    for (slot, value) in out.iter_mut().zip(values) {
        *slot = *value;
    }
    out
}
