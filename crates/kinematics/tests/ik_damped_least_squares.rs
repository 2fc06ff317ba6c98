//! Damped least squares on general chains (`src/ik/damped_least_squares.rs`), checked by
//! forward kinematics.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

use armwright_test_support::arms as common;

use armwright_kinematics::{
    IkError, IkOptions, IkTarget, IkTask, ToolAngles, solve_ik, solve_ik_frame, tool_pose,
};
use common::{Seeded, articulated, random_chain};
use nalgebra::Vector3;
use proptest::prelude::*;

#[test]
fn six_joint_chains_solve_ten_thousand_reachable_targets() {
    // 10 random 6-joint chains × 1000 targets made by forward kinematics of random in-limit
    // poses, each solved from another random in-limit pose; the issue asks ≥ 99.9 % within
    // 1e-6 m.
    let options = IkOptions {
        position_tolerance: 1e-7,
        ..IkOptions::default()
    };
    let mut rng = Seeded::new(11);
    let (mut solved, mut total, mut iterations) = (0, 0, 0);
    for _ in 0..10 {
        let arm = random_chain(&mut rng, 6);
        for _ in 0..1000 {
            let source = rng.pose(&arm);
            let goal = tool_pose(&arm, &source).unwrap().translation.vector;
            let start = rng.pose(&arm);
            total += 1;
            if let Ok(solutions) = solve_ik(&arm, &IkTarget::at(goal), &start, &options) {
                let branch = solutions.nearest(&start);
                let reached = tool_pose(&arm, branch.positions()).unwrap();
                assert!(arm.within_limits(branch.positions()));
                assert!((reached.translation.vector - goal).norm() <= 1e-6);
                assert!(branch.residual() <= 1e-6);
                iterations += branch.iterations();
                solved += 1;
            }
        }
    }
    let share = solved as f64 / total as f64;
    println!(
        "solved {solved} of {total}, {:.1} iterations on average",
        iterations as f64 / solved as f64
    );
    assert!(share >= 0.999, "solved only {:.3} %", share * 100.0);
}

#[test]
fn six_joint_chains_reach_ten_thousand_full_poses_from_random_starts() {
    // 10 random 6-joint chains × 1000 whole tool frames made by forward kinematics of random
    // in-limit poses, each solved from another random in-limit pose; the issue asks ≥ 99.9 %.
    let options = IkOptions {
        task: IkTask::FullPose,
        ..IkOptions::default()
    };
    let mut rng = Seeded::new(12);
    let (mut solved, mut total) = (0, 0);
    for _ in 0..10 {
        let arm = random_chain(&mut rng, 6);
        for _ in 0..1000 {
            let goal = tool_pose(&arm, &rng.pose(&arm)).unwrap();
            let start = rng.pose(&arm);
            total += 1;
            if let Ok(solutions) = solve_ik_frame(&arm, &goal, &start, &options) {
                let branch = solutions.nearest(&start);
                let reached = tool_pose(&arm, branch.positions()).unwrap();
                assert!(arm.within_limits(branch.positions()));
                assert!((reached.translation.vector - goal.translation.vector).norm() <= 1e-6);
                assert!(reached.rotation.angle_to(&goal.rotation) <= 1e-5);
                solved += 1;
            }
        }
    }
    let share = solved as f64 / total as f64;
    println!("solved {solved} of {total} full poses");
    assert!(share >= 0.999, "solved only {:.3} %", share * 100.0);
}

#[test]
fn pitch_task_reaches_the_pitch() {
    // Position and pitch of tool frames made by forward kinematics, from random starts.
    let options = IkOptions {
        task: IkTask::PositionPitch,
        ..IkOptions::default()
    };
    let mut rng = Seeded::new(12);
    let (mut solved, mut total) = (0, 0);
    for _ in 0..4 {
        let arm = random_chain(&mut rng, 6);
        for _ in 0..250 {
            let tool = tool_pose(&arm, &rng.pose(&arm)).unwrap();
            let want = ToolAngles::of(&tool).pitch;
            let target = IkTarget::at(tool.translation.vector).with_angle(want);
            let start = rng.pose(&arm);
            total += 1;
            let Ok(solutions) = solve_ik(&arm, &target, &start, &options) else {
                continue;
            };
            solved += 1;
            let reached = tool_pose(&arm, solutions.nearest(&start).positions()).unwrap();
            assert!((reached.translation.vector - tool.translation.vector).norm() <= 1e-6);
            assert!((ToolAngles::of(&reached).pitch - want).abs() <= 1e-6);
        }
    }
    assert!(solved * 100 >= total * 99, "{solved} of {total}");
}

#[test]
fn full_pose_task_reaches_the_whole_frame() {
    // Whole tool frames made by forward kinematics, from random starts. Six constraints on
    // six joints leave few solutions, some beyond the short prismatic travels, so more starts
    // miss than for the position task; with the default 20 restarts about 97 % converge.
    let options = IkOptions {
        task: IkTask::FullPose,
        ..IkOptions::default()
    };
    let mut rng = Seeded::new(15);
    let (mut solved, mut total) = (0, 0);
    for _ in 0..4 {
        let arm = random_chain(&mut rng, 6);
        for _ in 0..250 {
            let tool = tool_pose(&arm, &rng.pose(&arm)).unwrap();
            let start = rng.pose(&arm);
            total += 1;
            let Ok(solutions) = solve_ik_frame(&arm, &tool, &start, &options) else {
                continue;
            };
            solved += 1;
            let reached = tool_pose(&arm, solutions.nearest(&start).positions()).unwrap();
            assert!((reached.translation.vector - tool.translation.vector).norm() <= 1e-6);
            assert!(reached.rotation.angle_to(&tool.rotation) <= 1e-5);
        }
    }
    println!("full pose: solved {solved} of {total}");
    assert!(solved * 100 >= total * 95, "{solved} of {total}");
}

#[test]
fn full_pose_through_the_target_keeps_the_near_yaw() {
    // With a target the full pose takes its yaw from the near pose: the source pose itself as
    // near gives back its own frame.
    let mut rng = Seeded::new(16);
    let arm = random_chain(&mut rng, 6);
    let source = rng.pose(&arm);
    let tool = tool_pose(&arm, &source).unwrap();
    let angles = ToolAngles::of(&tool);
    let target = IkTarget::at(tool.translation.vector)
        .with_angle(angles.pitch)
        .with_roll(angles.roll);
    let options = IkOptions {
        task: IkTask::FullPose,
        ..IkOptions::default()
    };
    let solutions = solve_ik(&arm, &target, &source, &options).unwrap();
    let reached = tool_pose(&arm, solutions.as_slice()[0].positions()).unwrap();
    assert!(reached.rotation.angle_to(&tool.rotation) <= 1e-5);
}

#[test]
fn unreachable_target_reports_the_residual_within_bounded_iterations() {
    let mut rng = Seeded::new(13);
    let arm = random_chain(&mut rng, 6);
    let options = IkOptions::default();
    let far = Vector3::new(5.0, 0.0, 0.0);
    match solve_ik(&arm, &IkTarget::at(far), &arm.home_pose(), &options) {
        Err(IkError::NotConverged {
            residual,
            iterations,
        }) => {
            // The chain spans well under a metre, so at least 4 m remain.
            assert!(residual > 4.0 && residual.is_finite());
            assert!(iterations <= (options.restarts + 1) * options.max_iterations);
            assert!(iterations <= options.iteration_budget);
        }
        other => panic!("expected not converged, got {other:?}"),
    }
}

#[test]
fn a_full_pose_out_of_reach_spends_exactly_the_budget_with_each_start_counted() {
    // Out of reach, starts stall after a step or two; each start costs about an iteration
    // (its first pose, error and Jacobian), so the budget counts it: the work stops at the
    // budget whatever the mix of starts and steps (before starts were counted this target
    // reported 823 iterations over 401 starts, about 1 224 iterations' work).
    let mut rng = Seeded::new(23);
    let arm = random_chain(&mut rng, 6);
    let options = IkOptions {
        task: IkTask::FullPose,
        ..IkOptions::default()
    };
    let far = nalgebra::Isometry3::translation(5.0, 0.0, 0.0);
    for budget in [10, 333, options.iteration_budget] {
        let options = IkOptions {
            iteration_budget: budget,
            ..options
        };
        match solve_ik_frame(&arm, &far, &rng.pose(&arm), &options) {
            Err(IkError::NotConverged { iterations, .. }) => assert_eq!(iterations, budget),
            other => panic!("expected not converged, got {other:?}"),
        }
    }
}

#[test]
fn same_call_gives_the_same_answer() {
    let mut rng = Seeded::new(14);
    let arm = random_chain(&mut rng, 6);
    let goal = tool_pose(&arm, &rng.pose(&arm)).unwrap().translation.vector;
    let start = rng.pose(&arm);
    let first = solve_ik(&arm, &IkTarget::at(goal), &start, &IkOptions::default());
    let second = solve_ik(&arm, &IkTarget::at(goal), &start, &IkOptions::default());
    assert_eq!(first, second);
}

#[test]
fn built_in_arm_can_be_forced_onto_damped_least_squares() {
    let arm = articulated(true);
    let source = [0.3, 0.8, -0.9, 0.2, 0.1];
    let goal = tool_pose(&arm, &source).unwrap().translation.vector;
    let options = IkOptions {
        use_damped_least_squares: true,
        ..IkOptions::default()
    };
    let solutions = solve_ik(&arm, &IkTarget::at(goal), &arm.home_pose(), &options).unwrap();
    assert_eq!(solutions.len(), 1);
    let branch = &solutions.as_slice()[0];
    assert_eq!(branch.label(), "damped least squares");
    assert!(branch.iterations() > 0);
    let reached = tool_pose(&arm, branch.positions()).unwrap();
    assert!((reached.translation.vector - goal).norm() <= 1e-7);
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(64))]
    #[test]
    fn any_target_or_options_never_panic(
        x in any::<f64>(), y in any::<f64>(), z in any::<f64>(),
        angle in proptest::option::of(any::<f64>()),
        damping in any::<f64>(),
        weight in any::<f64>(),
        task in 0usize..3,
        seed in any::<u64>(),
    ) {
        let mut rng = Seeded::new(seed);
        let arm = random_chain(&mut rng, 1 + (seed % 8) as usize);
        let options = IkOptions {
            damping,
            angle_weight: weight,
            task: [IkTask::Position, IkTask::PositionPitch, IkTask::FullPose][task],
            max_iterations: 20,
            restarts: 2,
            ..IkOptions::default()
        };
        let target = IkTarget { position: Vector3::new(x, y, z), angle, roll: None };
        match solve_ik(&arm, &target, &arm.home_pose(), &options) {
            Ok(solutions) => {
                for branch in solutions.as_slice() {
                    prop_assert!(arm.within_limits(branch.positions()));
                }
            }
            Err(IkError::NotConverged { residual, .. }) => prop_assert!(!residual.is_nan()),
            Err(IkError::NotFinite { value, .. }) => prop_assert!(!value.is_finite()),
            Err(other) => prop_assert!(false, "unexpected {other:?}"),
        }
    }
}
