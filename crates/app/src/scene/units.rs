//! The one place that turns the file's units (mm, degrees, g, N·cm, g·mm², °/s) into the SI arm
//! model of `armwright-kinematics` (m, rad, kg, N·m, kg·m², rad/s), and joint positions back.

use armwright_kinematics::{
    Arm, ArmDescription, ArmError, ArmType, ArticulatedDims, Calibration, ChainDims, DhRow,
    Gripper, JointKind, JointPlacement, JointSpec, MassProperties, ScaraDims, ServoSpec,
};
use nalgebra::{Isometry3, Matrix3, Translation3, UnitQuaternion, Vector3};

use super::document::*;
use super::field::Unit;
use super::field_table as table;
use super::problem::{Problem, child, item};

/// A joint position in the file's unit (degrees or mm) → SI (rad or m).
pub fn position_from_file_unit(kind: JointKindDoc, value: f64) -> f64 {
    match kind {
        JointKindDoc::Revolute => value.to_radians(),
        JointKindDoc::Prismatic => value * Unit::Position.to_si(kind),
    }
}

/// A joint position in SI (rad or m) → the file's unit (degrees or mm).
pub fn position_to_file_unit(kind: JointKindDoc, value: f64) -> f64 {
    match kind {
        JointKindDoc::Revolute => value.to_degrees(),
        JointKindDoc::Prismatic => value / Unit::Position.to_si(kind),
    }
}

/// A joint rate in the file's unit → SI: deg/s → rad/s and mm/s → m/s, and the same for
/// accelerations and jerks (deg/s² → rad/s², mm/s³ → m/s³): the factor of the position's unit.
pub fn rate_from_file_unit(kind: JointKindDoc, value: f64) -> f64 {
    position_from_file_unit(kind, value)
}

/// A joint rate in SI (rad/s or m/s, or per s² or s³) → the file's unit (deg or mm per s, s²
/// or s³).
pub fn rate_to_file_unit(kind: JointKindDoc, value: f64) -> f64 {
    position_to_file_unit(kind, value)
}

/// A whole pose in file units → SI, joint kinds from the arm's shape (revolute where the shape
/// does not say).
pub fn pose_from_file_units(arm: &ArmDoc, values: &[f64]) -> Vec<f64> {
    let kinds = arm.shape.joint_kinds();
    values
        .iter()
        .enumerate()
        .map(|(index, &value)| position_from_file_unit(kind_at(&kinds, index), value))
        .collect()
}

/// A whole pose in SI → file units.
pub fn pose_to_file_units(arm: &ArmDoc, values: &[f64]) -> Vec<f64> {
    let kinds = arm.shape.joint_kinds();
    values
        .iter()
        .enumerate()
        .map(|(index, &value)| position_to_file_unit(kind_at(&kinds, index), value))
        .collect()
}

fn kind_at(kinds: &[JointKindDoc], index: usize) -> JointKindDoc {
    kinds.get(index).copied().unwrap_or(JointKindDoc::Revolute)
}

/// A row of three numbers in SI, as a vector.
fn vector_si<T>(row: &super::field::Field<T>, doc: &T) -> Vector3<f64> {
    let values = row.si_values(doc, JointKindDoc::Revolute);
    let at = |index: usize| values.get(index).copied().unwrap_or(0.0);
    Vector3::new(at(0), at(1), at(2))
}

fn placement(doc: &PlacementDoc) -> Isometry3<f64> {
    let turn = vector_si(&table::placement::ROTATION, doc);
    let (x, y, z) = (turn.x, turn.y, turn.z);
    Isometry3::from_parts(
        Translation3::from(vector_si(&table::placement::POSITION, doc)),
        // nalgebra's from_euler_angles(roll, pitch, yaw) is Rz(yaw)·Ry(pitch)·Rx(roll).
        UnitQuaternion::from_euler_angles(x, y, z),
    )
}

fn kind(doc: JointKindDoc) -> JointKind {
    match doc {
        JointKindDoc::Revolute => JointKind::Revolute,
        JointKindDoc::Prismatic => JointKind::Prismatic,
    }
}

fn arm_type(shape: &ArmShape) -> ArmType {
    match shape {
        ArmShape::Scara(size) => {
            use table::scara::*;
            let si = |row: super::field::Field<ScaraSize>| row.si(size, JointKindDoc::Revolute);
            ArmType::Scara(ScaraDims {
                base_height: si(BASE_HEIGHT),
                upper_arm: si(UPPER_ARM),
                forearm: si(FOREARM),
                tool_drop: si(TOOL_DROP),
            })
        }
        ArmShape::Articulated4(size) => ArmType::Articulated4(articulated(size)),
        ArmShape::Articulated5(size) => ArmType::Articulated5(articulated(size)),
        ArmShape::ChainDh { rows, tool } => ArmType::Chain(ChainDims::DenavitHartenberg {
            rows: rows
                .iter()
                .map(|row| {
                    use table::dh_row::*;
                    let si = |field: super::field::Field<DhRowDoc>| {
                        field.si(row, JointKindDoc::Revolute)
                    };
                    DhRow {
                        kind: kind(row.kind),
                        a: si(A),
                        alpha: si(ALPHA),
                        d: si(D),
                        theta: si(THETA),
                    }
                })
                .collect(),
            tool: placement(tool),
        }),
        ArmShape::ChainOriginAxis { axes, tool_home } => ArmType::Chain(ChainDims::OriginAxis {
            joints: axes
                .iter()
                .map(|axis| JointPlacement {
                    kind: kind(axis.kind),
                    axis: vector_si(&table::axis::AXIS, axis),
                    point: vector_si(&table::axis::ORIGIN, axis),
                })
                .collect(),
            tool_home: placement(tool_home),
        }),
    }
}

fn articulated(size: &ArticulatedSize) -> ArticulatedDims {
    use table::articulated::*;
    let si = |row: super::field::Field<ArticulatedSize>| row.si(size, JointKindDoc::Revolute);
    ArticulatedDims {
        base_height: si(BASE_HEIGHT),
        upper_arm: si(UPPER_ARM),
        forearm: si(FOREARM),
        wrist_to_tool: si(WRIST_TO_TOOL),
    }
}

fn calibration(doc: &CalibrationDoc, kind: JointKindDoc) -> Calibration {
    let [a, b] = doc.points;
    Calibration {
        position_a: position_from_file_unit(kind, a.position),
        pulse_a_us: f64::from(a.pulse_us),
        position_b: position_from_file_unit(kind, b.position),
        pulse_b_us: f64::from(b.pulse_us),
        pulse_min_us: f64::from(doc.pulse_min_us),
        pulse_max_us: f64::from(doc.pulse_max_us),
    }
}

/// The servo's proportional band in µs. A band given in degrees of servo output is carried
/// through the drive (1 rad of joint per rad of output for a revolute joint, the pinion radius
/// for a prismatic one) and the calibration's µs per joint unit.
fn band_us(band: BandDoc, drive_ratio: f64, calibration: &Calibration) -> f64 {
    match band {
        BandDoc::Us(us) => us,
        BandDoc::Deg(deg) => deg.to_radians() * drive_ratio * calibration.slope_us().abs(),
    }
}

fn joint_spec(doc: &JointDoc, kind: JointKindDoc) -> JointSpec {
    use table::{joint, link_mass, servo};
    let calibration = calibration(&doc.calibration, kind);
    let drive_ratio = match kind {
        JointKindDoc::Revolute => 1.0,
        JointKindDoc::Prismatic => servo::PINION_RADIUS.si(&doc.servo, kind),
    };
    let inertia = match link_mass::INERTIA.si_values(&doc.link, kind).as_slice() {
        &[xx, yy, zz, xy, xz, yz] => Matrix3::new(xx, xy, xz, xy, yy, yz, xz, yz, zz),
        _ => Matrix3::zeros(),
    };
    // Pulse widths stay in µs in the arm model.
    let us = |row: super::field::Field<ServoDoc>| row.value(&doc.servo).unwrap_or(0.0);
    JointSpec {
        name: doc.name.clone(),
        min: joint::MIN.si(doc, kind),
        max: joint::MAX.si(doc, kind),
        home: joint::HOME.si(doc, kind),
        servo: ServoSpec {
            stall_torque: servo::STALL_TORQUE.si(&doc.servo, kind),
            no_load_speed: servo::NO_LOAD_SPEED.si(&doc.servo, kind),
            deadband_us: us(servo::DEADBAND),
            proportional_band_us: band_us(doc.servo.proportional_band, drive_ratio, &calibration),
            backlash: servo::BACKLASH.si(&doc.servo, kind),
            mass: servo::MASS.si(&doc.servo, kind),
            mount_offset: vector_si(&servo::MOUNT_OFFSET, &doc.servo),
            drive_ratio,
        },
        calibration,
        link_mass: MassProperties {
            mass: link_mass::MASS.si(&doc.link, kind),
            centre: vector_si(&link_mass::CENTRE, &doc.link),
            inertia,
        },
    }
}

/// The arm in SI units, ready for [`Arm::new`].
pub fn arm_description(arm: &ArmDoc) -> ArmDescription {
    let kinds = arm.shape.joint_kinds();
    ArmDescription {
        arm_type: arm_type(&arm.shape),
        joints: arm
            .joints
            .iter()
            .enumerate()
            .map(|(index, joint)| joint_spec(joint, kind_at(&kinds, index)))
            .collect(),
        tool_mass: MassProperties::point(
            table::tool::MASS.si(&arm.tool, JointKindDoc::Revolute),
            vector_si(&table::tool::CENTRE, &arm.tool),
        ),
        payload_mass: table::arm::PAYLOAD.si(arm, JointKindDoc::Revolute),
        gripper: arm.gripper.as_ref().map(|gripper| Gripper {
            open_pulse_us: f64::from(gripper.open_pulse_us),
            closed_pulse_us: f64::from(gripper.closed_pulse_us),
        }),
    }
}

/// Builds the checked arm model, turning the model's complaint into a problem at the JSON path
/// it concerns.
///
/// # Errors
/// A [`Problem`] located in the scene's `arm` if the kinematics crate refuses the arm.
pub fn build_arm(arm: &ArmDoc) -> Result<Arm, Problem> {
    Arm::new(arm_description(arm)).map_err(|error| {
        let path = match &error {
            ArmError::JointCount { .. } | ArmError::ChainLength { .. } => "arm.joints".to_string(),
            ArmError::Dimension { .. } => match arm.shape {
                ArmShape::ChainDh { .. } | ArmShape::ChainOriginAxis { .. } => "arm.chain".into(),
                _ => "arm.dimensions".into(),
            },
            ArmError::JointField { joint, field, .. } => child(
                &item("arm.joints", *joint),
                field.split('.').next().unwrap_or(""),
            ),
            ArmError::ZeroAxis { joint } => child(&item("arm.chain.axes", *joint), "axis"),
            ArmError::Mass { .. } => "arm".into(),
        };
        Problem::new(path, error.to_string())
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn datasheet_units_become_si() {
        // Common practice: a "20 kg·cm" servo stalls at 20 × 9.80665 / 100 ≈ 1.96 N·m, i.e.
        // 196 N·cm; 0.17 s per 60° is 60/0.17 ≈ 352.9 °/s ≈ 6.16 rad/s.
        use table::servo::*;
        let mut servo = super::super::field::filled(&[
            (STALL_TORQUE, 196.133),
            (NO_LOAD_SPEED, 60.0 / 0.17),
            (DEADBAND, 3.0),
            (BACKLASH, 0.5),
            (MASS, 55.0),
        ]);
        servo.proportional_band = BandDoc::Us(40.0);
        MOUNT_OFFSET
            .set_values(&mut servo, &[10.0, 0.0, -5.0])
            .unwrap();
        let doc = JointDoc {
            name: "shoulder".into(),
            min: -90.0,
            max: 90.0,
            home: 0.0,
            servo,
            calibration: CalibrationDoc {
                points: [
                    CalibrationPoint {
                        position: -90.0,
                        pulse_us: 1000,
                    },
                    CalibrationPoint {
                        position: 90.0,
                        pulse_us: 2000,
                    },
                ],
                pulse_min_us: 900,
                pulse_max_us: 2100,
                uncertainty: None,
            },
            link: LinkMassDoc {
                mass_g: 40.0,
                centre_mm: [60.0, 0.0, 0.0],
                inertia_g_mm2: Some([1000.0, 2000.0, 3000.0, 10.0, 20.0, 30.0]),
                radius_mm: None,
            },
        };
        let spec = joint_spec(&doc, JointKindDoc::Revolute);
        assert!((spec.servo.stall_torque - 1.96133).abs() < 1e-12);
        assert!((spec.servo.no_load_speed - 6.1599).abs() < 1e-3);
        assert!((spec.servo.mass - 0.055).abs() < 1e-15);
        assert!((spec.servo.mount_offset - Vector3::new(0.01, 0.0, -0.005)).norm() < 1e-15);
        assert!((spec.min + std::f64::consts::FRAC_PI_2).abs() < 1e-15);
        assert!((spec.link_mass.centre.x - 0.06).abs() < 1e-15);
        // 1000 g·mm² = 1e-6 kg·m²; the tensor is symmetric.
        assert!((spec.link_mass.inertia[(0, 0)] - 1e-6).abs() < 1e-18);
        assert_eq!(
            spec.link_mass.inertia[(0, 1)],
            spec.link_mass.inertia[(1, 0)]
        );
        assert!((spec.link_mass.inertia[(1, 2)] - 30e-9).abs() < 1e-18);
        assert!((spec.calibration.pulse_us(0.0) - 1500.0).abs() < 1e-9);
    }

    #[test]
    fn a_band_in_degrees_goes_through_the_calibration() {
        // 1000 µs over 180° is 5.56 µs per degree (common practice), so 4° ≈ 22.2 µs.
        let calibration = Calibration {
            position_a: -std::f64::consts::FRAC_PI_2,
            pulse_a_us: 1000.0,
            position_b: std::f64::consts::FRAC_PI_2,
            pulse_b_us: 2000.0,
            pulse_min_us: 900.0,
            pulse_max_us: 2100.0,
        };
        let us = band_us(BandDoc::Deg(4.0), 1.0, &calibration);
        assert!((us - 4.0 * 1000.0 / 180.0).abs() < 1e-9, "{us}");
        assert_eq!(band_us(BandDoc::Us(40.0), 1.0, &calibration), 40.0);
    }

    #[test]
    fn prismatic_positions_are_mm_and_revolute_degrees() {
        assert!((position_from_file_unit(JointKindDoc::Prismatic, 25.0) - 0.025).abs() < 1e-15);
        assert!(
            (position_from_file_unit(JointKindDoc::Revolute, 180.0) - std::f64::consts::PI).abs()
                < 1e-15
        );
        for value in [-37.5, 0.0, 12.25] {
            for kind in [JointKindDoc::Revolute, JointKindDoc::Prismatic] {
                let back = position_to_file_unit(kind, position_from_file_unit(kind, value));
                assert!((back - value).abs() < 1e-12);
            }
        }
    }

    #[test]
    fn a_fixed_turn_is_z_then_y_then_x_about_fixed_axes() {
        // Turning 90° about Z alone takes X to Y.
        let doc = PlacementDoc {
            position_mm: [10.0, 20.0, 30.0],
            rotation_xyz_deg: [0.0, 0.0, 90.0],
        };
        let iso = placement(&doc);
        let x = iso.rotation * Vector3::x();
        assert!((x - Vector3::y()).norm() < 1e-12);
        assert!((iso.translation.vector - Vector3::new(0.01, 0.02, 0.03)).norm() < 1e-15);
    }
}
