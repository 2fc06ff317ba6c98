//! Dry run and retiming of a 100-waypoint, 5-joint pick-and-place style sequence.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

mod common;

use armwright_trajectory::{DryRunOptions, RetimeTarget, TaskPlanner, dry_run, plan_task, retime};
use common::{arms, hundred_waypoints};
use criterion::{Criterion, criterion_group, criterion_main};
use std::hint::black_box;

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
