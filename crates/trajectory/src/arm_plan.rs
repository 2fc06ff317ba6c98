//! A task planned on a real arm: limits from its servos, the payload the gripper carries, and
//! where each waypoint falls in time — what the dry run, retiming and streaming follow.

use armwright_kinematics::{Arm, MAX_JOINTS, inverse_dynamics, joint_inertias, torque_use};

use crate::arm_limits::{LimitError, LimitSettings, limits_from_arm};
use crate::dry_run::{CommandedMotion, WaypointTiming};
use crate::profile::{JointLimits, JointState, ProfileShape};
use crate::retime::{Planner, Timing};
use crate::second_order::SecondOrder;
use crate::sequence::{
    SegmentKind, SequenceError, SequencePlan, SequenceWaypoint, WaypointKind, plan_sequence_shaped,
};
use crate::servo_sim::{ServoModel, ServoModelOptions};
use crate::shaping::{Shaper, ShaperKind};
use crate::straight_move::{StraightMoveError, straight_path};

/// One waypoint of a task, in joint space.
#[derive(Debug, Clone, PartialEq)]
pub struct TaskWaypoint {
    /// Joint positions (rad or m), one per joint in chain order.
    pub positions: Vec<f64>,
    /// Whether the arm comes to rest here (a stop) or flows through.
    pub stop: bool,
    /// Pause at a stop, in s.
    pub dwell: f64,
    /// Share (0, 1] of each joint's limits the move into this waypoint may use.
    pub speed_share: f64,
    /// Whether the gripper is closed (holding the payload) from this waypoint on.
    pub gripper_closed: bool,
    /// Whether the tool point moves on a straight line from the waypoint before (otherwise each
    /// joint moves on its own).
    pub straight: bool,
    /// The profile of the move into this waypoint.
    pub shape: ProfileShape,
}

/// A task: waypoints, and how limits come from the arm and the servo model.
#[derive(Debug, Clone, PartialEq)]
pub struct Task {
    /// The waypoints in order; the first and last are stops.
    pub waypoints: Vec<TaskWaypoint>,
    /// Derating, jerk time and overrides.
    pub limits: LimitSettings,
    /// The servo model's settings (its motor inertia counts in the acceleration limits).
    pub model: ServoModelOptions,
    /// Input shaping of every run from one stop to the next, or none.
    pub shaping: Option<ShaperKind>,
}

/// Why a task could not be planned.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum PlanError {
    /// Limits could not be taken from the arm.
    #[error(transparent)]
    Limits(#[from] LimitError),
    /// The sequence could not be planned.
    #[error(transparent)]
    Sequence(#[from] SequenceError),
    /// A straight move leaves the reach envelope, hits a limit or changes branch.
    #[error(transparent)]
    Straight(#[from] StraightMoveError),
}

/// A planned task: the sequence plan with the payload schedule and waypoint timings.
#[derive(Debug, Clone, PartialEq)]
pub struct TaskPlan {
    plan: SequencePlan,
    /// Shaped runs from stop to stop, in order; empty when the task is not shaped.
    runs: Vec<ShapedRun>,
    /// One per task waypoint.
    timings: Vec<WaypointTiming>,
    /// Whether the gripper is closed from each task waypoint on, one per task waypoint.
    gripper_closed: Vec<bool>,
    /// Payload carried from each point of the expanded sequence on, in kg, and when (s).
    payload: Vec<f64>,
    payload_from: Vec<f64>,
    limits: Vec<JointLimits>,
}

/// Plans `task` on `arm`.
///
/// # Errors
/// [`PlanError`] naming the joint and waypoint when a servo cannot hold its load, or the
/// waypoint whose move cannot be planned.
pub fn plan_task(arm: &Arm, task: &Task) -> Result<TaskPlan, PlanError> {
    // Straight moves become runs of pass-through points along the line; `index_of` maps each
    // task waypoint to its place in the expanded sequence.
    let last = task.waypoints.len().saturating_sub(1);
    let mut expanded: Vec<SequenceWaypoint> = Vec::with_capacity(task.waypoints.len());
    let mut payload = Vec::with_capacity(task.waypoints.len());
    let mut index_of = Vec::with_capacity(task.waypoints.len());
    let mut shapes = Vec::with_capacity(task.waypoints.len());
    let carrying = |closed: bool| if closed { arm.payload_mass() } else { 0.0 };
    for (index, w) in task.waypoints.iter().enumerate() {
        if w.straight && index > 0 {
            let before = &task.waypoints[index - 1];
            let path = straight_path(arm, &before.positions, &w.positions, index)?;
            for positions in &path[..path.len() - 1] {
                expanded.push(SequenceWaypoint {
                    positions: positions.clone(),
                    kind: WaypointKind::PassThrough,
                    speed_share: w.speed_share,
                });
                payload.push(carrying(before.gripper_closed));
                shapes.push(w.shape);
            }
        }
        let stop = w.stop || index == 0 || index == last;
        index_of.push(expanded.len());
        expanded.push(SequenceWaypoint {
            positions: w.positions.clone(),
            kind: if stop {
                WaypointKind::Stop { dwell: w.dwell }
            } else {
                WaypointKind::PassThrough
            },
            speed_share: w.speed_share,
        });
        payload.push(carrying(w.gripper_closed));
        shapes.push(w.shape);
    }
    let poses: Vec<Vec<f64>> = expanded.iter().map(|w| w.positions.clone()).collect();
    let heaviest = payload.iter().copied().fold(0.0, f64::max);
    let limits = limits_from_arm(arm, &poses, heaviest, &task.limits, &task.model)?;
    let plan = plan_sequence_shaped(&shapes, &expanded, &limits)?;
    let mut arrivals = vec![
        WaypointTiming {
            arrival: 0.0,
            departure: 0.0,
            stop: true,
        };
        expanded.len()
    ];
    for segment in plan.segments() {
        let end = segment.start + segment.motion.duration();
        match segment.kind {
            SegmentKind::Move { to_waypoint, .. } => {
                let stop = matches!(expanded[to_waypoint].kind, WaypointKind::Stop { .. });
                arrivals[to_waypoint] = WaypointTiming {
                    arrival: end,
                    departure: end,
                    stop,
                };
            }
            SegmentKind::Dwell { waypoint } => arrivals[waypoint].departure = end,
        }
    }
    let runs = match task.shaping {
        Some(kind) => shaped_runs(arm, task, kind, &expanded, &arrivals, &payload),
        None => Vec::new(),
    };
    let shifted = |t: f64| shaped_time(&runs, t);
    let arrivals: Vec<WaypointTiming> = arrivals
        .iter()
        .map(|w| WaypointTiming {
            arrival: shifted(w.arrival),
            departure: shifted(w.departure),
            stop: w.stop,
        })
        .collect();
    let payload_from: Vec<f64> = arrivals.iter().map(|w| w.arrival).collect();
    let timings = index_of.iter().map(|&i| arrivals[i]).collect();
    let gripper_closed = task.waypoints.iter().map(|w| w.gripper_closed).collect();
    Ok(TaskPlan {
        plan,
        runs,
        timings,
        gripper_closed,
        payload,
        payload_from,
        limits,
    })
}

/// A run from one stop to the next, shaped: each joint's motion over the run is convolved with
/// that joint's ZV or ZVD shaper (Singer & Seering, 1990), designed for the natural frequency
/// and damping the servo model predicts for it at the stop the run ends in. The run then lasts
/// longer by its slowest shaper's length, and everything after it moves later by as much.
#[derive(Debug, Clone, PartialEq)]
struct ShapedRun {
    /// Start (departure from the stop before) and end (arrival) in the unshaped plan, s.
    start: f64,
    end: f64,
    /// How much later than in the unshaped plan the run starts, s.
    shift: f64,
    /// How much longer the run lasts, s.
    growth: f64,
    /// Each joint's shaper; `None` where the joint would not ring (ζ ≥ 1).
    shapers: [Option<Shaper>; MAX_JOINTS],
}

impl ShapedRun {
    fn shaped_start(&self) -> f64 {
        self.start + self.shift
    }

    fn shaped_end(&self) -> f64 {
        self.end + self.shift + self.growth
    }
}

/// The runs between stops of the expanded sequence, each with its joints' shapers.
fn shaped_runs(
    arm: &Arm,
    task: &Task,
    kind: ShaperKind,
    expanded: &[SequenceWaypoint],
    arrivals: &[WaypointTiming],
    payload: &[f64],
) -> Vec<ShapedRun> {
    let stops: Vec<usize> = (0..expanded.len())
        .filter(|&i| matches!(expanded[i].kind, WaypointKind::Stop { .. }))
        .collect();
    let models: Vec<ServoModel> = arm
        .joints()
        .iter()
        .map(|joint| ServoModel::of_joint(joint, &task.model))
        .collect();
    let mut runs = Vec::with_capacity(stops.len());
    let mut shift = 0.0;
    for pair in stops.windows(2) {
        let (from, to) = (pair[0], pair[1]);
        let mut shapers = [None; MAX_JOINTS];
        // The run ends at rest at `to`; that pose and load set each joint's vibration.
        let carried = payload.get(from).copied().unwrap_or(0.0);
        if let Ok(inertias) = joint_inertias(arm, &expanded[to].positions, carried) {
            for (j, model) in models.iter().enumerate() {
                let inertia = model.motor_inertia + inertias.as_slice()[j];
                let damping =
                    model.stall_effort / model.no_load_speed + model.gear_damping(inertia);
                let stiffness = model.stiffness();
                let zeta = damping / (2.0 * (stiffness * inertia).sqrt());
                shapers[j] = SecondOrder::new((stiffness / inertia).sqrt(), zeta)
                    .and_then(|plant| Shaper::new(kind, &plant))
                    .ok();
            }
        }
        let growth = shapers
            .iter()
            .flatten()
            .map(Shaper::duration)
            .fold(0.0, f64::max);
        runs.push(ShapedRun {
            start: arrivals[from].departure,
            end: arrivals[to].arrival,
            shift,
            growth,
            shapers,
        });
        shift += growth;
    }
    runs
}

/// Where a time of the unshaped plan (s) lands in the shaped one: shifted by the growth of
/// every run that ended before it; a run's end moves to the shaped run's end.
fn shaped_time(runs: &[ShapedRun], t: f64) -> f64 {
    let done = runs.partition_point(|run| run.end < t);
    match runs.get(done) {
        Some(run) if t >= run.start => {
            if t >= run.end {
                run.shaped_end()
            } else {
                t + run.shift
            }
        }
        _ => {
            let before = done.checked_sub(1).and_then(|i| runs.get(i));
            t + before.map_or(0.0, |run| run.shift + run.growth)
        }
    }
}

impl TaskPlan {
    /// The underlying sequence plan, before any shaping.
    pub fn sequence(&self) -> &SequencePlan {
        &self.plan
    }

    /// How many runs from stop to stop were shaped (a run none of whose joints would ring is
    /// not counted).
    pub fn shaped_runs(&self) -> usize {
        self.runs.iter().filter(|run| run.growth > 0.0).count()
    }

    /// Whether the gripper is closed at time `t` (s): the state of the last waypoint whose
    /// arrival is at or before `t` (the first waypoint's before it).
    pub fn gripper_closed_at(&self, t: f64) -> bool {
        let reached = self
            .timings
            .partition_point(|w| w.arrival <= t)
            .saturating_sub(1);
        self.gripper_closed.get(reached).copied().unwrap_or(false)
    }

    /// Where each waypoint falls in time.
    pub fn timings(&self) -> &[WaypointTiming] {
        &self.timings
    }

    /// The per-joint limits the plan was made with (rad/s, rad/s², rad/s³ or m-based).
    pub fn limits(&self) -> &[JointLimits] {
        &self.limits
    }

    /// Peak torque use of any joint on the move into each waypoint and its dwell, from inverse
    /// dynamics of the commanded motion every `interval` s (share of stall torque × `derating`;
    /// 1.0 = 100 %). Waypoint 0 gets the holding torque at the start.
    pub fn peak_torque_use(&self, arm: &Arm, derating: f64, interval: f64) -> Vec<f64> {
        let n = arm.joint_count();
        let mut peaks = vec![0.0_f64; self.timings.len()];
        let mut states = [JointState::default(); MAX_JOINTS];
        let mut positions = [0.0; MAX_JOINTS];
        let mut rates = [0.0; MAX_JOINTS];
        let mut accelerations = [0.0; MAX_JOINTS];
        let mut start = 0.0;
        for (index, timing) in self.timings.iter().enumerate() {
            let steps = (((timing.departure - start) / interval).ceil() as usize).max(1);
            for k in 0..=steps {
                let t = start + (timing.departure - start) * k as f64 / steps as f64;
                self.states_at(t, &mut states[..n]);
                for j in 0..n {
                    positions[j] = states[j].position;
                    rates[j] = states[j].velocity;
                    accelerations[j] = states[j].acceleration;
                }
                let payload = CommandedMotion::payload_at(self, t);
                if let Ok(efforts) = inverse_dynamics(
                    arm,
                    &positions[..n],
                    &rates[..n],
                    &accelerations[..n],
                    payload,
                ) {
                    peaks[index] = peaks[index].max(torque_use(arm, &efforts, derating).max_abs());
                }
            }
            start = timing.departure;
        }
        peaks
    }
}

impl TaskPlan {
    /// Every joint's position (rad or m), velocity (rad/s or m/s) and acceleration (rad/s² or
    /// m/s²) at time `t` (s, clamped to the plan) into `states`, as many as both hold. Follows
    /// the shaping where the task has it: a shaped run is a weighted sum of delayed copies, so
    /// its rates and accelerations come from central differences 1 ms apart; the jerk is then 0.
    pub fn states_at(&self, t: f64, states: &mut [JointState]) {
        if self.runs.is_empty() {
            self.plan.states_at(t, states);
            return;
        }
        // Central differences of the shaped positions, 1 ms apart.
        let h = 1e-3;
        let n = states.len().min(MAX_JOINTS);
        let mut before = [0.0; MAX_JOINTS];
        let mut here = [0.0; MAX_JOINTS];
        let mut after = [0.0; MAX_JOINTS];
        self.positions_at(t - h, &mut before[..n]);
        self.positions_at(t, &mut here[..n]);
        self.positions_at(t + h, &mut after[..n]);
        for j in 0..n {
            states[j] = JointState {
                position: here[j],
                velocity: (after[j] - before[j]) / (2.0 * h),
                acceleration: (after[j] - 2.0 * here[j] + before[j]) / (h * h),
                jerk: 0.0,
            };
        }
    }
}

impl CommandedMotion for TaskPlan {
    fn duration(&self) -> f64 {
        self.plan.duration() + self.runs.last().map_or(0.0, |run| run.shift + run.growth)
    }

    fn positions_at(&self, t: f64, positions: &mut [f64]) {
        // The run that started last at or before t, in shaped time.
        let index = self
            .runs
            .partition_point(|run| run.shaped_start() <= t)
            .checked_sub(1);
        let Some(run) = index.and_then(|i| self.runs.get(i)) else {
            self.plan.positions_at(t, positions);
            return;
        };
        if t > run.shaped_end() {
            // In the dwell after the run: the unshaped plan, later by everything added so far.
            self.plan
                .positions_at(t - run.shift - run.growth, positions);
            return;
        }
        let into = t - run.shaped_start();
        let span = run.end - run.start;
        for (joint, position) in positions.iter_mut().enumerate() {
            let at = |delay: f64| run.start + (into - delay).clamp(0.0, span);
            *position = match run.shapers.get(joint).copied().flatten() {
                Some(shaper) => shaper
                    .impulses()
                    .iter()
                    .map(|impulse| {
                        impulse.amplitude * self.plan.joint_position_at(at(impulse.time), joint)
                    })
                    .sum(),
                None => self.plan.joint_position_at(at(0.0), joint),
            };
        }
    }

    fn payload_at(&self, t: f64) -> f64 {
        // The gripper state of a waypoint holds from its arrival until the next arrival.
        let index = self
            .timings
            .partition_point(|w| w.arrival <= t)
            .saturating_sub(1);
        self.payload.get(index).copied().unwrap_or(0.0)
    }
}

/// Plans a task again with other speed shares and dwells: what retiming searches with.
#[derive(Debug, Clone)]
pub struct TaskPlanner<'a> {
    /// The arm.
    pub arm: &'a Arm,
    /// The task whose shares and dwells are replaced.
    pub task: &'a Task,
}

impl Planner for TaskPlanner<'_> {
    type Motion = TaskPlan;

    fn plan(&self, timing: &Timing) -> Result<(TaskPlan, Vec<WaypointTiming>), String> {
        let mut task = self.task.clone();
        for (index, waypoint) in task.waypoints.iter_mut().enumerate() {
            if let Some(&share) = timing.speed_share.get(index) {
                waypoint.speed_share = share;
            }
            if let Some(&dwell) = timing.dwell.get(index) {
                waypoint.dwell = dwell;
            }
        }
        let plan = plan_task(self.arm, &task).map_err(|e| e.to_string())?;
        let timings = plan.timings().to_vec();
        Ok((plan, timings))
    }
}

impl Task {
    /// The task's own speed shares and dwells, the starting point for retiming.
    pub fn timing(&self) -> Timing {
        Timing {
            speed_share: self.waypoints.iter().map(|w| w.speed_share).collect(),
            dwell: self.waypoints.iter().map(|w| w.dwell).collect(),
        }
    }
}
