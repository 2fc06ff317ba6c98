//! The arm settings form without its drawing: which fields it edits (each named by the JSON path
//! the scene validator uses), the text typed into each field, kept as typed so that a bad value
//! loses nothing, and the arm that text describes with every problem found in it. An arm is
//! handed on to the scene only when the whole scene with it passes the validator and the arm
//! can be built. No egui types live here.

use std::collections::BTreeMap;

use crate::scene::{
    ArmDoc, ArmShape, ArticulatedSize, BandDoc, JointDoc, JointKindDoc, PlacementDoc, Problem,
    ScaraSize, Scene, build_arm, validate,
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

    fn path(self, arm: &ArmDoc) -> String {
        let tool = match arm.shape {
            ArmShape::ChainOriginAxis { .. } => "arm.chain.tool_home",
            _ => "arm.chain.tool",
        };
        match self {
            ChainField::Dh { row, param } => {
                let key = match param {
                    DhParam::A => "a_mm",
                    DhParam::Alpha => "alpha_deg",
                    DhParam::D => "d_mm",
                    DhParam::Theta => "theta_deg",
                };
                format!("arm.chain.rows[{row}].{key}")
            }
            ChainField::Axis { joint, component } => {
                format!("arm.chain.axes[{joint}].axis[{component}]")
            }
            ChainField::Origin { joint, component } => {
                format!("arm.chain.axes[{joint}].origin_mm[{component}]")
            }
            ChainField::ToolPosition(component) => format!("{tool}.position_mm[{component}]"),
            ChainField::ToolRotation(component) => {
                format!("{tool}.rotation_xyz_deg[{component}]")
            }
        }
    }

    fn label(self) -> &'static str {
        let xyz = |component: usize, labels: [&'static str; 3]| labels[component.min(2)];
        match self {
            ChainField::Dh { param, .. } => match param {
                DhParam::A => "link length a",
                DhParam::Alpha => "link twist α",
                DhParam::D => "link offset d",
                DhParam::Theta => "angle offset θ",
            },
            ChainField::Axis { component, .. } => xyz(component, ["axis x", "axis y", "axis z"]),
            ChainField::Origin { component, .. } => xyz(
                component,
                ["point on axis x", "point on axis y", "point on axis z"],
            ),
            ChainField::ToolPosition(component) => {
                xyz(component, ["tool shift x", "tool shift y", "tool shift z"])
            }
            ChainField::ToolRotation(component) => xyz(
                component,
                [
                    "tool turn about x",
                    "tool turn about y",
                    "tool turn about z",
                ],
            ),
        }
    }

    fn unit(self) -> &'static str {
        match self {
            ChainField::Dh {
                param: DhParam::A | DhParam::D,
                ..
            }
            | ChainField::Origin { .. }
            | ChainField::ToolPosition(_) => "mm",
            ChainField::Dh { .. } | ChainField::ToolRotation(_) => "°",
            ChainField::Axis { .. } => "",
        }
    }

    fn value(self, arm: &ArmDoc) -> Option<f64> {
        let tool = chain_tool(arm)?;
        match (self, &arm.shape) {
            (ChainField::Dh { row, param }, ArmShape::ChainDh { rows, .. }) => {
                let row = rows.get(row)?;
                Some(match param {
                    DhParam::A => row.a_mm,
                    DhParam::Alpha => row.alpha_deg,
                    DhParam::D => row.d_mm,
                    DhParam::Theta => row.theta_deg,
                })
            }
            (ChainField::Axis { joint, component }, ArmShape::ChainOriginAxis { axes, .. }) => {
                axes.get(joint)?.axis.get(component).copied()
            }
            (ChainField::Origin { joint, component }, ArmShape::ChainOriginAxis { axes, .. }) => {
                axes.get(joint)?.origin_mm.get(component).copied()
            }
            (ChainField::ToolPosition(component), _) => tool.position_mm.get(component).copied(),
            (ChainField::ToolRotation(component), _) => {
                tool.rotation_xyz_deg.get(component).copied()
            }
            _ => None,
        }
    }

    fn slot(self, arm: &mut ArmDoc) -> Option<&mut f64> {
        match self {
            ChainField::ToolPosition(component) => {
                return chain_tool_mut(arm)?.position_mm.get_mut(component);
            }
            ChainField::ToolRotation(component) => {
                return chain_tool_mut(arm)?.rotation_xyz_deg.get_mut(component);
            }
            _ => {}
        }
        match (self, &mut arm.shape) {
            (ChainField::Dh { row, param }, ArmShape::ChainDh { rows, .. }) => {
                let row = rows.get_mut(row)?;
                Some(match param {
                    DhParam::A => &mut row.a_mm,
                    DhParam::Alpha => &mut row.alpha_deg,
                    DhParam::D => &mut row.d_mm,
                    DhParam::Theta => &mut row.theta_deg,
                })
            }
            (ChainField::Axis { joint, component }, ArmShape::ChainOriginAxis { axes, .. }) => {
                axes.get_mut(joint)?.axis.get_mut(component)
            }
            (ChainField::Origin { joint, component }, ArmShape::ChainOriginAxis { axes, .. }) => {
                axes.get_mut(joint)?.origin_mm.get_mut(component)
            }
            _ => None,
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
    /// `arm.joints[1].servo.stall_torque_ncm`.
    pub fn path(self, arm: &ArmDoc) -> String {
        let dimension = |articulated: &str, horizontal: &str| {
            let key = match arm.shape {
                ArmShape::Scara(_) => horizontal,
                _ => articulated,
            };
            format!("arm.dimensions.{key}")
        };
        match self {
            ArmField::BaseHeight => dimension("base_height_mm", "base_height_mm"),
            ArmField::UpperArm => dimension("upper_arm_mm", "upper_arm_mm"),
            ArmField::Forearm => dimension("forearm_mm", "forearm_mm"),
            ArmField::ToolLength => dimension("wrist_to_tool_mm", "tool_drop_mm"),
            ArmField::ToolMass => "arm.tool.mass_g".into(),
            ArmField::Payload => "arm.payload_g".into(),
            ArmField::GripperOpen => "arm.gripper.open_pulse_us".into(),
            ArmField::GripperClosed => "arm.gripper.closed_pulse_us".into(),
            ArmField::Joint { joint, field } => {
                let kind = joint_kind(arm, joint);
                let unit = kind.unit();
                let position_key = match kind {
                    JointKindDoc::Revolute => "angle_deg",
                    JointKindDoc::Prismatic => "position_mm",
                };
                let band_key = match arm.joints.get(joint).map(|j| j.servo.proportional_band) {
                    Some(BandDoc::Deg(_)) => "deg",
                    _ => "us",
                };
                let tail = match field {
                    JointField::Min => format!("min_{unit}"),
                    JointField::Max => format!("max_{unit}"),
                    JointField::Home => format!("home_{unit}"),
                    JointField::StallTorque => "servo.stall_torque_ncm".into(),
                    JointField::NoLoadSpeed => "servo.no_load_speed_deg_per_s".into(),
                    JointField::Deadband => "servo.deadband_us".into(),
                    JointField::ProportionalBand => format!("servo.proportional_band.{band_key}"),
                    JointField::Backlash => "servo.backlash_deg".into(),
                    JointField::ServoMass => "servo.mass_g".into(),
                    JointField::PinionRadius => "servo.pinion_radius_mm".into(),
                    JointField::LinkMass => "link.mass_g".into(),
                    JointField::CalibrationPosition(point) => {
                        format!("calibration.points[{point}].{position_key}")
                    }
                    JointField::CalibrationPulse(point) => {
                        format!("calibration.points[{point}].pulse_us")
                    }
                    JointField::PulseMin => "calibration.pulse_min_us".into(),
                    JointField::PulseMax => "calibration.pulse_max_us".into(),
                };
                format!("arm.joints[{joint}].{tail}")
            }
            ArmField::Chain(field) => field.path(arm),
        }
    }

    /// What the form calls the field.
    pub fn label(self, arm: &ArmDoc) -> &'static str {
        match self {
            ArmField::BaseHeight => "base height",
            ArmField::UpperArm => "upper arm",
            ArmField::Forearm => "forearm",
            ArmField::ToolLength => match arm.shape {
                ArmShape::Scara(_) => "tool drop",
                _ => "wrist to tool point",
            },
            ArmField::ToolMass => "tool mass",
            ArmField::Payload => "payload",
            ArmField::GripperOpen => "gripper open pulse",
            ArmField::GripperClosed => "gripper closed pulse",
            ArmField::Joint { field, .. } => match field {
                JointField::Min => "lowest position",
                JointField::Max => "highest position",
                JointField::Home => "home position",
                JointField::StallTorque => "stall torque",
                JointField::NoLoadSpeed => "no-load speed",
                JointField::Deadband => "deadband",
                JointField::ProportionalBand => "proportional band",
                JointField::Backlash => "backlash",
                JointField::ServoMass => "servo mass",
                JointField::PinionRadius => "pinion radius",
                JointField::LinkMass => "link mass",
                JointField::CalibrationPosition(0) => "calibration point 1 position",
                JointField::CalibrationPulse(0) => "calibration point 1 pulse",
                JointField::CalibrationPosition(_) => "calibration point 2 position",
                JointField::CalibrationPulse(_) => "calibration point 2 pulse",
                JointField::PulseMin => "shortest pulse",
                JointField::PulseMax => "longest pulse",
            },
            ArmField::Chain(field) => field.label(),
        }
    }

    /// The unit of the field's value, as the scene file has it.
    pub fn unit(self, arm: &ArmDoc) -> &'static str {
        match self {
            ArmField::BaseHeight
            | ArmField::UpperArm
            | ArmField::Forearm
            | ArmField::ToolLength => "mm",
            ArmField::ToolMass | ArmField::Payload => "g",
            ArmField::GripperOpen | ArmField::GripperClosed => "µs",
            ArmField::Joint { joint, field } => {
                let position = match joint_kind(arm, joint) {
                    JointKindDoc::Revolute => "°",
                    JointKindDoc::Prismatic => "mm",
                };
                match field {
                    JointField::Min
                    | JointField::Max
                    | JointField::Home
                    | JointField::CalibrationPosition(_) => position,
                    JointField::StallTorque => "N·cm",
                    JointField::NoLoadSpeed => "°/s",
                    JointField::Deadband
                    | JointField::CalibrationPulse(_)
                    | JointField::PulseMin
                    | JointField::PulseMax => "µs",
                    JointField::ProportionalBand => {
                        match arm.joints.get(joint).map(|j| j.servo.proportional_band) {
                            Some(BandDoc::Deg(_)) => "°",
                            _ => "µs",
                        }
                    }
                    JointField::Backlash => "°",
                    JointField::ServoMass | JointField::LinkMass => "g",
                    JointField::PinionRadius => "mm",
                }
            }
            ArmField::Chain(field) => field.unit(),
        }
    }

    /// The field's value in `arm`, in the file's unit; `None` when the arm has no such field.
    pub fn value(self, arm: &ArmDoc) -> Option<f64> {
        match self {
            ArmField::BaseHeight
            | ArmField::UpperArm
            | ArmField::Forearm
            | ArmField::ToolLength => dimension(arm, self),
            ArmField::ToolMass => Some(arm.tool.mass_g),
            ArmField::Payload => Some(arm.payload_g),
            ArmField::GripperOpen => arm.gripper.as_ref().map(|g| f64::from(g.open_pulse_us)),
            ArmField::GripperClosed => arm.gripper.as_ref().map(|g| f64::from(g.closed_pulse_us)),
            ArmField::Joint { joint, field } => {
                let doc = arm.joints.get(joint)?;
                let calibration = &doc.calibration;
                match field {
                    JointField::Min => Some(doc.min),
                    JointField::Max => Some(doc.max),
                    JointField::Home => Some(doc.home),
                    JointField::StallTorque => Some(doc.servo.stall_torque_ncm),
                    JointField::NoLoadSpeed => Some(doc.servo.no_load_speed_deg_per_s),
                    JointField::Deadband => Some(doc.servo.deadband_us),
                    JointField::ProportionalBand => match doc.servo.proportional_band {
                        BandDoc::Us(value) | BandDoc::Deg(value) => Some(value),
                    },
                    JointField::Backlash => Some(doc.servo.backlash_deg),
                    JointField::ServoMass => Some(doc.servo.mass_g),
                    JointField::PinionRadius => doc.servo.pinion_radius_mm,
                    JointField::LinkMass => Some(doc.link.mass_g),
                    JointField::CalibrationPosition(point) => {
                        calibration.points.get(point).map(|p| p.position)
                    }
                    JointField::CalibrationPulse(point) => {
                        calibration.points.get(point).map(|p| f64::from(p.pulse_us))
                    }
                    JointField::PulseMin => Some(f64::from(calibration.pulse_min_us)),
                    JointField::PulseMax => Some(f64::from(calibration.pulse_max_us)),
                }
            }
            ArmField::Chain(field) => field.value(arm),
        }
    }

    /// Writes `value` (file unit) into the field of `arm`.
    ///
    /// # Errors
    /// A message when a pulse width is not a whole number of µs, or the arm has no such field.
    fn set(self, arm: &mut ArmDoc, value: f64) -> Result<(), String> {
        let missing = || "the arm has no such field".to_string();
        match self {
            ArmField::BaseHeight
            | ArmField::UpperArm
            | ArmField::Forearm
            | ArmField::ToolLength => *dimension_mut(arm, self).ok_or_else(missing)? = value,
            ArmField::ToolMass => arm.tool.mass_g = value,
            ArmField::Payload => arm.payload_g = value,
            ArmField::GripperOpen => {
                arm.gripper.as_mut().ok_or_else(missing)?.open_pulse_us = whole_us(value)?;
            }
            ArmField::GripperClosed => {
                arm.gripper.as_mut().ok_or_else(missing)?.closed_pulse_us = whole_us(value)?;
            }
            ArmField::Joint { joint, field } => {
                let doc = arm.joints.get_mut(joint).ok_or_else(missing)?;
                let calibration = &mut doc.calibration;
                match field {
                    JointField::Min => doc.min = value,
                    JointField::Max => doc.max = value,
                    JointField::Home => doc.home = value,
                    JointField::StallTorque => doc.servo.stall_torque_ncm = value,
                    JointField::NoLoadSpeed => doc.servo.no_load_speed_deg_per_s = value,
                    JointField::Deadband => doc.servo.deadband_us = value,
                    JointField::ProportionalBand => {
                        doc.servo.proportional_band = match doc.servo.proportional_band {
                            BandDoc::Us(_) => BandDoc::Us(value),
                            BandDoc::Deg(_) => BandDoc::Deg(value),
                        }
                    }
                    JointField::Backlash => doc.servo.backlash_deg = value,
                    JointField::ServoMass => doc.servo.mass_g = value,
                    JointField::PinionRadius => {
                        *doc.servo.pinion_radius_mm.as_mut().ok_or_else(missing)? = value;
                    }
                    JointField::LinkMass => doc.link.mass_g = value,
                    JointField::CalibrationPosition(point) => {
                        calibration
                            .points
                            .get_mut(point)
                            .ok_or_else(missing)?
                            .position = value;
                    }
                    JointField::CalibrationPulse(point) => {
                        calibration
                            .points
                            .get_mut(point)
                            .ok_or_else(missing)?
                            .pulse_us = whole_us(value)?;
                    }
                    JointField::PulseMin => calibration.pulse_min_us = whole_us(value)?,
                    JointField::PulseMax => calibration.pulse_max_us = whole_us(value)?,
                }
            }
            ArmField::Chain(field) => *field.slot(arm).ok_or_else(missing)? = value,
        }
        Ok(())
    }
}

fn joint_kind(arm: &ArmDoc, joint: usize) -> JointKindDoc {
    arm.shape
        .joint_kinds()
        .get(joint)
        .copied()
        .unwrap_or(JointKindDoc::Revolute)
}

fn dimension(arm: &ArmDoc, field: ArmField) -> Option<f64> {
    let (base, upper, fore, tool) = match &arm.shape {
        ArmShape::Scara(size) => (
            size.base_height_mm,
            size.upper_arm_mm,
            size.forearm_mm,
            size.tool_drop_mm,
        ),
        ArmShape::Articulated4(size) | ArmShape::Articulated5(size) => (
            size.base_height_mm,
            size.upper_arm_mm,
            size.forearm_mm,
            size.wrist_to_tool_mm,
        ),
        ArmShape::ChainDh { .. } | ArmShape::ChainOriginAxis { .. } => return None,
    };
    match field {
        ArmField::BaseHeight => Some(base),
        ArmField::UpperArm => Some(upper),
        ArmField::Forearm => Some(fore),
        ArmField::ToolLength => Some(tool),
        _ => None,
    }
}

fn dimension_mut(arm: &mut ArmDoc, field: ArmField) -> Option<&mut f64> {
    match &mut arm.shape {
        ArmShape::Scara(size) => match field {
            ArmField::BaseHeight => Some(&mut size.base_height_mm),
            ArmField::UpperArm => Some(&mut size.upper_arm_mm),
            ArmField::Forearm => Some(&mut size.forearm_mm),
            ArmField::ToolLength => Some(&mut size.tool_drop_mm),
            _ => None,
        },
        ArmShape::Articulated4(size) | ArmShape::Articulated5(size) => match field {
            ArmField::BaseHeight => Some(&mut size.base_height_mm),
            ArmField::UpperArm => Some(&mut size.upper_arm_mm),
            ArmField::Forearm => Some(&mut size.forearm_mm),
            ArmField::ToolLength => Some(&mut size.wrist_to_tool_mm),
            _ => None,
        },
        ArmShape::ChainDh { .. } | ArmShape::ChainOriginAxis { .. } => None,
    }
}

/// A pulse width typed as a number, as whole µs.
fn whole_us(value: f64) -> Result<u32, String> {
    if value.fract() == 0.0 && (0.0..=f64::from(u32::MAX)).contains(&value) {
        Ok(value as u32)
    } else {
        Err(format!("must be a whole number of µs, got {value}"))
    }
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
/// # Errors
/// A message saying what would be lost when a switch between articulated and horizontal-jointed
/// arms meets taught waypoints (their joint positions mean nothing on the other type) or timing
/// limits naming a joint the new type does not have; the scene is left as it is.
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
            out.arm.shape = ArmShape::Scara(ScaraSize {
                base_height_mm: size.base_height_mm,
                upper_arm_mm: size.upper_arm_mm,
                forearm_mm: size.forearm_mm,
                tool_drop_mm: size.wrist_to_tool_mm,
            });
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
            out.arm.shape = ArmShape::Articulated4(ArticulatedSize {
                base_height_mm: size.base_height_mm,
                upper_arm_mm: size.upper_arm_mm,
                forearm_mm: size.forearm_mm,
                wrist_to_tool_mm: size.tool_drop_mm,
            });
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
             {kind} arm and would be lost; save the scene under another name, delete the \
             waypoints and switch, then teach them again",
            scene.waypoints.len()
        ));
    }
    let orphans: Vec<&str> = scene
        .timing
        .joint_limits
        .iter()
        .map(|limit| limit.joint.as_str())
        .filter(|name| !joints.iter().any(|joint| joint.name == *name))
        .collect();
    if !orphans.is_empty() {
        return Err(format!(
            "not switched: the timing limits for {} name joint(s) a {kind} arm does not have and \
             would be lost; remove them from the scene's timing first",
            orphans.join(", ")
        ));
    }
    Ok(())
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
        assert_eq!(problem.path, "arm.joints[0].servo.stall_torque_ncm");
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
}
