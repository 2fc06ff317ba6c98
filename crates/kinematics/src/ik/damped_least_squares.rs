//! Damped least squares for any serial chain (Levenberg–Marquardt steps on the tool Jacobian).
//!
//! Each step solves the 6×6 damped normal equations (J·Jᵀ + λ²·I)·y = e and moves the joints by
//! Jᵀ·y (the damped least squares method as surveyed in Buss, "Introduction to inverse
//! kinematics with Jacobian transpose, pseudoinverse and damped least squares methods", 2004;
//! cited from memory). λ follows Nielsen's rule (Madsen, Nielsen and Tingleff, "Methods for
//! non-linear least squares problems", 2004, §3.2; cited from memory): after a step that lowers
//! the error, λ² shrinks by up to a third as the step's gain against the linear model's
//! prediction allows; after one that does not, λ² grows by ν, and ν doubles while steps keep
//! failing. Rows the task leaves out are zero. The first start is the near pose (clamped into
//! the limits); further starts are seeded random in-limit poses.
//!
//! Turning joints descend free of their limits and are brought into them by whole turns once
//! a start converges: held at a limit, a joint makes a false minimum there, and most starts
//! that failed did so against a limit. A start that lands in a joint's gap goes on with every
//! joint held when the task leaves joints to spare; sliding joints always stop at their limits.
//! A start whose accepted steps stop lowering the error is given up early, so many cheap
//! restarts replace a few long ones. Full 6-joint poses from random starts (five seeds of
//! 10 000): with λ ×0.3 on success and ×10 on failure and the stall share at 0.9, 99.97–100 %
//! solved within 1 000 iterations, median 17–25, mean 29–44; with Nielsen's rule and the stall
//! share at 0.95, every one of the 50 000 solved, median 16–23, mean 28–37 (each start counted
//! as an iteration in both).
//!
//! The work is bounded by min(iteration_budget, (1 + restarts) × (1 + max_iterations))
//! iterations of about the same cost each, a start counting as one.

use nalgebra::{Isometry3, SMatrix, SVector, UnitQuaternion, Vector3, Vector6};

use super::{
    Branch, IkError, IkOptions, IkSolutions, IkTarget, IkTask, fit_into_limits, tool_rotation,
};
use crate::arm::{Arm, JointKind, MAX_JOINTS};
use crate::fk::{ToolAngles, tool_pose};
use crate::jacobian::{tool_jacobian, tool_pose_and_jacobian};

/// The longest joint step (rad or m, Euclidean over the joints) one iteration may take.
const MAX_STEP: f64 = 1.0;
/// Above this damping (m) the start is taken as stuck.
const STUCK_DAMPING: f64 = 1e3;
/// An accepted step that leaves more than this share of the error counts as stalled. Near a
/// solution each step leaves a small share of the error, so a start that is converging never
/// stalls; two steps in a row at 0.95 (with Nielsen's damping rule) gave up on hopeless starts
/// soon enough and on fewer good ones than 0.9 (see the module notes).
const STALL_RATIO: f64 = 0.95;
/// After this many stalled steps in a row the start is given up for the next one.
const STALL_STEPS: usize = 2;
/// Damping never falls below this (m), so the normal equations stay solvable.
const MIN_DAMPING: f64 = 1e-9;

type Pose = SVector<f64, MAX_JOINTS>;

/// What the solver aims for: the tool point, and per task the pitch or the whole rotation.
struct Goal {
    position: Vector3<f64>,
    task: IkTask,
    pitch: f64,
    rotation: UnitQuaternion<f64>,
    angle_weight: f64,
}

/// The task error at one pose: the weighted error vector and the unweighted sizes.
struct TaskError {
    vector: Vector6<f64>,
    position: f64,
    angle: f64,
}

impl TaskError {
    fn norm(&self) -> f64 {
        self.vector.norm()
    }
}

/// One branch found by damped least squares from the near pose and restarts; free target
/// angles come from the near pose's tool angles.
pub(crate) fn solve(
    arm: &Arm,
    target: &IkTarget,
    near: &[f64],
    options: &IkOptions,
) -> Result<IkSolutions, IkError> {
    let near_angles = ToolAngles::of(&tool_pose(arm, near)?);
    let pitch = target.angle.unwrap_or(near_angles.pitch);
    let roll = target.roll.unwrap_or(near_angles.roll);
    let goal = Goal {
        position: target.position,
        task: options.task,
        pitch,
        rotation: tool_rotation(near_angles.yaw, pitch, roll),
        angle_weight: angle_weight(options),
    };
    descend_with_restarts(arm, &goal, near, options)
}

/// One branch found by damped least squares towards a whole tool frame (m, base frame), as
/// much of it as `options.task` asks for.
pub(crate) fn solve_frame(
    arm: &Arm,
    frame: &Isometry3<f64>,
    near: &[f64],
    options: &IkOptions,
) -> Result<IkSolutions, IkError> {
    let goal = Goal {
        position: frame.translation.vector,
        task: options.task,
        pitch: ToolAngles::of(frame).pitch,
        rotation: frame.rotation,
        angle_weight: angle_weight(options),
    };
    descend_with_restarts(arm, &goal, near, options)
}

fn angle_weight(options: &IkOptions) -> f64 {
    if options.angle_weight.is_finite() {
        options.angle_weight.max(0.0)
    } else {
        0.0
    }
}

fn descend_with_restarts(
    arm: &Arm,
    goal: &Goal,
    near: &[f64],
    options: &IkOptions,
) -> Result<IkSolutions, IkError> {
    let count = arm.joint_count();
    let mut start = Pose::zeros();
    for (index, joint) in arm.joints().iter().enumerate() {
        start[index] = near[index].clamp(joint.min, joint.max);
    }
    let constraints = match goal.task {
        IkTask::Position => 3,
        IkTask::PositionPitch => 4,
        IkTask::FullPose => 6,
    };
    let spare_joints = count > constraints;
    let mut restart_poses = SplitMix(options.seed);
    let mut iterations = 0;
    let mut best_residual = f64::INFINITY;
    for attempt in 0..=options.restarts {
        if iterations >= options.iteration_budget {
            break;
        }
        // A start costs about an iteration (its first pose, error and Jacobian), so each
        // counts as one against the budget: a target out of reach, whose starts stall after a
        // step or two, then stops after the same work as one that iterates.
        iterations += 1;
        if attempt > 0 {
            for (index, joint) in arm.joints().iter().enumerate() {
                start[index] = joint.min + (joint.max - joint.min) * restart_poses.unit();
            }
        }
        // Turning joints first run free of their limits, so a limit makes no false minimum;
        // whole turns then bring the answer into the limits. When it lands in a joint's gap
        // and the task leaves joints to spare, the start goes on from there with every joint
        // held within its limits, which the spare joints can usually make up for; without
        // spare joints the next start does better.
        let (mut pose, mut error) =
            descend(arm, goal, start, Turns::Free, options, &mut iterations)?;
        let mut inside = fit_turns(arm, &mut pose, &start);
        if !inside && spare_joints && converged(goal, &error, options) {
            (pose, error) = descend(arm, goal, pose, Turns::Held, options, &mut iterations)?;
            inside = true;
        }
        let residual = error.norm();
        if inside && converged(goal, &error, options) {
            let mut branch = Branch::new(&pose.as_slice()[..count], "damped least squares");
            branch.residual = residual;
            branch.iterations = iterations;
            let mut solutions = IkSolutions::empty();
            solutions.push_distinct(branch);
            return Ok(solutions);
        }
        best_residual = best_residual.min(residual);
    }
    Err(IkError::NotConverged {
        residual: best_residual,
        iterations,
    })
}

fn converged(goal: &Goal, error: &TaskError, options: &IkOptions) -> bool {
    error.position <= options.position_tolerance
        && (goal.task == IkTask::Position || error.angle <= options.angle_tolerance)
}

/// Descends from `start` until converged, stuck or out of iterations; returns the best pose.
fn descend(
    arm: &Arm,
    goal: &Goal,
    start: Pose,
    turns: Turns,
    options: &IkOptions,
    iterations: &mut usize,
) -> Result<(Pose, TaskError), IkError> {
    let count = arm.joint_count();
    let mut pose = start;
    let mut tool = tool_pose(arm, &pose.as_slice()[..count])?;
    let mut error = task_error(goal, &tool);
    // Worked out when a step needs it, so a pose that converges or stalls costs none.
    let mut jacobian = None;
    let mut damping = if options.damping.is_finite() && options.damping > 0.0 {
        options.damping
    } else {
        MIN_DAMPING
    };
    let mut stalled = 0;
    // Nielsen's ν: how much the next failed step raises μ = λ².
    let mut raise: f64 = 2.0;
    for _ in 0..options.max_iterations {
        if converged(goal, &error, options)
            || damping > STUCK_DAMPING
            || *iterations >= options.iteration_budget
        {
            break;
        }
        *iterations += 1;
        let current = match jacobian {
            Some(current) => current,
            None => *jacobian.insert(task_jacobian(goal, full_jacobian(arm, &pose)?, &tool)),
        };
        let Some(candidate) = limited_step(arm, &current, &error, &pose, damping, turns) else {
            damping *= raise.sqrt();
            raise *= 2.0;
            continue;
        };
        // The pose and the Jacobian in one pass: most steps are accepted, and the next step
        // needs the Jacobian there.
        let (candidate_tool, candidate_jacobian) =
            tool_pose_and_jacobian(arm, &candidate.as_slice()[..count])?;
        let candidate_error = task_error(goal, &candidate_tool);
        if candidate_error.norm() < error.norm() {
            // Steps that barely lower the error mean a local minimum (usually against a limit):
            // a fresh start does better than more of them. Near a solution the error falls
            // fast, so this never stops a start that is converging.
            if candidate_error.norm() > STALL_RATIO * error.norm() {
                stalled += 1;
                if stalled >= STALL_STEPS {
                    pose = candidate;
                    error = candidate_error;
                    break;
                }
            } else {
                stalled = 0;
            }
            let predicted = error.vector - current * (candidate - pose);
            let predicted_drop = error.vector.norm_squared() - predicted.norm_squared();
            let gain = (error.vector.norm_squared() - candidate_error.vector.norm_squared())
                / predicted_drop;
            pose = candidate;
            tool = candidate_tool;
            error = candidate_error;
            jacobian = Some(task_jacobian(goal, candidate_jacobian.matrix, &tool));
            // Nielsen's rule on μ = λ²: the better the step did against what the linear model
            // promised (gain ρ, actual over predicted drop of |e|²), the more damping goes,
            // at most to a third; ρ = ½ keeps it.
            let factor = if gain.is_finite() {
                (1.0 - (2.0 * gain - 1.0).powi(3)).max(1.0 / 3.0)
            } else {
                1.0 / 3.0
            };
            damping = (damping * factor.sqrt()).max(MIN_DAMPING);
            raise = 2.0;
        } else {
            // A failed step raises μ by ν, and ν doubles while steps keep failing.
            damping *= raise.sqrt();
            raise *= 2.0;
        }
    }
    Ok((pose, error))
}

/// One damped step from `pose`, kept within the limits of the sliding joints, and of the
/// turning joints when `turns` holds them. A joint already at a limit that
/// the step would push past it is held there and the step is solved again without it, so the
/// other joints make up for it; a joint that would pass a limit from inside stops at it.
/// `None` if the normal equations cannot be solved.
fn limited_step(
    arm: &Arm,
    jacobian: &SMatrix<f64, 6, MAX_JOINTS>,
    error: &TaskError,
    pose: &Pose,
    damping: f64,
    turns: Turns,
) -> Option<Pose> {
    let count = arm.joint_count();
    // Which columns take part: a joint held at a limit drops out.
    let mut taking_part = [true; MAX_JOINTS];
    let mut candidate = *pose;
    for _ in 0..3 {
        let y = solve_damped_normal(jacobian, &taking_part, count, damping, &error.vector)?;
        let mut step = Pose::zeros();
        for (index, column) in jacobian.column_iter().take(count).enumerate() {
            if taking_part[index] {
                step[index] = column.dot(&y);
            }
        }
        let length = step.norm();
        if !length.is_finite() {
            return None;
        }
        if length > MAX_STEP {
            step *= MAX_STEP / length;
        }
        candidate = pose + step;
        let mut held = false;
        for (index, joint) in arm.joints().iter().enumerate() {
            if turns == Turns::Free && joint.kind == JointKind::Revolute {
                continue;
            }
            let pushed_low = pose[index] <= joint.min && step[index] < 0.0;
            let pushed_high = pose[index] >= joint.max && step[index] > 0.0;
            if (pushed_low || pushed_high)
                && taking_part[index]
                && jacobian.column(index).norm() > 0.0
            {
                taking_part[index] = false;
                held = true;
            }
            candidate[index] = candidate[index].clamp(joint.min, joint.max);
        }
        if !held {
            break;
        }
    }
    Some(candidate)
}

/// y with (J·Jᵀ + λ²·I)·y = e, over the first `count` columns of J that take part, by a
/// Cholesky factorisation written out for the 6×6 normal matrix (about half the work of the
/// general one, with no copy of J); `None` if the matrix is not positive definite (a NaN
/// entry, or damping too small for a singular J).
#[allow(clippy::needless_range_loop)] // indices as the factorisation is written on paper
fn solve_damped_normal(
    jacobian: &SMatrix<f64, 6, MAX_JOINTS>,
    taking_part: &[bool; MAX_JOINTS],
    count: usize,
    damping: f64,
    e: &Vector6<f64>,
) -> Option<Vector6<f64>> {
    // The lower triangle of J·Jᵀ + λ²·I, a sum of one outer product per column.
    let mut a = [[0.0; 6]; 6];
    for (column, _) in jacobian
        .column_iter()
        .take(count)
        .zip(taking_part)
        .filter(|(_, taking)| **taking)
    {
        for (i, row) in a.iter_mut().enumerate() {
            for (j, entry) in row.iter_mut().enumerate().take(i + 1) {
                *entry += column[i] * column[j];
            }
        }
    }
    let damping_squared = damping * damping;
    for (i, row) in a.iter_mut().enumerate() {
        row[i] += damping_squared;
    }
    // A = L·Lᵀ in place (the lower triangle of `a` becomes L), keeping 1/Lᵢᵢ.
    let mut inverse_diagonal = [0.0; 6];
    for j in 0..6 {
        let mut pivot = a[j][j];
        for k in 0..j {
            pivot -= a[j][k] * a[j][k];
        }
        if pivot.is_nan() || pivot <= 0.0 {
            return None;
        }
        let diagonal = pivot.sqrt();
        a[j][j] = diagonal;
        inverse_diagonal[j] = 1.0 / diagonal;
        for i in j + 1..6 {
            let mut sum = a[i][j];
            for k in 0..j {
                sum -= a[i][k] * a[j][k];
            }
            a[i][j] = sum * inverse_diagonal[j];
        }
    }
    // L·z = e, then Lᵀ·y = z.
    let mut z = [0.0; 6];
    for i in 0..6 {
        let mut sum = e[i];
        for k in 0..i {
            sum -= a[i][k] * z[k];
        }
        z[i] = sum * inverse_diagonal[i];
    }
    let mut y = Vector6::zeros();
    for i in (0..6).rev() {
        let mut sum = z[i];
        for k in i + 1..6 {
            sum -= a[k][i] * y[k];
        }
        y[i] = sum * inverse_diagonal[i];
    }
    Some(y)
}

/// The weighted task error at a tool pose: position error (m), then per task the pitch error
/// or the rotation error as a rotation vector in the base frame, times the angle weight.
fn task_error(goal: &Goal, tool: &Isometry3<f64>) -> TaskError {
    let position_error = goal.position - tool.translation.vector;
    let mut vector = Vector6::zeros();
    vector.fixed_rows_mut::<3>(0).copy_from(&position_error);
    let angle = match goal.task {
        IkTask::Position => 0.0,
        IkTask::PositionPitch => {
            let approach = tool.rotation * Vector3::x();
            let pitch = approach.z.atan2(approach.x.hypot(approach.y));
            let pitch_error = goal.pitch - pitch;
            vector[3] = goal.angle_weight * pitch_error;
            pitch_error.abs()
        }
        IkTask::FullPose => {
            let turn = (goal.rotation * tool.rotation.inverse()).scaled_axis();
            vector
                .fixed_rows_mut::<3>(3)
                .copy_from(&(turn * goal.angle_weight));
            turn.norm()
        }
    };
    TaskError {
        vector,
        position: position_error.norm(),
        angle,
    }
}

/// The tool Jacobian reduced to the task's rows, angle rows times the angle weight.
fn task_jacobian(
    goal: &Goal,
    mut task: SMatrix<f64, 6, MAX_JOINTS>,
    tool: &Isometry3<f64>,
) -> SMatrix<f64, 6, MAX_JOINTS> {
    match goal.task {
        IkTask::Position => task.fixed_rows_mut::<3>(3).fill(0.0),
        IkTask::PositionPitch => {
            // Pitch rate = ω · unit(a × z) for approach axis a; when a is vertical any
            // horizontal axis perpendicular to it serves, so take the tool's Y axis.
            let approach = tool.rotation * Vector3::x();
            let across = approach.cross(&Vector3::z());
            let axis = if across.norm() > 1e-9 {
                across.normalize()
            } else {
                tool.rotation * Vector3::y()
            };
            let row = axis.transpose() * task.fixed_rows::<3>(3) * goal.angle_weight;
            task.fixed_rows_mut::<1>(3).copy_from(&row);
            task.fixed_rows_mut::<2>(4).fill(0.0);
        }
        IkTask::FullPose => task.fixed_rows_mut::<3>(3).scale_mut(goal.angle_weight),
    }
    task
}

/// The tool Jacobian at `pose` (all rows).
fn full_jacobian(arm: &Arm, pose: &Pose) -> Result<SMatrix<f64, 6, MAX_JOINTS>, IkError> {
    Ok(tool_jacobian(arm, &pose.as_slice()[..arm.joint_count()])?.matrix)
}

/// Whether turning joints keep within their limits while the solver descends.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Turns {
    /// Turning joints run free (sliding joints still stop at their limits).
    Free,
    /// Every joint stops at its limits.
    Held,
}

/// Brings every turning joint of `pose` within its limits by whole turns, the turn nearest
/// `start` where there is a choice, and clamps what lies past a limit; false when some joint
/// lay in the gap between its limits (the pose then no longer reaches what it reached).
fn fit_turns(arm: &Arm, pose: &mut Pose, start: &Pose) -> bool {
    let mut inside = true;
    for (index, joint) in arm.joints().iter().enumerate() {
        let value = match fit_into_limits(joint, pose[index], start[index]) {
            Ok(value) => value,
            Err((nearest, _)) => {
                inside = false;
                nearest
            }
        };
        // Within the fit's slack, or the nearest value past a limit: onto the limit.
        pose[index] = value.clamp(joint.min, joint.max);
    }
    inside
}

/// SplitMix64: a small seeded generator for the restart poses.
struct SplitMix(u64);

impl SplitMix {
    /// Uniform in [0, 1).
    fn unit(&mut self) -> f64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        ((z ^ (z >> 31)) >> 11) as f64 / (1u64 << 53) as f64
    }
}
