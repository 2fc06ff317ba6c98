//! Sequence plans: continuity at segment boundaries, limits, exact waypoints, dwell.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

mod common;

use armwright_trajectory::{
    JointLimits, JointState, ProfileShape, SegmentKind, SequenceError, SequencePlan,
    SequenceWaypoint, WaypointKind, plan_sequence,
};
use common::check_sampled;
use proptest::prelude::*;

fn waypoint(positions: &[f64], kind: WaypointKind, speed_share: f64) -> SequenceWaypoint {
    SequenceWaypoint {
        positions: positions.to_vec(),
        kind,
        speed_share,
    }
}

const STOP: WaypointKind = WaypointKind::Stop { dwell: 0.0 };

fn states(plan: &SequencePlan, t: f64) -> Vec<JointState> {
    let mut states = vec![JointState::default(); plan.joint_count()];
    plan.states_at(t, &mut states);
    states
}

/// Every joint continuous at every segment boundary: changes across ±ε no larger than the
/// limit of the derivative allows. Waypoints are reached exactly.
fn check_plan(
    plan: &SequencePlan,
    waypoints: &[SequenceWaypoint],
    limits: &[JointLimits],
    shape: ProfileShape,
) -> Result<(), String> {
    let epsilon = 1e-7;
    for segment in plan.segments().iter().skip(1) {
        let t = segment.start;
        let (before, after) = (states(plan, t - epsilon), states(plan, t + epsilon));
        for (joint, ((b, a), l)) in before.iter().zip(&after).zip(limits).enumerate() {
            let span = 2.0 * epsilon * (1.0 + 1e-9);
            if (a.position - b.position).abs() > l.velocity * span + 1e-12 {
                return Err(format!("joint {joint} position jumps at {t} s"));
            }
            if (a.velocity - b.velocity).abs() > l.acceleration * span + 1e-9 {
                return Err(format!(
                    "joint {joint} velocity jumps at {t} s: {b:?} {a:?}"
                ));
            }
            if shape == ProfileShape::DoubleS
                && (a.acceleration - b.acceleration).abs() > l.jerk * span + 1e-6
            {
                return Err(format!("joint {joint} acceleration jumps at {t} s"));
            }
        }
    }
    for segment in plan.segments() {
        if let SegmentKind::Move { to_waypoint, .. } = segment.kind {
            let mut positions = vec![0.0; plan.joint_count()];
            segment
                .motion
                .positions_at(segment.motion.duration(), &mut positions);
            if positions != waypoints[to_waypoint].positions {
                return Err(format!("waypoint {to_waypoint} missed: {positions:?}"));
            }
            for profile in segment.motion.profiles() {
                check_sampled(profile)?;
                if profile.reverses() {
                    return Err(format!("a joint backs up past waypoint {to_waypoint}"));
                }
            }
        }
    }
    Ok(())
}

fn arm_limits() -> Vec<JointLimits> {
    vec![
        JointLimits::new(3.0, 12.0, 120.0),
        JointLimits::new(2.0, 8.0, 80.0),
        JointLimits::new(2.5, 10.0, 150.0),
    ]
}

#[test]
fn a_pick_and_place_passes_through_and_stops_where_asked() {
    let limits = arm_limits();
    let waypoints = [
        waypoint(&[0.0, 0.4, -0.3], WaypointKind::Stop { dwell: 0.25 }, 1.0),
        waypoint(&[0.5, 0.6, -0.5], WaypointKind::PassThrough, 0.8),
        waypoint(&[1.1, 0.9, -0.9], WaypointKind::Stop { dwell: 0.5 }, 0.8),
        waypoint(&[1.1, 0.5, -0.4], WaypointKind::PassThrough, 0.5),
        waypoint(&[0.2, 0.2, -0.6], STOP, 1.0),
    ];
    for shape in [ProfileShape::DoubleS, ProfileShape::Trapezoid] {
        let plan = plan_sequence(shape, &waypoints, &limits).expect("plannable");
        check_plan(&plan, &waypoints, &limits, shape).expect("continuous and exact");
        // Dwells at the start and at waypoint 2.
        let dwells: Vec<_> = plan
            .segments()
            .iter()
            .filter_map(|s| match s.kind {
                SegmentKind::Dwell { waypoint } => Some((waypoint, s.motion.duration())),
                SegmentKind::Move { .. } => None,
            })
            .collect();
        assert_eq!(dwells, vec![(0, 0.25), (2, 0.5)]);
        // Joints 0 and 1 move on through waypoint 1, so they pass it moving.
        let at_waypoint_1 = plan.segments()[1].start + plan.segments()[1].motion.duration();
        let passing = states(&plan, at_waypoint_1);
        assert!(
            passing[0].velocity > 0.0 && passing[1].velocity > 0.0,
            "{passing:?}"
        );
        // Flowing through is faster than stopping at every waypoint.
        let all_stops: Vec<_> = waypoints
            .iter()
            .map(|w| SequenceWaypoint {
                kind: match w.kind {
                    WaypointKind::PassThrough => STOP,
                    other => other,
                },
                ..w.clone()
            })
            .collect();
        let stopping = plan_sequence(shape, &all_stops, &limits).expect("plannable");
        assert!(plan.duration() < stopping.duration());
        // Joint 0 does not move on the way in to waypoint 3 and joint 2 turns around there:
        // both pass it at rest; joint 1 moves on.
        let at_waypoint_3 = plan
            .segments()
            .iter()
            .find(|s| {
                s.kind
                    == SegmentKind::Move {
                        from_waypoint: 2,
                        to_waypoint: 3,
                    }
            })
            .map(|s| s.start + s.motion.duration())
            .expect("move to waypoint 3");
        let passing = states(&plan, at_waypoint_3);
        assert_eq!((passing[0].velocity, passing[2].velocity), (0.0, 0.0));
        assert!(passing[1].velocity < 0.0);
    }
}

#[test]
fn speed_share_scales_the_limits_of_the_move() {
    let limits = arm_limits();
    let full = [
        waypoint(&[0.0, 0.0, 0.0], STOP, 1.0),
        waypoint(&[1.0, 1.0, 1.0], STOP, 1.0),
    ];
    let mut half = full.clone();
    half[1].speed_share = 0.5;
    let fast = plan_sequence(ProfileShape::DoubleS, &full, &limits).expect("ok");
    let slow = plan_sequence(ProfileShape::DoubleS, &half, &limits).expect("ok");
    // Velocity, acceleration and jerk limits all halved: strictly slower, limits respected.
    assert!(slow.duration() > fast.duration());
    for profile in slow.segments()[0].motion.profiles() {
        assert!(profile.limits().velocity <= 0.5 * 3.0);
        check_sampled(profile).expect("within the shared limits");
    }
}

#[test]
fn evaluation_finds_the_segment_by_binary_search() {
    let limits = arm_limits();
    let waypoints: Vec<_> = (0..40)
        .map(|k| {
            let x = f64::from(k).sin();
            let kind = if k % 3 == 0 {
                WaypointKind::Stop { dwell: 0.1 }
            } else {
                WaypointKind::PassThrough
            };
            waypoint(&[x, 0.5 * x, -x], kind, 0.9)
        })
        .collect();
    let plan = plan_sequence(ProfileShape::DoubleS, &waypoints, &limits).expect("ok");
    let segments = plan.segments();
    for k in 0..=1000 {
        let t = plan.duration() * f64::from(k) / 1000.0;
        let linear = segments
            .iter()
            .rposition(|s| s.start <= t)
            .unwrap_or_default();
        assert_eq!(plan.segment_at(t), linear);
    }
    assert_eq!(plan.segment_at(-1.0), 0);
    assert_eq!(plan.segment_at(1e9), segments.len() - 1);
    check_plan(&plan, &waypoints, &limits, ProfileShape::DoubleS).expect("continuous");
}

#[test]
fn bad_sequences_are_named() {
    let limits = arm_limits();
    let good = waypoint(&[0.0, 0.0, 0.0], STOP, 1.0);
    let plan = |waypoints: &[SequenceWaypoint]| {
        plan_sequence(ProfileShape::DoubleS, waypoints, &limits).map(|_| ())
    };
    assert_eq!(
        plan(std::slice::from_ref(&good)),
        Err(SequenceError::TooFewWaypoints { count: 1 })
    );
    let short = waypoint(&[0.0, 0.0], STOP, 1.0);
    assert!(matches!(
        plan(&[good.clone(), short]),
        Err(SequenceError::WrongJointCount {
            waypoint: 1,
            expected: 3,
            found: 2
        })
    ));
    let greedy = waypoint(&[1.0, 0.0, 0.0], STOP, 1.5);
    assert!(matches!(
        plan(&[good.clone(), greedy]),
        Err(SequenceError::BadSpeedShare { waypoint: 1, .. })
    ));
    let endless = waypoint(
        &[1.0, 0.0, 0.0],
        WaypointKind::Stop { dwell: f64::NAN },
        1.0,
    );
    assert!(matches!(
        plan(&[good.clone(), endless]),
        Err(SequenceError::BadDwell { waypoint: 1, .. })
    ));
    let mut bad_limits = limits.clone();
    bad_limits[1].acceleration = -1.0;
    let moved = waypoint(&[1.0, 0.0, 0.0], STOP, 1.0);
    assert!(matches!(
        plan_sequence(ProfileShape::DoubleS, &[good, moved], &bad_limits),
        Err(SequenceError::Move { waypoint: 1, .. })
    ));
}

fn random_sequence() -> impl Strategy<Value = (Vec<SequenceWaypoint>, Vec<JointLimits>, bool)> {
    (1_usize..=6, 2_usize..=7).prop_flat_map(|(joints, count)| {
        let limits = prop::collection::vec(
            (0.5..5.0_f64, 2.0..40.0_f64, 10.0..400.0_f64)
                .prop_map(|(v, a, j)| JointLimits::new(v, a, j)),
            joints,
        );
        let waypoints = prop::collection::vec(
            (
                prop::collection::vec(-2.0..2.0_f64, joints),
                any::<bool>(),
                0.0..0.3_f64,
                0.2..=1.0_f64,
            )
                .prop_map(|(positions, pass, dwell, speed_share)| SequenceWaypoint {
                    positions,
                    kind: if pass {
                        WaypointKind::PassThrough
                    } else {
                        WaypointKind::Stop { dwell }
                    },
                    speed_share,
                }),
            count,
        );
        (waypoints, limits, any::<bool>())
    })
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(48))]

    #[test]
    fn plan_evaluation_is_continuous_at_segment_boundaries(
        (waypoints, limits, trapezoid) in random_sequence()
    ) {
        let shape = if trapezoid { ProfileShape::Trapezoid } else { ProfileShape::DoubleS };
        let plan = plan_sequence(shape, &waypoints, &limits).expect("always plannable");
        prop_assert_eq!(check_plan(&plan, &waypoints, &limits, shape), Ok(()));
        let mut last = vec![0.0; plan.joint_count()];
        plan.positions_at(plan.duration(), &mut last);
        prop_assert_eq!(&last, &waypoints[waypoints.len() - 1].positions);
    }
}
