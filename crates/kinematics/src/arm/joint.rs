//! One movable joint: its kind, placement, limits, home position, servo, calibration and link.

use nalgebra::{Isometry3, Unit, Vector3};

use super::{ArmError, Calibration, MassProperties, ServoSpec};

/// Whether a joint turns about its axis or slides along it.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum JointKind {
    /// Turns about its axis; position in rad.
    Revolute,
    /// Slides along its axis; position in m.
    Prismatic,
}

impl JointKind {
    /// The word used in files and reports: `revolute` or `prismatic`.
    pub fn word(self) -> &'static str {
        match self {
            JointKind::Revolute => "revolute",
            JointKind::Prismatic => "prismatic",
        }
    }
}

/// What a user says about one joint; the arm type says where it sits.
///
/// Positions are in rad for a revolute joint and in m for a prismatic one.
#[derive(Debug, Clone, PartialEq)]
pub struct JointSpec {
    /// A name for reports, such as "shoulder".
    pub name: String,
    /// Lowest allowed position (rad or m).
    pub min: f64,
    /// Highest allowed position (rad or m).
    pub max: f64,
    /// The home (parking) position (rad or m); also the default pose to start from.
    pub home: f64,
    /// The servo that drives the joint.
    pub servo: ServoSpec,
    /// The map from joint position to pulse width.
    pub calibration: Calibration,
    /// Mass properties of the link this joint moves, in the joint's frame (kg, m, kg·m²).
    pub link_mass: MassProperties,
}

/// A placed, checked joint of an [`Arm`](super::Arm).
#[derive(Debug, Clone, PartialEq)]
pub struct Joint {
    /// A name for reports.
    pub name: String,
    /// Revolute or prismatic.
    pub kind: JointKind,
    /// Fixed transform from the previous joint's frame (or the base) to this joint's frame at
    /// position zero, in m.
    pub origin: Isometry3<f64>,
    /// The axis in this joint's frame, a unit vector.
    pub axis: Unit<Vector3<f64>>,
    /// Lowest allowed position (rad or m).
    pub min: f64,
    /// Highest allowed position (rad or m).
    pub max: f64,
    /// The home position (rad or m).
    pub home: f64,
    /// The servo that drives the joint.
    pub servo: ServoSpec,
    /// The map from joint position to pulse width.
    pub calibration: Calibration,
    /// Mass properties of the link this joint moves, in the joint's frame.
    pub link_mass: MassProperties,
}

impl Joint {
    pub(crate) fn new(
        index: usize,
        spec: JointSpec,
        kind: JointKind,
        origin: Isometry3<f64>,
        axis: Unit<Vector3<f64>>,
    ) -> Result<Joint, ArmError> {
        let field_error = |field: &'static str, problem: String| ArmError::JointField {
            joint: index,
            field,
            problem,
        };
        for (field, value) in [("min", spec.min), ("max", spec.max), ("home", spec.home)] {
            if !value.is_finite() {
                return Err(field_error(
                    field,
                    format!("is not a finite number ({value})"),
                ));
            }
        }
        if spec.min >= spec.max {
            return Err(field_error(
                "min",
                format!("({}) must be below max ({})", spec.min, spec.max),
            ));
        }
        if spec.home < spec.min || spec.home > spec.max {
            return Err(field_error(
                "home",
                format!("({}) lies outside {}..{}", spec.home, spec.min, spec.max),
            ));
        }
        spec.servo.check(index)?;
        spec.calibration.check(index)?;
        spec.link_mass.check(&format!("joint {index} link"))?;
        Ok(Joint {
            name: spec.name,
            kind,
            origin,
            axis,
            min: spec.min,
            max: spec.max,
            home: spec.home,
            servo: spec.servo,
            calibration: spec.calibration,
            link_mass: spec.link_mass,
        })
    }

    /// A joint for unit tests: `kind` at `origin` turning about or sliding along `axis`, limits
    /// `min`..`max` (rad or m) with home at `min`, driven by a plain servo (1 N·m, 6 rad/s,
    /// pulses 1000–2000 µs for −1..1) and moving a massless link.
    #[cfg(test)]
    pub(crate) fn for_tests(
        kind: JointKind,
        origin: Isometry3<f64>,
        axis: Unit<Vector3<f64>>,
        min: f64,
        max: f64,
    ) -> Result<Joint, ArmError> {
        let spec = JointSpec {
            name: "test".into(),
            min,
            max,
            home: min,
            servo: ServoSpec {
                stall_torque: 1.0,
                no_load_speed: 6.0,
                deadband_us: 4.0,
                proportional_band_us: 40.0,
                backlash: 0.0,
                mass: 0.05,
                mount_offset: Vector3::zeros(),
                drive_ratio: 1.0,
            },
            calibration: Calibration {
                position_a: -1.0,
                pulse_a_us: 1000.0,
                position_b: 1.0,
                pulse_b_us: 2000.0,
                pulse_min_us: 900.0,
                pulse_max_us: 2100.0,
            },
            link_mass: MassProperties::zero(),
        };
        Joint::new(0, spec, kind, origin, axis)
    }

    /// The motion of this joint at `position` (rad or m), in its own frame.
    pub fn motion(&self, position: f64) -> Isometry3<f64> {
        match self.kind {
            JointKind::Revolute => {
                Isometry3::new(Vector3::zeros(), self.axis.into_inner() * position)
            }
            JointKind::Prismatic => Isometry3::translation(
                self.axis.x * position,
                self.axis.y * position,
                self.axis.z * position,
            ),
        }
    }

    /// The most effort the servo can give at this joint when derated to `share` (0–1] of its
    /// rating: N·m for a revolute joint, N for a prismatic one.
    pub fn rated_effort(&self, share: f64) -> f64 {
        self.servo.stall_torque * share / self.servo.drive_ratio
    }
}
