//! Torque use: the share of each servo's derated rating a set of efforts needs.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

use armwright_test_support::arms as common;

use armwright_kinematics::{JointEfforts, gravity_torques, torque_use};
use common::{articulated, scara};
use proptest::prelude::*;

#[test]
fn half_the_stall_torque_at_half_derating_is_full_use() {
    // The test servo stalls at 1.96 N·m (a 20 kg·cm class servo, tests/common). Derated to 50 %,
    // 0.98 N·m uses all of it; −0.49 N·m uses half (the sign does not matter).
    let arm = articulated(false);
    let efforts = JointEfforts::from_slice(&[0.98, -0.49, 0.0, 1.96]);
    let share = torque_use(&arm, &efforts, 0.5);
    let expected = [1.0, 0.5, 0.0, 2.0];
    for (got, want) in share.as_slice().iter().zip(expected) {
        assert!((got - want).abs() < 1e-12, "{got} vs {want}");
    }
}

#[test]
fn a_prismatic_joint_is_rated_through_its_pinion() {
    // The lift's pinion has a 10 mm radius (drive ratio 0.01 m/rad): 1.96 N·m gives 196 N of
    // thrust (F = τ / r), 98 N derated to 50 %.
    let arm = scara();
    let efforts = JointEfforts::from_slice(&[0.0, 0.0, 49.0, 0.0]);
    let share = torque_use(&arm, &efforts, 0.5);
    assert!((share.as_slice()[2] - 0.5).abs() < 1e-12);
}

#[test]
fn no_rating_left_means_infinite_use_not_a_panic() {
    let arm = scara();
    let efforts = JointEfforts::from_slice(&[0.1, 0.0, 1.0, 0.0]);
    for derating in [0.0, -1.0, f64::NAN] {
        let share = torque_use(&arm, &efforts, derating);
        assert_eq!(share.as_slice()[0], f64::INFINITY);
        assert_eq!(share.as_slice()[1], 0.0);
    }
}

#[test]
fn gravity_share_of_a_hanging_payload() {
    let arm = articulated(true);
    let holding = gravity_torques(&arm, &[0.0; 5], 0.05).unwrap();
    let share = torque_use(&arm, &holding, 0.8);
    for (index, (s, t)) in share.as_slice().iter().zip(holding.as_slice()).enumerate() {
        assert!((s - t.abs() / (1.96 * 0.8)).abs() < 1e-12, "joint {index}");
    }
    assert_eq!(share.len(), 5);
}

proptest! {
    #[test]
    fn any_efforts_and_derating_give_one_share_per_joint(
        efforts in prop::collection::vec(any::<f64>(), 0..12),
        derating in any::<f64>(),
    ) {
        let arm = articulated(false);
        let share = torque_use(&arm, &JointEfforts::from_slice(&efforts), derating);
        prop_assert_eq!(share.len(), efforts.len().min(4));
        for (s, e) in share.as_slice().iter().zip(&efforts) {
            prop_assert!(e.is_nan() || *s >= 0.0);
        }
    }
}
