//! Forward kinematics: the tool pose of the 5-joint articulated arm (budget: 100 ns).

#[path = "../tests/common/mod.rs"]
mod common;

use armwright_kinematics::{forward, space_jacobian, tool_pose};
use criterion::{Criterion, criterion_group, criterion_main};
use std::hint::black_box;

fn poses(seed: u64) -> (armwright_kinematics::Arm, Vec<Vec<f64>>) {
    let arm = common::articulated(true);
    let mut rng = common::Seeded::new(seed);
    let poses = (0..64).map(|_| rng.pose(&arm)).collect();
    (arm, poses)
}

fn bench_fk(c: &mut Criterion) {
    let (arm, poses) = poses(7);
    let mut next = 0;
    c.bench_function("tool_pose_5_joints", |b| {
        b.iter(|| {
            next = (next + 1) % poses.len();
            tool_pose(black_box(&arm), black_box(&poses[next]))
        })
    });
    c.bench_function("forward_all_frames_5_joints", |b| {
        b.iter(|| {
            next = (next + 1) % poses.len();
            forward(black_box(&arm), black_box(&poses[next]))
        })
    });
    c.bench_function("space_jacobian_5_joints", |b| {
        b.iter(|| {
            next = (next + 1) % poses.len();
            space_jacobian(black_box(&arm), black_box(&poses[next]))
        })
    });
}

criterion_group!(benches, bench_fk);
criterion_main!(benches);
