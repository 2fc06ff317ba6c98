//! The dry run on a real arm model: faster moves overshoot more, the arm rests where its
//! servos balance gravity, timings are checked.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

use armwright_test_support::arms as common;

use armwright_trajectory::{
    CommandedMotion, DryRunError, DryRunOptions, LimitSettings, ProfileShape, ServoModel,
    ServoModelOptions, Task, TaskWaypoint, WaypointTiming, dry_run, plan_task,
};

fn waypoint(positions: &[f64], speed_share: f64, dwell: f64, gripper_closed: bool) -> TaskWaypoint {
    TaskWaypoint {
        positions: positions.to_vec(),
        stop: true,
        dwell,
        speed_share,
        gripper_closed,
        straight: false,
        shape: ProfileShape::DoubleS,
    }
}

fn reach_task(speed_share: f64, gripper_closed: bool) -> Task {
    Task {
        waypoints: vec![
            waypoint(&[0.0, 0.3, -0.5, 0.0], 1.0, 0.3, gripper_closed),
            waypoint(&[0.8, 1.2, -1.3, 0.3], speed_share, 0.8, gripper_closed),
            waypoint(&[-0.4, 0.5, -0.3, -0.2], speed_share, 0.8, gripper_closed),
        ],
        limits: LimitSettings::default(),
        model: ServoModelOptions::default(),
        shaping: None,
    }
}

#[test]
fn faster_moves_overshoot_more() {
    let arm = common::articulated(false);
    let mut overshoots = Vec::new();
    for share in [0.2, 0.5, 1.0] {
        let plan = plan_task(&arm, &reach_task(share, false)).expect("plannable");
        let run = dry_run(&arm, &plan, plan.timings(), &DryRunOptions::default()).expect("runs");
        overshoots.push(run.worst_overshoot());
    }
    assert!(
        overshoots[0] < overshoots[1] && overshoots[1] < overshoots[2],
        "{overshoots:?}"
    );
    assert!(
        overshoots[2] > 1e-4,
        "a full-speed move of this arm rings: {overshoots:?}"
    );
}

#[test]
fn at_rest_each_servo_balances_gravity() {
    // Statics: at rest the motor's effort equals the holding effort, give or take dry friction.
    let arm = common::articulated(false);
    let task = reach_task(0.5, true);
    let plan = plan_task(&arm, &task).expect("plannable");
    let options = DryRunOptions::default();
    let run = dry_run(&arm, &plan, plan.timings(), &options).expect("runs");
    let last = run.trace.len() - 1;
    let rest = run.trace.actual_at(last);
    let gravity = armwright_kinematics::gravity_torques(&arm, rest, arm.payload_mass()).unwrap();
    for (j, joint) in arm.joints().iter().enumerate() {
        let model = ServoModel::of_joint(joint, &options.servo);
        // At rest the back-EMF term vanishes: the effort is the drive.
        let effort = run.trace.drive_share[last * arm.joint_count() + j] * model.stall_effort;
        let slack = model.dry_friction + 1e-3 * model.stall_effort;
        assert!(
            (effort - gravity.as_slice()[j]).abs() <= slack,
            "joint {j}: motor {effort} N·m vs gravity {} N·m",
            gravity.as_slice()[j]
        );
    }
}

#[test]
fn carrying_the_payload_sags_further() {
    let arm = common::articulated(false);
    let resting = |closed: bool| {
        let plan = plan_task(&arm, &reach_task(0.5, closed)).expect("plannable");
        let run = dry_run(&arm, &plan, plan.timings(), &DryRunOptions::default()).expect("runs");
        run.waypoints[1].resting_error
    };
    assert!(resting(true) > resting(false));
}

#[test]
fn timings_out_of_order_are_refused() {
    let arm = common::articulated(false);
    let plan = plan_task(&arm, &reach_task(1.0, false)).expect("plannable");
    let mut timings = plan.timings().to_vec();
    timings.swap(1, 2);
    let result = dry_run(&arm, &plan, &timings, &DryRunOptions::default());
    assert!(
        matches!(result, Err(DryRunError::Timing { index: 2, .. })),
        "{result:?}"
    );
    let beyond = [WaypointTiming {
        arrival: 0.0,
        departure: plan.duration() + 1.0,
        stop: true,
        gripper_acts: None,
    }];
    assert!(dry_run(&arm, &plan, &beyond, &DryRunOptions::default()).is_err());
}

#[test]
fn shaping_a_lightly_damped_arm_cuts_its_overshoot() {
    // ZV shaping (Singer & Seering 1990) designed for each joint's predicted ωn and ζ: the
    // residual ringing of a quick move drops; the run lasts longer by the shaper's length.
    let arm = common::articulated(false);
    let mut task = reach_task(1.0, false);
    task.model.damping_ratio = 0.05;
    let plain = plan_task(&arm, &task).expect("plannable");
    task.shaping = Some(armwright_trajectory::ShaperKind::Zvd);
    let shaped = plan_task(&arm, &task).expect("plannable");
    assert_eq!(shaped.shaped_runs(), 2);
    assert!(shaped.duration() > plain.duration());
    let options = DryRunOptions {
        servo: task.model.clone(),
        ..DryRunOptions::default()
    };
    let ringing = |plan: &armwright_trajectory::TaskPlan| {
        dry_run(&arm, plan, plan.timings(), &options)
            .expect("runs")
            .worst_overshoot()
    };
    let (before, after) = (ringing(&plain), ringing(&shaped));
    assert!(before > 1e-4, "the plain move rings: {before} m");
    assert!(after < 0.5 * before, "shaped {after} m vs plain {before} m");
    // The shaped plan still starts and ends where the waypoints are.
    let mut end = vec![0.0; arm.joint_count()];
    shaped.positions_at(shaped.duration(), &mut end);
    let last = &task.waypoints[2].positions;
    assert!(
        end.iter().zip(last).all(|(a, b)| (a - b).abs() < 1e-9),
        "{end:?}"
    );
}

/// Open at the first stop, closed at the second (the gripper acts there), dwelling `dwell` s.
fn pick_task(dwell: f64) -> Task {
    let mut task = reach_task(0.6, false);
    task.waypoints[1].gripper_closed = true;
    task.waypoints[1].dwell = dwell;
    task.waypoints[2].gripper_closed = true;
    task
}

#[test]
fn the_gripper_acts_late_in_the_dwell_and_only_where_it_changes_state() {
    let arm = common::articulated(false);
    let plan = plan_task(&arm, &pick_task(0.5)).expect("plannable");
    let timings = plan.timings();
    assert_eq!(timings[0].gripper_acts, None);
    assert_eq!(timings[2].gripper_acts, None);
    let moment = timings[1]
        .gripper_acts
        .expect("the gripper closes at the pick");
    let expected = timings[1].departure - armwright_trajectory::GRIPPER_TIME;
    assert!((moment - expected).abs() < 1e-12);
    // The payload counts from then.
    assert_eq!(plan.payload_at(moment - 1e-3), 0.0);
    assert_eq!(plan.payload_at(moment + 1e-3), arm.payload_mass());
    // A dwell shorter than the gripper's time: it acts on arrival.
    let plan = plan_task(&arm, &pick_task(0.05)).expect("plannable");
    assert_eq!(
        plan.timings()[1].gripper_acts,
        Some(plan.timings()[1].arrival)
    );
}

#[test]
fn a_gripper_acting_on_arrival_finds_the_arm_unsettled_and_a_long_dwell_settles_it() {
    let arm = common::articulated(false);
    let options = DryRunOptions::default();
    let run_with = |dwell: f64| {
        let plan = plan_task(&arm, &pick_task(dwell)).expect("plannable");
        dry_run(&arm, &plan, plan.timings(), &options).expect("runs")
    };
    let hasty = run_with(0.0);
    assert!(
        hasty.waypoints[1].gripper_unsettled(),
        "{:?}",
        hasty.waypoints[1]
    );
    assert_eq!(hasty.unsettled_gripper_stops(), vec![1]);
    let patient = run_with(1.5);
    let pick = &patient.waypoints[1];
    assert!(pick.settled && !pick.gripper_unsettled(), "{pick:?}");
    // Settled before the gripper acted: within the 1.3 s between arrival and the gripper.
    let settle = pick.settle_time.expect("a settle time");
    assert!(
        settle <= 1.5 - armwright_trajectory::GRIPPER_TIME,
        "{settle}"
    );
    assert!(patient.unsettled_gripper_stops().is_empty());
}

#[test]
fn at_rest_the_simulated_torque_use_is_the_commanded_holding_torque_use() {
    // One basis: the dry run's torque use (the motor effort, mean over a pulse frame, over the
    // derated stall torque) and the plan's (inverse dynamics over the derated stall torque)
    // meet at rest, where both are the holding torque, give or take dry friction.
    let arm = common::articulated(false);
    let mut task = reach_task(0.3, true);
    for w in &mut task.waypoints {
        w.dwell = 2.0;
    }
    let plan = plan_task(&arm, &task).expect("plannable");
    let derating = 0.5;
    let options = DryRunOptions {
        derating,
        ..DryRunOptions::default()
    };
    let run = dry_run(&arm, &plan, plan.timings(), &options).expect("runs");
    let last = run.trace.len() - 1;
    let n = arm.joint_count();
    let rest = run.trace.actual_at(last);
    let gravity = armwright_kinematics::gravity_torques(&arm, rest, arm.payload_mass()).unwrap();
    let commanded = armwright_kinematics::torque_use(&arm, &gravity, derating);
    for j in 0..n {
        let model = ServoModel::of_joint(&arm.joints()[j], &options.servo);
        let frame: f64 = (last - 19..=last)
            .map(|k| run.trace.effort_share[k * n + j].abs())
            .sum::<f64>()
            / 20.0;
        let simulated = frame / derating;
        let slack = (model.dry_friction / model.stall_effort + 2e-3) / derating;
        assert!(
            (simulated - commanded.as_slice()[j]).abs() <= slack,
            "joint {j}: simulated {simulated} vs commanded {}",
            commanded.as_slice()[j]
        );
    }
    // The last stop's figure covers its dwell, so it is at least the holding share.
    let held = commanded.max_abs();
    let last_stop = run.waypoints.last().unwrap();
    assert!(
        last_stop.peak_torque_use >= held - 0.05,
        "{} < {held}",
        last_stop.peak_torque_use
    );
}
