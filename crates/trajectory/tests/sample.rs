//! The one sampler: a task plan at a fixed rate — count, ends, order, the allowed rates, the
//! gripper state of the last waypoint reached, and the shaped plan's end.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

use armwright_test_support::arms as common;

use armwright_trajectory::{
    CommandedMotion, LimitSettings, MAX_SAMPLE_RATE_HZ, MIN_SAMPLE_RATE_HZ, ProfileShape,
    SequenceError, ServoModelOptions, ShaperKind, Task, TaskWaypoint, plan_task,
};
use proptest::prelude::*;

fn waypoint(positions: &[f64], stop: bool, gripper_closed: bool) -> TaskWaypoint {
    TaskWaypoint {
        positions: positions.to_vec(),
        stop,
        dwell: 0.2,
        speed_share: 0.8,
        gripper_closed,
        straight: false,
        shape: ProfileShape::DoubleS,
    }
}

/// Open at the start, closed from the second waypoint (a pick), open again at the last.
fn pick_and_place(shaping: Option<ShaperKind>) -> Task {
    Task {
        waypoints: vec![
            waypoint(&[0.0, 0.3, -0.5, 0.0], true, false),
            waypoint(&[0.6, 0.9, -1.1, 0.2], true, true),
            waypoint(&[0.2, 0.7, -0.9, 0.1], false, true),
            waypoint(&[-0.4, 0.5, -0.3, -0.2], true, false),
        ],
        limits: LimitSettings::default(),
        model: ServoModelOptions::default(),
        shaping,
    }
}

#[test]
fn the_sampler_covers_the_plan_at_the_asked_rate() {
    let arm = common::articulated(false);
    let task = pick_and_place(None);
    let plan = plan_task(&arm, &task).expect("plannable");
    let duration = plan.duration();
    for rate_hz in [50.0, 333.0, 1000.0] {
        let sampler = plan.sampler(rate_hz).expect("in range");
        let expected = (duration * rate_hz).ceil() as usize + 1;
        assert_eq!(sampler.len(), expected);
        let samples: Vec<_> = sampler.collect();
        assert_eq!(samples.len(), expected);
        assert_eq!(samples[0].time, 0.0);
        assert_eq!(samples[0].positions, task.waypoints[0].positions);
        let last = samples.last().expect("samples");
        assert_eq!(last.time, duration);
        let end = &task.waypoints[3].positions;
        assert!(
            last.positions
                .iter()
                .zip(end)
                .all(|(a, b)| (a - b).abs() < 1e-12),
            "{:?}",
            last.positions
        );
        assert!(samples.windows(2).all(|w| w[1].time > w[0].time));
        assert!(samples.iter().all(|s| s.positions.len() == 4));
    }
    assert!(plan.sampler(MIN_SAMPLE_RATE_HZ).is_ok() && plan.sampler(MAX_SAMPLE_RATE_HZ).is_ok());
    for bad in [49.9, 1000.1, f64::NAN, 0.0] {
        assert!(matches!(
            plan.sampler(bad),
            Err(SequenceError::RateOutOfRange { .. })
        ));
    }
}

#[test]
fn every_sample_carries_the_gripper_state_of_the_last_waypoint_reached() {
    // A change of state counts from when the gripper acts there (late in the dwell), not from
    // the arrival.
    let arm = common::articulated(false);
    let task = pick_and_place(None);
    let plan = plan_task(&arm, &task).expect("plannable");
    let arrivals: Vec<f64> = plan
        .timings()
        .iter()
        .map(|t| t.gripper_acts.unwrap_or(t.arrival))
        .collect();
    let mut seen = [false; 2];
    for sample in plan.sampler(200.0).expect("in range") {
        let reached = arrivals
            .iter()
            .rposition(|&arrival| arrival <= sample.time)
            .expect("the first waypoint is reached at 0 s");
        assert_eq!(
            sample.gripper_closed, task.waypoints[reached].gripper_closed,
            "at {} s",
            sample.time
        );
        seen[usize::from(sample.gripper_closed)] = true;
    }
    assert_eq!(seen, [true, true], "both states occur");
}

#[test]
fn a_shaped_plan_is_sampled_to_its_shaped_end() {
    let arm = common::articulated(false);
    let plain = plan_task(&arm, &pick_and_place(None)).expect("plannable");
    let shaped = plan_task(&arm, &pick_and_place(Some(ShaperKind::Zv))).expect("plannable");
    assert!(shaped.duration() > plain.duration());
    let last = shaped
        .sampler(100.0)
        .expect("in range")
        .last()
        .expect("samples");
    assert_eq!(last.time, shaped.duration());
    assert!(!last.gripper_closed);
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(64))]
    #[test]
    fn any_rate_is_sampled_or_refused_without_panicking(rate_hz in -10.0..2000.0f64) {
        let arm = common::articulated(false);
        let plan = plan_task(&arm, &pick_and_place(None)).expect("plannable");
        match plan.sampler(rate_hz) {
            Ok(sampler) => prop_assert!((MIN_SAMPLE_RATE_HZ..=MAX_SAMPLE_RATE_HZ).contains(&rate_hz) && sampler.len() >= 2),
            Err(error) => prop_assert_eq!(error, SequenceError::RateOutOfRange { rate_hz }),
        }
    }
}
