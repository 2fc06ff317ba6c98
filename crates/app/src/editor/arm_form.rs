//! The arm settings form without its drawing: which fields it edits (each named by the JSON path
//! the scene validator uses), the text typed into each field, kept as typed so that a bad value
//! loses nothing, and the arm that text describes with every problem found in it. An arm is
//! handed on to the scene only when the whole scene with it passes the validator and the arm
//! can be built. No egui types live here.

use std::collections::BTreeMap;

use crate::scene::field::Field;
use crate::scene::field_table as table;
use crate::scene::{
    ArmDoc, ArmShape, BandDoc, JointDoc, JointKindDoc, PlacementDoc, Problem, Scene, build_arm,
    child, validate,
};

/// One setting of one joint.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum JointField {
    /// Lowest position, degrees or mm.
    Min,
    /// Highest position, degrees or mm.
    Max,
    /// Home position, degrees or mm.
    Home,
    /// Servo stall torque, N·cm.
    StallTorque,
    /// Servo no-load speed, °/s.
    NoLoadSpeed,
    /// Servo deadband, µs.
    Deadband,
    /// Servo proportional band, µs or degrees (as the scene gives it).
    ProportionalBand,
    /// Gear backlash at the output, degrees.
    Backlash,
    /// Servo mass, g.
    ServoMass,
    /// Pinion radius of a sliding joint's servo, mm.
    PinionRadius,
    /// Mass of the link the joint moves, g.
    LinkMass,
    /// Position of calibration point 0 or 1, degrees or mm.
    CalibrationPosition(usize),
    /// Pulse width of calibration point 0 or 1, µs.
    CalibrationPulse(usize),
    /// Shortest pulse the servo accepts, µs.
    PulseMin,
    /// Longest pulse the servo accepts, µs.
    PulseMax,
}

/// One parameter of a standard (distal) Denavit–Hartenberg row.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum DhParam {
    /// Link length a, mm.
    A,
    /// Link twist α, degrees.
    Alpha,
    /// Link offset d, mm.
    D,
    /// Joint angle offset θ, degrees.
    Theta,
}

/// One number of a chain arm's geometry, as the scene file gives it.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum ChainField {
    /// A parameter of Denavit–Hartenberg row `row` (0-based).
    Dh {
        /// Row index, 0-based, base first.
        row: usize,
        /// Which parameter.
        param: DhParam,
    },
    /// Component `component` (0 = x, 1 = y, 2 = z) of joint `joint`'s axis direction, unitless.
    Axis {
        /// Joint index, 0-based.
        joint: usize,
        /// 0 = x, 1 = y, 2 = z.
        component: usize,
    },
    /// Component `component` of a point on joint `joint`'s axis in the base frame, mm.
    Origin {
        /// Joint index, 0-based.
        joint: usize,
        /// 0 = x, 1 = y, 2 = z.
        component: usize,
    },
    /// Component (0 = x, 1 = y, 2 = z) of the tool point's shift, mm: after the last row for
    /// Denavit–Hartenberg rows, in the base frame with every joint at zero for joint axes.
    ToolPosition(usize),
    /// Turn of the tool frame about fixed axis 0 = x, 1 = y, 2 = z, degrees.
    ToolRotation(usize),
}

impl ChainField {
    /// The chain fields `arm` has, in the order the form shows them: each row's or joint's
    /// numbers, then the tool's. Empty for an arm that is no chain.
    fn all(arm: &ArmDoc) -> Vec<ChainField> {
        let mut fields = Vec::new();
        match &arm.shape {
            ArmShape::ChainDh { rows, .. } => {
                for row in 0..rows.len() {
                    for param in [DhParam::A, DhParam::Alpha, DhParam::D, DhParam::Theta] {
                        fields.push(ChainField::Dh { row, param });
                    }
                }
            }
            ArmShape::ChainOriginAxis { axes, .. } => {
                for joint in 0..axes.len() {
                    for component in 0..3 {
                        fields.push(ChainField::Axis { joint, component });
                    }
                    for component in 0..3 {
                        fields.push(ChainField::Origin { joint, component });
                    }
                }
            }
            _ => return fields,
        }
        fields.extend((0..3).map(ChainField::ToolPosition));
        fields.extend((0..3).map(ChainField::ToolRotation));
        fields
    }

    /// The field's row, the path of the object that holds it, the component of a list and
    /// where the object sits in the arm.
    fn binding(self, arm: &ArmDoc) -> Binding {
        let revolute = JointKindDoc::Revolute;
        match self {
            ChainField::Dh { row, param } => {
                let index = match param {
                    DhParam::A => 0,
                    DhParam::Alpha => 1,
                    DhParam::D => 2,
                    DhParam::Theta => 3,
                };
                bind(
                    table::dh_row::ROWS[index],
                    revolute,
                    format!("arm.chain.rows[{row}]"),
                    None,
                    move |arm| match &arm.shape {
                        ArmShape::ChainDh { rows, .. } => rows.get(row),
                        _ => None,
                    },
                    move |arm| match &mut arm.shape {
                        ArmShape::ChainDh { rows, .. } => rows.get_mut(row),
                        _ => None,
                    },
                )
            }
            ChainField::Axis { joint, component } | ChainField::Origin { joint, component } => {
                let row = match self {
                    ChainField::Axis { .. } => table::axis::AXIS,
                    _ => table::axis::ORIGIN,
                };
                bind(
                    row,
                    revolute,
                    format!("arm.chain.axes[{joint}]"),
                    Some(component),
                    move |arm| match &arm.shape {
                        ArmShape::ChainOriginAxis { axes, .. } => axes.get(joint),
                        _ => None,
                    },
                    move |arm| match &mut arm.shape {
                        ArmShape::ChainOriginAxis { axes, .. } => axes.get_mut(joint),
                        _ => None,
                    },
                )
            }
            ChainField::ToolPosition(component) | ChainField::ToolRotation(component) => {
                let row = match self {
                    ChainField::ToolPosition(_) => table::placement::POSITION,
                    _ => table::placement::ROTATION,
                };
                let tool = match arm.shape {
                    ArmShape::ChainOriginAxis { .. } => "arm.chain.tool_home",
                    _ => "arm.chain.tool",
                };
                bind(
                    row,
                    revolute,
                    tool.to_string(),
                    Some(component),
                    chain_tool,
                    chain_tool_mut,
                )
            }
        }
    }
}

/// The placement of a chain arm's tool, `None` for an arm that is no chain.
fn chain_tool(arm: &ArmDoc) -> Option<&PlacementDoc> {
    match &arm.shape {
        ArmShape::ChainDh { tool, .. } => Some(tool),
        ArmShape::ChainOriginAxis { tool_home, .. } => Some(tool_home),
        _ => None,
    }
}

/// The placement of a chain arm's tool to write into, `None` for an arm that is no chain.
fn chain_tool_mut(arm: &mut ArmDoc) -> Option<&mut PlacementDoc> {
    match &mut arm.shape {
        ArmShape::ChainDh { tool, .. } => Some(tool),
        ArmShape::ChainOriginAxis { tool_home, .. } => Some(tool_home),
        _ => None,
    }
}

/// Whether a problem found at `problem_path` concerns the field at `field_path`: the same path,
/// or, within a chain's geometry, a list or group that holds the field (the validator names a
/// zero axis at `arm.chain.axes[1].axis`, the field is one of its components).
fn concerns(problem_path: &str, field_path: &str) -> bool {
    problem_path == field_path
        || (problem_path.starts_with("arm.chain")
            && field_path
                .strip_prefix(problem_path)
                .is_some_and(|rest| rest.starts_with('[') || rest.starts_with('.')))
}

/// One field of the arm settings.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum ArmField {
    /// Base to the first horizontal axis (articulated) or to the arm's plane (horizontal), mm.
    BaseHeight,
    /// Shoulder axis to elbow axis, mm.
    UpperArm,
    /// Elbow axis to wrist axis, mm.
    Forearm,
    /// Wrist to the tool point (articulated) or the tool's drop below the wrist (horizontal), mm.
    ToolLength,
    /// Mass of the tool, g.
    ToolMass,
    /// Payload held at the tool point, g.
    Payload,
    /// Gripper open pulse, µs.
    GripperOpen,
    /// Gripper closed pulse, µs.
    GripperClosed,
    /// A joint's setting.
    Joint {
        /// Joint index, 0-based.
        joint: usize,
        /// Which setting.
        field: JointField,
    },
    /// A number of a chain arm's geometry.
    Chain(ChainField),
}

impl ArmField {
    /// The fields of the arm as a whole that `arm` has: dimensions (built-in types only), masses,
    /// gripper pulses (when it has a gripper).
    pub fn arm_fields(arm: &ArmDoc) -> Vec<ArmField> {
        [
            ArmField::BaseHeight,
            ArmField::UpperArm,
            ArmField::Forearm,
            ArmField::ToolLength,
            ArmField::ToolMass,
            ArmField::Payload,
            ArmField::GripperOpen,
            ArmField::GripperClosed,
        ]
        .into_iter()
        .filter(|field| field.value(arm).is_some())
        .collect()
    }

    /// The numbers of a chain arm's geometry, in the order the form shows them: per
    /// Denavit–Hartenberg row a, α, d, θ (or per joint its axis then a point on it), then the
    /// tool's shift and turn. Empty for the built-in types, whose dimensions are
    /// [`ArmField::arm_fields`].
    pub fn chain_fields(arm: &ArmDoc) -> Vec<ArmField> {
        ChainField::all(arm)
            .into_iter()
            .map(ArmField::Chain)
            .filter(|field| field.value(arm).is_some())
            .collect()
    }

    /// The fields joint `joint` of `arm` has, in the order the form shows them.
    pub fn joint_fields(arm: &ArmDoc, joint: usize) -> Vec<ArmField> {
        use JointField::*;
        [
            Min,
            Max,
            Home,
            StallTorque,
            NoLoadSpeed,
            Deadband,
            ProportionalBand,
            Backlash,
            ServoMass,
            PinionRadius,
            LinkMass,
            CalibrationPosition(0),
            CalibrationPulse(0),
            CalibrationPosition(1),
            CalibrationPulse(1),
            PulseMin,
            PulseMax,
        ]
        .into_iter()
        .map(|field| ArmField::Joint { joint, field })
        .filter(|field| field.value(arm).is_some())
        .collect()
    }

    /// The field's JSON path in the scene file, as the validator names it:
    /// `arm.joints[1].servo.deadband_us`.
    pub fn path(self, arm: &ArmDoc) -> String {
        self.binding(arm).path
    }

    /// What the form calls the field: its row's label in the field table.
    pub fn label(self, arm: &ArmDoc) -> String {
        self.binding(arm).label
    }

    /// The unit of the field's value, as the scene file has it.
    pub fn unit(self, arm: &ArmDoc) -> &'static str {
        self.binding(arm).unit
    }

    /// The field's meaning in one line, from its row in the field table, with its allowed range.
    pub fn about(self, arm: &ArmDoc) -> String {
        self.binding(arm).about
    }

    /// The field's value in `arm`, in the file's unit; `None` when the arm has no such field.
    pub fn value(self, arm: &ArmDoc) -> Option<f64> {
        (self.binding(arm).get)(arm)
    }

    /// Writes `value` (file unit) into the field of `arm`.
    ///
    /// # Errors
    /// A message when a pulse width is not a whole number of µs, or the arm has no such field.
    fn set(self, arm: &mut ArmDoc, value: f64) -> Result<(), String> {
        let binding = self.binding(arm);
        (binding.set)(arm, value)
    }

    /// The field's row in the field table and where it sits in `arm`.
    fn binding(self, arm: &ArmDoc) -> Binding {
        let revolute = JointKindDoc::Revolute;
        match self {
            ArmField::BaseHeight
            | ArmField::UpperArm
            | ArmField::Forearm
            | ArmField::ToolLength => {
                let index = match self {
                    ArmField::BaseHeight => 0,
                    ArmField::UpperArm => 1,
                    ArmField::Forearm => 2,
                    _ => 3,
                };
                let path = "arm.dimensions".to_string();
                match arm.shape {
                    ArmShape::Scara(_) => bind(
                        table::scara::ROWS[index],
                        revolute,
                        path,
                        None,
                        |arm| match &arm.shape {
                            ArmShape::Scara(size) => Some(size),
                            _ => None,
                        },
                        |arm| match &mut arm.shape {
                            ArmShape::Scara(size) => Some(size),
                            _ => None,
                        },
                    ),
                    _ => bind(
                        table::articulated::ROWS[index],
                        revolute,
                        path,
                        None,
                        |arm| match &arm.shape {
                            ArmShape::Articulated4(size) | ArmShape::Articulated5(size) => {
                                Some(size)
                            }
                            _ => None,
                        },
                        |arm| match &mut arm.shape {
                            ArmShape::Articulated4(size) | ArmShape::Articulated5(size) => {
                                Some(size)
                            }
                            _ => None,
                        },
                    ),
                }
            }
            ArmField::ToolMass => bind(
                table::tool::MASS,
                revolute,
                "arm.tool".into(),
                None,
                |arm| Some(&arm.tool),
                |arm| Some(&mut arm.tool),
            ),
            ArmField::Payload => bind(
                table::arm::PAYLOAD,
                revolute,
                "arm".into(),
                None,
                |arm| Some(arm),
                |arm| Some(arm),
            ),
            ArmField::GripperOpen | ArmField::GripperClosed => bind(
                match self {
                    ArmField::GripperOpen => table::gripper::OPEN,
                    _ => table::gripper::CLOSED,
                },
                revolute,
                "arm.gripper".into(),
                None,
                |arm| arm.gripper.as_ref(),
                |arm| arm.gripper.as_mut(),
            ),
            ArmField::Joint { joint, field } => field.binding(arm, joint),
            ArmField::Chain(field) => field.binding(arm),
        }
    }
}

impl JointField {
    /// The setting's row in the field table and where it sits in joint `joint` of `arm`.
    fn binding(self, arm: &ArmDoc, joint: usize) -> Binding {
        use table::{calibration, calibration_point, joint as limits, link_mass, servo};
        let kind = joint_kind(arm, joint);
        let at = format!("arm.joints[{joint}]");
        let servo_at = child(&at, "servo");
        let calibration_at = child(&at, "calibration");
        match self {
            JointField::Min | JointField::Max | JointField::Home => {
                let row = match self {
                    JointField::Min => limits::MIN,
                    JointField::Max => limits::MAX,
                    _ => limits::HOME,
                };
                bind(
                    row,
                    kind,
                    at,
                    None,
                    move |arm| arm.joints.get(joint),
                    move |arm| arm.joints.get_mut(joint),
                )
            }
            JointField::StallTorque
            | JointField::NoLoadSpeed
            | JointField::Deadband
            | JointField::Backlash
            | JointField::ServoMass
            | JointField::PinionRadius => {
                let row = match self {
                    JointField::StallTorque => servo::STALL_TORQUE,
                    JointField::NoLoadSpeed => servo::NO_LOAD_SPEED,
                    JointField::Deadband => servo::DEADBAND,
                    JointField::Backlash => servo::BACKLASH,
                    JointField::ServoMass => servo::MASS,
                    _ => servo::PINION_RADIUS,
                };
                bind(
                    row,
                    kind,
                    servo_at,
                    None,
                    move |arm| Some(&arm.joints.get(joint)?.servo),
                    move |arm| Some(&mut arm.joints.get_mut(joint)?.servo),
                )
            }
            JointField::ProportionalBand => {
                // The band keeps the unit the scene gives it.
                let row = match arm.joints.get(joint).map(|j| j.servo.proportional_band) {
                    Some(BandDoc::Deg(_)) => table::band::DEG,
                    _ => table::band::US,
                };
                bind(
                    row,
                    kind,
                    child(&servo_at, "proportional_band"),
                    None,
                    move |arm| Some(&arm.joints.get(joint)?.servo.proportional_band),
                    move |arm| Some(&mut arm.joints.get_mut(joint)?.servo.proportional_band),
                )
            }
            JointField::LinkMass => bind(
                link_mass::MASS,
                kind,
                child(&at, "link"),
                None,
                move |arm| Some(&arm.joints.get(joint)?.link),
                move |arm| Some(&mut arm.joints.get_mut(joint)?.link),
            ),
            JointField::CalibrationPosition(point) | JointField::CalibrationPulse(point) => {
                let row = match self {
                    JointField::CalibrationPosition(_) => calibration_point::POSITION,
                    _ => calibration_point::PULSE,
                };
                let mut binding = bind(
                    row,
                    kind,
                    format!("{calibration_at}.points[{point}]"),
                    None,
                    move |arm| arm.joints.get(joint)?.calibration.points.get(point),
                    move |arm| arm.joints.get_mut(joint)?.calibration.points.get_mut(point),
                );
                binding.label = format!("calibration point {} {}", point + 1, binding.label);
                binding
            }
            JointField::PulseMin | JointField::PulseMax => {
                let row = match self {
                    JointField::PulseMin => calibration::PULSE_MIN,
                    _ => calibration::PULSE_MAX,
                };
                bind(
                    row,
                    kind,
                    calibration_at,
                    None,
                    move |arm| Some(&arm.joints.get(joint)?.calibration),
                    move |arm| Some(&mut arm.joints.get_mut(joint)?.calibration),
                )
            }
        }
    }
}

/// Reads a field's value (file unit) from an arm.
type Getter = Box<dyn Fn(&ArmDoc) -> Option<f64>>;

/// Writes a field's value (file unit) into an arm, or says why not.
type Setter = Box<dyn Fn(&mut ArmDoc, f64) -> Result<(), String>>;

/// A form field bound to its row of the field table: path, label, unit and meaning from the row,
/// and how to read and write its value in an arm.
struct Binding {
    path: String,
    label: String,
    unit: &'static str,
    about: String,
    get: Getter,
    set: Setter,
}

/// Binds `row` of the object that `find` and `find_mut` locate in an arm, at `parent` (its JSON
/// path); `component` picks one number of a list (a label gets its axis).
fn bind<T: 'static>(
    row: Field<T>,
    kind: JointKindDoc,
    parent: String,
    component: Option<usize>,
    find: impl Fn(&ArmDoc) -> Option<&T> + 'static,
    find_mut: impl Fn(&mut ArmDoc) -> Option<&mut T> + 'static,
) -> Binding {
    let key = row.key(kind);
    let unit = row.unit.symbol(kind);
    let (path, label) = match component {
        Some(component) => (
            format!("{}[{component}]", child(&parent, key)),
            format!("{} {}", row.label, ["x", "y", "z"][component.min(2)]),
        ),
        None => (child(&parent, key), row.label.to_string()),
    };
    let range = row.range(kind).describe(unit);
    Binding {
        path,
        label,
        unit,
        about: format!("{}; {range}", row.about),
        get: Box::new(move |arm| {
            let doc = find(arm)?;
            match component {
                Some(component) => row.values(doc).get(component).copied(),
                None if row.applies(kind) => row.value(doc),
                None => None,
            }
        }),
        set: Box::new(move |arm, value| {
            let doc = find_mut(arm).ok_or("the arm has no such field")?;
            match component {
                Some(component) => {
                    let mut values = row.values(doc);
                    *values
                        .get_mut(component)
                        .ok_or("the arm has no such field")? = value;
                    row.set_values(doc, &values)
                }
                None => row.set_value(doc, value),
            }
        }),
    }
}

fn joint_kind(arm: &ArmDoc, joint: usize) -> JointKindDoc {
    arm.shape
        .joint_kinds()
        .get(joint)
        .copied()
        .unwrap_or(JointKindDoc::Revolute)
}

/// A number typed into a field: a finite decimal with a point (`120`, `-2.5`, `1e3`).
fn parse_number(text: &str) -> Result<f64, String> {
    match text.trim().parse::<f64>() {
        Ok(value) if value.is_finite() => Ok(value),
        Ok(_) => Err(format!("\"{text}\" is not a finite number")),
        Err(_) if text.trim().is_empty() => Err("is empty; type a number".into()),
        Err(_) => Err(format!("\"{text}\" is not a number")),
    }
}

/// The arm settings form's state: the text typed into each field, and every problem with the arm
/// that text describes.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct ArmForm {
    /// Text typed into each field, as typed.
    texts: BTreeMap<ArmField, String>,
    /// Every problem with the scene as the form describes it, each at its JSON path; empty when
    /// the form's arm is the scene's.
    problems: Vec<Problem>,
}

impl ArmForm {
    /// The text a field shows: what was typed into it, else the scene's value.
    pub fn text(&self, field: ArmField, arm: &ArmDoc) -> String {
        match self.texts.get(&field) {
            Some(text) => text.clone(),
            None => field.value(arm).map(|v| v.to_string()).unwrap_or_default(),
        }
    }

    /// Every problem with the arm as typed, each with its field path; while there are any, the
    /// scene keeps its last valid arm.
    pub fn problems(&self) -> &[Problem] {
        &self.problems
    }

    /// The problem at this field, if any: at its own path, or for a number of a chain's
    /// geometry at the list or group that holds it.
    pub fn problem_at(&self, field: ArmField, arm: &ArmDoc) -> Option<&Problem> {
        let path = field.path(arm);
        self.problems
            .iter()
            .find(|problem| concerns(&problem.path, &path))
    }

    /// Records `text` typed into `field` and checks the arm the form now describes against the
    /// whole scene. Returns that arm when it is valid and differs from the scene's, to be applied.
    pub(crate) fn type_text(
        &mut self,
        field: ArmField,
        text: String,
        scene: &Scene,
    ) -> Option<ArmDoc> {
        self.texts.insert(field, text);
        self.check(scene)
    }

    /// After the scene's arm changed from outside the form (undo, redo, a new arm type): text
    /// that was valid described the old arm and is dropped so the fields show the new values;
    /// text with a problem is kept (nothing typed is lost) and checked again.
    pub(crate) fn arm_replaced(&mut self, scene: &Scene) {
        let problem_paths: Vec<String> = self.problems.iter().map(|p| p.path.clone()).collect();
        let arm = &scene.arm;
        self.texts.retain(|field, _| {
            let path = field.path(arm);
            field.value(arm).is_some() && problem_paths.iter().any(|p| concerns(p, &path))
        });
        // Whatever this finds is only listed: an arm changes through the form only by typing.
        let _ = self.check(scene);
    }

    /// The form's arm and its problems: the scene's arm with every typed value written in, the
    /// whole scene validated with it, then built.
    fn check(&mut self, scene: &Scene) -> Option<ArmDoc> {
        let mut arm = scene.arm.clone();
        let mut problems = Vec::new();
        for (field, text) in &self.texts {
            if field.value(&arm).is_none() {
                continue;
            }
            let written = parse_number(text).and_then(|value| field.set(&mut arm, value));
            if let Err(message) = written {
                problems.push(Problem::new(field.path(&arm), message));
            }
        }
        let candidate = Scene {
            arm: arm.clone(),
            ..scene.clone()
        };
        problems.extend(validate(&candidate));
        if problems.is_empty()
            && let Err(problem) = build_arm(&arm)
        {
            problems.push(problem);
        }
        self.problems = problems;
        (self.problems.is_empty() && arm != scene.arm).then_some(arm)
    }
}

/// The arm types the form can switch between. The vertical articulated arms differ by the wrist
/// roll only, so their joints and waypoints carry over; the horizontal-jointed type has a sliding
/// lift, so a switch to or from it keeps the lengths and servos but no taught positions.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ArmTypeChoice {
    /// `articulated4`: base yaw, shoulder, elbow, wrist pitch.
    Articulated4,
    /// `articulated5`: the same plus a wrist roll.
    Articulated5,
    /// `scara`: shoulder, elbow, lift, wrist roll.
    Scara,
}

/// Travel of a new lift, in mm: 0 at the top, 60 mm down.
const LIFT_TRAVEL_MM: f64 = 60.0;

/// Pinion radius of a new lift's servo, in mm.
const LIFT_PINION_MM: f64 = 10.0;

/// The scene with its arm switched to `choice`, and what changed in words; `None` when the arm
/// already is of that type or is a chain.
///
/// Going to 5 joints adds a wrist roll with a copy of the wrist's servo and calibration, and adds
/// its home position to every waypoint; going to 4 drops the roll and its positions. Between the
/// articulated and horizontal-jointed types the lengths carry over (base height, upper arm,
/// forearm, and the wrist-to-tool length as the tool drop or back), each joint takes the servo
/// and calibration of the joint doing the nearest job, and a new lift gets 60 mm of travel on a
/// 10 mm pinion.
///
/// The input arm's inputs go with the joints they move, by name. Between 4 and 5 joints the
/// joints kept are the same joints (name, place, servo, calibration), so their inputs are kept;
/// between the articulated and horizontal-jointed types every joint changes its job (even the
/// "shoulder" swings about a vertical axis on one and lifts the arm on the other), so an input's
/// measured positions mean nothing on the new type, as a waypoint's do not.
///
/// # Errors
/// A message saying what would be lost, naming it, when the switch meets taught waypoints
/// between articulated and horizontal-jointed arms (their joint positions mean nothing on the
/// other type), timing limits naming a joint the new arm does not have, or inputs of the input
/// arm that move such a joint — or any input, between articulated and horizontal-jointed arms;
/// the scene is left as it is.
pub(crate) fn with_arm_type(
    scene: &Scene,
    choice: ArmTypeChoice,
) -> Option<Result<(Scene, String), String>> {
    let mut out = scene.clone();
    let message = match (&scene.arm.shape, choice) {
        (ArmShape::Articulated4(size), ArmTypeChoice::Articulated5) => {
            let wrist = scene.arm.joints.get(3)?;
            let mut roll = wrist.clone();
            roll.name = "wrist roll".into();
            // The roll's own link is light next to the tool, whose mass is given separately.
            roll.link.mass_g = 0.0;
            roll.link.centre_mm = [0.0; 3];
            roll.link.inertia_g_mm2 = None;
            let home = roll.home;
            out.arm.shape = ArmShape::Articulated5(size.clone());
            out.arm.joints.push(roll);
            for waypoint in &mut out.waypoints {
                waypoint.joints_deg_or_mm.push(home);
            }
            "the arm now has 5 joints: joint 5 \"wrist roll\" has a copy of the wrist's servo and \
             calibration; check its settings"
                .to_string()
        }
        (ArmShape::Articulated5(size), ArmTypeChoice::Articulated4) => {
            let kept = scene.arm.joints.get(..4)?;
            if let Err(refusal) = refuse_limits(scene, kept, "4-joint articulated")
                .and_then(|()| refuse_inputs(scene, kept, "4-joint articulated"))
            {
                return Some(Err(refusal));
            }
            out.arm.shape = ArmShape::Articulated4(size.clone());
            let removed = out.arm.joints.pop()?;
            for waypoint in &mut out.waypoints {
                waypoint.joints_deg_or_mm.truncate(4);
            }
            format!(
                "the arm now has 4 joints: joint 5 \"{}\" and its waypoint positions were removed",
                removed.name
            )
        }
        (ArmShape::Articulated4(size) | ArmShape::Articulated5(size), ArmTypeChoice::Scara) => {
            let [_, shoulder, elbow, wrist] = scene.arm.joints.get(..4)? else {
                return None;
            };
            let joints = vec![
                named(shoulder, "shoulder"),
                named(elbow, "elbow"),
                lift(shoulder),
                named(wrist, "wrist roll"),
            ];
            if let Err(refusal) = keeps_taught_data(scene, &joints, "horizontal-jointed") {
                return Some(Err(refusal));
            }
            if let Err(refusal) = refuse_inputs(scene, &[], "horizontal-jointed") {
                return Some(Err(refusal));
            }
            out.arm.shape = ArmShape::Scara(carried_over(
                table::articulated::ROWS,
                size,
                table::scara::ROWS,
            ));
            out.arm.joints = joints;
            let dropped = match scene.arm.joints.get(4) {
                Some(roll) => format!("; joint 5 \"{}\" and its settings were removed", roll.name),
                None => String::new(),
            };
            format!(
                "the arm is now horizontal-jointed (SCARA type) with its lengths kept: shoulder \
                 and elbow keep their servos, joint 3 \"lift\" is new (60 mm travel, 10 mm \
                 pinion, a copy of the shoulder's servo) and joint 4 \"wrist roll\" has the \
                 wrist's; check their settings{dropped}"
            )
        }
        (ArmShape::Scara(size), ArmTypeChoice::Articulated4) => {
            let [shoulder, elbow, _, roll] = scene.arm.joints.get(..4)? else {
                return None;
            };
            let joints = vec![
                named(shoulder, "base yaw"),
                named(shoulder, "shoulder"),
                named(elbow, "elbow"),
                named(roll, "wrist pitch"),
            ];
            if let Err(refusal) = keeps_taught_data(scene, &joints, "articulated") {
                return Some(Err(refusal));
            }
            if let Err(refusal) = refuse_inputs(scene, &[], "articulated") {
                return Some(Err(refusal));
            }
            out.arm.shape = ArmShape::Articulated4(carried_over(
                table::scara::ROWS,
                size,
                table::articulated::ROWS,
            ));
            out.arm.joints = joints;
            "the arm is now articulated with 4 joints and its lengths kept: the lift was removed, \
             \"base yaw\" and \"shoulder\" have the old shoulder's servo, \"wrist pitch\" the \
             roll's; check their settings"
                .to_string()
        }
        _ => return None,
    };
    Some(Ok((out, message)))
}

/// The lengths of one built-in type carried over to another, row by row: both tables list base
/// height, upper arm, forearm and the tool's length (wrist to tool point, or tool drop) in that
/// order.
fn carried_over<A, B: Default>(from_rows: &[Field<A>], from: &A, to_rows: &[Field<B>]) -> B {
    let mut out = B::default();
    for (from_row, to_row) in from_rows.iter().zip(to_rows) {
        if let Some(value) = from_row.value(from) {
            // Lengths are plain numbers; setting one cannot fail.
            let _ = to_row.set_value(&mut out, value);
        }
    }
    out
}

fn named(joint: &JointDoc, name: &str) -> JointDoc {
    JointDoc {
        name: name.into(),
        ..joint.clone()
    }
}

/// A new lift driven through a pinion by a copy of `servo_of`'s servo: 0 mm (top, home) to
/// 60 mm down, the calibration's pulses spread over that travel.
fn lift(servo_of: &JointDoc) -> JointDoc {
    let mut lift = named(servo_of, "lift");
    lift.min = -LIFT_TRAVEL_MM;
    lift.max = 0.0;
    lift.home = 0.0;
    lift.servo.pinion_radius_mm = Some(LIFT_PINION_MM);
    lift.calibration.points[0].position = -LIFT_TRAVEL_MM;
    lift.calibration.points[1].position = 0.0;
    lift.link.centre_mm = [0.0; 3];
    lift.link.inertia_g_mm2 = None;
    lift
}

/// Refuses a switch that would drop taught waypoints or timing limits of joints that go away.
fn keeps_taught_data(scene: &Scene, joints: &[JointDoc], kind: &str) -> Result<(), String> {
    if !scene.waypoints.is_empty() {
        return Err(format!(
            "not switched: the {} taught waypoint(s) hold joint positions that mean nothing on a \
             {} {kind} arm and would be lost; save the scene under another name, delete the \
             waypoints and switch, then teach them again",
            scene.waypoints.len(),
            article(kind)
        ));
    }
    refuse_limits(scene, joints, kind)
}

/// "an" before a word that starts with a vowel ("an articulated arm"), else "a".
fn article(word: &str) -> &'static str {
    if word.starts_with(['a', 'e', 'i', 'o', 'u']) {
        "an"
    } else {
        "a"
    }
}

/// Refuses a switch that would leave timing limits naming joints the new arm (`joints`) lacks.
fn refuse_limits(scene: &Scene, joints: &[JointDoc], kind: &str) -> Result<(), String> {
    let orphans: Vec<&str> = scene
        .timing
        .joint_limits
        .iter()
        .map(|limit| limit.joint.as_str())
        .filter(|name| !joints.iter().any(|joint| joint.name == *name))
        .collect();
    if !orphans.is_empty() {
        return Err(format!(
            "not switched: the timing limits for {} name joint(s) {} {kind} arm does not have \
             and would be lost; remove them from the scene's timing first",
            orphans.join(", "),
            article(kind)
        ));
    }
    Ok(())
}

/// Refuses a switch that would leave inputs of the input arm moving joints that go away: any
/// not among `kept`, the joints that stay the same joints on the new arm.
fn refuse_inputs(scene: &Scene, kept: &[JointDoc], kind: &str) -> Result<(), String> {
    let orphans: Vec<String> = scene
        .inputs
        .iter()
        .filter(|input| !kept.iter().any(|joint| joint.name == input.joint))
        .map(|input| format!("input {} (joint \"{}\")", input.input, input.joint))
        .collect();
    let (holds, joints, rows) = match orphans.len() {
        0 => return Ok(()),
        1 => ("holds", "a joint", "that row"),
        _ => ("hold", "joints", "those rows"),
    };
    let a = article(kind);
    let which = if kept.is_empty() {
        let does = if orphans.len() == 1 { "does" } else { "do" };
        format!("{joints} that {does} another job on {a} {kind} arm")
    } else {
        format!("{joints} {a} {kind} arm does not have")
    };
    Err(format!(
        "not switched: the input arm's {} {holds} measured positions of {which}, and they would \
         be lost; remove {rows} in the input arm form at the foot of this tab first",
        orphans.join(", ")
    ))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::editor::sample::sample_scene;
    use crate::scene::Waypoint;

    fn waypoints_fit(arm: &ArmDoc, waypoints: &[Waypoint]) -> bool {
        waypoints
            .iter()
            .all(|w| w.joints_deg_or_mm.len() == arm.joints.len())
    }

    #[test]
    fn every_field_path_is_a_path_the_validator_uses() {
        // Break each field with a value the validator refuses and check it names that field.
        let scene = sample_scene();
        let arm = &scene.arm;
        let mut fields = ArmField::arm_fields(arm);
        fields.extend(ArmField::joint_fields(arm, 1));
        for field in fields {
            let bad = match field {
                ArmField::Joint {
                    field: JointField::Min | JointField::Home | JointField::CalibrationPosition(_),
                    ..
                } => continue,
                ArmField::Joint {
                    field: JointField::Max,
                    ..
                } => -1000.0,
                _ => -5.0,
            };
            let mut form = ArmForm::default();
            let applied = form.type_text(field, bad.to_string(), &scene);
            assert_eq!(applied, None, "{field:?}");
            let path = field.path(arm);
            assert!(
                form.problems().iter().any(|p| p.path == path),
                "{field:?}: {path} not among {:?}",
                form.problems()
            );
        }
    }

    #[test]
    fn a_valid_length_is_handed_on_and_text_is_kept() {
        let scene = sample_scene();
        let mut form = ArmForm::default();
        let applied = form.type_text(ArmField::UpperArm, "150.".into(), &scene);
        let arm = applied.expect("a valid arm");
        assert_eq!(ArmField::UpperArm.value(&arm), Some(150.0));
        assert_eq!(form.text(ArmField::UpperArm, &arm), "150.");
        assert!(form.problems().is_empty());
    }

    #[test]
    fn text_that_is_no_number_is_listed_and_kept() {
        let scene = sample_scene();
        let mut form = ArmForm::default();
        let field = ArmField::Joint {
            joint: 0,
            field: JointField::StallTorque,
        };
        assert_eq!(form.type_text(field, "12,5".into(), &scene), None);
        let problem = form.problem_at(field, &scene.arm).expect("listed");
        let key = table::servo::STALL_TORQUE.key(JointKindDoc::Revolute);
        assert_eq!(problem.path, format!("arm.joints[0].servo.{key}"));
        assert!(problem.message.contains("\"12,5\" is not a number"));
        assert_eq!(form.text(field, &scene.arm), "12,5");
    }

    #[test]
    fn a_pulse_must_be_whole_microseconds() {
        let scene = sample_scene();
        let mut form = ArmForm::default();
        let field = ArmField::Joint {
            joint: 2,
            field: JointField::PulseMin,
        };
        assert_eq!(form.type_text(field, "700.5".into(), &scene), None);
        assert!(form.problem_at(field, &scene.arm).is_some());
    }

    #[test]
    fn after_an_outside_change_only_text_with_problems_stays() {
        let scene = sample_scene();
        let mut form = ArmForm::default();
        let _ = form.type_text(ArmField::Forearm, "140".into(), &scene);
        let _ = form.type_text(ArmField::Payload, "-1".into(), &scene);
        form.arm_replaced(&scene);
        assert_eq!(
            form.text(ArmField::Forearm, &scene.arm),
            ArmField::Forearm
                .value(&scene.arm)
                .expect("forearm")
                .to_string()
        );
        assert_eq!(form.text(ArmField::Payload, &scene.arm), "-1");
        assert_eq!(form.problems().len(), 1, "{:?}", form.problems());
    }

    #[test]
    fn four_to_five_joints_and_back_keeps_the_scene_valid() {
        let scene = sample_scene();
        assert!(matches!(scene.arm.shape, ArmShape::Articulated4(_)));
        let (five, _) = with_arm_type(&scene, ArmTypeChoice::Articulated5)
            .expect("switches")
            .expect("allowed");
        assert_eq!(five.arm.joints.len(), 5);
        assert!(waypoints_fit(&five.arm, &five.waypoints));
        assert_eq!(validate(&five), Vec::new());
        assert!(build_arm(&five.arm).is_ok());
        let (four, _) = with_arm_type(&five, ArmTypeChoice::Articulated4)
            .expect("switches back")
            .expect("allowed");
        assert_eq!(four, scene);
        assert!(with_arm_type(&scene, ArmTypeChoice::Articulated4).is_none());
    }

    #[test]
    fn a_problem_with_a_chain_group_concerns_only_its_own_fields() {
        assert!(concerns(
            "arm.chain.axes[1].axis",
            "arm.chain.axes[1].axis[2]"
        ));
        assert!(concerns("arm.chain.rows[1]", "arm.chain.rows[1].a_mm"));
        assert!(!concerns("arm.chain.rows[1]", "arm.chain.rows[10].a_mm"));
        assert!(!concerns(
            "arm.chain.axes[1].axis",
            "arm.chain.axes[1].origin_mm[0]"
        ));
        // Outside the chain a problem concerns the field at its exact path only.
        assert!(!concerns("arm.joints", "arm.joints[0].min_deg"));
    }

    #[test]
    fn to_scara_and_back_keeps_the_lengths_and_a_valid_scene() {
        let mut scene = sample_scene();
        let refusal = with_arm_type(&scene, ArmTypeChoice::Scara)
            .expect("a switch")
            .expect_err("the sample has taught waypoints");
        assert!(refusal.contains("would be lost"), "{refusal}");
        scene.waypoints.clear();
        scene.timing.joint_limits.clear();
        let (scara, _) = with_arm_type(&scene, ArmTypeChoice::Scara)
            .expect("a switch")
            .expect("allowed");
        assert_eq!(validate(&scara), Vec::new());
        assert!(build_arm(&scara.arm).is_ok());
        assert_eq!(
            scara.arm.shape.joint_kinds()[2],
            JointKindDoc::Prismatic,
            "joint 3 slides"
        );
        assert_eq!(
            ArmField::UpperArm.value(&scara.arm),
            ArmField::UpperArm.value(&scene.arm)
        );
        let (back, _) = with_arm_type(&scara, ArmTypeChoice::Articulated4)
            .expect("a switch")
            .expect("allowed");
        assert_eq!(validate(&back), Vec::new());
        assert!(build_arm(&back.arm).is_ok());
        assert_eq!(back.arm.shape, scene.arm.shape);
    }

    fn input_on(input: u32, joint: &str) -> crate::scene::InputDoc {
        crate::scene::InputDoc {
            input,
            joint: joint.into(),
            points: [(1000, -20.0), (3000, 20.0)]
                .map(|(reading, position)| crate::scene::InputPointDoc { reading, position })
                .to_vec(),
        }
    }

    #[test]
    fn an_input_on_the_wrist_roll_refuses_four_joints_and_the_others_are_kept() {
        let (mut five, _) = with_arm_type(&sample_scene(), ArmTypeChoice::Articulated5)
            .expect("switches")
            .expect("allowed");
        five.inputs = vec![input_on(0, "shoulder"), input_on(4, "wrist roll")];
        assert_eq!(validate(&five), Vec::new());
        let refusal = with_arm_type(&five, ArmTypeChoice::Articulated4)
            .expect("a switch")
            .expect_err("the roll's input would dangle");
        assert_eq!(
            refusal,
            "not switched: the input arm's input 4 (joint \"wrist roll\") holds measured \
             positions of a joint a 4-joint articulated arm does not have, and they would be lost; \
             remove that row in the input arm form at the foot of this tab first"
        );
        // Without it, the shoulder's input goes along unchanged and the scene stays valid.
        five.inputs.truncate(1);
        let (four, _) = with_arm_type(&five, ArmTypeChoice::Articulated4)
            .expect("a switch")
            .expect("allowed");
        assert_eq!(four.inputs, five.inputs);
        assert_eq!(validate(&four), Vec::new());
        // Timing limits of the roll are refused the same way (they used to dangle).
        five.timing.joint_limits = vec![crate::scene::JointLimitDoc {
            joint: "wrist roll".into(),
            ..Default::default()
        }];
        let refusal = with_arm_type(&five, ArmTypeChoice::Articulated4)
            .expect("a switch")
            .expect_err("the roll's limits would dangle");
        assert!(
            refusal.contains("timing limits for wrist roll"),
            "{refusal}"
        );
    }

    #[test]
    fn any_input_refuses_a_switch_between_articulated_and_horizontal_jointed() {
        let mut scene = sample_scene();
        scene.waypoints.clear();
        scene.timing.joint_limits.clear();
        // "shoulder" and "elbow" keep their names on the horizontal-jointed arm, but not their
        // jobs: the inputs' measured positions would mean something else there.
        scene.inputs = vec![input_on(1, "shoulder"), input_on(2, "elbow")];
        assert_eq!(validate(&scene), Vec::new());
        let refusal = with_arm_type(&scene, ArmTypeChoice::Scara)
            .expect("a switch")
            .expect_err("refused");
        assert_eq!(
            refusal,
            "not switched: the input arm's input 1 (joint \"shoulder\"), input 2 (joint \
             \"elbow\") hold measured positions of joints that do another job on a \
             horizontal-jointed arm, and they would be lost; remove those rows in the input arm \
             form at the foot of this tab first"
        );
        scene.inputs.clear();
        let (mut scara, _) = with_arm_type(&scene, ArmTypeChoice::Scara)
            .expect("a switch")
            .expect("allowed");
        scara.inputs = vec![input_on(0, "lift")];
        let refusal = with_arm_type(&scara, ArmTypeChoice::Articulated4)
            .expect("a switch")
            .expect_err("refused");
        assert!(
            refusal.contains(
                "input 0 (joint \"lift\") holds measured positions of a joint that does another \
                 job on an articulated arm"
            ),
            "{refusal}"
        );
    }
}
