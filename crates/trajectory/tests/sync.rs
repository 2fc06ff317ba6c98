//! Multi-joint synchronisation against the reference library `rsruckig` (crates.io; a Rust port
//! of the time-optimal jerk-limited generator of Berscheid & Kröger, RSS 2021), and the
//! properties every synchronised move keeps.

mod common;

use armwright_trajectory::{
    JointLimits, JointMove, MAX_JOINTS, ProfileError, ProfileShape, SyncError, synchronise,
};
use common::{ReferenceJoint, Seeded, check_sampled, reference_duration};
use proptest::prelude::*;

fn random_joints<const N: usize>(rng: &mut Seeded, pass_through: bool) -> [ReferenceJoint; N] {
    std::array::from_fn(|_| {
        let from = rng.uniform(-2.5, 2.5);
        let to = rng.uniform(-2.5, 2.5);
        let velocity = rng.log_uniform(0.3, 8.0);
        let (from_velocity, to_velocity) = if pass_through {
            let direction = (to - from).signum();
            (
                direction * rng.uniform(0.0, 0.5 * velocity),
                direction * rng.uniform(0.0, 0.5 * velocity),
            )
        } else {
            (0.0, 0.0)
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
    let mut rng = Seeded::new(0x5EED_0101);
    let mut worst: f64 = 0.0;
    for index in 0..1_000 {
        let joints = random_joints::<6>(&mut rng, false);
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
        let joints = random_joints::<3>(&mut rng, false);
        let (moves, limits) = split(&joints);
        let synced = synchronise(ProfileShape::DoubleS, &moves, &limits).expect("rest to rest");
        let reference = reference_duration(&joints).expect("reference solves it");
        worst = worst.max((synced.duration() - reference).abs());
        assert!((synced.duration() - reference).abs() <= 1e-9);
    }
    println!("synchronised rest to rest: largest difference from the reference {worst:e} s");
}

#[test]
fn pass_through_is_never_shorter_than_the_reference_synchronised_duration() {
    // Reference: rsruckig (crates.io). Our shape is narrower than its arbitrary-state one, so a
    // move we can make is never faster; the ratio and the share we cannot stretch are printed.
    let mut rng = Seeded::new(0x5EED_0102);
    let (mut compared, mut not_ours, mut ratio_sum, mut ratio_max) = (0, 0, 0.0, 1.0_f64);
    for _ in 0..1_000 {
        let joints = random_joints::<6>(&mut rng, true);
        let (moves, limits) = split(&joints);
        let synced = match synchronise(ProfileShape::DoubleS, &moves, &limits) {
            Ok(synced) => synced,
            Err(SyncError::Joint {
                source: ProfileError::StretchUnreachable { .. },
                ..
            }) => {
                not_ours += 1;
                continue;
            }
            Err(other) => panic!("{other}"),
        };
        let reference = reference_duration(&joints).expect("reference solves it");
        assert!(
            synced.duration() >= reference - 1e-9,
            "ours {} s, reference {reference} s",
            synced.duration()
        );
        if compared < 100 {
            for profile in synced.profiles() {
                check_sampled(profile).expect("each joint within its limits");
            }
        }
        compared += 1;
        ratio_sum += synced.duration() / reference;
        ratio_max = ratio_max.max(synced.duration() / reference);
    }
    println!(
        "synchronised pass-through: {compared} compared, mean ratio ours/reference {:.12}, \
         largest {ratio_max:.12}; {not_ours} not possible in our shape",
        ratio_sum / f64::from(compared)
    );
    assert!(compared >= 990);
    assert!(ratio_sum / f64::from(compared) < 1.001);
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
