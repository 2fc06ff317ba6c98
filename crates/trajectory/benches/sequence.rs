//! Sequence benchmarks: planning 100 waypoints × 5 joints, and evaluating the plan at a time.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

mod common;

use std::hint::black_box;

use armwright_test_support::seeded::XorShift;
use armwright_trajectory::{
    JointLimits, ProfileShape, SequenceWaypoint, WaypointKind, plan_sequence,
};
use criterion::{Criterion, criterion_group, criterion_main};

const JOINTS: usize = 5;
const WAYPOINTS: usize = 100;

fn seeded_sequence(seed: u64) -> (Vec<SequenceWaypoint>, Vec<JointLimits>) {
    let mut rng = XorShift::new(seed);
    let limits = (0..JOINTS)
        .map(|_| {
            JointLimits::new(
                rng.uniform(1.0, 6.0),
                rng.uniform(5.0, 30.0),
                rng.uniform(50.0, 300.0),
            )
        })
        .collect();
    let waypoints = (0..WAYPOINTS)
        .map(|_| SequenceWaypoint {
            positions: (0..JOINTS).map(|_| rng.uniform(-1.5, 1.5)).collect(),
            kind: if rng.uniform(0.0, 1.0) < 0.5 {
                WaypointKind::PassThrough
            } else {
                WaypointKind::Stop {
                    dwell: rng.uniform(0.0, 0.3),
                }
            },
            speed_share: rng.uniform(0.3, 1.0),
        })
        .collect();
    (waypoints, limits)
}

fn bench_sequence(c: &mut Criterion) {
    let (waypoints, limits) = seeded_sequence(0xBE_0100);
    c.bench_function("plan_sequence_100_waypoints_5_joints", |b| {
        b.iter(|| {
            plan_sequence(
                ProfileShape::DoubleS,
                black_box(&waypoints),
                black_box(&limits),
            )
        })
    });
    let plan = plan_sequence(ProfileShape::DoubleS, &waypoints, &limits).expect("plannable");
    let duration = plan.duration();
    c.bench_function("plan_positions_at_5_joints", |b| {
        let mut t = 0.0;
        let mut positions = [0.0; JOINTS];
        b.iter(|| {
            t += 0.013_7;
            if t > duration {
                t = 0.0;
            }
            plan.positions_at(black_box(t), &mut positions);
            black_box(positions)
        })
    });
}

criterion_group!(benches, bench_sequence);
criterion_main!(benches);
