//! The one-pass diagonal of the mass matrix equals the per-joint Newton–Euler value.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

use armwright_test_support::arms as common;

use armwright_kinematics::{joint_inertia, joint_inertias};
use common::{Seeded, articulated, random_chain, scara};

#[test]
fn composite_bodies_give_the_newton_euler_diagonal() {
    let mut rng = Seeded::new(11);
    let mut arms = vec![scara(), articulated(false), articulated(true)];
    for count in 1..=8 {
        arms.push(random_chain(&mut rng, count));
    }
    for arm in &arms {
        for _ in 0..20 {
            let q = rng.pose(arm);
            let payload = rng.uniform(0.0, 0.1);
            let all = joint_inertias(arm, &q, payload).unwrap();
            for joint in 0..arm.joint_count() {
                let one = joint_inertia(arm, &q, payload, joint).unwrap();
                let got = all.as_slice()[joint];
                assert!(
                    (got - one).abs() <= 1e-12 * (1.0 + one.abs()),
                    "joint {joint}: {got} vs {one}"
                );
            }
        }
    }
}

#[test]
fn bad_input_is_refused() {
    let arm = scara();
    assert!(joint_inertias(&arm, &[0.0; 3], 0.0).is_err());
    assert!(joint_inertias(&arm, &[0.0; 4], -1.0).is_err());
}
