//! The dry run: a plan run through the servo model on the arm, with what a user must know
//! before powering anything — overshoot and settling at each stop, following error, torque use.

use armwright_kinematics::{
    Arm, JointKind, KinematicsError, MAX_JOINTS, gravity_torques, joint_inertias, tool_pose,
};
use nalgebra::Vector3;

use crate::servo_sim::{
    Clock, JointLoad, MAX_RUN_DURATION, ServoModel, ServoModelOptions, ServoSimError, ServoTrace,
    SimState, Span, record, settled_start,
};

/// How often the following error is looked at along a move, in s.
const FOLLOWING_ERROR_INTERVAL: f64 = 0.004;

/// Time a hobby-servo gripper takes to open or close, in s: at a stop where the gripper changes
/// state it acts this long before the arm leaves (and not before the arm arrives), so that it
/// has closed on the object or let go of it before the next move. 0.2 s: a small servo turning
/// its horn about 60° at 0.1–0.2 s per 60° (from memory).
pub const GRIPPER_TIME: f64 = 0.2;

/// When the gripper acts at a waypoint reached at `arrival` s and left at `departure` s:
/// [`GRIPPER_TIME`] before the departure, but not before the arrival, in s.
pub fn gripper_moment(arrival: f64, departure: f64) -> f64 {
    (departure - GRIPPER_TIME).max(arrival)
}

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
    /// When the gripper changes state here, in s from the start (see [`gripper_moment`]);
    /// `None` where it keeps the state it had.
    pub gripper_acts: Option<f64>,
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
    /// to rest, in s; `None` when it is still moving when the arm leaves — or, where the gripper
    /// changes state, when the gripper acts — and for a pass-through.
    pub settle_time: Option<f64>,
    /// Whether the tool point has settled within the band (a settle time exists) before the arm
    /// leaves or, where the gripper changes state, before the gripper acts. Always `false` at a
    /// pass-through.
    pub settled: bool,
    /// When the gripper changes state here, in s from the start; `None` where it does not.
    pub gripper_acts: Option<f64>,
    /// Tool-point distance from the target when the arm leaves the waypoint (or at the end, or
    /// when the gripper acts where it changes state), in m: what deadband and gravity sag leave
    /// behind.
    pub resting_error: f64,
    /// The same as a vector in the base frame: rest − target, in m.
    pub resting_offset: [f64; 3],
    /// Largest tool-point distance between commanded and simulated on the move into the
    /// waypoint, looked at every 4 ms, in m.
    pub following_error: f64,
    /// Largest simulated torque use of any joint on the move into the waypoint and its dwell: the
    /// servo model's motor effort (the drive its position loop asks for less the back-EMF
    /// braking at its speed), as its mean over each pulse frame, over the derated stall torque
    /// (share; 1.0 = 100 % of stall × derating).
    pub peak_torque_use: f64,
    /// The joint (index, base first) with that largest torque use.
    pub peak_torque_joint: usize,
}

impl WaypointResult {
    /// Whether the gripper changes state here while the tool point has not settled within the
    /// settle band.
    pub fn gripper_unsettled(&self) -> bool {
        self.gripper_acts.is_some() && !self.settled
    }
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

    /// Worst simulated torque use of any waypoint (share of the derated stall torque; 1.0 =
    /// 100 %).
    pub fn worst_torque_use(&self) -> f64 {
        self.waypoints
            .iter()
            .map(|w| w.peak_torque_use)
            .fold(0.0, f64::max)
    }

    /// Waypoints (indices) where the gripper changes state before the tool point has settled.
    pub fn unsettled_gripper_stops(&self) -> Vec<usize> {
        (0..self.waypoints.len())
            .filter(|&i| self.waypoints[i].gripper_unsettled())
            .collect()
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
    Ok(dry_run_keeping_rests(arm, motion, waypoints, options, false)?.0)
}

/// [`dry_run`]; `for_search` keeps the simulation state at the start of the pulse frame in which
/// each waypoint is left (where [`rerun_stops`] starts its windows) and skips what a search
/// does not look at: the following error (it stays 0) and the commanded and speed traces (they
/// stay empty).
pub(crate) fn dry_run_keeping_rests<M: CommandedMotion>(
    arm: &Arm,
    motion: &M,
    waypoints: &[WaypointTiming],
    options: &DryRunOptions,
    for_search: bool,
) -> Result<(DryRun, Vec<SimState>), DryRunError> {
    let setup = Setup::new(arm, motion, waypoints, options)?;
    let mut commanded = |t: f64, out: &mut [f64]| motion.positions_at(t.min(setup.cycle_time), out);
    let mut loads = |t: f64, link: &[f64], loads: &mut [JointLoad]| {
        fill_loads(arm, link, motion.payload_at(t.min(setup.cycle_time)), loads)
    };
    let start = settled_start(
        &setup.models,
        &options.servo,
        &setup.clock,
        &mut commanded,
        &mut loads,
    );
    let rest_samples: Vec<usize> = if for_search {
        waypoints
            .iter()
            .map(|w| setup.rest_sample(w.departure))
            .collect()
    } else {
        Vec::new()
    };
    let span = Span {
        range: 0..setup.last_sample + 1,
        start,
        snapshots: &rest_samples,
        complete: !for_search,
    };
    let (trace, rests) = record(&setup.models, &setup.clock, span, commanded, loads);
    let measure = Measure {
        arm,
        trace: &trace,
        first: 0,
        last_sample: setup.last_sample,
        options,
        following: !for_search,
        reach: Reach::of(arm),
        frame_steps: setup.clock.steps_per_frame,
    };
    let mut start_pose = [0.0; MAX_JOINTS];
    motion.positions_at(0.0, &mut start_pose[..arm.joint_count()]);
    let results = measure.waypoints(motion, waypoints, 0, waypoints.len(), 0.0, start_pose)?;
    Ok((
        DryRun {
            trace,
            waypoints: results,
            cycle_time: setup.cycle_time,
        },
        rests,
    ))
}

/// The measures of the stops marked in `wanted` (and of the pass-throughs flowing into them),
/// simulated only from the stop before each of them: every window starts at the pulse frame in
/// which that stop is left, from its state in `rests` (kept by an earlier
/// [`dry_run_keeping_rests`] with the same dwell there); neighbouring windows run on as one.
/// Following error is not looked at (it stays 0). Every other waypoint, and the first (no move
/// leads into it), gets `None`.
///
/// This is the dry run of the whole motion wherever the arm is at rest when it leaves the stop
/// before: what comes earlier shows only through that rest state.
pub(crate) fn rerun_stops<M: CommandedMotion>(
    arm: &Arm,
    motion: &M,
    waypoints: &[WaypointTiming],
    options: &DryRunOptions,
    rests: &[SimState],
    wanted: &[bool],
) -> Result<Vec<Option<WaypointResult>>, DryRunError> {
    let setup = Setup::new(arm, motion, waypoints, options)?;
    let n = arm.joint_count();
    let mut results = vec![None; waypoints.len()];
    let mut previous_stop = 0;
    let mut index = 1;
    while index < waypoints.len() {
        if !waypoints[index].stop {
            index += 1;
            continue;
        }
        if !wanted[index] {
            previous_stop = index;
            index += 1;
            continue;
        }
        // The window runs from the stop before to the last wanted stop of a run of them.
        let mut last = index;
        let mut next = index + 1;
        while next < waypoints.len() {
            if waypoints[next].stop {
                if !wanted[next] {
                    break;
                }
                last = next;
            }
            next += 1;
        }
        let from = &waypoints[previous_stop];
        let first_sample = setup.rest_sample(from.departure);
        let end_sample = if last + 1 == waypoints.len() {
            setup.last_sample
        } else {
            setup.sample_of(waypoints[last].departure)
        };
        let span = Span {
            range: first_sample..end_sample + 1,
            start: rests[previous_stop],
            snapshots: &[],
            complete: false,
        };
        let (trace, _) = record(
            &setup.models,
            &setup.clock,
            span,
            |t: f64, out: &mut [f64]| motion.positions_at(t.min(setup.cycle_time), out),
            |t: f64, link: &[f64], loads: &mut [JointLoad]| {
                fill_loads(arm, link, motion.payload_at(t.min(setup.cycle_time)), loads)
            },
        );
        let measure = Measure {
            arm,
            trace: &trace,
            first: first_sample,
            last_sample: setup.last_sample,
            options,
            following: false,
            reach: Reach::of(arm),
            frame_steps: setup.clock.steps_per_frame,
        };
        let mut start_pose = [0.0; MAX_JOINTS];
        motion.positions_at(from.arrival, &mut start_pose[..n]);
        let measured = measure.waypoints(
            motion,
            waypoints,
            previous_stop + 1,
            last + 1,
            from.departure,
            start_pose,
        )?;
        for (offset, result) in measured.into_iter().enumerate() {
            results[previous_stop + 1 + offset] = Some(result);
        }
        previous_stop = last;
        index = last + 1;
    }
    Ok(results)
}

/// What every run of one motion shares: the checked timings, servo models and clock.
struct Setup {
    models: Vec<ServoModel>,
    clock: Clock,
    cycle_time: f64,
    /// Index of the run's last sample (the motion and the tail after it).
    last_sample: usize,
}

impl Setup {
    fn new<M: CommandedMotion>(
        arm: &Arm,
        motion: &M,
        waypoints: &[WaypointTiming],
        options: &DryRunOptions,
    ) -> Result<Setup, DryRunError> {
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
        let clock = Clock::new(&models, &options.servo)?;
        let duration = cycle_time + options.tail.max(0.0);
        if !(duration.is_finite() && (0.0..=MAX_RUN_DURATION).contains(&duration)) {
            return Err(ServoSimError::Duration { duration }.into());
        }
        let last_sample = clock.samples(duration) - 1;
        Ok(Setup {
            models,
            clock,
            cycle_time,
            last_sample,
        })
    }

    fn sample_of(&self, t: f64) -> usize {
        ((t / self.clock.step).round() as usize).min(self.last_sample)
    }

    /// The sample a window leaving at `t` s starts from: the start of the frame it falls in.
    fn rest_sample(&self, t: f64) -> usize {
        self.clock.frame_start(self.sample_of(t))
    }
}

/// Measures waypoints on a recorded stretch of a run.
struct Measure<'a> {
    arm: &'a Arm,
    trace: &'a ServoTrace,
    /// The run's sample index of the trace's first sample.
    first: usize,
    /// The run's last sample index.
    last_sample: usize,
    options: &'a DryRunOptions,
    /// Whether to look at the following error.
    following: bool,
    reach: Reach,
    /// Samples in a pulse frame.
    frame_steps: usize,
}

impl Measure<'_> {
    fn sample_of(&self, t: f64) -> usize {
        ((t / self.trace.step).round() as usize).min(self.last_sample)
    }

    fn actual_at(&self, k: usize) -> &[f64] {
        self.trace.actual_at(k - self.first)
    }

    /// The largest mean |motor effort share| over a pulse frame among the frames that samples
    /// `from..=to` fall in (a frame cut short at `to`), and the joint it belongs to.
    ///
    /// Within every frame the servo's drive swings hard as it takes up the step in its command;
    /// the mean over the frame is the effort the servo keeps up, the figure a rating is for.
    /// Frames start where the run's frames start, so a window of the run measures what the
    /// whole run measured.
    fn peak_frame_effort(&self, from: usize, to: usize) -> (f64, usize) {
        let n = self.trace.joint_count;
        let drive = &self.trace.effort_share;
        let first = self.first;
        let per_frame = self.frame_steps.max(1);
        let mut peak = (0.0, 0);
        let mut frame = (from / per_frame * per_frame).max(first);
        while frame <= to {
            let end = (frame + per_frame - 1).min(to);
            for j in 0..n {
                let sum: f64 = (frame..=end)
                    .map(|k| drive[(k - first) * n + j].abs())
                    .sum();
                let mean = sum / (end - frame + 1) as f64;
                if mean > peak.0 {
                    peak = (mean, j);
                }
            }
            frame += per_frame;
        }
        peak
    }

    /// Waypoints `from..to`, the move into `from` starting at `move_start` s from `start_pose`.
    fn waypoints<M: CommandedMotion>(
        &self,
        motion: &M,
        waypoints: &[WaypointTiming],
        from: usize,
        to: usize,
        mut move_start: f64,
        mut start_pose: [f64; MAX_JOINTS],
    ) -> Result<Vec<WaypointResult>, KinematicsError> {
        let arm = self.arm;
        let n = arm.joint_count();
        let step = self.trace.step;
        let mut results = Vec::with_capacity(to - from);
        let mut target = [0.0; MAX_JOINTS];
        for (index, w) in waypoints.iter().enumerate().take(to).skip(from) {
            motion.positions_at(w.arrival, &mut target[..n]);
            let target_point = tool_point(arm, &target[..n])?;
            let start_point = tool_point(arm, &start_pose[..n])?;
            let approach = target_point - start_point;
            let direction = if approach.norm() > 1e-4 {
                Some(approach.normalize())
            } else {
                None
            };
            let window_end = if index + 1 == waypoints.len() {
                self.last_sample
            } else {
                self.sample_of(w.departure)
            };

            let mut following_error: f64 = 0.0;
            if self.following {
                // Following error changes smoothly along a move: look at it every few ms.
                let stride = ((FOLLOWING_ERROR_INTERVAL / step).round() as usize).max(1);
                // The last poses worked out and their error: a sample whose poses lie too close
                // to them to beat the largest error so far needs no forward kinematics.
                let mut known: Option<(&[f64], &[f64], f64)> = None;
                for k in (self.sample_of(move_start)..=self.sample_of(w.arrival)).step_by(stride) {
                    let actual = self.actual_at(k);
                    let commanded = self.trace.commanded_at(k - self.first);
                    if let Some((was_actual, was_commanded, error)) = known {
                        let reachable = error
                            + self.reach.bound(was_actual, actual)
                            + self.reach.bound(was_commanded, commanded)
                            + BOUND_SLACK;
                        if reachable < following_error {
                            continue;
                        }
                    }
                    let error = (tool_point(arm, actual)? - tool_point(arm, commanded)?).norm();
                    following_error = following_error.max(error);
                    known = Some((actual, commanded, error));
                }
            }
            let (peak_effort, peak_torque_joint) =
                self.peak_frame_effort(self.sample_of(move_start), window_end);

            let mut result = WaypointResult {
                overshoot: 0.0,
                joint_overshoot: [0.0; MAX_JOINTS],
                settle_time: None,
                settled: false,
                gripper_acts: w.gripper_acts,
                resting_error: 0.0,
                resting_offset: [0.0; 3],
                following_error,
                peak_torque_use: peak_effort / self.options.derating,
                peak_torque_joint,
            };
            if w.stop {
                // Where the gripper acts, the stop is judged up to that moment: it must have
                // settled before the gripper closes on or lets go of the object.
                let stop_end = match w.gripper_acts {
                    Some(moment) => self
                        .sample_of(moment)
                        .clamp(self.sample_of(w.arrival), window_end),
                    None => window_end,
                };
                self.stop(
                    w,
                    self.sample_of(w.arrival),
                    stop_end,
                    direction,
                    &target,
                    &start_pose,
                    &target_point,
                    &mut result,
                )?;
            }
            results.push(result);
            move_start = w.departure;
            start_pose = target;
        }
        Ok(results)
    }

    /// Overshoot, settling and resting error at a stop, between its arrival and departure
    /// samples.
    ///
    /// Overshoot and settling are measured against where the arm comes to rest (the classical
    /// definitions, relative to the final value; Ogata, *Modern Control Engineering*, 5th ed.,
    /// §5-3); how far that rest lies from the target is the resting error.
    #[allow(clippy::too_many_arguments)]
    fn stop(
        &self,
        timing: &WaypointTiming,
        first: usize,
        last: usize,
        direction: Option<Vector3<f64>>,
        target: &[f64; MAX_JOINTS],
        start_pose: &[f64; MAX_JOINTS],
        target_point: &Vector3<f64>,
        result: &mut WaypointResult,
    ) -> Result<(), KinematicsError> {
        let arm = self.arm;
        let options = self.options;
        let n = arm.joint_count();
        let step = self.trace.step;
        let rest = self.actual_at(last);
        let rest_point = tool_point(arm, rest)?;
        let offset = rest_point - target_point;
        result.resting_error = offset.norm();
        result.resting_offset = [offset.x, offset.y, offset.z];
        // Still moving when the arm leaves: no settle time. "Moving" is the tool point covering
        // more than the settle band in 0.1 s, judged over the last 10 ms.
        // The look back may reach before the arrival (a gripper acting at once leaves no time).
        let look_back = ((0.01 / step).round() as usize).min(last - self.first);
        let earlier = tool_point(arm, self.actual_at(last - look_back))?;
        let speed = if look_back > 0 {
            (rest_point - earlier).norm() / (look_back as f64 * step)
        } else {
            0.0
        };
        let still = speed <= options.settle_band / 0.1;
        let mut settled_from = None;
        // The tool point at the last sample where it was worked out: its joint positions, how
        // far it lay past the rest along the approach, and its distance from the rest. A later
        // sample whose tool point cannot have moved far enough from it to raise the overshoot
        // or to cross the settle band needs no forward kinematics (see `Reach`).
        let mut known: Option<(&[f64], f64, f64)> = None;
        for k in first..=last {
            let actual = self.actual_at(k);
            let settled_side = known.and_then(|(at, along, distance)| {
                let moved = self.reach.bound(at, actual) + BOUND_SLACK;
                let below_peak = direction.is_none() || along + moved < result.overshoot;
                let clear_of_band = (distance - options.settle_band).abs() > moved;
                (below_peak && clear_of_band).then_some(distance <= options.settle_band)
            });
            let within = match settled_side {
                Some(within) => within,
                None => {
                    let point = tool_point(arm, actual)?;
                    let along = direction.map_or(0.0, |d| (point - rest_point).dot(&d));
                    if direction.is_some() {
                        result.overshoot = result.overshoot.max(along);
                    }
                    let distance = (point - rest_point).norm();
                    known = Some((actual, along, distance));
                    distance <= options.settle_band
                }
            };
            for j in 0..n {
                let sense = (target[j] - start_pose[j]).signum();
                if sense != 0.0 {
                    let past = (actual[j] - rest[j]) * sense;
                    result.joint_overshoot[j] = result.joint_overshoot[j].max(past);
                }
            }
            settled_from = match (within, settled_from) {
                (true, None) => Some(k),
                (true, kept) => kept,
                (false, _) => None,
            };
        }
        if still {
            result.settle_time = settled_from.map(|k| (k as f64 * step - timing.arrival).max(0.0));
        }
        result.settled = result.settle_time.is_some();
        Ok(())
    }
}

/// Slack added to [`Reach::bound`], in m: far above the rounding of forward kinematics (about
/// 1e-16 m here), so a skipped sample can never have changed a measure.
const BOUND_SLACK: f64 = 1e-12;

/// How far the tool point can move when the joints move: a bound from the arm's geometry.
///
/// Turning revolute joint j by δ moves the tool point by at most δ × its distance from j's axis,
/// and that distance is at most the sum of the offsets of every later joint and of the tool
/// (triangle inequality), counting a later sliding joint at the larger of its two extensions;
/// sliding joint j by δ moves it by δ. Summed over the joints, this bounds the distance between
/// the tool points of two poses (along the straight line between them in joint space).
struct Reach {
    /// Each joint's fixed offset from the one before, in m.
    offsets: [f64; MAX_JOINTS],
    /// Whether each joint slides.
    prismatic: [bool; MAX_JOINTS],
    /// The tool point's offset from the last joint, in m.
    tool: f64,
    count: usize,
}

impl Reach {
    fn of(arm: &Arm) -> Reach {
        let mut offsets = [0.0; MAX_JOINTS];
        let mut prismatic = [false; MAX_JOINTS];
        for (j, joint) in arm.joints().iter().enumerate() {
            offsets[j] = joint.origin.translation.vector.norm();
            prismatic[j] = joint.kind == JointKind::Prismatic;
        }
        Reach {
            offsets,
            prismatic,
            tool: arm.tool_offset().translation.vector.norm(),
            count: arm.joint_count(),
        }
    }

    /// An upper bound on the distance between the tool points of poses `a` and `b`, in m.
    fn bound(&self, a: &[f64], b: &[f64]) -> f64 {
        let mut reach = self.tool;
        let mut moved = 0.0;
        for j in (0..self.count).rev() {
            let step = (a[j] - b[j]).abs();
            if self.prismatic[j] {
                moved += step;
                reach += self.offsets[j] + a[j].abs().max(b[j].abs());
            } else {
                moved += step * reach;
                reach += self.offsets[j];
            }
        }
        moved
    }
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

#[cfg(test)]
use armwright_test_support::arms;

#[cfg(test)]
mod tests {
    use super::*;
    use crate::arm_limits::LimitSettings;
    use crate::arm_plan::{Task, TaskWaypoint, plan_task};
    use crate::profile::ProfileShape;

    #[test]
    fn reach_bounds_how_far_the_tool_point_moves() {
        let mut rng = arms::Seeded::new(7);
        let mut chains: Vec<Arm> = vec![arms::scara(), arms::articulated(true)];
        for count in 2..=6 {
            chains.push(arms::random_chain(&mut rng, count));
        }
        for arm in &chains {
            let reach = Reach::of(arm);
            for _ in 0..2000 {
                let a = rng.pose(arm);
                // Near poses (what the dry run compares) and far ones.
                let spread = if rng.uniform(0.0, 1.0) < 0.5 {
                    1e-3
                } else {
                    1.0
                };
                let b: Vec<f64> = a.iter().map(|q| q + rng.uniform(-spread, spread)).collect();
                let moved = (tool_point(arm, &a).unwrap() - tool_point(arm, &b).unwrap()).norm();
                let bound = reach.bound(&a, &b);
                assert!(moved <= bound * (1.0 + 1e-12), "{moved} > {bound}");
            }
        }
    }

    #[test]
    fn windows_from_the_rests_of_a_whole_run_measure_what_it_measured() {
        let arm = arms::articulated(true);
        let mut rng = arms::Seeded::new(3);
        let centre = [0.0, 0.9, -1.2, 0.3, 0.0];
        let waypoints: Vec<TaskWaypoint> = (0..12)
            .map(|i| TaskWaypoint {
                positions: centre.iter().map(|c| c + rng.uniform(-0.4, 0.4)).collect(),
                stop: i % 3 != 1,
                dwell: 0.3,
                speed_share: rng.uniform(0.4, 1.0),
                gripper_closed: i % 4 < 2,
                straight: false,
                shape: ProfileShape::DoubleS,
            })
            .collect();
        let task = Task {
            waypoints,
            limits: LimitSettings::default(),
            model: ServoModelOptions::default(),
            shaping: None,
        };
        let plan = plan_task(&arm, &task).unwrap();
        let timings = plan.timings();
        let options = DryRunOptions::default();
        let (whole, rests) = dry_run_keeping_rests(&arm, &plan, timings, &options, true).unwrap();
        let count = timings.len();
        for pattern in [
            0b1111_1111_1111_u32,
            0b0101_0010_1001,
            0b1000_0000_0000,
            0b0000_0000_0100,
        ] {
            let wanted: Vec<bool> = (0..count)
                .map(|i| i > 0 && timings[i].stop && pattern >> i & 1 == 1)
                .collect();
            let windows = rerun_stops(&arm, &plan, timings, &options, &rests, &wanted).unwrap();
            for (i, window) in windows.iter().enumerate() {
                let expected = wanted[i]
                    || (!timings[i].stop && {
                        // A pass-through is measured with the stop it flows into.
                        let next_stop = (i..count).find(|&k| timings[k].stop).unwrap();
                        wanted[next_stop]
                    });
                assert_eq!(
                    window.is_some(),
                    expected,
                    "waypoint {i}, pattern {pattern:b}"
                );
                if let Some(result) = window {
                    let full = WaypointResult {
                        following_error: 0.0,
                        ..whole.waypoints[i].clone()
                    };
                    assert_eq!(result, &full, "waypoint {i}, pattern {pattern:b}");
                }
            }
        }
    }
}
