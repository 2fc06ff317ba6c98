//! No function panics on any input, and what is accepted evaluates to finite numbers.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

use armwright_trajectory::{
    JointLimits, JointMove, Profile, ProfileShape, SecondOrder, SequenceWaypoint, Shaper,
    ShaperKind, WaypointKind, plan_sequence, synchronise,
};
use proptest::prelude::*;

/// Any f64 at all, with the awkward ones made common.
fn any_number() -> impl Strategy<Value = f64> {
    prop_oneof![
        Just(0.0),
        Just(-0.0),
        Just(f64::NAN),
        Just(f64::INFINITY),
        Just(f64::NEG_INFINITY),
        Just(f64::MIN_POSITIVE),
        Just(f64::MAX),
        Just(1e-300),
        -10.0..10.0_f64,
        any::<f64>(),
    ]
}

fn shape() -> impl Strategy<Value = ProfileShape> {
    prop_oneof![Just(ProfileShape::Trapezoid), Just(ProfileShape::DoubleS)]
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(2000))]

    #[test]
    fn profiles_accept_or_reject_anything_without_panicking(
        shape in shape(),
        numbers in prop::array::uniform7(any_number()),
        times in prop::array::uniform3(any_number()),
    ) {
        let [from, to, from_velocity, to_velocity, velocity, acceleration, jerk] = numbers;
        let joint_move = JointMove::passing(from, to, from_velocity, to_velocity);
        let limits = JointLimits::new(velocity, acceleration, jerk);
        if let Ok(profile) = Profile::fastest(shape, &joint_move, &limits) {
            for t in times {
                let state = profile.state_at(t);
                if profile.duration().is_finite() {
                    prop_assert!(state.position.is_finite() && state.velocity.is_finite());
                }
            }
            let _ = profile.stretched(times[0]);
            let _ = profile.stretched(profile.duration() * 2.0);
        }
        let _ = synchronise(shape, &[joint_move, joint_move], &[limits, limits]);
    }

    #[test]
    fn shapers_and_sequences_accept_or_reject_anything_without_panicking(
        numbers in prop::array::uniform6(any_number()),
        zvd in any::<bool>(),
    ) {
        let [frequency, damping, position, share, dwell, t] = numbers;
        if let Ok(plant) = SecondOrder::new(frequency, damping) {
            let _ = (plant.overshoot(), plant.settling_time_bound(share), plant.peak_time());
            let kind = if zvd { ShaperKind::Zvd } else { ShaperKind::Zv };
            if let Ok(shaper) = Shaper::new(kind, &plant) {
                let _ = shaper.residual_vibration(&plant);
            }
        }
        let waypoints = [
            SequenceWaypoint { positions: vec![0.0], kind: WaypointKind::Stop { dwell }, speed_share: 1.0 },
            SequenceWaypoint { positions: vec![position], kind: WaypointKind::PassThrough, speed_share: share },
            SequenceWaypoint { positions: vec![0.5], kind: WaypointKind::Stop { dwell: 0.0 }, speed_share: 1.0 },
        ];
        let limits = [JointLimits::new(1.0, 2.0, 5.0)];
        if let Ok(plan) = plan_sequence(ProfileShape::DoubleS, &waypoints, &limits) {
            let mut positions = [0.0];
            plan.positions_at(t, &mut positions);
            prop_assert!(positions[0].is_finite());
        }
    }
}
