//! Holding torque against gravity: facts of the trade, hand-worked poses, and the potential
//! energy's slope on random chains.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

use armwright_test_support::arms as common;

use armwright_kinematics::{
    Arm, ArmDescription, ArmType, ChainDims, JointKind, JointPlacement, KinematicsError,
    MassProperties, STANDARD_GRAVITY, forward, gravity_torques,
};
use common::{Seeded, articulated, joint, random_chain, scara};
use nalgebra::{Isometry3, Point3, Vector3};
use std::f64::consts::PI;

/// One revolute joint about −Y at the base (positive lifts), its link a point mass `mass` kg at
/// `reach` m along +X.
fn single_lever(mass: f64, reach: f64) -> Arm {
    Arm::new(ArmDescription {
        arm_type: ArmType::Chain(ChainDims::OriginAxis {
            joints: vec![JointPlacement {
                kind: JointKind::Revolute,
                axis: -Vector3::y(),
                point: Vector3::zeros(),
            }],
            tool_home: Isometry3::translation(reach, 0.0, 0.0),
        }),
        joints: vec![joint(
            "lever",
            -PI,
            PI,
            MassProperties::point(mass, Vector3::new(reach, 0.0, 0.0)),
        )],
        tool_mass: MassProperties::zero(),
        payload_mass: 0.0,
        gripper: None,
    })
    .unwrap()
}

/// Potential energy m·g·z of every body and the payload, in J, from forward kinematics alone.
fn potential_energy(arm: &Arm, q: &[f64], payload: f64) -> f64 {
    let pose = forward(arm, q).unwrap();
    let mut energy = payload * pose.tool().translation.z;
    for (index, frame) in pose.frames().iter().enumerate() {
        let body = arm.body(index).unwrap();
        energy += body.mass * (frame * Point3::from(body.centre)).z;
    }
    energy * STANDARD_GRAVITY
}

#[test]
fn a_servo_and_bracket_at_twenty_two_centimetres() {
    // Holding torque τ = m·g·r (common practice): a 95 g servo with its 25 g bracket held
    // 22 cm from a joint needs 0.120 kg × 9.80665 m/s² × 0.22 m = 0.2589 N·m, 25.9 N·cm.
    let arm = single_lever(0.095 + 0.025, 0.22);
    let torque_ncm = gravity_torques(&arm, &[0.0], 0.0).unwrap().as_slice()[0] * 100.0;
    assert!((torque_ncm - 25.89).abs() < 0.005, "{torque_ncm} N·cm");
    // Raised 60°, the lever arm shrinks to r·cos 60°: half the torque.
    let raised = gravity_torques(&arm, &[PI / 3.0], 0.0).unwrap().as_slice()[0] * 100.0;
    assert!((raised - torque_ncm / 2.0).abs() < 1e-9, "{raised} N·cm");
}

#[test]
fn stretched_articulated_arm_by_hand() {
    // All joints at zero: the arm lies horizontal along +X (see tests/common). Worked by hand
    // as τ = g·Σ m·x over the masses beyond each pitch joint, x measured from that joint.
    // Masses (kg) and their distance from the shoulder axis (m): upper arm rod 0.05 at 0.06,
    // elbow servo 0.055 at 0.12, forearm rod 0.04 at 0.175, wrist servo 0.055 at 0.23,
    // wrist rod 0.02 at 0.255, tool 0.03 and payload 0.1 at 0.30. The elbow axis sits at 0.12,
    // the wrist axis at 0.23.
    let arm = articulated(false);
    let payload = 0.1;
    let g = STANDARD_GRAVITY;
    let shoulder = g
        * (0.05 * 0.06
            + 0.055 * 0.12
            + 0.04 * 0.175
            + 0.055 * 0.23
            + 0.02 * 0.255
            + (0.03 + payload) * 0.30);
    let elbow = g * (0.04 * 0.055 + 0.055 * 0.11 + 0.02 * 0.135 + (0.03 + payload) * 0.18);
    let wrist = g * (0.02 * 0.025 + (0.03 + payload) * 0.07);
    let torques = gravity_torques(&arm, &[0.0; 4], payload).unwrap();
    let expected = [0.0, shoulder, elbow, wrist];
    for (got, want) in torques.as_slice().iter().zip(expected) {
        assert!((got - want).abs() < 1e-12, "{got} vs {want}");
    }
    // Turning the base does not change the pitch torques; the base yaw axis is vertical.
    let turned = gravity_torques(&arm, &[1.1, 0.0, 0.0, 0.0], payload).unwrap();
    for (a, b) in turned.as_slice().iter().zip(torques.as_slice()) {
        assert!((a - b).abs() < 1e-12);
    }
}

#[test]
fn horizontal_arm_loads_only_its_lift() {
    // Vertical axes feel no gravity torque. The lift carries everything beyond it: its own
    // carriage 0.03 kg, the roll servo 0.055 kg, the roll body 0.02 kg, the tool 0.04 kg and the
    // payload, each at g (worked by hand from tests/common).
    let arm = scara();
    let payload = 0.02;
    let efforts = gravity_torques(&arm, &[0.7, -1.2, 0.03, 2.0], payload).unwrap();
    let lift = STANDARD_GRAVITY * (0.03 + 0.055 + 0.02 + 0.04 + payload);
    let expected = [0.0, 0.0, lift, 0.0];
    for (got, want) in efforts.as_slice().iter().zip(expected) {
        assert!((got - want).abs() < 1e-12, "{got} vs {want}");
    }
}

#[test]
fn torques_are_the_slope_of_potential_energy() {
    // Lagrangian statics (any mechanics textbook, e.g. Lynch & Park, Modern Robotics, 2017,
    // §8.1): the holding effort is ∂V/∂q. Checked by central differences on random chains.
    let mut rng = Seeded::new(31);
    for count in 1..=8 {
        for _ in 0..10 {
            let arm = random_chain(&mut rng, count);
            let q = rng.pose(&arm);
            let payload = rng.uniform(0.0, 0.2);
            let torques = gravity_torques(&arm, &q, payload).unwrap();
            let h = 1e-6;
            for index in 0..count {
                let mut up = q.clone();
                let mut down = q.clone();
                up[index] += h;
                down[index] -= h;
                let slope = (potential_energy(&arm, &up, payload)
                    - potential_energy(&arm, &down, payload))
                    / (2.0 * h);
                let got = torques.as_slice()[index];
                assert!(
                    (got - slope).abs() < 1e-7,
                    "joint {index}: {got} vs {slope}"
                );
            }
        }
    }
}

#[test]
fn payload_adds_its_own_weight_times_lever() {
    let arm = articulated(true);
    let q = [0.4, 0.5, -0.9, 0.3, 0.2];
    let light = gravity_torques(&arm, &q, 0.0).unwrap();
    let heavy = gravity_torques(&arm, &q, 0.2).unwrap();
    let pose = forward(&arm, &q).unwrap();
    let tool = pose.tool().translation.vector;
    // Shoulder: its axis passes through the shoulder point, horizontal; the lever is the
    // horizontal distance from the shoulder to the tool point.
    let shoulder = pose.frames()[1].translation.vector;
    let lever = ((tool - shoulder).xy()).norm();
    let added = heavy.as_slice()[1] - light.as_slice()[1];
    assert!((added - 0.2 * STANDARD_GRAVITY * lever).abs() < 1e-12);
}

#[test]
fn bad_inputs_are_refused() {
    let arm = scara();
    assert_eq!(
        gravity_torques(&arm, &[0.0; 4], -0.1).unwrap_err(),
        KinematicsError::Payload { value: -0.1 }
    );
    assert!(matches!(
        gravity_torques(&arm, &[0.0; 4], f64::NAN),
        Err(KinematicsError::Payload { .. })
    ));
    assert!(matches!(
        gravity_torques(&arm, &[0.0, 0.0, f64::INFINITY, 0.0], 0.0),
        Err(KinematicsError::NotFinite { joint: 2, .. })
    ));
    assert!(matches!(
        gravity_torques(&arm, &[0.0; 5], 0.0),
        Err(KinematicsError::WrongJointCount {
            expected: 4,
            got: 5
        })
    ));
}
