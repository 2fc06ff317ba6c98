//! Seeded random problems shared by the benchmarks: the same inputs every run.
// Each bench file uses only part of this module.
#![allow(dead_code)]

use armwright_trajectory::{
    JointLimits, JointMove, LimitSettings, ProfileShape, ServoModelOptions, Task, TaskWaypoint,
};

pub use armwright_test_support::arms;
use armwright_test_support::seeded::XorShift;

/// The sequence the dry-run and clearance benches share: 100 stops (plus the start) of moves of
/// up to ±25° per joint around a working pose of the 5-joint articulated sample arm, with short
/// dwells and the gripper closed at random — the kind of sequence a small sorting or stacking
/// task makes.
pub fn hundred_waypoints() -> Task {
    let mut rng = arms::Seeded::new(42);
    let centre = [0.0, 0.9, -1.2, 0.3, 0.0];
    let waypoints = (0..=100)
        .map(|_| TaskWaypoint {
            positions: centre
                .iter()
                .map(|c| c + rng.uniform(-25f64.to_radians(), 25f64.to_radians()))
                .collect(),
            stop: true,
            dwell: 0.05,
            speed_share: 1.0,
            gripper_closed: rng.uniform(0.0, 1.0) < 0.5,
            straight: false,
            shape: ProfileShape::DoubleS,
        })
        .collect();
    Task {
        waypoints,
        limits: LimitSettings::default(),
        model: ServoModelOptions::default(),
        shaping: None,
    }
}

/// One multi-joint move: each joint's move and limits.
#[derive(Clone, Copy)]
pub struct Problem<const N: usize> {
    /// Joint moves, rad and rad/s.
    pub moves: [JointMove; N],
    /// Joint limits, rad/s, rad/s², rad/s³.
    pub limits: [JointLimits; N],
}

/// Boundary velocities of the random moves.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Boundaries {
    /// At rest at both ends.
    Rest,
    /// Passing both ends at up to half the velocity limit in the direction of motion.
    Along,
    /// Passing both ends at up to the velocity limit, in either direction.
    EitherSign,
}

/// `count` random `N`-joint moves from `seed` with the given boundary velocities. Every one
/// can be synchronised (checked against the reference in `tests/sync.rs`).
pub fn random_moves<const N: usize>(
    count: usize,
    seed: u64,
    boundaries: Boundaries,
) -> Vec<Problem<N>> {
    let mut rng = XorShift::new(seed);
    let mut problems = Vec::with_capacity(count);
    while problems.len() < count {
        let mut moves = [JointMove::default(); N];
        let mut limits = [JointLimits::new(1.0, 1.0, 1.0); N];
        for (joint_move, joint_limits) in moves.iter_mut().zip(limits.iter_mut()) {
            let from = rng.uniform(-2.5, 2.5);
            let to = rng.uniform(-2.5, 2.5);
            *joint_limits = JointLimits::new(
                rng.uniform(0.5, 6.0),
                rng.uniform(2.0, 30.0),
                rng.uniform(20.0, 300.0),
            );
            let vmax = joint_limits.velocity;
            let (low, high) = match boundaries {
                Boundaries::Rest => (0.0, 0.0),
                Boundaries::Along => (0.0, 0.5 * vmax),
                Boundaries::EitherSign => (-vmax, vmax),
            };
            let direction = (to - from).signum();
            *joint_move = JointMove::passing(
                from,
                to,
                direction * rng.uniform(low, high),
                direction * rng.uniform(low, high),
            );
        }
        problems.push(Problem { moves, limits });
    }
    problems
}
