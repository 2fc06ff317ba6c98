//! The dry run: a plan run through the servo model on the arm, with what a user must know
//! before powering anything — overshoot and settling at each stop, following error, torque use.

use armwright_kinematics::{
    Arm, KinematicsError, MAX_JOINTS, gravity_torques, joint_inertias, tool_pose,
};
use nalgebra::Vector3;

use crate::servo_sim::{
    JointLoad, ServoModel, ServoModelOptions, ServoSimError, ServoTrace, simulate,
};

/// How often the following error is looked at along a move, in s.
const FOLLOWING_ERROR_INTERVAL: f64 = 0.004;

/// A timed motion the dry run can follow.
pub trait CommandedMotion {
    /// Length of the motion, in s.
    fn duration(&self) -> f64;
    /// Commanded joint positions (rad or m) at time `t` (s), clamped to the motion's span.
    fn positions_at(&self, t: f64, positions: &mut [f64]);
    /// Payload held at time `t` (s), in kg: the arm's payload while the gripper is closed, 0
    /// while it is open.
    fn payload_at(&self, t: f64) -> f64;
}

/// Where one waypoint sits in time in the plan, in s from the start.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct WaypointTiming {
    /// When the commanded motion reaches the waypoint.
    pub arrival: f64,
    /// When the commanded motion leaves it (arrival + dwell for a stop; arrival for a
    /// pass-through).
    pub departure: f64,
    /// Whether the arm comes to rest there.
    pub stop: bool,
}

/// Settings of a dry run.
#[derive(Debug, Clone, PartialEq)]
pub struct DryRunOptions {
    /// The servo model's settings.
    pub servo: ServoModelOptions,
    /// Distance from a stop's target within which the tool point counts as settled, in m.
    /// Default 1 mm.
    pub settle_band: f64,
    /// Share of each servo's stall torque the user allows (0–1]. Default 1.
    pub derating: f64,
    /// Extra time watched after the last waypoint for settling, in s. Default 1 s.
    pub tail: f64,
}

impl Default for DryRunOptions {
    fn default() -> Self {
        DryRunOptions {
            servo: ServoModelOptions::default(),
            settle_band: 1e-3,
            derating: 1.0,
            tail: 1.0,
        }
    }
}

/// How the servos follow the plan at one waypoint and on the move into it.
#[derive(Debug, Clone, PartialEq)]
pub struct WaypointResult {
    /// Furthest the tool point went past where it came to rest, along the direction of
    /// approach, in m (0 for a pass-through or when the tool point hardly moves).
    pub overshoot: f64,
    /// Furthest each joint went past where it came to rest, in the direction it moved (rad or m).
    pub joint_overshoot: [f64; MAX_JOINTS],
    /// Time from arrival until the tool point stays within the settle band around where it comes
    /// to rest, in s; `None` when it is still moving when the arm leaves (or for a pass-through).
    pub settle_time: Option<f64>,
    /// Tool-point distance from the target when the arm leaves the waypoint (or at the end), in
    /// m: what deadband and gravity sag leave behind.
    pub resting_error: f64,
    /// Largest tool-point distance between commanded and simulated on the move into the
    /// waypoint, looked at every 4 ms, in m.
    pub following_error: f64,
    /// Largest torque use of any joint on the move into the waypoint and its dwell (share of
    /// derated stall torque; 1.0 = 100 %).
    pub peak_torque_use: f64,
}

/// A finished dry run.
#[derive(Debug, Clone, PartialEq)]
pub struct DryRun {
    /// Every joint at every integration step.
    pub trace: ServoTrace,
    /// One per waypoint, in order.
    pub waypoints: Vec<WaypointResult>,
    /// The plan's length, in s.
    pub cycle_time: f64,
}

impl DryRun {
    /// Worst overshoot of any waypoint, in m.
    pub fn worst_overshoot(&self) -> f64 {
        self.waypoints
            .iter()
            .map(|w| w.overshoot)
            .fold(0.0, f64::max)
    }

    /// Worst torque use of any waypoint (share; 1.0 = 100 %).
    pub fn worst_torque_use(&self) -> f64 {
        self.waypoints
            .iter()
            .map(|w| w.peak_torque_use)
            .fold(0.0, f64::max)
    }

    /// Worst following error, in m.
    pub fn worst_following_error(&self) -> f64 {
        self.waypoints
            .iter()
            .map(|w| w.following_error)
            .fold(0.0, f64::max)
    }
}

/// Why a dry run could not be made.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum DryRunError {
    /// The servo simulation could not start.
    #[error(transparent)]
    Simulation(#[from] ServoSimError),
    /// A pose the arm cannot take.
    #[error(transparent)]
    Kinematics(#[from] KinematicsError),
    /// Waypoint timings must lie within the motion and be in order.
    #[error(
        "waypoint {index} timing ({arrival} s – {departure} s) is out of order or outside the plan"
    )]
    Timing {
        /// Waypoint index.
        index: usize,
        /// Its arrival, in s.
        arrival: f64,
        /// Its departure, in s.
        departure: f64,
    },
}

/// Runs `motion` through the servo model of every joint of `arm` and measures each waypoint.
///
/// # Errors
/// [`DryRunError`] when the timings are out of order or the simulation cannot start.
pub fn dry_run<M: CommandedMotion>(
    arm: &Arm,
    motion: &M,
    waypoints: &[WaypointTiming],
    options: &DryRunOptions,
) -> Result<DryRun, DryRunError> {
    let n = arm.joint_count();
    let cycle_time = motion.duration();
    let mut previous = 0.0;
    for (index, w) in waypoints.iter().enumerate() {
        let ordered = w.arrival >= previous - 1e-9 && w.departure >= w.arrival - 1e-9;
        if !ordered || w.departure > cycle_time + 1e-9 || !w.arrival.is_finite() {
            return Err(DryRunError::Timing {
                index,
                arrival: w.arrival,
                departure: w.departure,
            });
        }
        previous = w.departure;
    }
    let models: Vec<ServoModel> = arm
        .joints()
        .iter()
        .map(|joint| ServoModel::of_joint(joint, &options.servo))
        .collect();
    let trace = simulate(
        &models,
        &options.servo,
        cycle_time + options.tail.max(0.0),
        |t, out| motion.positions_at(t.min(cycle_time), out),
        |t, link, loads| fill_loads(arm, link, motion.payload_at(t.min(cycle_time)), loads),
    )?;

    let step = trace.step;
    let last_sample = trace.len().saturating_sub(1);
    let sample_of = |t: f64| ((t / step).round() as usize).min(last_sample);
    let mut results = Vec::with_capacity(waypoints.len());
    let mut target = [0.0; MAX_JOINTS];
    let mut move_start = 0.0;
    let mut start_pose = [0.0; MAX_JOINTS];
    motion.positions_at(0.0, &mut start_pose[..n]);
    for (index, w) in waypoints.iter().enumerate() {
        motion.positions_at(w.arrival, &mut target[..n]);
        let target_point = tool_pose(arm, &target[..n])?.translation.vector;
        let start_point = tool_pose(arm, &start_pose[..n])?.translation.vector;
        let approach = target_point - start_point;
        let direction = if approach.norm() > 1e-4 {
            Some(approach.normalize())
        } else {
            None
        };
        let window_end = if index + 1 == waypoints.len() {
            last_sample
        } else {
            sample_of(w.departure)
        };

        let mut following_error: f64 = 0.0;
        let mut peak_effort: f64 = 0.0;
        // Following error changes smoothly along a move: look at it every few ms.
        let stride = ((FOLLOWING_ERROR_INTERVAL / step).round() as usize).max(1);
        for k in (sample_of(move_start)..=sample_of(w.arrival)).step_by(stride) {
            let actual = tool_point(arm, trace.actual_at(k))?;
            let commanded = tool_point(arm, trace.commanded_at(k))?;
            following_error = following_error.max((actual - commanded).norm());
        }
        for k in sample_of(move_start)..=window_end {
            let efforts = &trace.drive_share[k * n..(k + 1) * n];
            peak_effort = efforts.iter().fold(peak_effort, |m, e| m.max(e.abs()));
        }

        let mut result = WaypointResult {
            overshoot: 0.0,
            joint_overshoot: [0.0; MAX_JOINTS],
            settle_time: None,
            resting_error: 0.0,
            following_error,
            peak_torque_use: peak_effort / options.derating,
        };
        if w.stop {
            measure_stop(
                arm,
                &trace,
                w,
                sample_of(w.arrival),
                window_end,
                direction,
                &target,
                &start_pose,
                &target_point,
                options,
                &mut result,
            )?;
        }
        results.push(result);
        move_start = w.departure;
        start_pose = target;
    }
    Ok(DryRun {
        trace,
        waypoints: results,
        cycle_time,
    })
}

/// Overshoot, settling and resting error at a stop, between its arrival and departure samples.
///
/// Overshoot and settling are measured against where the arm comes to rest (the classical
/// definitions, relative to the final value; Ogata, *Modern Control Engineering*, 5th ed., §5-3);
/// how far that rest lies from the target is the resting error.
#[allow(clippy::too_many_arguments)]
fn measure_stop(
    arm: &Arm,
    trace: &ServoTrace,
    timing: &WaypointTiming,
    first: usize,
    last: usize,
    direction: Option<Vector3<f64>>,
    target: &[f64; MAX_JOINTS],
    start_pose: &[f64; MAX_JOINTS],
    target_point: &Vector3<f64>,
    options: &DryRunOptions,
    result: &mut WaypointResult,
) -> Result<(), KinematicsError> {
    let n = arm.joint_count();
    let step = trace.step;
    let rest = trace.actual_at(last);
    let rest_point = tool_point(arm, rest)?;
    result.resting_error = (rest_point - target_point).norm();
    // Still moving when the arm leaves: no settle time. "Moving" is the tool point covering more
    // than the settle band in 0.1 s, judged over the last 10 ms.
    let look_back = ((0.01 / step).round() as usize).min(last - first);
    let earlier = tool_point(arm, trace.actual_at(last - look_back))?;
    let speed = if look_back > 0 {
        (rest_point - earlier).norm() / (look_back as f64 * step)
    } else {
        0.0
    };
    let still = speed <= options.settle_band / 0.1;
    let mut settled_from = None;
    for k in first..=last {
        let actual = trace.actual_at(k);
        let point = tool_point(arm, actual)?;
        if let Some(d) = direction {
            result.overshoot = result.overshoot.max((point - rest_point).dot(&d));
        }
        for j in 0..n {
            let sense = (target[j] - start_pose[j]).signum();
            if sense != 0.0 {
                let past = (actual[j] - rest[j]) * sense;
                result.joint_overshoot[j] = result.joint_overshoot[j].max(past);
            }
        }
        let within = (point - rest_point).norm() <= options.settle_band;
        settled_from = match (within, settled_from) {
            (true, None) => Some(k),
            (true, kept) => kept,
            (false, _) => None,
        };
    }
    if still {
        result.settle_time = settled_from.map(|k| (k as f64 * step - timing.arrival).max(0.0));
    }
    Ok(())
}

fn tool_point(arm: &Arm, positions: &[f64]) -> Result<Vector3<f64>, KinematicsError> {
    Ok(tool_pose(arm, positions)?.translation.vector)
}

/// Each joint's load at the actual pose: the inertia it moves (with the others held) and the
/// effort gravity asks. A pose the kinematics refuses leaves the loads as they were.
fn fill_loads(arm: &Arm, link: &[f64], payload: f64, loads: &mut [JointLoad]) {
    if let Ok(gravity) = gravity_torques(arm, link, payload) {
        for (load, effort) in loads.iter_mut().zip(gravity.as_slice()) {
            load.holding_effort = *effort;
        }
    }
    if let Ok(inertias) = joint_inertias(arm, link, payload) {
        for (load, inertia) in loads.iter_mut().zip(inertias.as_slice()) {
            load.inertia = *inertia;
        }
    }
}
