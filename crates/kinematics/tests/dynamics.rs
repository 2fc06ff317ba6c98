//! Inverse dynamics and joint inertia: a textbook two-link arm, a pendulum, agreement with the
//! statics, the mass matrix's symmetry and positive definiteness, and the power balance.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

use armwright_test_support::arms as common;

use armwright_kinematics::{
    Arm, ArmDescription, ArmType, ChainDims, JointKind, JointPlacement, KinematicsError,
    MAX_JOINTS, MassProperties, STANDARD_GRAVITY, forward, gravity_torques, inverse_dynamics,
    joint_inertia,
};
use common::{Seeded, articulated, joint, random_chain, scara};
use nalgebra::{DMatrix, DVector, Isometry3, Point3, Vector3};
use proptest::prelude::*;
use std::f64::consts::PI;

/// A planar arm in the vertical X–Z plane: revolute joints about −Y (positive lifts) with
/// point masses at the link ends and massless servos.
fn planar(lengths: &[f64], masses: &[f64]) -> Arm {
    let mut placements = Vec::new();
    let mut joints = Vec::new();
    let mut x = 0.0;
    for (index, (&length, &mass)) in lengths.iter().zip(masses).enumerate() {
        placements.push(JointPlacement {
            kind: JointKind::Revolute,
            axis: -Vector3::y(),
            point: Vector3::new(x, 0.0, 0.0),
        });
        let mut spec = joint(
            &format!("j{index}"),
            -PI,
            PI,
            MassProperties::point(mass, Vector3::new(length, 0.0, 0.0)),
        );
        spec.servo.mass = 0.0;
        joints.push(spec);
        x += length;
    }
    Arm::new(ArmDescription {
        arm_type: ArmType::Chain(ChainDims::OriginAxis {
            joints: placements,
            tool_home: Isometry3::translation(x, 0.0, 0.0),
        }),
        joints,
        tool_mass: MassProperties::zero(),
        payload_mass: 0.0,
        gripper: None,
    })
    .unwrap()
}

/// The joint-space mass matrix from inverse dynamics at rest: column j is the effort for a unit
/// acceleration of joint j, less the gravity part.
fn mass_matrix(arm: &Arm, q: &[f64], payload: f64) -> DMatrix<f64> {
    let n = arm.joint_count();
    let rest = vec![0.0; n];
    let gravity = inverse_dynamics(arm, q, &rest, &rest, payload).unwrap();
    DMatrix::from_fn(n, n, |row, column| {
        let mut unit = vec![0.0; n];
        unit[column] = 1.0;
        let efforts = inverse_dynamics(arm, q, &rest, &unit, payload).unwrap();
        efforts.as_slice()[row] - gravity.as_slice()[row]
    })
}

fn every_arm(rng: &mut Seeded) -> Vec<Arm> {
    let mut arms = vec![scara(), articulated(false), articulated(true)];
    for count in 1..=MAX_JOINTS {
        arms.push(random_chain(rng, count));
    }
    arms
}

#[test]
fn two_link_planar_arm_matches_the_textbook() {
    // Lynch & Park, Modern Robotics, 2017, §8.1.1: two-link planar arm with point masses
    // m1, m2 at the ends of links L1, L2, angles from the horizontal, gravity −g along the
    // plane's vertical (closed form as printed there; written down from memory here):
    // τ1 = (m1L1² + m2(L1² + 2L1L2c2 + L2²))θ̈1 + m2(L1L2c2 + L2²)θ̈2
    //      − m2L1L2s2(2θ̇1θ̇2 + θ̇2²) + (m1+m2)L1g·c1 + m2gL2·c12
    // τ2 = m2(L1L2c2 + L2²)θ̈1 + m2L2²θ̈2 + m2L1L2s2·θ̇1² + m2gL2·c12
    let (l1, l2, m1, m2) = (0.12, 0.09, 0.11, 0.07);
    let arm = planar(&[l1, l2], &[m1, m2]);
    let g = STANDARD_GRAVITY;
    let mut rng = Seeded::new(5);
    for _ in 0..50 {
        let q = [rng.uniform(-PI, PI), rng.uniform(-PI, PI)];
        let qd = [rng.uniform(-5.0, 5.0), rng.uniform(-5.0, 5.0)];
        let qdd = [rng.uniform(-20.0, 20.0), rng.uniform(-20.0, 20.0)];
        let (c1, c2, s2, c12) = (q[0].cos(), q[1].cos(), q[1].sin(), (q[0] + q[1]).cos());
        let tau1 = (m1 * l1 * l1 + m2 * (l1 * l1 + 2.0 * l1 * l2 * c2 + l2 * l2)) * qdd[0]
            + m2 * (l1 * l2 * c2 + l2 * l2) * qdd[1]
            - m2 * l1 * l2 * s2 * (2.0 * qd[0] * qd[1] + qd[1] * qd[1])
            + (m1 + m2) * l1 * g * c1
            + m2 * g * l2 * c12;
        let tau2 = m2 * (l1 * l2 * c2 + l2 * l2) * qdd[0]
            + m2 * l2 * l2 * qdd[1]
            + m2 * l1 * l2 * s2 * qd[0] * qd[0]
            + m2 * g * l2 * c12;
        let efforts = inverse_dynamics(&arm, &q, &qd, &qdd, 0.0).unwrap();
        assert!((efforts.as_slice()[0] - tau1).abs() < 1e-12);
        assert!((efforts.as_slice()[1] - tau2).abs() < 1e-12);
    }
}

#[test]
fn a_payload_is_a_point_mass_at_the_tool_point() {
    // The same planar arm with m2 given as payload instead of as the last link's mass.
    let with_link = planar(&[0.12, 0.09], &[0.11, 0.07]);
    let with_payload = planar(&[0.12, 0.09], &[0.11, 0.0]);
    let (q, qd, qdd) = ([0.3, -0.8], [1.5, -2.0], [4.0, 7.0]);
    let a = inverse_dynamics(&with_link, &q, &qd, &qdd, 0.0).unwrap();
    let b = inverse_dynamics(&with_payload, &q, &qd, &qdd, 0.07).unwrap();
    for (x, y) in a.as_slice().iter().zip(b.as_slice()) {
        assert!((x - y).abs() < 1e-12, "{x} vs {y}");
    }
}

#[test]
fn at_rest_it_is_the_holding_torque() {
    let mut rng = Seeded::new(11);
    for arm in every_arm(&mut rng) {
        for _ in 0..20 {
            let q = rng.pose(&arm);
            let payload = rng.uniform(0.0, 0.1);
            let rest = vec![0.0; arm.joint_count()];
            let dynamic = inverse_dynamics(&arm, &q, &rest, &rest, payload).unwrap();
            let statics = gravity_torques(&arm, &q, payload).unwrap();
            for (a, b) in dynamic.as_slice().iter().zip(statics.as_slice()) {
                assert!((a - b).abs() < 1e-12, "{a} vs {b}");
            }
        }
    }
}

#[test]
fn joint_inertia_of_a_lever_and_a_rod() {
    // A point mass m at r: I = m·r². A uniform rod of mass m and length L about its end:
    // I = m·L²/3 (any mechanics textbook, e.g. Halliday, Resnick & Walker, Fundamentals of
    // Physics, 10th ed., 2014, table 10-2, with the parallel-axis theorem).
    let lever = planar(&[0.3], &[0.09]);
    let inertia = joint_inertia(&lever, &[0.4], 0.0, 0).unwrap();
    assert!((inertia - 0.09 * 0.09).abs() < 1e-15);
    let with_payload = joint_inertia(&lever, &[0.4], 0.01, 0).unwrap();
    assert!((with_payload - 0.10 * 0.09).abs() < 1e-15);

    let mut spec = joint("rod", -PI, PI, MassProperties::rod_along_x(0.06, 0.2));
    spec.servo.mass = 0.0;
    let rod = Arm::new(ArmDescription {
        arm_type: ArmType::Chain(ChainDims::OriginAxis {
            joints: vec![JointPlacement {
                kind: JointKind::Revolute,
                axis: Vector3::z(),
                point: Vector3::zeros(),
            }],
            tool_home: Isometry3::translation(0.2, 0.0, 0.0),
        }),
        joints: vec![spec],
        tool_mass: MassProperties::zero(),
        payload_mass: 0.0,
        gripper: None,
    })
    .unwrap();
    let inertia = joint_inertia(&rod, &[1.0], 0.0, 0).unwrap();
    assert!((inertia - 0.06 * 0.2 * 0.2 / 3.0).abs() < 1e-15);
}

#[test]
fn a_lift_sees_the_mass_it_carries() {
    // The horizontal arm's lift moves everything beyond it straight up: 0.03 + 0.055 + 0.02 +
    // 0.04 kg plus the payload (tests/common), whatever the other joints do.
    let arm = scara();
    let mass = joint_inertia(&arm, &[0.5, 1.0, 0.01, -2.0], 0.02, 2).unwrap();
    assert!((mass - (0.03 + 0.055 + 0.02 + 0.04 + 0.02)).abs() < 1e-12);
}

#[test]
fn joint_inertia_is_the_mass_matrix_diagonal() {
    let mut rng = Seeded::new(17);
    for arm in every_arm(&mut rng) {
        let q = rng.pose(&arm);
        let matrix = mass_matrix(&arm, &q, 0.03);
        for index in 0..arm.joint_count() {
            let inertia = joint_inertia(&arm, &q, 0.03, index).unwrap();
            assert!((inertia - matrix[(index, index)]).abs() < 1e-14);
        }
    }
}

#[test]
fn power_balances_the_change_of_energy() {
    // Work–energy: along any motion, d/dt (kinetic + potential energy) = Σ τᵢ·q̇ᵢ. Kinetic energy
    // is ½ q̇ᵀM(q)q̇ with M from inverse dynamics; potential energy from forward kinematics.
    // The time derivative is a central difference along q(t) = q + q̇t + ½q̈t².
    let energy = |arm: &Arm, q: &[f64], qd: &[f64], payload: f64| {
        let matrix = mass_matrix(arm, q, payload);
        let rate = DVector::from_column_slice(qd);
        let kinetic = 0.5 * rate.dot(&(&matrix * &rate));
        let pose = forward(arm, q).unwrap();
        let mut height_mass = payload * pose.tool().translation.z;
        for (index, frame) in pose.frames().iter().enumerate() {
            let body = arm.body(index).unwrap();
            height_mass += body.mass * (frame * Point3::from(body.centre)).z;
        }
        kinetic + STANDARD_GRAVITY * height_mass
    };
    let mut rng = Seeded::new(23);
    for arm in every_arm(&mut rng) {
        for _ in 0..5 {
            let n = arm.joint_count();
            let q = rng.pose(&arm);
            let qd: Vec<f64> = (0..n).map(|_| rng.uniform(-2.0, 2.0)).collect();
            let qdd: Vec<f64> = (0..n).map(|_| rng.uniform(-5.0, 5.0)).collect();
            let payload = rng.uniform(0.0, 0.1);
            let efforts = inverse_dynamics(&arm, &q, &qd, &qdd, payload).unwrap();
            let power: f64 = efforts.as_slice().iter().zip(&qd).map(|(t, v)| t * v).sum();
            let at = |t: f64| {
                let position: Vec<f64> = (0..n)
                    .map(|i| q[i] + qd[i] * t + 0.5 * qdd[i] * t * t)
                    .collect();
                let rate: Vec<f64> = (0..n).map(|i| qd[i] + qdd[i] * t).collect();
                energy(&arm, &position, &rate, payload)
            };
            let h = 1e-5;
            let slope = (at(h) - at(-h)) / (2.0 * h);
            assert!(
                (slope - power).abs() < 1e-7 * (1.0 + power.abs()),
                "{} joints: dE/dt {slope} vs power {power}",
                n
            );
        }
    }
}

#[test]
fn bad_inputs_are_refused() {
    let arm = articulated(false);
    let zeros = [0.0; 4];
    assert!(matches!(
        inverse_dynamics(&arm, &zeros, &[0.0; 3], &zeros, 0.0),
        Err(KinematicsError::WrongJointCount {
            expected: 4,
            got: 3
        })
    ));
    assert!(matches!(
        inverse_dynamics(&arm, &zeros, &zeros, &[0.0, 0.0, f64::NAN, 0.0], 0.0),
        Err(KinematicsError::MotionNotFinite {
            joint: 2,
            quantity: "acceleration",
            ..
        })
    ));
    assert!(matches!(
        inverse_dynamics(&arm, &zeros, &[f64::INFINITY, 0.0, 0.0, 0.0], &zeros, 0.0),
        Err(KinematicsError::MotionNotFinite {
            joint: 0,
            quantity: "rate",
            ..
        })
    ));
    assert_eq!(
        joint_inertia(&arm, &zeros, 0.0, 4).unwrap_err(),
        KinematicsError::NoSuchJoint { joint: 4, count: 4 }
    );
    assert!(matches!(
        joint_inertia(&arm, &zeros, -1.0, 0),
        Err(KinematicsError::Payload { .. })
    ));
}

proptest! {
    #[test]
    fn mass_matrix_is_symmetric_positive_definite(
        seed in any::<u64>(),
        count in 1usize..=MAX_JOINTS,
        payload in 0.0f64..0.2,
    ) {
        // Lynch & Park, Modern Robotics, 2017, §8.1.2: M(θ) is symmetric and positive definite.
        let mut rng = Seeded::new(seed);
        let arm = random_chain(&mut rng, count);
        let q = rng.pose(&arm);
        let matrix = mass_matrix(&arm, &q, payload);
        let scale = matrix.amax();
        for row in 0..count {
            for column in 0..count {
                let gap = (matrix[(row, column)] - matrix[(column, row)]).abs();
                prop_assert!(gap <= 1e-12 * scale, "M[{row},{column}] asymmetric by {gap}");
            }
        }
        let symmetric = (&matrix + matrix.transpose()) * 0.5;
        let eigenvalues = symmetric.symmetric_eigenvalues();
        prop_assert!(eigenvalues.min() > 0.0, "eigenvalues {eigenvalues}");
    }
}

/// Any f64 at all, NaN, infinities and huge values included.
fn any_value() -> impl Strategy<Value = f64> {
    prop_oneof![
        any::<f64>(),
        Just(f64::NAN),
        Just(f64::INFINITY),
        Just(-1e300),
        -10.0f64..10.0
    ]
}

proptest! {
    #[test]
    fn no_input_makes_dynamics_panic(
        q in prop::collection::vec(any_value(), 0..10),
        qd in prop::collection::vec(any_value(), 0..10),
        qdd in prop::collection::vec(any_value(), 0..10),
        payload in any_value(),
        joint in 0usize..12,
    ) {
        for arm in [scara(), articulated(true)] {
            let _ = inverse_dynamics(&arm, &q, &qd, &qdd, payload);
            let _ = joint_inertia(&arm, &q, payload, joint);
            let _ = gravity_torques(&arm, &q, payload);
        }
    }
}
