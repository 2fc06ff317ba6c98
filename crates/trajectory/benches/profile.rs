//! Profile benchmarks: synchronised six-joint double-S moves beside the reference library
//! `rsruckig` on the same seeded problems, and profile evaluation at a time.
//!
//! Criterion's figures for a group are per problem averaged over all its problems. The spread
//! from one problem to another (median, mean, 99th percentile per problem) is printed by a
//! timing loop before the pass-through groups, and the slowest tenth of the problems (for us)
//! has a group of its own.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

mod common;

use std::hint::black_box;
use std::time::Instant;

use armwright_trajectory::{JointMove, Profile, ProfileShape, synchronise};
use common::{Boundaries, Problem, random_moves};
use criterion::{Criterion, criterion_group, criterion_main};
use rsruckig::prelude::*;

const JOINTS: usize = 6;
const PROBLEMS: usize = 256;
/// Problems timed one by one for the per-problem spread.
const SPREAD_PROBLEMS: usize = 4096;

fn reference_inputs(problems: &[Problem<JOINTS>]) -> Vec<InputParameter<JOINTS>> {
    problems
        .iter()
        .map(|problem| {
            let mut input = InputParameter::<JOINTS>::new(None);
            for (index, (joint_move, limits)) in
                problem.moves.iter().zip(&problem.limits).enumerate()
            {
                input.current_position[index] = joint_move.from;
                input.target_position[index] = joint_move.to;
                input.current_velocity[index] = joint_move.from_velocity;
                input.target_velocity[index] = joint_move.to_velocity;
                input.max_velocity[index] = limits.velocity;
                input.max_acceleration[index] = limits.acceleration;
                input.max_jerk[index] = limits.jerk;
            }
            input
        })
        .collect()
}

/// Seconds per call of `solve` on each problem: the fastest of five rounds of eight calls, so
/// that another process taking the core does not count as the problem's cost.
fn seconds_per_problem(count: usize, mut solve: impl FnMut(usize)) -> Vec<f64> {
    (0..count)
        .map(|index| {
            (0..5)
                .map(|_| {
                    let started = Instant::now();
                    for _ in 0..8 {
                        solve(index);
                    }
                    started.elapsed().as_secs_f64() / 8.0
                })
                .fold(f64::INFINITY, f64::min)
        })
        .collect()
}

/// Median, mean and 99th percentile of `times` (s).
fn spread(times: &[f64]) -> (f64, f64, f64) {
    let mut sorted = times.to_vec();
    sorted.sort_by(f64::total_cmp);
    let at = |share: f64| sorted[((sorted.len() - 1) as f64 * share).round() as usize];
    let mean = sorted.iter().sum::<f64>() / sorted.len() as f64;
    (at(0.5), mean, at(0.99))
}

/// Prints the per-problem spread of ours and the reference's on `problems`, and returns the
/// indices of the slowest tenth for us.
fn print_spread(name: &str, problems: &[Problem<JOINTS>]) -> Vec<usize> {
    let inputs = reference_inputs(problems);
    let ours = seconds_per_problem(problems.len(), |index| {
        let problem = &problems[index];
        black_box(
            synchronise(
                ProfileShape::DoubleS,
                black_box(&problem.moves),
                black_box(&problem.limits),
            )
            .ok(),
        );
    });
    let mut otg = Ruckig::<JOINTS, ThrowErrorHandler>::new(None, 0.001);
    let mut trajectory = Trajectory::<JOINTS>::new(None);
    let reference = seconds_per_problem(problems.len(), |index| {
        black_box(otg.calculate(black_box(&inputs[index]), &mut trajectory)).ok();
    });
    let (median, mean, p99) = spread(&ours);
    let (reference_median, reference_mean, reference_p99) = spread(&reference);
    println!(
        "{name}, per problem over {} problems: ours median {:.2} µs, mean {:.2} µs, p99 {:.2} µs \
         ({:.2}× our median); rsruckig median {:.2} µs, mean {:.2} µs, p99 {:.2} µs; \
         rsruckig/ours: median {:.2}×, mean {:.2}×",
        problems.len(),
        median * 1e6,
        mean * 1e6,
        p99 * 1e6,
        p99 / median,
        reference_median * 1e6,
        reference_mean * 1e6,
        reference_p99 * 1e6,
        reference_median / median,
        reference_mean / mean,
    );
    let mut order: Vec<usize> = (0..problems.len()).collect();
    order.sort_by(|&a, &b| ours[b].total_cmp(&ours[a]));
    order.truncate(problems.len() / 10);
    order
}

fn bench_six_joints(c: &mut Criterion, name: &str, boundaries: Boundaries, seed: u64) {
    let problems = random_moves::<JOINTS>(PROBLEMS, seed, boundaries);
    bench_problems(c, name, &problems);
    if boundaries != Boundaries::Rest {
        let many = random_moves::<JOINTS>(SPREAD_PROBLEMS, seed + 1, boundaries);
        let slowest = print_spread(name, &many);
        let worst: Vec<Problem<JOINTS>> = slowest.iter().map(|&index| many[index]).collect();
        bench_problems(c, &format!("{name}_slowest_tenth"), &worst);
    }
}

fn bench_problems(c: &mut Criterion, name: &str, problems: &[Problem<JOINTS>]) {
    let inputs = reference_inputs(problems);
    let mut group = c.benchmark_group(name);
    group.bench_function("ours", |b| {
        let mut index = 0;
        b.iter(|| {
            index = (index + 1) % problems.len();
            let problem = &problems[index];
            black_box(synchronise(
                ProfileShape::DoubleS,
                black_box(&problem.moves),
                black_box(&problem.limits),
            ))
        })
    });
    group.bench_function("rsruckig", |b| {
        let mut otg = Ruckig::<JOINTS, ThrowErrorHandler>::new(None, 0.001);
        let mut trajectory = Trajectory::<JOINTS>::new(None);
        let mut index = 0;
        b.iter(|| {
            index = (index + 1) % inputs.len();
            black_box(otg.calculate(black_box(&inputs[index]), &mut trajectory)).ok();
            black_box(trajectory.get_duration())
        })
    });
    group.finish();
}

fn bench_synchronise(c: &mut Criterion) {
    bench_six_joints(
        c,
        "double_s_6_joints_rest_to_rest",
        Boundaries::Rest,
        0xBE_0001,
    );
    bench_six_joints(
        c,
        "double_s_6_joints_pass_through",
        Boundaries::Along,
        0xBE_0002,
    );
    bench_six_joints(
        c,
        "double_s_6_joints_pass_through_either_sign",
        Boundaries::EitherSign,
        0xBE_0004,
    );
}

fn bench_evaluation(c: &mut Criterion) {
    let problems = random_moves::<JOINTS>(1, 0xBE_0003, Boundaries::Along);
    let synced = synchronise(
        ProfileShape::DoubleS,
        &problems[0].moves,
        &problems[0].limits,
    )
    .expect("solvable by construction");
    let profile = synced.profiles()[0];
    let duration = profile.duration();
    c.bench_function("profile_state_at", |b| {
        let mut t = 0.0;
        b.iter(|| {
            t += 0.000_7;
            if t > duration {
                t = 0.0;
            }
            black_box(profile.state_at(black_box(t)))
        })
    });
    c.bench_function("synced_6_joints_positions_at", |b| {
        let mut t = 0.0;
        let mut positions = [0.0; JOINTS];
        b.iter(|| {
            t += 0.000_7;
            if t > duration {
                t = 0.0;
            }
            synced.positions_at(black_box(t), &mut positions);
            black_box(positions)
        })
    });
    let limits = problems[0].limits[0];
    c.bench_function("double_s_1_joint_rest_to_rest", |b| {
        b.iter(|| {
            black_box(Profile::double_s(
                black_box(&JointMove::rest_to_rest(0.1, 1.7)),
                black_box(&limits),
            ))
        })
    });
}

criterion_group!(benches, bench_synchronise, bench_evaluation);
criterion_main!(benches);
