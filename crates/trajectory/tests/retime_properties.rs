//! Property: retiming either meets its target — the retimed plan keeps every joint within its
//! limits and the servo model's dry run of it stays under the overshoot and torque target — or
//! says which waypoint cannot meet it and why. Never a half-result.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

use armwright_test_support::arms as common;

use armwright_kinematics::Arm;
use armwright_trajectory::{
    DryRunOptions, JointState, LimitSettings, Planner, ProfileShape, RetimeError, RetimeTarget,
    SegmentKind, ServoModelOptions, Task, TaskPlanner, TaskWaypoint, dry_run, plan_task, retime,
};
use proptest::prelude::*;

/// The built-in test arms: articulated with and without a roll joint, and the horizontal arm
/// with a sliding lift.
fn arm(which: u8) -> Arm {
    match which % 3 {
        0 => common::articulated(false),
        1 => common::articulated(true),
        _ => common::scara(),
    }
}

/// 3 to 5 waypoints within ±0.4 rad (±40 % of the lift's travel) of the middle of every joint's
/// range, each a stop
/// or (inside the sequence) a pass-through, with random speed shares, dwells and gripper states.
fn task(arm: &Arm, seed: u64, count: usize) -> Task {
    let mut rng = common::Seeded::new(seed);
    let centre: Vec<f64> = arm
        .joints()
        .iter()
        .map(|joint| 0.5 * (joint.min + joint.max))
        .collect();
    let waypoints = (0..count)
        .map(|index| TaskWaypoint {
            positions: arm
                .joints()
                .iter()
                .zip(&centre)
                .map(|(joint, c)| {
                    let span = 0.4_f64.min(0.4 * (joint.max - joint.min) / 2.0);
                    (c + rng.uniform(-span, span)).clamp(joint.min, joint.max)
                })
                .collect(),
            stop: index == 0 || index + 1 == count || rng.uniform(0.0, 1.0) < 0.6,
            dwell: rng.uniform(0.0, 0.3),
            speed_share: rng.uniform(0.3, 1.0),
            gripper_closed: rng.uniform(0.0, 1.0) < 0.5,
            straight: false,
            shape: if rng.uniform(0.0, 1.0) < 0.5 {
                ProfileShape::DoubleS
            } else {
                ProfileShape::Trapezoid
            },
        })
        .collect();
    Task {
        waypoints,
        limits: LimitSettings::default(),
        model: ServoModelOptions::default(),
        shaping: None,
    }
}

proptest! {
    // Each case retimes a short sequence a dozen times over; a few dozen keep this to seconds.
    #![proptest_config(ProptestConfig::with_cases(24))]

    #[test]
    fn retimed_sequences_meet_the_target_or_name_the_waypoint_that_cannot(
        which in 0u8..3,
        seed in any::<u64>(),
        count in 3usize..=5,
        max_overshoot_mm in 0.02f64..3.0,
        derating in 0.6f64..=1.0,
    ) {
        let arm = arm(which);
        let task = task(&arm, seed, count);
        prop_assume!(plan_task(&arm, &task).is_ok());
        let planner = TaskPlanner { arm: &arm, task: &task };
        let target = RetimeTarget {
            max_overshoot: max_overshoot_mm * 1e-3,
            derating,
            // The slowest share tried; kept above the default so an unreachable case ends soon.
            min_speed_share: 0.2,
            ..RetimeTarget::default()
        };
        let options = DryRunOptions::default();
        match retime(&arm, &planner, &task.timing(), &target, &options, |_| true) {
            Ok(retimed) => {
                // The dry run of the timing found is the `after` reported, and meets the target.
                let (plan, timings) = planner.plan(&retimed.timing).expect("the timing plans");
                let check = dry_run(&arm, &plan, &timings, &DryRunOptions {
                    derating,
                    ..options.clone()
                })
                .expect("it runs");
                prop_assert_eq!(&check, &retimed.after);
                prop_assert!(
                    check.worst_overshoot() <= target.max_overshoot,
                    "overshoot {} m over the target {} m",
                    check.worst_overshoot(),
                    target.max_overshoot
                );
                prop_assert!(check.worst_torque_use() <= 1.0, "torque use {}", check.worst_torque_use());
                // Wherever the gripper acts, the tool point has settled first.
                prop_assert!(
                    check.unsettled_gripper_stops().is_empty(),
                    "unsettled gripper stops {:?}", check.unsettled_gripper_stops()
                );
                // A start that already met the target is never made slower.
                if retimed.already_met {
                    prop_assert!(retimed.after.cycle_time <= retimed.before.cycle_time);
                }
                // Sampled every 1 ms, no joint exceeds its velocity or acceleration limit, scaled
                // by the speed share of the move it is on.
                let sequence = plan.sequence();
                let limits = plan.limits();
                let n = arm.joint_count();
                let mut states = vec![JointState::default(); n];
                let samples = (sequence.duration() / 1e-3).ceil() as usize;
                for k in 0..=samples {
                    let t = (k as f64 * 1e-3).min(sequence.duration());
                    let segment = &sequence.segments()[sequence.segment_at(t)];
                    let share = match segment.kind {
                        SegmentKind::Move { to_waypoint, .. } => retimed.timing.speed_share[to_waypoint],
                        SegmentKind::Dwell { .. } => 0.0,
                    };
                    sequence.states_at(t, &mut states);
                    for (j, state) in states.iter().enumerate() {
                        let slack = 1.0 + 1e-9;
                        prop_assert!(
                            state.velocity.abs() <= limits[j].velocity * share * slack + 1e-12,
                            "joint {} at {} s: velocity {} over {}", j, t, state.velocity, limits[j].velocity * share
                        );
                        prop_assert!(
                            state.acceleration.abs() <= limits[j].acceleration * share * slack + 1e-12,
                            "joint {} at {} s: acceleration {} over {}", j, t, state.acceleration, limits[j].acceleration * share
                        );
                    }
                }
            }
            Err(RetimeError::Unreachable { waypoint, speed_share, overshoot, torque_use, unsettled }) => {
                // Names a stop of the sequence and the figures that miss there.
                prop_assert!(waypoint < count);
                prop_assert!(waypoint == 0 || waypoint + 1 == count || task.waypoints[waypoint].stop);
                prop_assert!(speed_share >= target.min_speed_share && speed_share <= 1.0);
                prop_assert!(
                    overshoot > target.max_overshoot * 0.95 || torque_use > 0.95 || unsettled,
                    "waypoint {} reported as missing with {} m and {} torque use", waypoint, overshoot, torque_use
                );
            }
            Err(other) => prop_assert!(false, "not a reason about the target: {}", other),
        }
    }
}
