//! Inverse kinematics: a tool-point target → joint positions.
//!
//! Naming scheme: one file per solver, named for its method and, for closed forms, the arm
//! type it serves: `planar_two_link.rs` (the two-link core every closed form shares),
//! `closed_form_scara.rs` (the horizontal-jointed arm), `closed_form_articulated.rs` (the 4- and
//! 5-joint vertical articulated arms), `damped_least_squares.rs` (any serial chain). This file
//! holds the shared entry [`solve_ik`] and the types every solver speaks.
//!
//! [`IkTarget`] says what a target's angles mean for each arm type.

mod closed_form_articulated;
mod closed_form_scara;
mod damped_least_squares;
mod free_angle_search;
pub(crate) mod planar_two_link;

pub use self::free_angle_search::solve_ik_free_angles;

use std::f64::consts::{PI, TAU};

use nalgebra::{Isometry3, UnitQuaternion, Vector3};

use crate::arm::{Arm, ArmType, Joint, JointKind, MAX_JOINTS};
use crate::error::{KinematicsError, check_pose};
use crate::fk::{ToolAngles, tool_pose};

/// What the tool point should reach: a position in the base frame (m) and the tool angles the
/// arm can honour (rad).
///
/// What a target's angles mean:
/// - Horizontal-jointed arm: `angle` is the tool yaw, the tool frame's turn about the base's
///   vertical (shoulder + elbow + roll), in rad.
/// - Articulated arms: `angle` is the tool pitch, the elevation of the approach axis measured in
///   the vertical plane through the base axis and the target, from the horizontal pointing away
///   from the base axis, positive upwards, in rad. Values past ±90° lean the approach back
///   towards the base axis. `roll` (5 joints) is the turn about the approach axis, zero when the
///   tool's Y axis is horizontal and the base faces the target: the tool frame is
///   Rz(outward)·Ry(−pitch)·Rx(roll), where `outward` is the yaw of the horizontal direction from
///   the base axis to the target.
/// - Chains: `angle` is [`ToolAngles::pitch`](crate::ToolAngles) and `roll` is
///   [`ToolAngles::roll`](crate::ToolAngles); with [`IkTask::FullPose`] the yaw is the near
///   pose's.
///
/// An angle not given is taken from the `near` pose by [`solve_ik`] (a dragged tool keeps its
/// angle) and searched over a whole turn by [`solve_ik_free_angles`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct IkTarget {
    /// Tool-point position in the base frame, in m.
    pub position: Vector3<f64>,
    /// Tool pitch (articulated arms, chains) or tool yaw (horizontal arm), in rad; `None` keeps
    /// the near pose's.
    pub angle: Option<f64>,
    /// Wrist roll (5-joint arm, chains), in rad; `None` keeps the near pose's.
    pub roll: Option<f64>,
}

impl IkTarget {
    /// A target at `position` (m, base frame) with every angle free.
    pub fn at(position: Vector3<f64>) -> IkTarget {
        IkTarget {
            position,
            angle: None,
            roll: None,
        }
    }

    /// The same target with the tool angle (pitch or yaw, rad) fixed.
    pub fn with_angle(self, angle: f64) -> IkTarget {
        IkTarget {
            angle: Some(angle),
            ..self
        }
    }

    /// The same target with the wrist roll (rad) fixed.
    pub fn with_roll(self, roll: f64) -> IkTarget {
        IkTarget {
            roll: Some(roll),
            ..self
        }
    }

    /// The target a pose reaches: its tool point (m) and the angles its arm type honours (rad),
    /// each in (−π, π]. The horizontal arm gets a yaw and no roll; the 4-joint arm a pitch and
    /// no roll.
    ///
    /// # Errors
    /// [`KinematicsError`] if the count is wrong or a position is not finite.
    pub fn of_pose(arm: &Arm, positions: &[f64]) -> Result<IkTarget, KinematicsError> {
        let tool = tool_pose(arm, positions)?;
        let position = tool.translation.vector;
        let target = IkTarget::at(position);
        Ok(match arm.arm_type() {
            ArmType::Scara(_) => target.with_angle(ToolAngles::of(&tool).yaw),
            ArmType::Articulated4(_) | ArmType::Articulated5(_) => {
                let outward = outward_yaw(&position, positions[0]);
                let (pitch, roll) = closed_form_articulated::pitch_and_roll(&tool, outward);
                let target = target.with_angle(pitch);
                if arm.joint_count() == 5 {
                    target.with_roll(roll)
                } else {
                    target
                }
            }
            ArmType::Chain(_) => {
                let angles = ToolAngles::of(&tool);
                target.with_angle(angles.pitch).with_roll(angles.roll)
            }
        })
    }
}

/// Distance from the base axis (m) within which a target counts as on it; there the base yaw
/// is undetermined and the near pose's is kept.
pub(crate) const ON_BASE_AXIS: f64 = 1e-9;

/// The yaw (rad) of the horizontal direction from the base axis to `position`, or `keep` when the
/// position lies on the base axis.
pub(crate) fn outward_yaw(position: &Vector3<f64>, keep: f64) -> f64 {
    if position.x.hypot(position.y) <= ON_BASE_AXIS {
        keep
    } else {
        position.y.atan2(position.x)
    }
}

/// Which goal the damped-least-squares solver works towards.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum IkTask {
    /// The tool point only (3 constraints).
    #[default]
    Position,
    /// The tool point and the pitch of the approach axis (4 constraints).
    PositionPitch,
    /// The tool point and the whole tool orientation (6 constraints).
    FullPose,
}

/// Tuning of the inverse-kinematics solvers. The closed forms use only
/// `use_damped_least_squares`; the rest tunes damped least squares.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct IkOptions {
    /// Starting damping λ, in m. Larger is steadier near singular poses but converges more
    /// slowly; the solver lowers it while steps succeed and raises it when they fail. The
    /// default 0.1 took fewer iterations from random starts than 0.01 (median 15–19 against
    /// 17–23 for full 6-joint poses) and than 0.03 or 0.3 with the present damping rule.
    pub damping: f64,
    /// Stop once the tool point is this close to the target, in m.
    pub position_tolerance: f64,
    /// Stop once each constrained tool angle is this close to the target, in rad.
    pub angle_tolerance: f64,
    /// Weight of an angle error against a position error, in m per rad: 0.1 makes 1 rad count
    /// like 100 mm.
    pub angle_weight: f64,
    /// Most iterations from one start.
    pub max_iterations: usize,
    /// Further starts, from seeded random in-limit poses, after the start from the near pose.
    pub restarts: usize,
    /// Most iterations over every start together, each start counting as one (its first pose,
    /// error and Jacobian cost about what a step does): the starts stop once it is spent, which
    /// bounds the time a target that cannot be reached costs. An iteration on a 6-joint chain
    /// took 0.55–0.6 µs of processor time on the (busy, shared) development machine, so the
    /// default 1 000 keeps a failed solve near 0.6 ms while every one of 50 000 reachable full
    /// poses converged from random starts (the `ik` benchmarks measure the median case and the
    /// failed solve); counting iterations rather than time keeps the answer the same on every
    /// machine.
    pub iteration_budget: usize,
    /// Seed of the restart poses; the same seed gives the same answer.
    pub seed: u64,
    /// What damped least squares aims for on a chain.
    pub task: IkTask,
    /// Use damped least squares even for a built-in arm type, with `task` as the goal; the
    /// target's angles then mean what they mean for chains.
    pub use_damped_least_squares: bool,
}

impl Default for IkOptions {
    fn default() -> IkOptions {
        IkOptions {
            damping: 0.1,
            position_tolerance: 1e-7,
            angle_tolerance: 1e-6,
            angle_weight: 0.1,
            max_iterations: 60,
            restarts: 400,
            iteration_budget: 1_000,
            seed: 0x5EED_A12A,
            task: IkTask::Position,
            use_damped_least_squares: false,
        }
    }
}

/// One set of joint positions that reaches the target (rad or m, chain order), with a label
/// saying which branch it is and what the solver saw.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Branch {
    values: [f64; MAX_JOINTS],
    count: usize,
    label: &'static str,
    residual: f64,
    iterations: usize,
}

impl Branch {
    pub(crate) fn new(positions: &[f64], label: &'static str) -> Branch {
        let mut values = [0.0; MAX_JOINTS];
        let count = positions.len().min(MAX_JOINTS);
        values[..count].copy_from_slice(&positions[..count]);
        Branch {
            values,
            count,
            label,
            residual: 0.0,
            iterations: 0,
        }
    }

    /// Joint positions, rad or m, one per joint in chain order.
    pub fn positions(&self) -> &[f64] {
        &self.values[..self.count]
    }

    /// Which branch: "elbow up, facing", "elbow down, turned over", "right-handed", "damped
    /// least squares", …
    pub fn label(&self) -> &'static str {
        self.label
    }

    /// Weighted task error left when the solver stopped, in m (angle errors count through
    /// [`IkOptions::angle_weight`]); 0 for a closed form, which is exact up to rounding.
    pub fn residual(&self) -> f64 {
        self.residual
    }

    /// Iterations the solver spent, summed over its starts, each start counting as one; 0 for
    /// a closed form.
    pub fn iterations(&self) -> usize {
        self.iterations
    }

    /// Sum of squared joint differences to `near` (rad² or m²).
    fn distance_squared(&self, near: &[f64]) -> f64 {
        self.positions()
            .iter()
            .zip(near)
            .map(|(a, b)| (a - b) * (a - b))
            .sum()
    }
}

/// Every branch that reaches a target within the joint limits: at least one, at most
/// [`IkSolutions::CAPACITY`], on the stack.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct IkSolutions {
    branches: [Branch; IkSolutions::CAPACITY],
    count: usize,
}

impl IkSolutions {
    /// Most branches a solution set holds.
    pub const CAPACITY: usize = 8;

    pub(crate) fn empty() -> IkSolutions {
        IkSolutions {
            branches: [Branch::new(&[], ""); IkSolutions::CAPACITY],
            count: 0,
        }
    }

    /// Adds a branch unless one already matches it within 1e-9 in every joint (a stretched or
    /// folded elbow makes two branches coincide) or the set is full.
    pub(crate) fn push_distinct(&mut self, branch: Branch) {
        let duplicate = self.as_slice().iter().any(|known| {
            known
                .positions()
                .iter()
                .zip(branch.positions())
                .all(|(a, b)| (a - b).abs() <= 1e-9)
        });
        if !duplicate && self.count < IkSolutions::CAPACITY {
            self.branches[self.count] = branch;
            self.count += 1;
        }
    }

    /// The branches, in the order the solver found them.
    pub fn as_slice(&self) -> &[Branch] {
        &self.branches[..self.count]
    }

    /// Number of branches (at least 1 when returned by [`solve_ik`]).
    pub fn len(&self) -> usize {
        self.count
    }

    /// Whether there is no branch (never for a set returned by [`solve_ik`]).
    pub fn is_empty(&self) -> bool {
        self.count == 0
    }

    /// The branch nearest `near` (rad or m, chain order), by the sum of squared joint
    /// differences.
    pub fn nearest(&self, near: &[f64]) -> &Branch {
        let mut best = &self.branches[0];
        let mut best_distance = f64::INFINITY;
        for branch in self.as_slice() {
            let distance = branch.distance_squared(near);
            if distance < best_distance {
                best = branch;
                best_distance = distance;
            }
        }
        best
    }
}

/// Why a target cannot be reached. Lengths in m, angles in rad.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum IkError {
    /// The target lies outside the reach envelope (beyond the stretched arm, or inside the ring
    /// the folded arm cannot reach), with the tool angle held. `short_by` is how far the tool
    /// point would have to move, in m.
    #[error("target is {:.1} mm out of reach", .short_by * 1e3)]
    OutOfReach {
        /// Distance to the nearest reachable point with the same tool angle, in m.
        short_by: f64,
    },
    /// Every branch needs a joint past its limits; the branch that misses by least is named.
    #[error("joint {joint} would need {position:.4} (rad or m), {by:.4} past its limits")]
    BeyondLimit {
        /// Joint index, 0-based.
        joint: usize,
        /// The position that joint would need, rad or m.
        position: f64,
        /// How far past the nearer limit, rad or m.
        by: f64,
    },
    /// Damped least squares did not get within the tolerances.
    #[error("no solution found: {:.3} mm left after {iterations} iterations", .residual * 1e3)]
    NotConverged {
        /// Smallest weighted task error reached, in m.
        residual: f64,
        /// Iterations spent over every start, each start counting as one.
        iterations: usize,
    },
    /// A target number is NaN or infinite.
    #[error("target {what} is not a finite number ({value})")]
    NotFinite {
        /// Which number: "x", "y", "z", "angle", "roll" or "rotation".
        what: &'static str,
        /// The bad value.
        value: f64,
    },
    /// The near pose has the wrong count or a non-finite position.
    #[error("near pose: {0}")]
    Kinematics(#[from] KinematicsError),
}

/// Every set of joint positions that puts the tool point on `target`, within the joint limits.
///
/// `target` is in m and rad (see [`IkTarget`] for what its angles mean per arm
/// type); `near` is a pose (rad or m, one per joint) that settles free angles, picks among
/// equivalent revolute positions (each is shifted by whole turns into its limits, nearest
/// `near`) and starts damped least squares. The built-in arm types are solved in closed form
/// and return every branch; chains (or any arm with
/// [`IkOptions::use_damped_least_squares`]) return the one branch damped least squares finds.
///
/// On the base axis of an articulated arm the base yaw is undetermined: the near pose's base yaw
/// is kept (and the branch with the base turned over it). Where equal upper arm and forearm fold
/// the wrist onto the shoulder axis, the near pose's shoulder angle is kept.
///
/// # Errors
/// [`IkError::NotFinite`] for a NaN or infinite target, [`IkError::Kinematics`] for a bad
/// `near`, [`IkError::OutOfReach`] with the distance, [`IkError::BeyondLimit`] naming the joint
/// and by how much, [`IkError::NotConverged`] when damped least squares gives up. Never panics.
///
/// # Example
/// ```
/// # use armwright_kinematics::*;
/// # fn demo(arm: &Arm) -> Result<(), IkError> {
/// let near = arm.home_pose();
/// let target = IkTarget::at(nalgebra::Vector3::new(0.15, 0.05, 0.08));
/// let solutions = solve_ik(arm, &target, &near, &IkOptions::default())?;
/// let chosen = solutions.nearest(&near).positions();
/// # let _ = chosen; Ok(()) }
/// ```
pub fn solve_ik(
    arm: &Arm,
    target: &IkTarget,
    near: &[f64],
    options: &IkOptions,
) -> Result<IkSolutions, IkError> {
    check_target(target)?;
    check_pose(arm.joint_count(), near)?;
    if options.use_damped_least_squares {
        return damped_least_squares::solve(arm, target, near, options);
    }
    match arm.arm_type() {
        ArmType::Scara(dims) => closed_form_scara::solve(arm, dims, target, near),
        ArmType::Articulated4(dims) | ArmType::Articulated5(dims) => {
            closed_form_articulated::solve(arm, dims, target, near)
        }
        ArmType::Chain(_) => damped_least_squares::solve(arm, target, near, options),
    }
}

/// Damped least squares towards a whole tool frame, for any arm: the tool point and, as
/// `options.task` asks, the pitch of the approach axis or the whole orientation.
///
/// `frame` is the wanted tool frame in the base frame (m); `near` (rad or m, one per joint) is
/// the first start. Returns one branch.
///
/// # Errors
/// [`IkError::NotFinite`] for a non-finite frame, [`IkError::Kinematics`] for a bad `near`,
/// [`IkError::NotConverged`] with the residual when no start converges. Never panics.
pub fn solve_ik_frame(
    arm: &Arm,
    frame: &Isometry3<f64>,
    near: &[f64],
    options: &IkOptions,
) -> Result<IkSolutions, IkError> {
    let numbers = frame
        .translation
        .vector
        .iter()
        .chain(frame.rotation.coords.iter());
    for (value, what) in numbers.zip([
        "x", "y", "z", "rotation", "rotation", "rotation", "rotation",
    ]) {
        if !value.is_finite() {
            return Err(IkError::NotFinite {
                what,
                value: *value,
            });
        }
    }
    check_pose(arm.joint_count(), near)?;
    damped_least_squares::solve_frame(arm, frame, near, options)
}

fn check_target(target: &IkTarget) -> Result<(), IkError> {
    let numbers = [
        ("x", Some(target.position.x)),
        ("y", Some(target.position.y)),
        ("z", Some(target.position.z)),
        ("angle", target.angle),
        ("roll", target.roll),
    ];
    for (what, value) in numbers {
        if let Some(value) = value
            && !value.is_finite()
        {
            return Err(IkError::NotFinite { what, value });
        }
    }
    Ok(())
}

/// Tolerance (rad or m) by which a position may pass a limit and still count as inside, as
/// [`Arm::within_limits`] allows.
const LIMIT_SLACK: f64 = 1e-9;

/// Fits a joint position into the joint's limits: a revolute angle is shifted by whole turns to
/// the in-limit value nearest `near`. Fails with the nearest position it could take and how far
/// (rad or m) that lies past the nearer limit.
pub(crate) fn fit_into_limits(joint: &Joint, position: f64, near: f64) -> Result<f64, (f64, f64)> {
    let (low, high) = (joint.min - LIMIT_SLACK, joint.max + LIMIT_SLACK);
    match joint.kind {
        JointKind::Prismatic => {
            if position < low {
                Err((position, joint.min - position))
            } else if position > high {
                Err((position, position - joint.max))
            } else {
                Ok(position)
            }
        }
        JointKind::Revolute => {
            // Limits spanning less than a turn leave an in-limit angle no other choice.
            if joint.max - joint.min < TAU - 2.0 * LIMIT_SLACK
                && position >= low
                && position <= high
            {
                return Ok(position);
            }
            // Work from the turn nearest the middle of the limits, so huge inputs stay bounded.
            let middle = 0.5 * (joint.min + joint.max);
            let base = middle + (position - middle + PI).rem_euclid(TAU) - PI;
            let lowest_turn = ((low - base) / TAU).ceil();
            let highest_turn = ((high - base) / TAU).floor();
            if lowest_turn <= highest_turn {
                let turn = ((near - base) / TAU)
                    .round()
                    .clamp(lowest_turn, highest_turn);
                let fitted = base + turn * TAU;
                // Whole turns added to the input directly keep its last bits where they can.
                let turns = ((fitted - position) / TAU).round();
                let direct = position + turns * TAU;
                Ok(if (direct - fitted).abs() < 1e-9 {
                    direct
                } else {
                    fitted
                })
            } else {
                // No whole-turn shift lands inside: the limits span less than a turn and the
                // angle falls in the gap, between a value below the limits and one above.
                let below = base + highest_turn * TAU;
                let above = base + lowest_turn * TAU;
                let (below_by, above_by) = (joint.min - below, above - joint.max);
                if below_by <= above_by {
                    Err((below, below_by))
                } else {
                    Err((above, above_by))
                }
            }
        }
    }
}

/// Collects branches and the least-bad failure while a closed form tries its branches.
pub(crate) struct BranchCollector {
    pub(crate) solutions: IkSolutions,
    nearest_miss: Option<(usize, f64, f64)>,
    short_by: Option<f64>,
}

impl BranchCollector {
    pub(crate) fn new() -> BranchCollector {
        BranchCollector {
            solutions: IkSolutions::empty(),
            nearest_miss: None,
            short_by: None,
        }
    }

    /// Records that one branch cannot reach the target by `short_by` m.
    pub(crate) fn out_of_reach(&mut self, short_by: f64) {
        self.short_by = Some(self.short_by.map_or(short_by, |known| known.min(short_by)));
    }

    /// Fits every position of a candidate into its joint's limits and keeps the branch, or records
    /// by how much it misses.
    pub(crate) fn offer(
        &mut self,
        arm: &Arm,
        candidate: &[f64],
        near: &[f64],
        label: &'static str,
    ) {
        let mut fitted = [0.0; MAX_JOINTS];
        // The joint that misses most limits this branch; the branch missing least is reported.
        let mut worst: Option<(usize, f64, f64)> = None;
        for (index, joint) in arm.joints().iter().enumerate() {
            match fit_into_limits(joint, candidate[index], near[index]) {
                Ok(value) => fitted[index] = value,
                Err((position, by)) => {
                    if worst.is_none_or(|(_, _, known)| by > known) {
                        worst = Some((index, position, by));
                    }
                }
            }
        }
        if let Some((index, position, by)) = worst {
            if self.nearest_miss.is_none_or(|(_, _, known)| by < known) {
                self.nearest_miss = Some((index, position, by));
            }
            return;
        }
        self.solutions
            .push_distinct(Branch::new(&fitted[..arm.joint_count()], label));
    }

    /// The branches found, or the reason there are none: beyond a limit when some branch was
    /// geometrically reachable, otherwise out of reach.
    pub(crate) fn finish(self) -> Result<IkSolutions, IkError> {
        if !self.solutions.is_empty() {
            return Ok(self.solutions);
        }
        if let Some((joint, position, by)) = self.nearest_miss {
            return Err(IkError::BeyondLimit {
                joint,
                position,
                by,
            });
        }
        Err(IkError::OutOfReach {
            short_by: self.short_by.unwrap_or(f64::INFINITY),
        })
    }
}

/// The rotation Rz(yaw)·Ry(−pitch)·Rx(roll) of [`ToolAngles`], angles in rad.
pub(crate) fn tool_rotation(yaw: f64, pitch: f64, roll: f64) -> UnitQuaternion<f64> {
    UnitQuaternion::from_euler_angles(roll, -pitch, yaw)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn revolute(min: f64, max: f64) -> Joint {
        Joint::for_tests(
            JointKind::Revolute,
            nalgebra::Isometry3::identity(),
            Vector3::z_axis(),
            min,
            max,
        )
        .unwrap()
    }

    #[test]
    fn whole_turns_bring_an_angle_into_its_limits() {
        let joint = revolute(-1.0, 1.0);
        assert_eq!(fit_into_limits(&joint, 0.5, 0.0), Ok(0.5));
        let fitted = fit_into_limits(&joint, 0.5 + 3.0 * TAU, 0.0).unwrap();
        assert!((fitted - 0.5).abs() < 1e-12);
    }

    #[test]
    fn the_turn_nearest_the_near_pose_wins_on_wide_joints() {
        let joint = revolute(-7.0, 7.0);
        let fitted = fit_into_limits(&joint, 0.5, 6.0).unwrap();
        assert!((fitted - (0.5 + TAU)).abs() < 1e-12);
        let fitted = fit_into_limits(&joint, 0.5, -5.0).unwrap();
        assert!((fitted - (0.5 - TAU)).abs() < 1e-12);
    }

    #[test]
    fn an_angle_in_the_gap_reports_the_nearer_limit() {
        // Limits −1..1 rad: 1.5 rad is 0.5 past the top; 3.0 rad is 3.0 − 2π = −3.28, 2.28
        // below the bottom, or 2.0 past the top: the top is nearer.
        let joint = revolute(-1.0, 1.0);
        let (position, by) = fit_into_limits(&joint, 1.5, 0.0).unwrap_err();
        assert!((position - 1.5).abs() < 1e-12 && (by - 0.5).abs() < 1e-12);
        let (position, by) = fit_into_limits(&joint, 3.0, 0.0).unwrap_err();
        assert!((position - 3.0).abs() < 1e-12 && (by - 2.0).abs() < 1e-12);
        let (_, by) = fit_into_limits(&joint, -3.0, 0.0).unwrap_err();
        assert!((by - 2.0).abs() < 1e-12);
    }
}
