//! Clearance of a 100-waypoint, 5-joint pick-and-place style plan, looked at every 1 ms (a plan
//! sampled at 1 kHz), against a table, three boxes and a tray and between its own links. The
//! sequence is the dry-run bench's (`common::hundred_waypoints`).
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

mod common;

use armwright_kinematics::{ArmShape, Obstacle};
use armwright_trajectory::{
    ClearanceOptions, CommandedMotion, Workcell, plan_clearance, plan_task,
};
use common::{arms, hundred_waypoints};
use criterion::{Criterion, criterion_group, criterion_main};
use nalgebra::Vector3;
use std::hint::black_box;

fn bench_clearance(c: &mut Criterion) {
    let arm = arms::articulated(true);
    let shape = ArmShape::of(&arm);
    let plan = plan_task(&arm, &hundred_waypoints()).expect("the sequence plans");
    let box_at = |name: &str, x: f64, y: f64, size: f64| {
        Obstacle::standing_box(
            name,
            Vector3::new(x, y, 0.0),
            Vector3::new(size, size, size),
        )
    };
    let obstacles = [
        Obstacle::table(0.0),
        box_at("cube 1", 0.12, 0.08, 0.025),
        box_at("cube 2", 0.15, 0.08, 0.025),
        box_at("cube 3", 0.18, 0.08, 0.025),
        Obstacle::standing_box(
            "tray",
            Vector3::new(0.15, -0.10, 0.0),
            Vector3::new(0.096, 0.072, 0.02),
        ),
    ];
    let cell = Workcell {
        arm: &arm,
        shape: &shape,
        obstacles: &obstacles,
        exemptions: &[],
        carried: &[],
    };
    let options = ClearanceOptions::default();
    println!(
        "plan of {:.1} s: {} samples at 1 kHz",
        plan.duration(),
        (plan.duration() * 1e3) as usize
    );
    c.bench_function("plan_clearance_100_waypoints_1khz", |b| {
        b.iter(|| plan_clearance(black_box(&cell), &plan, plan.timings(), &options))
    });
}

criterion_group!(benches, bench_clearance);
criterion_main!(benches);
