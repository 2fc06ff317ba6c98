//! The built-in arm types and general serial chains, and where each places its joints.
//!
//! Frames: base Z up, X forward. Every built-in type has all joint frames parallel to the base
//! frame in its zero pose, with its links stretched along +X.

use nalgebra::{Isometry3, Translation3, Unit, UnitQuaternion, Vector3};

use super::{ArmError, JointKind};

/// Dimensions of a horizontal-jointed arm (SCARA type), in m.
///
/// Joints in order: shoulder (turns about a vertical axis at the base), elbow (vertical axis),
/// lift (slides the wrist up, +Z), wrist roll (vertical axis). The tool point hangs
/// `tool_drop` below the wrist.
#[derive(Debug, Clone, PartialEq)]
pub struct ScaraDims {
    /// Height of the arm's plane above the base, in m.
    pub base_height: f64,
    /// Shoulder axis to elbow axis, in m.
    pub upper_arm: f64,
    /// Elbow axis to wrist axis, in m.
    pub forearm: f64,
    /// Wrist frame (at lift zero) down to the tool point, in m (may be 0).
    pub tool_drop: f64,
}

/// Dimensions of a vertical articulated arm, in m.
///
/// Joints in order: base yaw (about +Z), shoulder, elbow and wrist pitch (about −Y, so a
/// positive angle lifts), and for the 5-joint type a wrist roll about the tool's approach
/// axis. In the zero pose the arm points along +X.
#[derive(Debug, Clone, PartialEq)]
pub struct ArticulatedDims {
    /// Base to the shoulder axis, in m.
    pub base_height: f64,
    /// Shoulder axis to elbow axis, in m.
    pub upper_arm: f64,
    /// Elbow axis to wrist pitch axis, in m.
    pub forearm: f64,
    /// Wrist pitch axis to the tool point, along the approach axis, in m.
    pub wrist_to_tool: f64,
}

/// One row of standard (distal) Denavit–Hartenberg parameters, as in Spong, Hutchinson &
/// Vidyasagar, *Robot Modeling and Control* (2006), ch. 3: the transform from frame i−1 to
/// frame i is Rz(θ)·Tz(d)·Tx(a)·Rx(α); the joint turns about (revolute) or slides along
/// (prismatic) the Z axis of frame i−1, and its position adds to θ or to d.
#[derive(Debug, Clone, PartialEq)]
pub struct DhRow {
    /// Revolute (position adds to θ) or prismatic (position adds to d).
    pub kind: JointKind,
    /// Link length a, along the new X, in m.
    pub a: f64,
    /// Link twist α, about the new X, in rad.
    pub alpha: f64,
    /// Link offset d, along the old Z, in m.
    pub d: f64,
    /// Joint angle offset θ, about the old Z, in rad.
    pub theta: f64,
}

/// One joint of a chain given by its axis and a point on it in the base frame, with every
/// joint at zero (the product-of-exponentials description).
#[derive(Debug, Clone, PartialEq)]
pub struct JointPlacement {
    /// Revolute or prismatic.
    pub kind: JointKind,
    /// Direction of the axis in the base frame (need not be unit length, must not be zero).
    pub axis: Vector3<f64>,
    /// A point on the axis in the base frame, in m.
    pub point: Vector3<f64>,
}

/// A general serial chain.
#[derive(Debug, Clone, PartialEq)]
pub enum ChainDims {
    /// Standard Denavit–Hartenberg rows; `tool` is the tool point in the last row's frame.
    DenavitHartenberg {
        /// One row per joint, base first.
        rows: Vec<DhRow>,
        /// Tool point relative to the frame after the last row, in m.
        tool: Isometry3<f64>,
    },
    /// Axes and points in the base frame with every joint at zero; `tool_home` is the tool
    /// frame in the base frame then.
    OriginAxis {
        /// One per joint, base first.
        joints: Vec<JointPlacement>,
        /// Tool frame in the base frame with every joint at zero, in m.
        tool_home: Isometry3<f64>,
    },
}

/// The kind of arm and its dimensions.
#[derive(Debug, Clone, PartialEq)]
pub enum ArmType {
    /// Horizontal-jointed arm: shoulder, elbow, lift, wrist roll (4 joints).
    Scara(ScaraDims),
    /// Vertical articulated arm: base yaw, shoulder, elbow, wrist pitch (4 joints).
    Articulated4(ArticulatedDims),
    /// Vertical articulated arm with a wrist roll (5 joints).
    Articulated5(ArticulatedDims),
    /// Any serial chain; inverse kinematics by damped least squares.
    Chain(ChainDims),
}

/// Where each joint sits and where the tool point sits.
pub(crate) struct Placement {
    pub(crate) joints: Vec<(JointKind, Isometry3<f64>, Unit<Vector3<f64>>)>,
    pub(crate) tool: Isometry3<f64>,
}

impl ArmType {
    /// The word used in files and reports: `scara`, `articulated4`, `articulated5`, `chain`.
    pub fn word(&self) -> &'static str {
        match self {
            ArmType::Scara(_) => "scara",
            ArmType::Articulated4(_) => "articulated4",
            ArmType::Articulated5(_) => "articulated5",
            ArmType::Chain(_) => "chain",
        }
    }

    /// Joints this type needs, or `None` for a chain (any count from 1 to `MAX_JOINTS`).
    pub fn joint_count(&self) -> Option<usize> {
        match self {
            ArmType::Scara(_) | ArmType::Articulated4(_) => Some(4),
            ArmType::Articulated5(_) => Some(5),
            ArmType::Chain(ChainDims::DenavitHartenberg { rows, .. }) => Some(rows.len()),
            ArmType::Chain(ChainDims::OriginAxis { joints, .. }) => Some(joints.len()),
        }
    }

    pub(crate) fn place_joints(&self, given: usize) -> Result<Placement, ArmError> {
        if let Some(expected) = self.joint_count()
            && expected != given
        {
            return Err(ArmError::JointCount {
                arm_type: self.word(),
                expected,
                got: given,
            });
        }
        let z = Vector3::z_axis();
        let minus_y = -Vector3::y_axis();
        let revolute = JointKind::Revolute;
        match self {
            ArmType::Scara(d) => {
                positive("base_height", d.base_height, true)?;
                positive("upper_arm", d.upper_arm, false)?;
                positive("forearm", d.forearm, false)?;
                positive("tool_drop", d.tool_drop, true)?;
                Ok(Placement {
                    joints: vec![
                        (revolute, shift(0.0, 0.0, d.base_height), z),
                        (revolute, shift(d.upper_arm, 0.0, 0.0), z),
                        (JointKind::Prismatic, shift(d.forearm, 0.0, 0.0), z),
                        (revolute, Isometry3::identity(), z),
                    ],
                    tool: shift(0.0, 0.0, -d.tool_drop),
                })
            }
            ArmType::Articulated4(d) | ArmType::Articulated5(d) => {
                positive("base_height", d.base_height, true)?;
                positive("upper_arm", d.upper_arm, false)?;
                positive("forearm", d.forearm, false)?;
                positive("wrist_to_tool", d.wrist_to_tool, true)?;
                let mut joints = vec![
                    (revolute, Isometry3::identity(), z),
                    (revolute, shift(0.0, 0.0, d.base_height), minus_y),
                    (revolute, shift(d.upper_arm, 0.0, 0.0), minus_y),
                    (revolute, shift(d.forearm, 0.0, 0.0), minus_y),
                ];
                if matches!(self, ArmType::Articulated5(_)) {
                    joints.push((revolute, Isometry3::identity(), Vector3::x_axis()));
                }
                Ok(Placement {
                    joints,
                    tool: shift(d.wrist_to_tool, 0.0, 0.0),
                })
            }
            ArmType::Chain(ChainDims::DenavitHartenberg { rows, tool }) => {
                let mut joints = Vec::with_capacity(rows.len());
                let mut trailing = Isometry3::identity();
                for (index, row) in rows.iter().enumerate() {
                    for (name, value) in [
                        ("a", row.a),
                        ("alpha", row.alpha),
                        ("d", row.d),
                        ("theta", row.theta),
                    ] {
                        if !value.is_finite() {
                            return Err(ArmError::Dimension {
                                what: format!("row {index} {name}"),
                                value,
                            });
                        }
                    }
                    let lead = Isometry3::from_parts(
                        Translation3::new(0.0, 0.0, row.d),
                        UnitQuaternion::from_axis_angle(&z, row.theta),
                    );
                    joints.push((row.kind, trailing * lead, z));
                    trailing = Isometry3::from_parts(
                        Translation3::new(row.a, 0.0, 0.0),
                        UnitQuaternion::from_axis_angle(&Vector3::x_axis(), row.alpha),
                    );
                }
                Ok(Placement {
                    joints,
                    tool: trailing * tool,
                })
            }
            ArmType::Chain(ChainDims::OriginAxis { joints, tool_home }) => {
                let mut placed = Vec::with_capacity(joints.len());
                let mut previous = Vector3::zeros();
                for (index, joint) in joints.iter().enumerate() {
                    if !joint
                        .point
                        .iter()
                        .chain(joint.axis.iter())
                        .all(|v| v.is_finite())
                    {
                        return Err(ArmError::Dimension {
                            what: format!("joint {index} axis or point"),
                            value: f64::NAN,
                        });
                    }
                    let axis = Unit::try_new(joint.axis, 1e-12)
                        .ok_or(ArmError::ZeroAxis { joint: index })?;
                    let step = joint.point - previous;
                    placed.push((joint.kind, shift(step.x, step.y, step.z), axis));
                    previous = joint.point;
                }
                let tool = Isometry3::from_parts(
                    Translation3::from(tool_home.translation.vector - previous),
                    tool_home.rotation,
                );
                Ok(Placement {
                    joints: placed,
                    tool,
                })
            }
        }
    }
}

fn shift(x: f64, y: f64, z: f64) -> Isometry3<f64> {
    Isometry3::translation(x, y, z)
}

fn positive(what: &str, value: f64, zero_allowed: bool) -> Result<(), ArmError> {
    let ok = value.is_finite() && (value > 0.0 || (zero_allowed && value == 0.0));
    if ok {
        Ok(())
    } else {
        Err(ArmError::Dimension {
            what: what.to_string(),
            value,
        })
    }
}
