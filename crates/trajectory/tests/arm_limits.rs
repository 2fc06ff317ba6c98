//! Limits taken from the arm: the overrides a scene gives replace only their own joint's limit.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

use armwright_test_support::arms as common;

use armwright_trajectory::{LimitSettings, ServoModelOptions, limits_from_arm};

#[test]
fn jerk_is_acceleration_over_the_jerk_time_unless_a_joint_sets_its_own() {
    let arm = common::scara();
    let poses = vec![arm.home_pose()];
    let model = ServoModelOptions::default();
    let defaults = LimitSettings::default();
    let plain = limits_from_arm(&arm, &poses, 0.0, &defaults, &model).expect("limits");
    for limits in &plain {
        assert!((limits.jerk - limits.acceleration / 0.05).abs() <= 1e-9 * limits.jerk);
    }
    let mut settings = LimitSettings::default();
    settings.jerk_override[1] = Some(123.0);
    let overridden = limits_from_arm(&arm, &poses, 0.0, &settings, &model).expect("limits");
    for (joint, (plain, overridden)) in plain.iter().zip(&overridden).enumerate() {
        let expected_jerk = if joint == 1 { 123.0 } else { plain.jerk };
        assert_eq!(overridden.jerk, expected_jerk, "joint {joint}");
        assert_eq!(overridden.velocity, plain.velocity);
        assert_eq!(overridden.acceleration, plain.acceleration);
    }
}
