//! Forward kinematics and Jacobians of the built-in arm types and general chains.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

use armwright_test_support::arms as common;

use armwright_kinematics::{
    Arm, ArmDescription, ArmType, ChainDims, DhRow, JointKind, KinematicsError, ToolAngles,
    forward, space_jacobian, tool_jacobian, tool_pose,
};
use common::{Seeded, articulated, joint, random_chain, scara};
use nalgebra::{Isometry3, Vector3};
use proptest::prelude::*;
use std::f64::consts::FRAC_PI_2;

fn close(a: Vector3<f64>, b: Vector3<f64>) -> bool {
    (a - b).norm() < 1e-12
}

#[test]
fn horizontal_arm_at_right_angle_elbow() {
    // Shoulder 0, elbow 90°: wrist at (0.15, 0.12); lift +0.02 raises the tool to
    // 0.12 + 0.02 − 0.04 m. Worked by hand from the planar two-link geometry.
    let arm = scara();
    let tool = tool_pose(&arm, &[0.0, FRAC_PI_2, 0.02, 0.3]).unwrap();
    assert!(close(
        tool.translation.vector,
        Vector3::new(0.15, 0.12, 0.10)
    ));
    let angles = ToolAngles::of(&tool);
    assert!((angles.yaw - (FRAC_PI_2 + 0.3)).abs() < 1e-12);
    assert!(angles.pitch.abs() < 1e-12);
}

#[test]
fn articulated_arm_raised_shoulder() {
    // Shoulder up 90°, elbow down 90°, wrist 0: the upper arm stands vertical, forearm and tool
    // reach forward: tool at (0.11 + 0.07, 0, 0.09 + 0.12). Base turned 90° swings it onto +Y.
    let arm = articulated(false);
    let tool = tool_pose(&arm, &[FRAC_PI_2, FRAC_PI_2, -FRAC_PI_2, 0.0]).unwrap();
    assert!(close(
        tool.translation.vector,
        Vector3::new(0.0, 0.18, 0.21)
    ));
    let angles = ToolAngles::of(&tool);
    assert!(angles.pitch.abs() < 1e-12 && (angles.yaw - FRAC_PI_2).abs() < 1e-12);
}

#[test]
fn five_joint_roll_turns_the_tool_about_its_approach() {
    let arm = articulated(true);
    let tool = tool_pose(&arm, &[0.0, 0.3, -0.2, 0.4, 0.7]).unwrap();
    let angles = ToolAngles::of(&tool);
    assert!((angles.pitch - 0.5).abs() < 1e-12);
    assert!((angles.roll - 0.7).abs() < 1e-12);
}

#[test]
fn wrong_count_and_nan_are_refused() {
    let arm = scara();
    assert_eq!(
        tool_pose(&arm, &[0.0; 3]).unwrap_err(),
        KinematicsError::WrongJointCount {
            expected: 4,
            got: 3
        }
    );
    assert!(matches!(
        tool_pose(&arm, &[0.0, f64::NAN, 0.0, 0.0]),
        Err(KinematicsError::NotFinite { joint: 1, .. })
    ));
}

#[test]
fn denavit_hartenberg_planar_two_link() {
    // Planar two-link arm in standard DH (Spong, Hutchinson & Vidyasagar, Robot Modeling and
    // Control, 2006, ex. 3.3.1): x = a1 cos θ1 + a2 cos(θ1+θ2), y = a1 sin θ1 + a2 sin(θ1+θ2).
    let rows = vec![
        DhRow {
            kind: JointKind::Revolute,
            a: 0.3,
            alpha: 0.0,
            d: 0.0,
            theta: 0.0,
        },
        DhRow {
            kind: JointKind::Revolute,
            a: 0.2,
            alpha: 0.0,
            d: 0.0,
            theta: 0.0,
        },
    ];
    let arm = Arm::new(ArmDescription {
        arm_type: ArmType::Chain(ChainDims::DenavitHartenberg {
            rows,
            tool: Isometry3::identity(),
        }),
        joints: vec![
            joint("a", -3.0, 3.0, armwright_kinematics::MassProperties::zero()),
            joint("b", -3.0, 3.0, armwright_kinematics::MassProperties::zero()),
        ],
        tool_mass: armwright_kinematics::MassProperties::zero(),
        payload_mass: 0.0,
        gripper: None,
    })
    .unwrap();
    let (t1, t2) = (0.4_f64, 1.1_f64);
    let p = tool_pose(&arm, &[t1, t2]).unwrap().translation.vector;
    let x = 0.3 * t1.cos() + 0.2 * (t1 + t2).cos();
    let y = 0.3 * t1.sin() + 0.2 * (t1 + t2).sin();
    assert!(close(p, Vector3::new(x, y, 0.0)));
}

#[test]
fn frames_end_at_the_tool() {
    let arm = articulated(true);
    let pose = forward(&arm, &[0.1, 0.2, 0.3, 0.4, 0.5]).unwrap();
    assert_eq!(pose.frames().len(), 5);
    let last = pose.frames()[4] * arm.tool_offset();
    assert!(close(
        last.translation.vector,
        pose.tool().translation.vector
    ));
}

/// Finite-difference check of both Jacobians (central differences, step 1e-6).
fn check_jacobians(arm: &Arm, q: &[f64]) {
    let tool = tool_jacobian(arm, q).unwrap().matrix;
    let space = space_jacobian(arm, q).unwrap().matrix;
    let base = tool_pose(arm, q).unwrap();
    for i in 0..q.len() {
        let h = 1e-6;
        let mut plus = q.to_vec();
        let mut minus = q.to_vec();
        plus[i] += h;
        minus[i] -= h;
        let tp = tool_pose(arm, &plus).unwrap();
        let tm = tool_pose(arm, &minus).unwrap();
        let linear = (tp.translation.vector - tm.translation.vector) / (2.0 * h);
        let rotation = (tp.rotation * tm.rotation.inverse()).scaled_axis() / (2.0 * h);
        for row in 0..3 {
            assert!(
                (tool[(row, i)] - linear[row]).abs() < 1e-6,
                "linear row {row} joint {i}"
            );
            assert!(
                (tool[(row + 3, i)] - rotation[row]).abs() < 1e-6,
                "angular row {row} joint {i}"
            );
        }
        // Space twist: ω equals the tool's; v is the velocity of the point at the base origin.
        let p = base.translation.vector;
        let omega = Vector3::new(space[(0, i)], space[(1, i)], space[(2, i)]);
        let v = Vector3::new(space[(3, i)], space[(4, i)], space[(5, i)]);
        assert!((v + omega.cross(&p) - linear).norm() < 1e-6);
    }
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(64))]
    #[test]
    fn jacobian_matches_finite_difference(seed in any::<u64>(), count in 1usize..=8) {
        let mut rng = Seeded::new(seed);
        let arm = random_chain(&mut rng, count);
        let q = rng.pose(&arm);
        check_jacobians(&arm, &q);
        for arm in [scara(), articulated(false), articulated(true)] {
            let q = rng.pose(&arm);
            check_jacobians(&arm, &q);
        }
    }
}
