//! Dry run and retiming of a 100-waypoint, 5-joint pick-and-place style sequence.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

#[path = "../../kinematics/tests/common/mod.rs"]
mod arms;

use armwright_trajectory::{
    DryRunOptions, LimitSettings, ProfileShape, RetimeTarget, ServoModelOptions, Task, TaskPlanner,
    TaskWaypoint, dry_run, plan_task, retime,
};
use criterion::{Criterion, criterion_group, criterion_main};
use std::hint::black_box;

/// 100 stops (plus the start) of moves of up to ±25° per joint around a working pose, with
/// short dwells: the kind of sequence a small sorting or stacking task makes.
fn hundred_waypoints() -> Task {
    let mut rng = arms::Seeded::new(42);
    let centre = [0.0, 0.9, -1.2, 0.3, 0.0];
    let waypoints = (0..=100)
        .map(|_| TaskWaypoint {
            positions: centre
                .iter()
                .map(|c| c + rng.uniform(-25f64.to_radians(), 25f64.to_radians()))
                .collect(),
            stop: true,
            dwell: 0.05,
            speed_share: 1.0,
            gripper_closed: rng.uniform(0.0, 1.0) < 0.5,
            straight: false,
            shape: ProfileShape::DoubleS,
        })
        .collect();
    Task {
        waypoints,
        limits: LimitSettings::default(),
        model: ServoModelOptions::default(),
        shaping: None,
    }
}

fn bench_dry_run(c: &mut Criterion) {
    let arm = arms::articulated(true);
    let task = hundred_waypoints();
    let options = DryRunOptions::default();
    let plan = plan_task(&arm, &task).expect("plannable");
    println!(
        "cycle time of the benchmark sequence: {:.2} s",
        plan.sequence().duration()
    );
    c.bench_function("plan_and_dry_run_100_waypoints_5_joints", |b| {
        b.iter(|| {
            let plan = plan_task(&arm, black_box(&task)).expect("plannable");
            dry_run(&arm, &plan, plan.timings(), &options).expect("runs")
        })
    });
    let planner = TaskPlanner {
        arm: &arm,
        task: &task,
    };
    let target = RetimeTarget {
        max_overshoot: 1.5e-3,
        ..RetimeTarget::default()
    };
    let mut group = c.benchmark_group("retime");
    group.sample_size(10);
    group.bench_function("retime_100_waypoints_5_joints", |b| {
        b.iter(|| retime(&arm, &planner, &task.timing(), &target, &options, |_| true))
    });
    group.finish();
}

criterion_group!(benches, bench_dry_run);
criterion_main!(benches);
