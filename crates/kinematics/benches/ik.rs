//! Inverse kinematics: closed form with every branch for each built-in arm type (budget 1 µs)
//! and damped least squares on a 6-joint chain (budget: median 20 µs, a failed solve 1 ms).
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

use armwright_test_support::arms as common;
#[path = "common/k_chain.rs"]
mod k_chain;

use armwright_kinematics::{Arm, IkOptions, IkTarget, IkTask, solve_ik, solve_ik_frame, tool_pose};
use criterion::{Criterion, criterion_group, criterion_main};
use k::InverseKinematicsSolver;
use std::hint::black_box;

/// 64 seeded targets made by forward kinematics of random in-limit poses, with those poses.
fn targets(arm: &Arm, seed: u64) -> Vec<(IkTarget, Vec<f64>)> {
    let mut rng = common::Seeded::new(seed);
    (0..64)
        .map(|_| {
            let source = rng.pose(arm);
            (
                IkTarget::of_pose(arm, &source).expect("in-limit pose"),
                source,
            )
        })
        .collect()
}

fn bench_closed_form(c: &mut Criterion) {
    let options = IkOptions::default();
    for (name, arm) in [
        ("closed_form_scara_all_branches", common::scara()),
        (
            "closed_form_articulated4_all_branches",
            common::articulated(false),
        ),
        (
            "closed_form_articulated5_all_branches",
            common::articulated(true),
        ),
    ] {
        let cases = targets(&arm, 21);
        let near = arm.home_pose();
        let mut next = 0;
        c.bench_function(name, |b| {
            b.iter(|| {
                next = (next + 1) % cases.len();
                solve_ik(black_box(&arm), black_box(&cases[next].0), &near, &options)
            })
        });
    }
}

fn bench_damped_least_squares(c: &mut Criterion) {
    let options = IkOptions::default();
    let mut rng = common::Seeded::new(22);
    let arm = common::random_chain(&mut rng, 6);
    let cases: Vec<(IkTarget, Vec<f64>)> = (0..64)
        .map(|_| {
            let source = rng.pose(&arm);
            let goal = tool_pose(&arm, &source).expect("in-limit pose");
            let nearby: Vec<f64> = source
                .iter()
                .zip(arm.joints())
                .map(|(q, joint)| (q + rng.uniform(-0.2, 0.2)).clamp(joint.min, joint.max))
                .collect();
            (IkTarget::at(goal.translation.vector), nearby)
        })
        .collect();
    let home = arm.home_pose();
    let mut next = 0;
    c.bench_function("damped_least_squares_6_joints_from_home", |b| {
        b.iter(|| {
            next = (next + 1) % cases.len();
            solve_ik(black_box(&arm), black_box(&cases[next].0), &home, &options)
        })
    });
    c.bench_function("damped_least_squares_6_joints_from_nearby", |b| {
        b.iter(|| {
            next = (next + 1) % cases.len();
            let (target, nearby) = &cases[next];
            solve_ik(black_box(&arm), black_box(target), nearby, &options)
        })
    });
}

/// Full-pose targets (tool point and orientation) of a random 6-joint chain, each from a random
/// in-limit start, ours beside `k`'s Jacobian solver (crates.io `k` 0.32) on the same chain.
fn bench_full_pose_beside_k(c: &mut Criterion) {
    let mut rng = common::Seeded::new(23);
    let arm = common::random_chain(&mut rng, 6);
    let cases: Vec<(nalgebra::Isometry3<f64>, Vec<f64>)> = (0..64)
        .map(|_| {
            let goal = tool_pose(&arm, &rng.pose(&arm)).expect("in-limit pose");
            (goal, rng.pose(&arm))
        })
        .collect();
    let options = IkOptions {
        task: IkTask::FullPose,
        ..IkOptions::default()
    };
    let theirs = k_chain::k_chain(&arm);
    let solver = k::JacobianIkSolver::new(1e-6, 1e-6, 0.5, 100);
    let mut group = c.benchmark_group("damped_least_squares_6_joints_full_pose_random_start");
    let mut next = 0;
    group.bench_function("armwright", |b| {
        b.iter(|| {
            next = (next + 1) % cases.len();
            let (goal, start) = &cases[next];
            solve_ik_frame(black_box(&arm), black_box(goal), start, &options)
        })
    });
    group.bench_function("k_jacobian", |b| {
        b.iter(|| {
            next = (next + 1) % cases.len();
            let (goal, start) = &cases[next];
            theirs.set_joint_positions_unchecked(start);
            solver.solve(&theirs, black_box(&k_chain::to_k(goal)))
        })
    });
    // The 64 cases above in turn give the mean cost; the median is the cost of the case whose
    // iteration count is the median of 1 001 more (iterations are deterministic, and each
    // costs about the same).
    let mut counted: Vec<(usize, nalgebra::Isometry3<f64>, Vec<f64>)> = (0..1001)
        .map(|_| {
            let goal = tool_pose(&arm, &rng.pose(&arm)).expect("in-limit pose");
            let start = rng.pose(&arm);
            let iterations = match solve_ik_frame(&arm, &goal, &start, &options) {
                Ok(solutions) => solutions.as_slice()[0].iterations(),
                Err(_) => options.iteration_budget,
            };
            (iterations, goal, start)
        })
        .collect();
    counted.sort_by_key(|case| case.0);
    let (median_iterations, median_goal, median_start) = counted[500].clone();
    println!("median case: {median_iterations} iterations");
    group.bench_function("armwright_median_case", |b| {
        b.iter(|| {
            solve_ik_frame(
                black_box(&arm),
                black_box(&median_goal),
                &median_start,
                &options,
            )
        })
    });
    // A frame out of reach spends the whole iteration budget: the cost of a failed solve.
    let far = nalgebra::Isometry3::translation(5.0, 0.0, 0.0);
    group.bench_function("armwright_failed_solve", |b| {
        b.iter(|| solve_ik_frame(black_box(&arm), black_box(&far), &cases[0].1, &options))
    });
    group.finish();
}

criterion_group!(
    benches,
    bench_closed_form,
    bench_damped_least_squares,
    bench_full_pose_beside_k
);
criterion_main!(benches);
