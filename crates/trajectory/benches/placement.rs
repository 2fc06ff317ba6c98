//! Placement success at one pick: 4000 seeded Monte Carlo draws through forward kinematics and
//! the closed form, on a 5-joint arm.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

use armwright_test_support::arms;

use armwright_trajectory::{PlacementOptions, placement_estimate};
use criterion::{Criterion, criterion_group, criterion_main};
use std::hint::black_box;

fn bench_placement(c: &mut Criterion) {
    let arm = arms::articulated(true);
    let pose = [0.3, 0.9, -1.2, 0.3, 0.1];
    let options = PlacementOptions::default();
    c.bench_function("placement_4000_draws_5_joints", |b| {
        b.iter(|| {
            placement_estimate(
                black_box(&arm),
                black_box(&pose),
                [0.4e-3, -0.2e-3, 0.0],
                &options,
            )
        })
    });
}

criterion_group!(benches, bench_placement);
criterion_main!(benches);
