//! The search over free tool angles (`src/ik/free_angle_search.rs`).
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

use armwright_test_support::arms as common;

use armwright_kinematics::{
    Arm, IkError, IkOptions, IkTarget, solve_ik, solve_ik_free_angles, tool_pose,
};
use common::{Seeded, articulated, scara};
use nalgebra::Vector3;
use std::f64::consts::PI;

fn distance_squared(a: &[f64], b: &[f64]) -> f64 {
    a.iter().zip(b).map(|(x, y)| (x - y) * (x - y)).sum()
}

#[test]
fn every_point_a_pose_reaches_is_found_with_its_angles_left_free() {
    // The tool point of a random in-limit pose is reachable by construction; with every angle
    // free the search must find it, every branch must reach it within the limits, and the
    // nearest branch must be about as near the start as the pose itself is (the angle is
    // sampled every half degree and refined).
    let mut rng = Seeded::new(1302);
    for arm in [articulated(true), articulated(false), scara()] {
        let near = arm.home_pose();
        for _ in 0..300 {
            let source = rng.pose(&arm);
            let point = tool_pose(&arm, &source).unwrap().translation.vector;
            let solutions =
                solve_ik_free_angles(&arm, &IkTarget::at(point), &near, &IkOptions::default())
                    .unwrap_or_else(|e| panic!("{source:?} → {point}: {e}"));
            for branch in solutions.as_slice() {
                let reached = tool_pose(&arm, branch.positions())
                    .unwrap()
                    .translation
                    .vector;
                assert!((reached - point).norm() < 1e-9, "{}", branch.label());
                assert!(arm.within_limits(branch.positions()));
            }
            let nearest = solutions.nearest(&near).positions();
            assert!(
                distance_squared(nearest, &near) <= distance_squared(&source, &near) + 1e-3,
                "{nearest:?} is farther from the start than {source:?}"
            );
        }
    }
}

#[test]
fn a_point_straight_above_needs_the_pitch_searched() {
    // Straight above the base, 20 mm below the stretched arm's top: only a pitch near straight
    // up reaches it, not the home pose's level tool.
    let arm = articulated(false);
    let near = arm.home_pose();
    let target = IkTarget::at(Vector3::new(0.0, 0.0, 0.09 + 0.30 - 0.02));
    let held = solve_ik(&arm, &target, &near, &IkOptions::default());
    assert!(matches!(held, Err(IkError::OutOfReach { .. })), "{held:?}");
    let free = solve_ik_free_angles(&arm, &target, &near, &IkOptions::default()).unwrap();
    let chosen = free.nearest(&near).positions();
    let pitch = chosen[1] + chosen[2] + chosen[3];
    assert!((pitch - PI / 2.0).abs() < 0.6, "pitch {pitch}");
}

#[test]
fn a_free_roll_keeps_the_roll_joint_where_the_start_has_it() {
    // Behind the base (limited to ±90°) only the turned-over arm reaches; turned over, the roll
    // joint differs from the tool roll by half a turn, so a roll taken from the start as a tool
    // roll would need the roll joint at 180°, past its ±90°.
    let arm = articulated(true);
    let mut near = arm.home_pose();
    near[4] = 0.4;
    let leaning_back = [0.0, 2.4, -0.5, 0.3, 0.4];
    let point = tool_pose(&arm, &leaning_back).unwrap().translation.vector;
    assert!(point.x < -0.05, "behind the base: {point}");
    let pitch = IkTarget::of_pose(&arm, &leaning_back)
        .unwrap()
        .angle
        .unwrap();
    let target = IkTarget::at(point).with_angle(pitch);
    let solutions = solve_ik_free_angles(&arm, &target, &near, &IkOptions::default()).unwrap();
    assert!(!solutions.is_empty());
    for branch in solutions.as_slice() {
        assert!((branch.positions()[4] - 0.4).abs() < 1e-9, "{:?}", branch);
    }
    // Taking the start's tool roll instead (what a free roll meant before) cannot reach it.
    let start_roll = IkTarget::of_pose(&arm, &near).unwrap().roll.unwrap();
    let held = solve_ik(
        &arm,
        &target.with_roll(start_roll),
        &near,
        &IkOptions::default(),
    );
    assert!(held.is_err(), "{held:?}");
}

#[test]
fn a_target_no_angle_reaches_names_the_joint_that_limits() {
    let arm: Arm = articulated(false);
    let near = arm.home_pose();
    // Beyond the stretched arm at any pitch.
    let far = IkTarget::at(Vector3::new(0.5, 0.0, 0.09));
    match solve_ik_free_angles(&arm, &far, &near, &IkOptions::default()) {
        Err(IkError::OutOfReach { short_by }) => {
            assert!((short_by - (0.5 - 0.30)).abs() < 1e-3, "{short_by}")
        }
        other => panic!("{other:?}"),
    }
    // Straight below the shoulder, 0.27 m down: the links could stretch there, but the
    // shoulder cannot turn below −0.2 rad, whatever the pitch.
    let below = IkTarget::at(Vector3::new(0.02, 0.0, 0.09 - 0.27));
    match solve_ik_free_angles(&arm, &below, &near, &IkOptions::default()) {
        Err(IkError::BeyondLimit { joint, .. }) => assert_eq!(joint, 1),
        other => panic!("{other:?}"),
    }
}

#[test]
fn a_roll_past_its_limit_is_blamed_on_the_roll_not_on_a_joint_that_misses_less() {
    // Facing the target, one elbow branch needs the shoulder 0.05 rad below its limit and both
    // need the roll joint at 170°, 80° past its ±90°; turned over, the base would be half a
    // turn past. The joint that really limits is the roll, whichever branch is reported.
    let arm = articulated(true);
    let pose = [0.0, -0.25, 0.3, 0.2, 0.0];
    let point = tool_pose(&arm, &pose).unwrap().translation.vector;
    let pitch = pose[1] + pose[2] + pose[3];
    let target = IkTarget::at(point)
        .with_angle(pitch)
        .with_roll(170f64.to_radians());
    match solve_ik(&arm, &target, &arm.home_pose(), &IkOptions::default()) {
        Err(IkError::BeyondLimit { joint, by, .. }) => {
            assert_eq!(joint, 4, "blamed joint {joint}, {by} rad past");
            assert!((by - 80f64.to_radians()).abs() < 1e-9, "{by}");
        }
        other => panic!("{other:?}"),
    }
}
