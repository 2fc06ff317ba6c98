//! Multi-joint synchronisation against the reference library `rsruckig` (crates.io; a Rust port
//! of the time-optimal jerk-limited generator of Berscheid & Kröger, RSS 2021), and the
//! properties every synchronised move keeps.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

mod common;

use armwright_test_support::seeded::XorShift;
use armwright_trajectory::{
    JointLimits, JointMove, MAX_JOINTS, Profile, ProfileError, ProfileShape, SyncError, synchronise,
};
use common::{ReferenceJoint, check_sampled, reference_duration};
use proptest::prelude::*;

/// Boundary velocities of the random problems.
#[derive(Debug, Clone, Copy, PartialEq)]
enum Boundaries {
    /// At rest at both ends.
    Rest,
    /// Passing both ends along the move, at up to half the velocity limit.
    Along,
    /// Passing both ends in either direction, at up to the velocity limit.
    EitherSign,
}

fn random_joints<const N: usize>(
    rng: &mut XorShift,
    boundaries: Boundaries,
) -> [ReferenceJoint; N] {
    std::array::from_fn(|_| {
        let from = rng.uniform(-2.5, 2.5);
        let to = rng.uniform(-2.5, 2.5);
        let velocity = rng.log_uniform(0.3, 8.0);
        let (from_velocity, to_velocity) = match boundaries {
            Boundaries::Rest => (0.0, 0.0),
            Boundaries::Along => {
                let direction = (to - from).signum();
                (
                    direction * rng.uniform(0.0, 0.5 * velocity),
                    direction * rng.uniform(0.0, 0.5 * velocity),
                )
            }
            Boundaries::EitherSign => (
                rng.uniform(-velocity, velocity),
                rng.uniform(-velocity, velocity),
            ),
        };
        ReferenceJoint {
            from,
            to,
            from_velocity,
            to_velocity,
            velocity,
            acceleration: rng.log_uniform(0.5, 40.0),
            jerk: rng.log_uniform(2.0, 400.0),
        }
    })
}

fn split(joints: &[ReferenceJoint]) -> (Vec<JointMove>, Vec<JointLimits>) {
    joints
        .iter()
        .map(|joint| {
            (
                JointMove::passing(joint.from, joint.to, joint.from_velocity, joint.to_velocity),
                JointLimits::new(joint.velocity, joint.acceleration, joint.jerk),
            )
        })
        .unzip()
}

#[test]
fn rest_to_rest_duration_equals_the_reference_synchronised_duration() {
    // Reference: rsruckig (crates.io), time synchronisation of all joints.
    let mut rng = XorShift::new(0x5EED_0101);
    let mut worst: f64 = 0.0;
    for index in 0..1_000 {
        let joints = random_joints::<6>(&mut rng, Boundaries::Rest);
        let (moves, limits) = split(&joints);
        let synced = synchronise(ProfileShape::DoubleS, &moves, &limits).expect("rest to rest");
        let reference = reference_duration(&joints).expect("reference solves it");
        worst = worst.max((synced.duration() - reference).abs());
        assert!(
            (synced.duration() - reference).abs() <= 1e-9,
            "ours {} s, reference {reference} s for {joints:?}",
            synced.duration()
        );
        if index < 100 {
            for profile in synced.profiles() {
                check_sampled(profile).expect("each joint within its limits");
            }
        }
    }
    for _ in 0..1_000 {
        let joints = random_joints::<3>(&mut rng, Boundaries::Rest);
        let (moves, limits) = split(&joints);
        let synced = synchronise(ProfileShape::DoubleS, &moves, &limits).expect("rest to rest");
        let reference = reference_duration(&joints).expect("reference solves it");
        worst = worst.max((synced.duration() - reference).abs());
        assert!((synced.duration() - reference).abs() <= 1e-9);
    }
    println!("synchronised rest to rest: largest difference from the reference {worst:e} s");
}

/// Compares the synchronised duration with the reference's on `count` random six-joint
/// problems; returns (problems where ours differs by more than 1e-9 s, largest difference in
/// s, problems where ours is shorter than the reference by more than 1e-9 s) and samples every
/// `sample_every`-th problem's profiles.
fn compare_with_reference(
    seed: u64,
    boundaries: Boundaries,
    count: usize,
    sample_every: usize,
) -> (usize, f64, usize) {
    let mut rng = XorShift::new(seed);
    let (mut differing, mut worst, mut shorter, mut moved) = (0, 0.0_f64, 0, 0);
    for index in 0..count {
        let joints = random_joints::<6>(&mut rng, boundaries);
        let (moves, limits) = split(&joints);
        let reference = reference_duration(&joints).expect("reference solves it");
        let synced = match synchronise(ProfileShape::DoubleS, &moves, &limits) {
            Ok(synced) => synced,
            Err(error) => {
                println!("{error} for {joints:?}, reference {reference} s");
                differing += 1;
                worst = f64::INFINITY;
                continue;
            }
        };
        let difference = synced.duration() - reference;
        if difference.abs() > 1e-9 {
            if differing < 5 {
                println!(
                    "ours {} s, reference {reference} s for {joints:?}",
                    synced.duration()
                );
            }
            differing += 1;
        }
        if difference < -1e-9 {
            shorter += 1;
        }
        worst = worst.max(difference.abs());
        // The first 1 000 moves whose duration was moved past a joint's refused durations are
        // sampled, as those profiles use the dips and slowed changes; the rest one in
        // `sample_every`.
        let slowest = moves
            .iter()
            .zip(&limits)
            .map(|(m, l)| Profile::double_s(m, l).map_or(f64::INFINITY, |p| p.duration()))
            .fold(0.0, f64::max);
        let was_moved = synced.duration() > slowest;
        moved += usize::from(was_moved);
        if index % sample_every == 0 || (was_moved && moved <= 1_000) {
            for profile in synced.profiles() {
                assert_eq!(profile.duration(), synced.duration());
                check_sampled(profile).unwrap_or_else(|e| panic!("{e} for {joints:?}"));
            }
        }
    }
    println!(
        "synchronised {boundaries:?}: {differing} of {count} differ from the reference by more \
         than 1e-9 s ({shorter} shorter), largest difference {worst:e} s; {moved} moved past \
         a joint's refused durations"
    );
    (differing, worst, shorter)
}

#[test]
fn pass_through_along_the_move_takes_the_reference_synchronised_duration() {
    // Reference: rsruckig (crates.io), time-optimal for any boundary state (issue 13: 20 of
    // 10 000 were longer before slowing a joint could dip, coast or brake through zero).
    let (differing, worst, shorter) =
        compare_with_reference(0x5EED_0102, Boundaries::Along, 100_000, 500);
    assert_eq!(
        (differing, shorter),
        (0, 0),
        "largest difference {worst:e} s"
    );
}

#[test]
fn pass_through_either_way_takes_the_reference_synchronised_duration() {
    // Reference: rsruckig (crates.io); boundary velocities of either sign up to the limit
    // (issue 13: 44 of 10 000 were longer before).
    let (differing, worst, shorter) =
        compare_with_reference(0x5EED_0103, Boundaries::EitherSign, 100_000, 500);
    assert_eq!(
        (differing, shorter),
        (0, 0),
        "largest difference {worst:e} s"
    );
}

#[test]
fn bad_inputs_are_named() {
    let limits = [JointLimits::new(1.0, 1.0, 1.0); MAX_JOINTS + 1];
    let moves = [JointMove::rest_to_rest(0.0, 1.0); MAX_JOINTS + 1];
    assert_eq!(
        synchronise(ProfileShape::DoubleS, &[], &[]),
        Err(SyncError::NoJoints)
    );
    assert_eq!(
        synchronise(ProfileShape::DoubleS, &moves, &limits),
        Err(SyncError::TooManyJoints {
            count: MAX_JOINTS + 1,
            max: MAX_JOINTS
        })
    );
    assert_eq!(
        synchronise(ProfileShape::DoubleS, &moves[..2], &limits[..3]),
        Err(SyncError::LimitCountMismatch {
            moves: 2,
            limits: 3
        })
    );
    let mut bad_limits = limits;
    bad_limits[2].jerk = 0.0;
    match synchronise(ProfileShape::DoubleS, &moves[..3], &bad_limits[..3]) {
        Err(SyncError::Joint {
            joint: 2,
            source: ProfileError::BadLimit { .. },
        }) => {}
        other => panic!("{other:?}"),
    }
    let synced = synchronise(ProfileShape::Trapezoid, &moves[..2], &limits[..2]).expect("ok");
    assert!(matches!(
        synced.stretched(synced.duration() * 0.5),
        Err(SyncError::Joint { joint: 0, .. })
    ));
}

#[test]
fn states_and_positions_cover_every_joint() {
    let limits = [JointLimits::new(1.0, 2.0, 10.0); 3];
    let moves = [
        JointMove::rest_to_rest(0.0, 1.0),
        JointMove::rest_to_rest(1.0, 0.5),
        JointMove::rest_to_rest(-1.0, -1.0),
    ];
    let synced = synchronise(ProfileShape::DoubleS, &moves, &limits).expect("ok");
    let mut positions = [f64::NAN; 3];
    synced.positions_at(synced.duration(), &mut positions);
    assert_eq!(positions, [1.0, 0.5, -1.0]);
    let mut states = [Default::default(); 3];
    synced.states_at(0.5 * synced.duration(), &mut states);
    assert!(states[0].velocity > 0.0 && states[1].velocity < 0.0 && states[2].velocity == 0.0);
    assert_eq!(synced.joint_count(), 3);
}

prop_compose! {
    fn joint()(
        from in -2.0..2.0_f64,
        to in -2.0..2.0_f64,
        velocity in 0.5..5.0_f64,
        acceleration in 1.0..40.0_f64,
        jerk in 5.0..400.0_f64,
    ) -> (JointMove, JointLimits) {
        (JointMove::rest_to_rest(from, to), JointLimits::new(velocity, acceleration, jerk))
    }
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(64))]

    #[test]
    fn synchronised_joints_end_together(
        joints in prop::collection::vec(joint(), 1..=MAX_JOINTS),
        trapezoid in any::<bool>(),
    ) {
        let shape = if trapezoid { ProfileShape::Trapezoid } else { ProfileShape::DoubleS };
        let (moves, limits): (Vec<_>, Vec<_>) = joints.into_iter().unzip();
        let synced = synchronise(shape, &moves, &limits).expect("rest to rest");
        let slowest = moves
            .iter()
            .zip(&limits)
            .map(|(m, l)| armwright_trajectory::Profile::fastest(shape, m, l).expect("ok").duration())
            .fold(0.0, f64::max);
        prop_assert_eq!(synced.duration(), slowest);
        for (profile, joint_move) in synced.profiles().iter().zip(&moves) {
            prop_assert_eq!(profile.duration(), synced.duration());
            prop_assert_eq!(profile.state_at(synced.duration()).position, joint_move.to);
            prop_assert_eq!(check_sampled(profile), Ok(()));
        }
    }
}
