//! Statics and dynamics of the 5-joint articulated arm: gravity torques (budget: 200 ns),
//! the heaviest payload of a pose, inverse dynamics, and the accuracy budget.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

use armwright_test_support::arms as common;

use armwright_kinematics::{
    accuracy_budget, gravity_torques, inverse_dynamics, max_payload, torque_use,
};
use criterion::{Criterion, criterion_group, criterion_main};
use std::hint::black_box;

fn bench_gravity(c: &mut Criterion) {
    let arm = common::articulated(true);
    let mut rng = common::Seeded::new(11);
    let poses: Vec<Vec<f64>> = (0..64).map(|_| rng.pose(&arm)).collect();
    let rates: Vec<Vec<f64>> = (0..64)
        .map(|_| (0..5).map(|_| rng.uniform(-2.0, 2.0)).collect())
        .collect();
    let mut next = 0;
    c.bench_function("gravity_torques_5_joints", |b| {
        b.iter(|| {
            next = (next + 1) % poses.len();
            gravity_torques(black_box(&arm), black_box(&poses[next]), black_box(0.05))
        })
    });
    c.bench_function("gravity_torques_and_use_5_joints", |b| {
        b.iter(|| {
            next = (next + 1) % poses.len();
            gravity_torques(black_box(&arm), black_box(&poses[next]), black_box(0.05))
                .map(|efforts| torque_use(&arm, &efforts, 0.5))
        })
    });
    // The editor recomputes it on the UI thread at every pose change (a drag).
    c.bench_function("max_payload_5_joints", |b| {
        b.iter(|| {
            next = (next + 1) % poses.len();
            max_payload(black_box(&arm), black_box(&poses[next]), black_box(0.5))
        })
    });
    c.bench_function("inverse_dynamics_5_joints", |b| {
        b.iter(|| {
            next = (next + 1) % poses.len();
            let other = (next + 7) % poses.len();
            inverse_dynamics(
                black_box(&arm),
                black_box(&poses[next]),
                black_box(&rates[next]),
                black_box(&rates[other]),
                black_box(0.05),
            )
        })
    });
    c.bench_function("accuracy_budget_5_joints", |b| {
        b.iter(|| {
            next = (next + 1) % poses.len();
            accuracy_budget(black_box(&arm), black_box(&poses[next]))
        })
    });
}

criterion_group!(benches, bench_gravity);
criterion_main!(benches);
