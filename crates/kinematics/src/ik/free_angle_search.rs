//! A search over the tool angles a target leaves free, for the built-in arm types: the tool
//! pitch (articulated arms) or yaw (horizontal arm), and the 5-joint wrist roll. Each branch
//! keeps the in-limit solution nearest the near pose.
//!
//! The closed forms take a free angle from the near pose, which is right while dragging (the
//! tool keeps its angle) but can call a reachable point out of reach. Here the free angle is
//! sampled over a whole turn (the near pose's value first), each branch keeps its nearest
//! sample, and that one is refined by a ternary search on the distance to the near pose. A free
//! 5-joint roll is set so that the roll joint stays where the near pose has it, facing or turned
//! over (the roll does not move the tool point).

use std::f64::consts::{PI, TAU};

use super::{Branch, IkError, IkOptions, IkSolutions, IkTarget, check_target, solve_ik};
use crate::arm::{Arm, ArmType};
use crate::error::check_pose;

/// Tool angles sampled over a turn for a free angle: half a degree apart.
const ANGLE_SAMPLES: usize = 720;

/// Halvings of the ternary search refining each branch's angle.
const REFINE_STEPS: usize = 60;

/// Every branch that reaches `target` with its free angles searched, each the in-limit solution
/// nearest `near`; see [`solve_ik`] for the units and what the angles mean.
///
/// For the built-in arm types an angle left out of `target` is searched over a whole turn
/// (the tool pitch of the articulated arms, the tool yaw of the horizontal arm) and a free
/// 5-joint roll keeps the roll joint at the near pose's; chains, and any arm with
/// [`IkOptions::use_damped_least_squares`], go to [`solve_ik`], whose damped least squares already
/// leaves unconstrained angles free.
///
/// # Errors
/// As [`solve_ik`]. When no angle works: [`IkError::BeyondLimit`] naming the joint that misses
/// most in the branch and angle that come nearest to fitting, or [`IkError::OutOfReach`] with the
/// least distance over every angle. Never panics.
///
/// # Example
/// ```
/// # use armwright_kinematics::*;
/// # fn demo(arm: &Arm) -> Result<(), IkError> {
/// let near = arm.home_pose();
/// let target = IkTarget::at(nalgebra::Vector3::new(0.0, 0.0, 0.3));
/// let solutions = solve_ik_free_angles(arm, &target, &near, &IkOptions::default())?;
/// let chosen = solutions.nearest(&near).positions();
/// # let _ = chosen; Ok(()) }
/// ```
pub fn solve_ik_free_angles(
    arm: &Arm,
    target: &IkTarget,
    near: &[f64],
    options: &IkOptions,
) -> Result<IkSolutions, IkError> {
    check_target(target)?;
    check_pose(arm.joint_count(), near)?;
    let with_roll = matches!(arm.arm_type(), ArmType::Articulated5(_));
    let all_given = target.angle.is_some() && (target.roll.is_some() || !with_roll);
    if all_given || options.use_damped_least_squares || matches!(arm.arm_type(), ArmType::Chain(_))
    {
        return solve_ik(arm, target, near, options);
    }
    // The roll joint at the near pose's value: the target roll equals the roll joint facing the
    // target and is half a turn from it turned over.
    let rolls: [Option<f64>; 2] = match (with_roll, target.roll) {
        (true, None) => [Some(near[4]), Some(near[4] - PI)],
        (_, given) => [given, None],
    };
    let near_angle = IkTarget::of_pose(arm, near)?.angle.unwrap_or(0.0);
    let angles: Vec<f64> = match target.angle {
        Some(angle) => vec![angle],
        None => std::iter::once(near_angle)
            .chain((0..ANGLE_SAMPLES).map(|k| -PI + TAU * k as f64 / ANGLE_SAMPLES as f64))
            .collect(),
    };
    let mut search = Search {
        arm,
        near,
        options,
        position: target,
        best: Vec::new(),
        miss: None,
        short_by: None,
    };
    for &angle in &angles {
        for roll in rolls.iter().take(if with_roll && target.roll.is_none() {
            2
        } else {
            1
        }) {
            search.try_angles(angle, *roll);
        }
    }
    if target.angle.is_none() {
        search.refine(TAU / ANGLE_SAMPLES as f64);
    }
    let mut solutions = IkSolutions::empty();
    for found in &search.best {
        solutions.push_distinct(found.branch);
    }
    if !solutions.is_empty() {
        return Ok(solutions);
    }
    if let Some((joint, position, by)) = search.miss {
        return Err(IkError::BeyondLimit {
            joint,
            position,
            by,
        });
    }
    Err(IkError::OutOfReach {
        short_by: search.short_by.unwrap_or(f64::INFINITY),
    })
}

/// The nearest solution found so far for one branch label, and the angles that gave it.
struct Found {
    branch: Branch,
    distance: f64,
    angle: f64,
    roll: Option<f64>,
}

struct Search<'a> {
    arm: &'a Arm,
    near: &'a [f64],
    options: &'a IkOptions,
    position: &'a IkTarget,
    best: Vec<Found>,
    miss: Option<(usize, f64, f64)>,
    short_by: Option<f64>,
}

impl Search<'_> {
    fn solve(&self, angle: f64, roll: Option<f64>) -> Result<IkSolutions, IkError> {
        let target = IkTarget {
            position: self.position.position,
            angle: Some(angle),
            roll,
        };
        solve_ik(self.arm, &target, self.near, self.options)
    }

    /// Solves at one angle (and roll), keeping each label's nearest branch and the least miss.
    fn try_angles(&mut self, angle: f64, roll: Option<f64>) {
        match self.solve(angle, roll) {
            Ok(solutions) => {
                for branch in solutions.as_slice() {
                    let distance = branch.distance_squared(self.near);
                    let found = Found {
                        branch: *branch,
                        distance,
                        angle,
                        roll,
                    };
                    match self
                        .best
                        .iter_mut()
                        .find(|f| f.branch.label() == branch.label())
                    {
                        Some(known) if known.distance <= distance => {}
                        Some(known) => *known = found,
                        None => self.best.push(found),
                    }
                }
            }
            Err(IkError::BeyondLimit {
                joint,
                position,
                by,
            }) => {
                if self.miss.is_none_or(|(_, _, known)| by < known) {
                    self.miss = Some((joint, position, by));
                }
            }
            Err(IkError::OutOfReach { short_by }) => {
                self.short_by = Some(self.short_by.map_or(short_by, |k| k.min(short_by)));
            }
            Err(_) => {}
        }
    }

    /// Ternary search on the distance to the near pose within a sample step either side of each
    /// label's best angle.
    fn refine(&mut self, step: f64) {
        for index in 0..self.best.len() {
            let (label, roll, centre) = {
                let found = &self.best[index];
                (found.branch.label(), found.roll, found.angle)
            };
            let distance_at = |angle: f64| -> Option<(f64, Branch)> {
                let solutions = self.solve(angle, roll).ok()?;
                let branch = solutions
                    .as_slice()
                    .iter()
                    .find(|b| b.label() == label)
                    .copied()?;
                Some((branch.distance_squared(self.near), branch))
            };
            let (mut low, mut high) = (centre - step, centre + step);
            for _ in 0..REFINE_STEPS {
                let third = (high - low) / 3.0;
                let (a, b) = (low + third, high - third);
                let da = distance_at(a).map_or(f64::INFINITY, |(d, _)| d);
                let db = distance_at(b).map_or(f64::INFINITY, |(d, _)| d);
                if da <= db {
                    high = b;
                } else {
                    low = a;
                }
            }
            if let Some((distance, branch)) = distance_at(0.5 * (low + high))
                && distance < self.best[index].distance
            {
                self.best[index].branch = branch;
                self.best[index].distance = distance;
                self.best[index].angle = 0.5 * (low + high);
            }
        }
    }
}
