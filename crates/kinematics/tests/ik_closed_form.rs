//! Closed-form inverse kinematics of the built-in arm types, checked by forward kinematics
//! (`src/ik/closed_form_*.rs`, `src/ik/planar_two_link.rs`).
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

use armwright_test_support::arms as common;

use armwright_kinematics::{
    Arm, ArmDescription, ArmType, ArticulatedDims, IkError, IkOptions, IkTarget, MassProperties,
    solve_ik, tool_pose,
};
use common::{Seeded, articulated, joint, scara};
use nalgebra::Vector3;
use proptest::prelude::*;
use std::f64::consts::{FRAC_PI_2, PI, TAU};

const TARGETS: usize = 10_000;

fn wrapped(angle: f64) -> f64 {
    (angle + PI).rem_euclid(TAU) - PI
}

/// An articulated arm whose base and wrist turn a whole turn, so the branch with the base turned
/// over the target is often within the limits.
fn wide_articulated(with_roll: bool) -> Arm {
    let link = MassProperties::point(0.02, Vector3::zeros());
    let mut joints = vec![
        joint("base", -PI, PI, link),
        joint("shoulder", -PI, PI, link),
        joint("elbow", -2.8, 2.8, link),
        joint("wrist", -PI, PI, link),
    ];
    if with_roll {
        joints.push(joint("roll", -PI, PI, link));
    }
    let dims = ArticulatedDims {
        base_height: 0.09,
        upper_arm: 0.12,
        forearm: 0.11,
        wrist_to_tool: 0.07,
    };
    Arm::new(ArmDescription {
        arm_type: if with_roll {
            ArmType::Articulated5(dims)
        } else {
            ArmType::Articulated4(dims)
        },
        joints,
        tool_mass: MassProperties::zero(),
        payload_mass: 0.0,
        gripper: None,
    })
    .unwrap()
}

/// Same joint positions, revolute angles compared modulo a whole turn.
fn same_pose(arm: &Arm, a: &[f64], b: &[f64], tolerance: f64) -> bool {
    arm.joints()
        .iter()
        .zip(a.iter().zip(b))
        .all(|(joint, (x, y))| {
            let difference = match joint.kind {
                armwright_kinematics::JointKind::Revolute => wrapped(x - y),
                armwright_kinematics::JointKind::Prismatic => x - y,
            };
            difference.abs() <= tolerance
        })
}

/// For `TARGETS` random in-limit poses: every returned branch lies within the limits and maps
/// back onto the target within 1e-9 m and 1e-9 rad, and the pose the target came from is among
/// the branches. Returns how many branches carried each label.
fn check_round_trips(arm: &Arm, seed: u64) -> Vec<(&'static str, usize)> {
    let mut rng = Seeded::new(seed);
    let options = IkOptions::default();
    let mut labels: Vec<(&'static str, usize)> = Vec::new();
    for case in 0..TARGETS {
        let source = rng.pose(arm);
        let target = IkTarget::of_pose(arm, &source).unwrap();
        let near = rng.pose(arm);
        let solutions = solve_ik(arm, &target, &near, &options)
            .unwrap_or_else(|error| panic!("case {case}: {source:?} gave {error}"));
        for branch in solutions.as_slice() {
            let positions = branch.positions();
            assert!(arm.within_limits(positions), "case {case}: {positions:?}");
            let reached = IkTarget::of_pose(arm, positions).unwrap();
            let miss = (reached.position - target.position).norm();
            assert!(
                miss <= 1e-9,
                "case {case}: {} misses by {miss} m",
                branch.label()
            );
            for (want, got) in [(target.angle, reached.angle), (target.roll, reached.roll)] {
                if let (Some(want), Some(got)) = (want, got) {
                    let off = wrapped(want - got).abs();
                    assert!(
                        off <= 1e-9,
                        "case {case}: {} angle off {off}",
                        branch.label()
                    );
                }
            }
            match labels
                .iter_mut()
                .find(|(label, _)| *label == branch.label())
            {
                Some((_, count)) => *count += 1,
                None => labels.push((branch.label(), 1)),
            }
        }
        assert!(
            solutions.as_slice().iter().any(|branch| same_pose(
                arm,
                branch.positions(),
                &source,
                1e-6
            )),
            "case {case}: source pose {source:?} not among {:?}",
            solutions.as_slice()
        );
        let nearest = solutions.nearest(&source);
        assert!(same_pose(arm, nearest.positions(), &source, 1e-6));
    }
    labels
}

#[test]
fn horizontal_arm_round_trips_ten_thousand_targets() {
    let labels = check_round_trips(&scara(), 1);
    assert!(labels.iter().any(|(label, _)| *label == "right-handed"));
    assert!(labels.iter().any(|(label, _)| *label == "left-handed"));
}

#[test]
fn four_joint_arm_round_trips_ten_thousand_targets() {
    check_round_trips(&articulated(false), 2);
}

#[test]
fn five_joint_arm_round_trips_ten_thousand_targets() {
    check_round_trips(&articulated(true), 3);
}

#[test]
fn turned_over_branches_round_trip_on_wide_limit_arms() {
    for (arm, seed) in [(wide_articulated(false), 4), (wide_articulated(true), 5)] {
        let labels = check_round_trips(&arm, seed);
        for label in [
            "elbow up, facing",
            "elbow down, facing",
            "elbow up, turned over",
            "elbow down, turned over",
        ] {
            let count = labels
                .iter()
                .find(|(known, _)| *known == label)
                .map_or(0, |(_, count)| *count);
            assert!(count > TARGETS / 4, "{label}: only {count} branches");
        }
    }
}

#[test]
fn planar_two_link_matches_the_textbook_formula() {
    // Spong, Hutchinson & Vidyasagar, Robot Modeling and Control (2006), ch. 1, two-link planar
    // arm (formula from memory): D = (x² + y² − a1² − a2²) / (2·a1·a2),
    // θ2 = atan2(±√(1 − D²), D), θ1 = atan2(y, x) − atan2(a2·sin θ2, a1 + a2·cos θ2).
    // The horizontal arm's shoulder and elbow are that arm seen from above.
    let arm = scara();
    let (a1, a2) = (0.15, 0.12);
    let mut rng = Seeded::new(6);
    let mut compared = 0;
    for _ in 0..1000 {
        let (x, y) = (rng.uniform(-0.27, 0.27), rng.uniform(-0.27, 0.27));
        let d = (x * x + y * y - a1 * a1 - a2 * a2) / (2.0 * a1 * a2);
        if d.abs() >= 1.0 {
            continue;
        }
        let solutions = solve_ik(
            &arm,
            &IkTarget::at(Vector3::new(x, y, 0.1)).with_angle(0.0),
            &arm.home_pose(),
            &IkOptions::default(),
        );
        for sign in [1.0, -1.0] {
            let theta2 = (sign * (1.0 - d * d).sqrt()).atan2(d);
            let theta1 = y.atan2(x) - (a2 * theta2.sin()).atan2(a1 + a2 * theta2.cos());
            let in_limits = theta1.abs() <= 2.4 && theta2.abs() <= 2.6;
            if !in_limits {
                continue;
            }
            let solutions = solutions.as_ref().unwrap();
            assert!(solutions.as_slice().iter().any(|branch| {
                let q = branch.positions();
                wrapped(q[0] - theta1).abs() < 1e-12 && wrapped(q[1] - theta2).abs() < 1e-12
            }));
            compared += 1;
        }
    }
    assert!(compared > 1000);
}

#[test]
fn unreachable_target_says_how_far() {
    // Four-joint arm, tool level at 0.5 m: the wrist sits 0.43 m out at shoulder height, and the
    // stretched upper arm and forearm reach 0.23 m, so 0.20 m short.
    let arm = articulated(false);
    let target = IkTarget::at(Vector3::new(0.5, 0.0, 0.09)).with_angle(0.0);
    match solve_ik(&arm, &target, &arm.home_pose(), &IkOptions::default()) {
        Err(IkError::OutOfReach { short_by }) => assert!((short_by - 0.20).abs() < 1e-12),
        other => panic!("expected out of reach, got {other:?}"),
    }
    // Horizontal arm: 0.40 m out against 0.27 m reach; 0.01 m out inside the 0.03 m hole.
    let arm = scara();
    for (x, short) in [(0.40, 0.13), (0.01, 0.02)] {
        let target = IkTarget::at(Vector3::new(x, 0.0, 0.1));
        match solve_ik(&arm, &target, &arm.home_pose(), &IkOptions::default()) {
            Err(IkError::OutOfReach { short_by }) => assert!((short_by - short).abs() < 1e-12),
            other => panic!("expected out of reach, got {other:?}"),
        }
    }
    let message = IkError::OutOfReach { short_by: 0.13 }.to_string();
    assert_eq!(message, "target is 130.0 mm out of reach");
}

#[test]
fn target_past_a_limit_names_the_joint_and_by_how_much() {
    // The lift travels ±0.05 m; a tool point at 0.16 m needs the lift at 0.16 − 0.12 + 0.04.
    let arm = scara();
    let target = IkTarget::at(Vector3::new(0.2, 0.0, 0.16));
    match solve_ik(&arm, &target, &arm.home_pose(), &IkOptions::default()) {
        Err(IkError::BeyondLimit {
            joint,
            position,
            by,
        }) => {
            assert_eq!(joint, 2);
            assert!((position - 0.08).abs() < 1e-12 && (by - 0.03).abs() < 1e-12);
        }
        other => panic!("expected beyond limit, got {other:?}"),
    }
    // Four-joint arm, base limited to ±90°: a point straight behind the base, tool pointing
    // straight down, needs the base at 180° facing or 0° turned over; turned over, the shoulder
    // would have to lean back past its 160° limit or the wrist past 90°.
    let arm = articulated(false);
    let target = IkTarget::at(Vector3::new(-0.2, 0.0, 0.02)).with_angle(-FRAC_PI_2);
    match solve_ik(&arm, &target, &arm.home_pose(), &IkOptions::default()) {
        Err(IkError::BeyondLimit { joint, by, .. }) => assert!(joint < 4 && by > 0.0),
        Ok(solutions) => {
            // If some branch is in limits it must still reach the target.
            for branch in solutions.as_slice() {
                let tool = tool_pose(&arm, branch.positions()).unwrap();
                assert!((tool.translation.vector - target.position).norm() < 1e-9);
            }
        }
        other => panic!("unexpected {other:?}"),
    }
}

#[test]
fn stretched_elbow_gives_one_branch() {
    let arm = scara();
    let target = IkTarget::at(Vector3::new(0.27, 0.0, 0.1)).with_angle(0.0);
    let solutions = solve_ik(&arm, &target, &arm.home_pose(), &IkOptions::default()).unwrap();
    assert_eq!(solutions.len(), 1);
    assert!(solutions.as_slice()[0].positions()[1].abs() < 1e-12);
}

#[test]
fn target_on_the_base_axis_keeps_the_near_base_yaw() {
    // Straight above the base with the tool pointing up: any base yaw works; the near pose's
    // 0.4 rad is kept (turned over, 0.4 − π lies outside the ±90° base limits).
    let arm = articulated(false);
    let near = [0.4, 1.0, -0.5, 0.3];
    let target = IkTarget::at(Vector3::new(0.0, 0.0, 0.3)).with_angle(FRAC_PI_2);
    let solutions = solve_ik(&arm, &target, &near, &IkOptions::default()).unwrap();
    assert!(!solutions.is_empty());
    for branch in solutions.as_slice() {
        assert_eq!(branch.positions()[0], 0.4);
        let tool = tool_pose(&arm, branch.positions()).unwrap();
        assert!((tool.translation.vector - target.position).norm() < 1e-12);
    }
}

#[test]
fn free_angles_come_from_the_near_pose() {
    let arm = articulated(true);
    let near = [0.2, 0.9, -0.6, -0.5, 0.3];
    let wanted = IkTarget::of_pose(&arm, &near).unwrap();
    let target = IkTarget::at(Vector3::new(0.15, -0.05, 0.12));
    let solutions = solve_ik(&arm, &target, &near, &IkOptions::default()).unwrap();
    for branch in solutions.as_slice() {
        let reached = IkTarget::of_pose(&arm, branch.positions()).unwrap();
        assert!(wrapped(reached.angle.unwrap() - wanted.angle.unwrap()).abs() < 1e-9);
        assert!(wrapped(reached.roll.unwrap() - wanted.roll.unwrap()).abs() < 1e-9);
    }
    let arm = scara();
    let near = [0.5, -1.0, 0.0, 0.7];
    let target = IkTarget::at(Vector3::new(0.2, 0.05, 0.1));
    let solutions = solve_ik(&arm, &target, &near, &IkOptions::default()).unwrap();
    for branch in solutions.as_slice() {
        let q = branch.positions();
        assert!(wrapped(q[0] + q[1] + q[3] - 0.2).abs() < 1e-12);
    }
}

#[test]
fn bad_near_pose_is_refused() {
    let arm = scara();
    let target = IkTarget::at(Vector3::new(0.2, 0.0, 0.1));
    assert!(matches!(
        solve_ik(&arm, &target, &[0.0; 3], &IkOptions::default()),
        Err(IkError::Kinematics(_))
    ));
    assert!(matches!(
        solve_ik(
            &arm,
            &target,
            &[0.0, f64::NAN, 0.0, 0.0],
            &IkOptions::default()
        ),
        Err(IkError::Kinematics(_))
    ));
}

proptest! {
    #[test]
    fn any_target_gives_branches_or_a_reason_never_nan(
        x in any::<f64>(), y in any::<f64>(), z in any::<f64>(),
        angle in proptest::option::of(any::<f64>()),
        roll in proptest::option::of(any::<f64>()),
        which in 0usize..3,
    ) {
        let arm = match which {
            0 => scara(),
            1 => articulated(false),
            _ => articulated(true),
        };
        let target = IkTarget { position: Vector3::new(x, y, z), angle, roll };
        match solve_ik(&arm, &target, &arm.home_pose(), &IkOptions::default()) {
            Ok(solutions) => {
                prop_assert!(!solutions.is_empty());
                for branch in solutions.as_slice() {
                    prop_assert!(arm.within_limits(branch.positions()));
                }
            }
            Err(IkError::OutOfReach { short_by }) => prop_assert!(short_by > 0.0 && !short_by.is_nan()),
            Err(IkError::BeyondLimit { position, by, .. }) => {
                prop_assert!(by > 0.0 && by.is_finite() && position.is_finite())
            }
            Err(IkError::NotFinite { value, .. }) => prop_assert!(!value.is_finite()),
            Err(other) => prop_assert!(false, "unexpected {other:?}"),
        }
    }

    #[test]
    fn modest_targets_round_trip(
        x in -0.3..0.3f64, y in -0.3..0.3f64, z in -0.1..0.45f64, angle in -PI..PI, roll in -PI..PI,
    ) {
        let arm = articulated(true);
        let target = IkTarget::at(Vector3::new(x, y, z)).with_angle(angle).with_roll(roll);
        if let Ok(solutions) = solve_ik(&arm, &target, &arm.home_pose(), &IkOptions::default()) {
            for branch in solutions.as_slice() {
                let tool = tool_pose(&arm, branch.positions()).unwrap();
                prop_assert!((tool.translation.vector - target.position).norm() < 1e-9);
            }
        }
    }
}

#[test]
fn turned_over_base_flips_pitch_and_roll() {
    // Worked by hand: with the base turned half a turn the arm reaches back over the base axis,
    // so its in-plane pitch must be π − pitch for the approach axis to point the same way, and
    // Rz(ψ+π)·Ry(p−π)·Rx(ρ+π) = Rz(ψ)·Ry(−p)·Rx(ρ) (Rz(π) = diag(−1, −1, 1), Rx(π) =
    // diag(1, −1, −1)), so the wrist roll shifts by π.
    let arm = wide_articulated(true);
    let (pitch, roll) = (0.4, 0.3);
    let position = Vector3::new(0.08, 0.06, 0.2);
    let target = IkTarget::at(position).with_angle(pitch).with_roll(roll);
    let solutions = solve_ik(&arm, &target, &arm.home_pose(), &IkOptions::default()).unwrap();
    let outward = position.y.atan2(position.x);
    let expected = nalgebra::UnitQuaternion::from_euler_angles(roll, -pitch, outward);
    let mut turned = 0;
    for branch in solutions.as_slice() {
        let q = branch.positions();
        let tool = tool_pose(&arm, q).unwrap();
        assert!((tool.translation.vector - position).norm() < 1e-12);
        assert!(
            tool.rotation.angle_to(&expected) < 1e-12,
            "{}",
            branch.label()
        );
        if branch.label().ends_with("turned over") {
            assert!(wrapped(q[0] - (outward + PI)).abs() < 1e-12);
            assert!(wrapped(q[1] + q[2] + q[3] - (PI - pitch)).abs() < 1e-12);
            assert!(wrapped(q[4] - (roll + PI)).abs() < 1e-12);
            turned += 1;
        }
    }
    assert_eq!(turned, 2, "{:?}", solutions.as_slice());
}
