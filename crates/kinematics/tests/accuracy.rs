//! Accuracy budget: a fact of the trade, a stretched arm by hand, and agreement with forward
//! kinematics of the perturbed pose.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

use armwright_test_support::arms as common;

use armwright_kinematics::{
    Arm, ArmDescription, ArmType, ChainDims, JointKind, JointPlacement, KinematicsError,
    MassProperties, accuracy_budget, joint_uncertainty, tool_pose,
};
use common::{Seeded, articulated, joint, random_chain, scara};
use nalgebra::{Isometry3, Vector3};
use proptest::prelude::*;
use std::f64::consts::PI;

/// One revolute joint about +Z with the tool point `reach` m out along +X; its servo has the
/// given deadband (µs) and total backlash (rad).
fn lever(reach: f64, deadband_us: f64, backlash: f64) -> Arm {
    let mut spec = joint("lever", -PI, PI, MassProperties::zero());
    spec.servo.deadband_us = deadband_us;
    spec.servo.backlash = backlash;
    Arm::new(ArmDescription {
        arm_type: ArmType::Chain(ChainDims::OriginAxis {
            joints: vec![JointPlacement {
                kind: JointKind::Revolute,
                axis: Vector3::z(),
                point: Vector3::zeros(),
            }],
            tool_home: Isometry3::translation(reach, 0.0, 0.0),
        }),
        joints: vec![spec],
        tool_mass: MassProperties::zero(),
        payload_mass: 0.0,
        gripper: None,
    })
    .unwrap()
}

#[test]
fn four_tenths_of_a_degree_at_300_mm() {
    // Common practice: an angular error of 0.4° at 300 mm moves the tool point about 2.1 mm
    // (s = r·θ = 300 mm × 0.00698 rad = 2.09 mm). Backlash is total play, counted ± half:
    // 0.8° of play is ±0.4°.
    let budget = accuracy_budget(&lever(0.3, 0.0, 0.8_f64.to_radians()), &[0.0]).unwrap();
    let worst_mm = budget.worst * 1e3;
    assert!((worst_mm - 2.1).abs() < 0.01, "{worst_mm} mm");
    assert_eq!(budget.worst, budget.rss);
    // The same ±0.4° from deadband alone: on a 1000–2000 µs span over 180° (0.18°/µs, common
    // practice) that is 2.22 µs each side, a 4.44 µs band.
    let band_us = 2.0 * 0.4 / 0.18;
    let budget = accuracy_budget(&lever(0.3, band_us, 0.0), &[1.0]).unwrap();
    assert!((budget.worst * 1e3 - 2.1).abs() < 0.01);
}

#[test]
fn stretched_articulated_arm_by_hand() {
    // Every test servo: 4 µs deadband on 1000 µs per π rad → ±2 µs = ±2π/1000 rad, plus 0.5°
    // of backlash → ±0.25°. At zero the arm lies along +X: the tool point is 0.30 m from the
    // base and shoulder axes, 0.18 m from the elbow's, 0.07 m from the wrist's, and on the roll
    // axis (tests/common).
    let arm = articulated(true);
    let budget = accuracy_budget(&arm, &[0.0; 5]).unwrap();
    let each = 2.0 * PI / 1000.0 + 0.25_f64.to_radians();
    let levers = [0.30, 0.30, 0.18, 0.07, 0.0];
    for (index, lever) in levers.iter().enumerate() {
        assert!((budget.joint_uncertainty[index] - each).abs() < 1e-15);
        assert!(
            (budget.per_joint[index] - lever * each).abs() < 1e-12,
            "joint {index}"
        );
    }
    let worst: f64 = levers.iter().sum::<f64>() * each;
    let rss = levers.iter().map(|l| l * l).sum::<f64>().sqrt() * each;
    assert!((budget.worst - worst).abs() < 1e-12);
    assert!((budget.rss - rss).abs() < 1e-12);
    assert_eq!(budget.shares().len(), 5);
}

#[test]
fn a_lift_counts_in_metres() {
    // The horizontal arm's lift: 1000 µs per 0.1 m, so ±2 µs is ±0.2 mm; 0.5° of pinion
    // backlash on a 10 mm radius is ±0.25° × 10 mm = ±0.0436 mm. It moves the tool point
    // one for one.
    let arm = scara();
    let budget = accuracy_budget(&arm, &[0.3, 0.4, 0.0, 0.0]).unwrap();
    let lift = 2e-4 + 0.25_f64.to_radians() * 0.01;
    assert!((budget.joint_uncertainty[2] - lift).abs() < 1e-15);
    assert!((budget.per_joint[2] - lift).abs() < 1e-15);
    assert!((joint_uncertainty(&arm.joints()[2]) - lift).abs() < 1e-15);
}

#[test]
fn shares_match_forward_kinematics_of_the_nudged_pose() {
    // First-order check: nudging one joint by its uncertainty moves the tool point by that
    // joint's share, to within the second-order term.
    let mut rng = Seeded::new(41);
    for count in 1..=8 {
        let arm = random_chain(&mut rng, count);
        let q = rng.pose(&arm);
        let budget = accuracy_budget(&arm, &q).unwrap();
        let home = tool_pose(&arm, &q).unwrap().translation.vector;
        for index in 0..count {
            let mut nudged = q.clone();
            nudged[index] += budget.joint_uncertainty[index];
            let moved = (tool_pose(&arm, &nudged).unwrap().translation.vector - home).norm();
            let share = budget.per_joint[index];
            assert!(
                (moved - share).abs() < 0.05 * share + 1e-9,
                "joint {index}: moved {moved} vs share {share}"
            );
        }
        assert!(budget.rss <= budget.worst + 1e-15);
        assert!(budget.per_joint[count..].iter().all(|&v| v == 0.0));
    }
}

#[test]
fn bad_poses_are_refused() {
    let arm = articulated(false);
    assert!(matches!(
        accuracy_budget(&arm, &[0.0; 2]),
        Err(KinematicsError::WrongJointCount { .. })
    ));
    assert!(matches!(
        accuracy_budget(&arm, &[0.0, f64::NAN, 0.0, 0.0]),
        Err(KinematicsError::NotFinite { joint: 1, .. })
    ));
}

proptest! {
    #[test]
    fn no_pose_makes_the_budget_panic(q in prop::collection::vec(any::<f64>(), 0..10)) {
        let arm = articulated(true);
        match accuracy_budget(&arm, &q) {
            Ok(budget) => prop_assert!(budget.worst.is_finite() && budget.rss <= budget.worst),
            Err(_) => prop_assert!(q.len() != 5 || q.iter().any(|v| !v.is_finite())),
        }
    }
}
