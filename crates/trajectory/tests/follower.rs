//! The follower: limits and travel hold for any target sequence (proptest, judged from the
//! positions it sends), and a step from rest takes the rest-to-rest double-S profile's time,
//! checked against our own profile and against `rsruckig`.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

use armwright_trajectory::{FollowJoint, Follower, JointLimits, JointMove, Profile};
use proptest::prelude::*;
use rsruckig::prelude::*;

const PERIOD: f64 = 0.02;

fn joint_strategy() -> impl Strategy<Value = FollowJoint> {
    (
        0.2..8.0_f64,
        0.5..60.0_f64,
        0.02..0.3_f64,
        0.5..10.0_f64,
        -3.0..0.0_f64,
        0.1..3.0_f64,
    )
        .prop_map(
            |(velocity, acceleration, jerk_time, servo_speed, min, span)| FollowJoint {
                limits: JointLimits::new(velocity, acceleration, acceleration / jerk_time),
                servo_speed,
                min,
                max: min + span,
            },
        )
}

/// Targets as shares of each joint's travel (some beyond it), each held for a number of ticks.
fn targets_strategy() -> impl Strategy<Value = Vec<(Vec<f64>, usize)>> {
    prop::collection::vec((prop::collection::vec(-0.3..1.3_f64, 3), 1usize..40), 1..25)
}

/// Largest |finite difference of order `order`| / period^order over `positions`.
fn largest_difference(positions: &[f64], order: usize) -> f64 {
    let mut values = positions.to_vec();
    for _ in 0..order {
        values = values.windows(2).map(|w| w[1] - w[0]).collect();
    }
    values.iter().fold(0.0, |worst: f64, d| worst.max(d.abs())) / PERIOD.powi(order as i32)
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(256))]

    #[test]
    fn never_exceeds_the_speed_cap_the_limits_or_the_travel(
        joints in prop::collection::vec(joint_strategy(), 3),
        start_share in prop::collection::vec(0.0..1.0_f64, 3),
        share in 0.02..1.0_f64,
        targets in targets_strategy(),
    ) {
        let start: Vec<f64> = joints
            .iter()
            .zip(&start_share)
            .map(|(joint, s)| joint.min + s * (joint.max - joint.min))
            .collect();
        let mut follower = Follower::new(&joints, &start, share, PERIOD).unwrap();
        let mut sent: Vec<Vec<f64>> = vec![start.clone()];
        let mut last_target = start.clone();
        for (shares, ticks) in &targets {
            let target: Vec<f64> = joints
                .iter()
                .zip(shares)
                .map(|(joint, s)| joint.min + s * (joint.max - joint.min))
                .collect();
            follower.set_target(&target).unwrap();
            last_target = target;
            for _ in 0..*ticks {
                sent.push(follower.tick().to_vec());
            }
        }
        // The last target, held, is reached and kept.
        let mut held = 0;
        while !follower.at_rest_on_target() {
            sent.push(follower.tick().to_vec());
            held += 1;
            prop_assert!(held < 20_000, "the last target was never reached");
        }
        for _ in 0..3 {
            sent.push(follower.tick().to_vec());
        }
        for (index, joint) in joints.iter().enumerate() {
            let cap = joint.limits_at(share);
            let path: Vec<f64> = sent.iter().map(|pose| pose[index]).collect();
            let slack = 1.0 + 1e-6;
            prop_assert!(cap.velocity <= joint.servo_speed * share * slack);
            let velocity = largest_difference(&path, 1);
            prop_assert!(velocity <= cap.velocity * slack + 1e-9,
                "joint {index}: {velocity} rad/s over the cap {}", cap.velocity);
            let acceleration = largest_difference(&path, 2);
            prop_assert!(acceleration <= cap.acceleration * slack + 1e-6,
                "joint {index}: {acceleration} rad/s² over {}", cap.acceleration);
            let jerk = largest_difference(&path, 3);
            prop_assert!(jerk <= cap.jerk * slack + 1e-3,
                "joint {index}: {jerk} rad/s³ over {}", cap.jerk);
            for state in follower.states() {
                prop_assert!(state.velocity.abs() <= 1e-9);
            }
            for &position in &path {
                prop_assert!(position >= joint.min - 1e-9 && position <= joint.max + 1e-9,
                    "joint {index}: {position} outside {}..{}", joint.min, joint.max);
            }
            let wanted = last_target[index].clamp(joint.min, joint.max);
            prop_assert_eq!(*path.last().unwrap(), wanted);
        }
    }
}

/// Ticks until the follower, at rest at `from`, is at rest on `to`.
fn ticks_to_reach(joint: FollowJoint, share: f64, from: f64, to: f64) -> usize {
    let mut follower = Follower::new(&[joint], &[from], share, PERIOD).unwrap();
    follower.set_target(&[to]).unwrap();
    let mut ticks = 0;
    while !follower.at_rest_on_target() {
        follower.tick();
        ticks += 1;
        assert!(ticks < 100_000);
    }
    ticks
}

/// The seeded cases of the step checks: joint, share, from, to.
fn step_cases() -> Vec<(FollowJoint, f64, f64, f64)> {
    let mut state: u64 = 0x5EED_F011;
    let mut uniform = |low: f64, high: f64| {
        state ^= state << 13;
        state ^= state >> 7;
        state ^= state << 17;
        low + (state >> 11) as f64 / (1u64 << 53) as f64 * (high - low)
    };
    (0..300)
        .map(|_| {
            let acceleration = uniform(0.5, 60.0);
            let joint = FollowJoint {
                limits: JointLimits::new(
                    uniform(0.2, 8.0),
                    acceleration,
                    acceleration / uniform(0.02, 0.3),
                ),
                servo_speed: uniform(0.5, 10.0),
                min: -3.0,
                max: 3.0,
            };
            (
                joint,
                uniform(0.05, 1.0),
                uniform(-3.0, 3.0),
                uniform(-3.0, 3.0),
            )
        })
        .collect()
}

#[test]
fn a_step_takes_the_rest_to_rest_double_s_time() {
    // Our own double-S profile (Biagiotti & Melchiorri 2008, ch. 3) for the same step and the
    // capped limits: the follower lands on the first tick at or after its end.
    for (joint, share, from, to) in step_cases() {
        let limits = joint.limits_at(share);
        let profile = Profile::double_s(&JointMove::rest_to_rest(from, to), &limits).unwrap();
        let ticks = ticks_to_reach(joint, share, from, to);
        let expected = (profile.duration() / PERIOD - 1e-9).ceil() as usize;
        assert!(
            ticks.abs_diff(expected) <= 1,
            "{joint:?} at {share}, {from} → {to}: {ticks} ticks, the profile takes {expected}"
        );
    }
}

#[test]
fn a_step_takes_the_time_optimal_reference_time() {
    // Reference: rsruckig (crates.io), the time-optimal jerk-limited generator of Berscheid &
    // Kröger (RSS 2021): its rest-to-rest duration for the step, in whole ticks, within two.
    for (joint, share, from, to) in step_cases() {
        let limits = joint.limits_at(share);
        let mut input = InputParameter::<1>::new(None);
        input.current_position[0] = from;
        input.target_position[0] = to;
        input.max_velocity[0] = limits.velocity;
        input.max_acceleration[0] = limits.acceleration;
        input.max_jerk[0] = limits.jerk;
        let mut ruckig = Ruckig::<1, ThrowErrorHandler>::new(None, PERIOD);
        let mut trajectory = Trajectory::new(None);
        ruckig
            .calculate(&input, &mut trajectory)
            .expect("the reference plans a step");
        let reference = trajectory.get_duration();
        let ticks = ticks_to_reach(joint, share, from, to);
        let expected = (reference / PERIOD - 1e-9).ceil() as usize;
        assert!(
            ticks.abs_diff(expected) <= 2,
            "{from} → {to}: {ticks} ticks, the reference takes {reference} s"
        );
    }
}

#[test]
fn a_lower_share_slows_a_moving_joint_to_the_new_cap() {
    let joint = FollowJoint {
        limits: JointLimits::new(3.0, 12.0, 240.0),
        servo_speed: 5.0,
        min: -3.0,
        max: 3.0,
    };
    let mut follower = Follower::new(&[joint], &[-2.5], 1.0, PERIOD).unwrap();
    follower.set_target(&[2.5]).unwrap();
    for _ in 0..40 {
        follower.tick();
    }
    let fast = follower.states().next().unwrap().velocity;
    assert!(fast > 2.0, "moving at {fast} rad/s");
    follower.set_share(0.1).unwrap();
    let cap = joint.limits_at(0.1).velocity;
    let mut ticks = 0;
    while follower.states().next().unwrap().velocity > cap * (1.0 + 1e-9) {
        follower.tick();
        ticks += 1;
        assert!(ticks < 100, "still over the new cap after {ticks} ticks");
    }
    let mut previous = follower.positions()[0];
    while !follower.at_rest_on_target() {
        let now = follower.tick()[0];
        assert!((now - previous) / PERIOD <= cap * (1.0 + 1e-9));
        previous = now;
    }
    assert_eq!(follower.positions(), &[2.5]);
}

#[test]
fn halt_comes_to_rest_without_reversing() {
    let joint = FollowJoint {
        limits: JointLimits::new(3.0, 12.0, 240.0),
        servo_speed: 5.0,
        min: -3.0,
        max: 3.0,
    };
    let mut follower = Follower::new(&[joint], &[0.0], 0.5, PERIOD).unwrap();
    follower.set_target(&[2.0]).unwrap();
    for _ in 0..10 {
        follower.tick();
    }
    follower.halt();
    let mut previous = follower.positions()[0];
    let mut ticks = 0;
    while !follower.at_rest_on_target() {
        let now = follower.tick()[0];
        assert!(now >= previous, "reversed from {previous} to {now}");
        previous = now;
        ticks += 1;
    }
    assert!(previous < 2.0, "stopped short of the old target");
    assert!(ticks < 30, "took {ticks} ticks to stop");
}
