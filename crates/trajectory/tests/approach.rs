//! The approach and park moves: where they start and end, the hold before the move, the speed
//! cap between any two samples (property over random start poses), and one clock for the whole
//! stream.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

use armwright_test_support::arms as common;

use armwright_trajectory::{
    ApproachStart, CommandedMotion, LimitSettings, PlanError, ProfileShape, SequenceError,
    ServoModelOptions, ShaperKind, Task, TaskWaypoint, plan_approach, plan_park, plan_task,
    streamed_samples,
};
use proptest::prelude::*;

fn waypoint(positions: &[f64], gripper_closed: bool) -> TaskWaypoint {
    TaskWaypoint {
        positions: positions.to_vec(),
        stop: true,
        dwell: 0.2,
        speed_share: 0.8,
        gripper_closed,
        straight: false,
        shape: ProfileShape::DoubleS,
    }
}

fn task(shaping: Option<ShaperKind>) -> Task {
    Task {
        waypoints: vec![
            waypoint(&[0.0, 0.3, -0.5, 0.0], false),
            waypoint(&[0.6, 0.9, -1.1, 0.2], true),
            waypoint(&[-0.4, 0.5, -0.3, -0.2], false),
        ],
        limits: LimitSettings::default(),
        model: ServoModelOptions::default(),
        shaping,
    }
}

fn close(a: &[f64], b: &[f64], tolerance: f64) -> bool {
    a.len() == b.len() && a.iter().zip(b).all(|(x, y)| (x - y).abs() <= tolerance)
}

#[test]
fn the_approach_holds_its_start_then_ends_at_the_first_waypoint() {
    let arm = common::articulated(false);
    let task = task(None);
    let start = ApproachStart {
        positions: vec![-0.8, 1.0, -1.4, 0.5],
        gripper_closed: true,
        hold: 0.6,
    };
    let approach = plan_approach(&arm, &task, &start, 0.15).expect("plannable");
    let plan = approach.plan();
    let mut at = vec![0.0; 4];
    for t in [0.0, 0.3, 0.6] {
        plan.positions_at(t, &mut at);
        assert!(close(&at, &start.positions, 1e-12), "{t}: {at:?}");
    }
    plan.positions_at(approach.duration(), &mut at);
    assert!(close(&at, &task.waypoints[0].positions, 1e-9), "{at:?}");
    // The gripper keeps its state until the arrival.
    assert!(plan.gripper_closed_at(0.0));
    assert!(plan.gripper_closed_at(approach.duration() - 0.05));
    assert!(!plan.gripper_closed_at(approach.duration()));
    // Slower than the same move at full share: the speed caps are 15 % of the limits.
    let fast = plan_approach(&arm, &task, &start, 1.0).expect("plannable");
    assert!(approach.duration() - 0.6 > 2.0 * (fast.duration() - 0.6));
    for (cap, limits) in approach.speed_caps().iter().zip(plan.limits()) {
        assert!((cap - 0.15 * limits.velocity).abs() < 1e-12);
    }
}

#[test]
fn a_speed_share_outside_0_to_1_is_refused() {
    let arm = common::articulated(false);
    let start = ApproachStart {
        positions: vec![0.0; 4],
        gripper_closed: false,
        hold: 0.0,
    };
    for bad in [0.0, -0.1, 1.5, f64::NAN] {
        assert!(matches!(
            plan_approach(&arm, &task(None), &start, bad),
            Err(PlanError::Sequence(SequenceError::BadSpeedShare { .. }))
        ));
    }
    let empty = Task {
        waypoints: Vec::new(),
        ..task(None)
    };
    assert!(plan_approach(&arm, &empty, &start, 0.15).is_err());
}

#[test]
fn the_streamed_samples_run_on_one_clock_from_the_start_to_the_rest_pose() {
    let arm = common::articulated(false);
    let task = task(Some(ShaperKind::Zv));
    let plan = plan_task(&arm, &task).expect("plannable");
    let start = ApproachStart {
        positions: vec![0.5, 0.6, -0.9, -0.3],
        gripper_closed: false,
        hold: 0.0,
    };
    let approach = plan_approach(&arm, &task, &start, 0.15).expect("plannable");
    let rest = vec![0.0, 0.2, -0.4, 0.0];
    let park = plan_park(&arm, &task, &rest, 0.15).expect("plannable");
    let rate_hz = 50.0;
    let samples =
        streamed_samples(Some(&approach), &plan, Some(&park), rate_hz).expect("rate in range");
    let approach_frames = approach.plan().sampler(rate_hz).expect("rate").len() - 1;
    let plan_frames = plan.sampler(rate_hz).expect("rate").len();
    let park_frames = park.plan().sampler(rate_hz).expect("rate").len() - 1;
    assert_eq!(samples.len(), approach_frames + plan_frames + park_frames);
    assert_eq!(samples[0].time, 0.0);
    assert!(close(&samples[0].positions, &start.positions, 1e-12));
    let first = &samples[approach_frames];
    assert!(close(&first.positions, &task.waypoints[0].positions, 1e-12));
    assert!((first.time - approach_frames as f64 / rate_hz).abs() < 1e-12);
    let last = samples.last().expect("samples");
    assert!(close(&last.positions, &rest, 1e-9), "{:?}", last.positions);
    assert!(samples.windows(2).all(|w| w[1].time > w[0].time));
    // Without an approach or park, the stream is the plan's own samples.
    let bare = streamed_samples(None, &plan, None, rate_hz).expect("rate");
    assert_eq!(
        bare,
        plan.sampler(rate_hz).expect("rate").collect::<Vec<_>>()
    );
    assert!(matches!(
        streamed_samples(Some(&approach), &plan, None, 20.0),
        Err(SequenceError::RateOutOfRange { .. })
    ));
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(48))]

    /// From any pose within the joint limits, no step between two samples of the approach
    /// moves a joint further than its speed cap × the sample period.
    #[test]
    fn no_approach_step_exceeds_the_speed_cap(
        seed in any::<u64>(),
        share in 0.05_f64..0.6,
        rate_hz in prop::sample::select(vec![50.0, 100.0, 333.0]),
        shaped in any::<bool>(),
    ) {
        let arm = common::articulated(false);
        let task = task(shaped.then_some(ShaperKind::Zvd));
        let mut rng = common::Seeded::new(seed);
        let start = ApproachStart {
            positions: rng.pose(&arm),
            gripper_closed: false,
            hold: 0.0,
        };
        let approach = plan_approach(&arm, &task, &start, share).expect("plannable");
        let caps = approach.speed_caps();
        let samples: Vec<_> = approach.plan().sampler(rate_hz).expect("rate").collect();
        prop_assert!(close(&samples[0].positions, &start.positions, 1e-12));
        for pair in samples.windows(2) {
            let dt = pair[1].time - pair[0].time;
            for (joint, cap) in caps.iter().enumerate() {
                let step = (pair[1].positions[joint] - pair[0].positions[joint]).abs();
                prop_assert!(
                    step <= cap * dt * (1.0 + 1e-9) + 1e-12,
                    "joint {joint} moved {step} in {dt} s, cap {cap}"
                );
            }
        }
    }
}
