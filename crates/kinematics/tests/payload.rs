//! The heaviest payload, checked by hand on a two-link arm (τ = m·g·r; common practice).
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

use armwright_test_support::arms as common;

use armwright_kinematics::{
    Arm, ArmDescription, ArmType, ChainDims, JointKind, JointPlacement, MassProperties,
    STANDARD_GRAVITY, max_payload, max_payload_in_motion, torque_use,
};
use nalgebra::{Isometry3, Vector3};

/// Two joints turning about −Y (a positive angle lifts), 200 mm and 150 mm to the tool point,
/// massless links; the elbow's servo weighs `elbow_servo_kg`.
fn two_link(elbow_servo_kg: f64) -> Arm {
    let placement = |x: f64| JointPlacement {
        kind: JointKind::Revolute,
        axis: -Vector3::y(),
        point: Vector3::new(x, 0.0, 0.0),
    };
    let mut shoulder = common::joint("shoulder", -1.5, 1.5, MassProperties::zero());
    shoulder.servo.mass = 0.0;
    let mut elbow = common::joint("elbow", -2.0, 2.0, MassProperties::zero());
    elbow.servo.mass = elbow_servo_kg;
    Arm::new(ArmDescription {
        arm_type: ArmType::Chain(ChainDims::OriginAxis {
            joints: vec![placement(0.0), placement(0.2)],
            tool_home: Isometry3::translation(0.35, 0.0, 0.0),
        }),
        joints: vec![shoulder, elbow],
        tool_mass: MassProperties::zero(),
        payload_mass: 0.0,
        gripper: None,
    })
    .expect("a valid arm")
}

#[test]
fn stretched_out_the_shoulder_sets_the_heaviest_payload() {
    // Both servos: 1.96 N·m stall; at a 50 % share 0.98 N·m each. Stretched out level, the
    // payload is 0.35 m from the shoulder and 0.15 m from the elbow: m = 0.98 / (g · 0.35).
    let arm = two_link(0.0);
    let limit = max_payload(&arm, &[0.0, 0.0], 0.5).expect("fits");
    let by_hand = 0.98 / (STANDARD_GRAVITY * 0.35);
    assert!(
        (limit.mass - by_hand).abs() < 1e-9,
        "{} vs {by_hand}",
        limit.mass
    );
    assert_eq!(limit.joint, Some(0));
    // At that payload the shoulder is at exactly 100 % of its share.
    let efforts = armwright_kinematics::gravity_torques(&arm, &[0.0, 0.0], limit.mass).unwrap();
    let shares = torque_use(&arm, &efforts, 0.5);
    assert!((shares.as_slice()[0] - 1.0).abs() < 1e-9);
}

#[test]
fn forearm_up_shortens_the_lever_and_an_elbow_servo_uses_some_of_the_shoulder() {
    // Forearm pointing straight up: the payload's lever about the shoulder is 0.2 m; about the
    // elbow 0. m = 0.98 / (g · 0.2).
    let arm = two_link(0.0);
    let up = [0.0, std::f64::consts::FRAC_PI_2];
    let limit = max_payload(&arm, &up, 0.5).expect("fits");
    assert!(
        (limit.mass - 0.98 / (STANDARD_GRAVITY * 0.2)).abs() < 1e-9,
        "{}",
        limit.mass
    );
    // A 100 g elbow servo 0.2 m out takes g · 0.1 · 0.2 N·m of the shoulder's share first.
    let heavy = two_link(0.1);
    let limit = max_payload(&heavy, &[0.0, 0.0], 0.5).expect("fits");
    let by_hand = (0.98 - STANDARD_GRAVITY * 0.1 * 0.2) / (STANDARD_GRAVITY * 0.35);
    assert!(
        (limit.mass - by_hand).abs() < 1e-9,
        "{} vs {by_hand}",
        limit.mass
    );
}

#[test]
fn accelerating_upward_leaves_less_payload_than_holding_still() {
    // Lifting the stretched-out arm at 5 rad/s² from rest: the payload needs m·r·(g + r·α) at
    // the shoulder, so m = 0.98 / (0.35 · (g + 0.35 · 5)) (point mass; common practice).
    let arm = two_link(0.0);
    let moving =
        max_payload_in_motion(&arm, &[0.0, 0.0], &[0.0, 0.0], &[5.0, 0.0], 0.5).expect("fits");
    let by_hand = 0.98 / (0.35 * (STANDARD_GRAVITY + 0.35 * 5.0));
    assert!(
        (moving.mass - by_hand).abs() < 1e-9,
        "{} vs {by_hand}",
        moving.mass
    );
    // Held still the same arm carries more; over its rating unloaded, nothing.
    let held = max_payload(&arm, &[0.0, 0.0], 0.5).expect("fits");
    assert!(moving.mass < held.mass);
    let over = max_payload(&two_link(5.0), &[0.0, 0.0], 0.5).expect("fits");
    assert_eq!(over.mass, 0.0);
}
