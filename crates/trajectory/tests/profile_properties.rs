//! Properties every profile keeps, on random moves and limits: it never exceeds its limits,
//! ends exactly on target, is never shorter than the bound its velocity limit sets (unless it
//! backs up), and a
//! stretched profile keeps all of that and takes exactly the time asked.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

mod common;

use armwright_trajectory::{JointLimits, JointMove, Profile, ProfileError, ProfileShape};
use common::check_sampled;
use proptest::prelude::*;

fn shape() -> impl Strategy<Value = ProfileShape> {
    prop_oneof![Just(ProfileShape::Trapezoid), Just(ProfileShape::DoubleS)]
}

prop_compose! {
    fn limits()(velocity in 0.5..5.0_f64, acceleration in 1.0..40.0_f64, jerk in 5.0..400.0_f64)
        -> JointLimits {
        JointLimits::new(velocity, acceleration, jerk)
    }
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(200))]

    #[test]
    fn a_profile_keeps_its_limits_and_ends_on_target(
        shape in shape(),
        limits in limits(),
        from in -2.0..2.0_f64,
        to in -2.0..2.0_f64,
        start_share in -1.0..1.0_f64,
        end_share in -1.0..1.0_f64,
        stretch in 1.0..3.0_f64,
    ) {
        let joint_move = JointMove::passing(
            from,
            to,
            start_share * limits.velocity,
            end_share * limits.velocity,
        );
        let profile = Profile::fastest(shape, &joint_move, &limits).expect("every move plans");
        // Lower bound: covering the distance at the velocity limit all the way.
        prop_assert!(profile.duration() >= (to - from).abs() / limits.velocity - 1e-12);
        if profile.reverses() {
            // Only a move too short for its boundary velocities backs up.
            let direction = (to - from).signum();
            prop_assert!(joint_move.from_velocity * direction > 0.0 || joint_move.to_velocity * direction > 0.0);
        }
        prop_assert_eq!(check_sampled(&profile), Ok(()));
        let wanted = profile.duration() * stretch;
        match profile.stretched(wanted) {
            Ok(stretched) => {
                prop_assert_eq!(stretched.duration(), wanted);
                prop_assert_eq!(check_sampled(&stretched), Ok(()));
            }
            Err(ProfileError::StretchUnreachable { .. }) => {
                // Documented only for moves with a boundary velocity.
                prop_assert!(joint_move.from_velocity != 0.0 || joint_move.to_velocity != 0.0);
            }
            Err(other) => prop_assert!(false, "{other}"),
        }
    }

    #[test]
    fn a_rest_to_rest_profile_can_always_be_stretched(
        shape in shape(),
        limits in limits(),
        from in -2.0..2.0_f64,
        to in -2.0..2.0_f64,
        stretch in 1.0..5.0_f64,
    ) {
        let profile = Profile::fastest(shape, &JointMove::rest_to_rest(from, to), &limits)
            .expect("rest to rest is always feasible");
        let stretched = profile.stretched(profile.duration() * stretch + 1e-3).expect("stretch");
        prop_assert_eq!(check_sampled(&stretched), Ok(()));
    }
}
