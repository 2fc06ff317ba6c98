//! Profile benchmarks: synchronised six-joint double-S moves beside the reference library
//! `rsruckig` on the same seeded problems, and profile evaluation at a time.

mod common;

use std::hint::black_box;

use armwright_trajectory::{JointMove, Profile, ProfileShape, synchronise};
use common::{Problem, random_moves};
use criterion::{Criterion, criterion_group, criterion_main};
use rsruckig::prelude::*;

const JOINTS: usize = 6;
const PROBLEMS: usize = 256;

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

fn bench_six_joints(c: &mut Criterion, name: &str, pass_through: bool, seed: u64) {
    let problems = random_moves::<JOINTS>(PROBLEMS, seed, pass_through);
    let inputs = reference_inputs(&problems);
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
    bench_six_joints(c, "double_s_6_joints_rest_to_rest", false, 0xBE_0001);
    bench_six_joints(c, "double_s_6_joints_pass_through", true, 0xBE_0002);
}

fn bench_evaluation(c: &mut Criterion) {
    let problems = random_moves::<JOINTS>(1, 0xBE_0003, true);
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
