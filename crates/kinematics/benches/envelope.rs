//! Reach envelope and torque-utilisation maps, 200 × 200 cells (budget: 50 ms on one core).
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

use armwright_test_support::arms as common;

use armwright_kinematics::{MapOptions, MapView, reach_map};
use criterion::{Criterion, criterion_group, criterion_main};
use std::hint::black_box;

fn bench_envelope(c: &mut Criterion) {
    let options = MapOptions::default();
    let mut group = c.benchmark_group("reach_map_200x200");
    group.sample_size(10);
    for (name, arm, view) in [
        (
            "articulated5_top",
            common::articulated(true),
            MapView::Top { height: 0.12 },
        ),
        (
            "articulated5_side",
            common::articulated(true),
            MapView::Side { yaw: 0.3 },
        ),
        ("scara_top", common::scara(), MapView::Top { height: 0.1 }),
        ("scara_side", common::scara(), MapView::Side { yaw: 0.3 }),
    ] {
        group.bench_function(name, |b| {
            b.iter(|| reach_map(black_box(&arm), black_box(&view), &options))
        });
    }
    group.finish();
}

criterion_group!(benches, bench_envelope);
criterion_main!(benches);
