//! Retiming: the shortest timing whose dry run keeps every stop's overshoot under the target.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

use armwright_test_support::arms as common;

use armwright_trajectory::{
    DryRunOptions, LimitSettings, Planner, ProfileShape, RetimeError, RetimeTarget,
    ServoModelOptions, Task, TaskPlanner, TaskWaypoint, dry_run, retime,
};

fn task() -> Task {
    let stop = |positions: &[f64]| TaskWaypoint {
        positions: positions.to_vec(),
        stop: true,
        dwell: 0.2,
        speed_share: 1.0,
        gripper_closed: false,
        straight: false,
        shape: ProfileShape::DoubleS,
    };
    Task {
        waypoints: vec![
            stop(&[0.0, 0.3, -0.5, 0.0]),
            stop(&[0.8, 1.2, -1.3, 0.3]),
            stop(&[-0.5, 0.6, -0.2, -0.3]),
            stop(&[0.0, 0.3, -0.5, 0.0]),
        ],
        limits: LimitSettings::default(),
        model: ServoModelOptions::default(),
        shaping: None,
    }
}

#[test]
fn retimed_sequence_meets_the_target_and_no_faster_share_would() {
    let arm = common::articulated(false);
    let task = task();
    let planner = TaskPlanner {
        arm: &arm,
        task: &task,
    };
    let target = RetimeTarget {
        max_overshoot: 0.8e-3,
        ..RetimeTarget::default()
    };
    let options = DryRunOptions::default();
    let retimed = retime(&arm, &planner, &task.timing(), &target, &options, |_| true)
        .expect("the target can be met");
    assert!(
        retimed.before.worst_overshoot() > target.max_overshoot,
        "the start misses it"
    );
    assert!(retimed.after.worst_overshoot() <= target.max_overshoot);
    // The after figures are those of the timing returned.
    let (plan, timings) = planner.plan(&retimed.timing).expect("plannable");
    let again = dry_run(&arm, &plan, &timings, &options).expect("runs");
    assert_eq!(again.worst_overshoot(), retimed.after.worst_overshoot());
    // No longer than needed: each slowed move, made 10 % faster with long dwells, misses the
    // overshoot or the torque target.
    for (index, &share) in retimed.timing.speed_share.iter().enumerate().skip(1) {
        if share >= 1.0 {
            continue;
        }
        let mut faster = retimed.timing.clone();
        faster.speed_share[index] = (share * 1.1).min(1.0);
        faster.dwell = vec![target.search_dwell; faster.dwell.len()];
        let (plan, timings) = planner.plan(&faster).expect("plannable");
        let run = dry_run(&arm, &plan, &timings, &options).expect("runs");
        // The search keeps 5 % in hand on both overshoot and torque use.
        let w = &run.waypoints[index];
        assert!(
            w.overshoot > 0.95 * target.max_overshoot || w.peak_torque_use > 0.95,
            "waypoint {index} could go 10 % faster: {w:?}"
        );
    }
}

#[test]
fn an_impossible_target_names_the_waypoint() {
    let arm = common::articulated(false);
    let task = task();
    let planner = TaskPlanner {
        arm: &arm,
        task: &task,
    };
    // 1 µm is below what a slow move of a deadband-limited servo can promise.
    let target = RetimeTarget {
        max_overshoot: 1e-6,
        min_speed_share: 0.5,
        ..RetimeTarget::default()
    };
    let result = retime(
        &arm,
        &planner,
        &task.timing(),
        &target,
        &DryRunOptions::default(),
        |_| true,
    );
    assert!(
        matches!(result, Err(RetimeError::Unreachable { .. })),
        "{result:?}"
    );
}

#[test]
fn cancelling_stops_the_search() {
    let arm = common::articulated(false);
    let task = task();
    let planner = TaskPlanner {
        arm: &arm,
        task: &task,
    };
    let mut calls = 0;
    let result = retime(
        &arm,
        &planner,
        &task.timing(),
        &RetimeTarget::default(),
        &DryRunOptions::default(),
        |_| {
            calls += 1;
            calls < 3
        },
    );
    assert_eq!(result.unwrap_err(), RetimeError::Cancelled);
    assert_eq!(calls, 3);
}

#[test]
fn a_start_that_already_meets_the_target_is_never_made_slower() {
    let arm = common::articulated(false);
    let mut task = task();
    // Slow and patient: far inside a generous target.
    for w in &mut task.waypoints {
        w.speed_share = 0.3;
        w.dwell = 0.6;
    }
    let planner = TaskPlanner {
        arm: &arm,
        task: &task,
    };
    let target = RetimeTarget {
        max_overshoot: 5e-3,
        ..RetimeTarget::default()
    };
    let options = DryRunOptions::default();
    let retimed = retime(&arm, &planner, &task.timing(), &target, &options, |_| true)
        .expect("the target is met");
    assert!(retimed.already_met);
    assert!(retimed.after.cycle_time <= retimed.before.cycle_time);
    // Here the search finds a faster timing, and says what binds each stop.
    assert!(retimed.after.cycle_time < retimed.before.cycle_time);
    assert!(retimed.binding[0].is_none());
    assert!(
        retimed.binding[1..].iter().all(Option::is_some),
        "{:?}",
        retimed.binding
    );
    assert!(retimed.main_binding().is_some());

    // A target the search cannot beat the start on (the fastest timing is the start itself):
    // the start comes back unchanged.
    let fast = retimed.timing.clone();
    let mut fast_task = task.clone();
    for (w, (&share, &dwell)) in fast_task
        .waypoints
        .iter_mut()
        .zip(fast.speed_share.iter().zip(&fast.dwell))
    {
        w.speed_share = share;
        w.dwell = dwell;
    }
    let planner = TaskPlanner {
        arm: &arm,
        task: &fast_task,
    };
    let again = retime(
        &arm,
        &planner,
        &fast_task.timing(),
        &target,
        &options,
        |_| true,
    )
    .expect("the target is met");
    assert!(again.already_met);
    assert!(again.after.cycle_time <= again.before.cycle_time + 1e-12);
}

#[test]
fn retiming_settles_every_stop_before_its_gripper_acts() {
    let arm = common::articulated(false);
    let mut task = task();
    // The gripper closes at the second stop and opens at the third, with no dwell at all.
    task.waypoints[1].gripper_closed = true;
    task.waypoints[1].dwell = 0.0;
    task.waypoints[2].dwell = 0.0;
    let planner = TaskPlanner {
        arm: &arm,
        task: &task,
    };
    let target = RetimeTarget {
        max_overshoot: 1.5e-3,
        ..RetimeTarget::default()
    };
    let options = DryRunOptions::default();
    let retimed = retime(&arm, &planner, &task.timing(), &target, &options, |_| true)
        .expect("the target can be met");
    assert_eq!(retimed.before.unsettled_gripper_stops(), vec![1, 2]);
    assert!(!retimed.already_met);
    assert!(retimed.after.unsettled_gripper_stops().is_empty());
    for stop in [1, 2] {
        assert!(
            retimed.timing.dwell[stop] >= armwright_trajectory::GRIPPER_TIME,
            "the gripper's own time is in the dwell at {stop}: {:?}",
            retimed.timing.dwell
        );
    }
}
