//! Forward kinematics: the tool pose of the 5-joint articulated arm (budget: 100 ns), and of a
//! random 6-joint chain beside the `k` crate's (crates.io `k` 0.32) on the same chain.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

use armwright_test_support::arms as common;
#[path = "common/k_chain.rs"]
mod k_chain;

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
    // The poses in turn, round and round: no division per call (a `%` by the count cost 5.7 ns
    // a call on its own, a tenth of the tool pose's time).
    let mut next = poses.iter().cycle();
    c.bench_function("tool_pose_5_joints", |b| {
        b.iter(|| {
            tool_pose(
                black_box(&arm),
                black_box(next.next().expect("poses go round")),
            )
        })
    });
    c.bench_function("forward_all_frames_5_joints", |b| {
        b.iter(|| {
            forward(
                black_box(&arm),
                black_box(next.next().expect("poses go round")),
            )
        })
    });
    c.bench_function("space_jacobian_5_joints", |b| {
        b.iter(|| {
            space_jacobian(
                black_box(&arm),
                black_box(next.next().expect("poses go round")),
            )
        })
    });
}

fn bench_fk_beside_k(c: &mut Criterion) {
    let mut rng = common::Seeded::new(8);
    let arm = common::random_chain(&mut rng, 6);
    let poses: Vec<Vec<f64>> = (0..64).map(|_| rng.pose(&arm)).collect();
    let theirs = k_chain::k_chain(&arm);
    // Both compute the same pose, or the comparison means nothing.
    for pose in &poses {
        theirs.set_joint_positions_unchecked(pose);
        let ours = tool_pose(&arm, pose).expect("in-limit pose");
        let other = k_chain::from_k(&theirs.end_transform());
        assert!((ours.translation.vector - other.translation.vector).norm() < 1e-12);
        assert!(ours.rotation.angle_to(&other.rotation) < 1e-12);
    }
    let mut group = c.benchmark_group("fk_6_joints");
    // In turn, as above: both ours and `k` pay the same for taking the next pose.
    let mut next = poses.iter().cycle();
    group.bench_function("armwright_tool_pose", |b| {
        b.iter(|| {
            tool_pose(
                black_box(&arm),
                black_box(next.next().expect("poses go round")),
            )
        })
    });
    group.bench_function("k_end_transform", |b| {
        b.iter(|| {
            theirs.set_joint_positions_unchecked(black_box(next.next().expect("poses go round")));
            theirs.end_transform()
        })
    });
    group.finish();
}

criterion_group!(benches, bench_fk, bench_fk_beside_k);
criterion_main!(benches);
