//! The servo model for dry runs: how hobby servos and their joints follow commanded pulse widths.
//!
//! Each joint is simulated on its own (decoupled): the servo's position loop turns the pulse-width
//! error into motor torque, the joint's inertia and gravity load (from the kinematics crate, at
//! the actual pose, refreshed every pulse frame) resist it, and gear backlash sits between the
//! servo output and the link. Integration is classical fourth-order Runge–Kutta at a fixed step
//! that divides the pulse frame, so the held pulse never changes inside a step.

use armwright_kinematics::{Calibration, DEFAULT_PULSE_UNIT_US, Joint, MAX_JOINTS};

/// Settings of the servo model that a scene does not carry, with defaults.
#[derive(Debug, Clone, PartialEq)]
pub struct ServoModelOptions {
    /// Least damping ratio of the linearised position loop: where the motor's back-EMF damping
    /// gives less at the current inertia, viscous damping in the gears makes up the rest.
    /// Default 0.3 (hobby servos with long, light links ring visibly; a value
    /// from memory, to be tuned by the user against their arm).
    pub damping_ratio: f64,
    /// Mechanical time constant of the unloaded servo, in s: the motor and gear-train inertia seen
    /// at the output is this × stall torque ÷ no-load speed. Default 0.01 s (small DC gear
    /// motors have mechanical time constants of a few to tens of ms; from memory).
    pub motor_time_constant: f64,
    /// Coulomb (dry) friction in the gear train as a share of stall torque. Default 0.02.
    pub friction_share: f64,
    /// Speed below which dry friction is smoothed towards zero, in rad/s (m/s). Default 0.02.
    pub friction_smoothing: f64,
    /// Smallest pulse-width step the device makes, in µs. Default 1 µs
    /// ([`DEFAULT_PULSE_UNIT_US`]).
    pub pulse_resolution_us: f64,
    /// Time between pulses: the servo sees a new command once per frame, in s. Default 0.02 s
    /// (the usual 50 Hz servo frame; common practice).
    pub frame_period: f64,
    /// Integration step, in s; must divide `frame_period` into a whole number. Default 0.001 s.
    pub step: f64,
    /// How long the arm rests at the first command before the recorded run starts, so that it
    /// begins settled under its gravity load, in s. Default 0.5 s.
    pub settle_before: f64,
}

impl Default for ServoModelOptions {
    fn default() -> Self {
        ServoModelOptions {
            damping_ratio: 0.3,
            motor_time_constant: 0.01,
            friction_share: 0.02,
            friction_smoothing: 0.02,
            pulse_resolution_us: DEFAULT_PULSE_UNIT_US,
            frame_period: 0.02,
            step: 0.001,
            settle_before: 0.5,
        }
    }
}

/// One joint's servo as the dry run models it. Efforts at the joint: N·m and rad for a revolute
/// joint, N and m for a prismatic one.
#[derive(Debug, Clone, PartialEq)]
pub struct ServoModel {
    /// Effort at stall, at the joint (N·m or N).
    pub stall_effort: f64,
    /// Joint speed with no load (rad/s or m/s).
    pub no_load_speed: f64,
    /// Pulse-width error the servo ignores, in µs (total width, half each side).
    pub deadband_us: f64,
    /// Pulse-width error beyond the deadband that gives full drive, in µs.
    pub proportional_band_us: f64,
    /// Joint position ↔ pulse width.
    pub calibration: Calibration,
    /// Total play between servo output and link (rad or m).
    pub backlash: f64,
    /// Motor and gear-train inertia seen at the joint (kg·m² or kg).
    pub motor_inertia: f64,
    /// Damping ratio of the linearised loop.
    pub damping_ratio: f64,
    /// Dry friction at the joint (N·m or N).
    pub dry_friction: f64,
    /// Speed below which dry friction is smoothed (rad/s or m/s).
    pub friction_smoothing: f64,
    /// Pulse resolution, in µs.
    pub pulse_resolution_us: f64,
}

impl ServoModel {
    /// The model of a joint's servo with the given options.
    pub fn of_joint(joint: &Joint, options: &ServoModelOptions) -> ServoModel {
        let servo = &joint.servo;
        let stall_effort = servo.stall_torque / servo.drive_ratio;
        let no_load_speed = servo.no_load_speed * servo.drive_ratio;
        ServoModel {
            stall_effort,
            no_load_speed,
            deadband_us: servo.deadband_us,
            proportional_band_us: servo.proportional_band_us,
            calibration: joint.calibration.clone(),
            backlash: servo.backlash * servo.drive_ratio,
            motor_inertia: options.motor_time_constant * stall_effort / no_load_speed,
            damping_ratio: options.damping_ratio,
            dry_friction: options.friction_share * stall_effort,
            friction_smoothing: options.friction_smoothing,
            pulse_resolution_us: options.pulse_resolution_us,
        }
    }

    /// Stiffness of the position loop across its proportional band, in N·m/rad (N/m).
    pub fn stiffness(&self) -> f64 {
        self.stall_effort * self.calibration.slope_us().abs() / self.proportional_band_us
    }

    /// The pulse width the device sends for a commanded position (rad or m), in µs: the pulse
    /// rule of the arm model ([`Calibration::sent_pulse`]) with the pulse resolution as the
    /// device's unit.
    pub fn commanded_pulse_us(&self, position: f64) -> f64 {
        self.calibration
            .sent_pulse(position, self.pulse_resolution_us)
            .pulse_us
    }

    /// Undamped natural frequency of the linearised loop with `load_inertia` added, in rad/s.
    pub fn natural_frequency(&self, load_inertia: f64) -> f64 {
        (self.stiffness() / (self.motor_inertia + load_inertia)).sqrt()
    }

    /// The servo output's acceleration (rad/s² or m/s²) for a held pulse, a load and a state.
    ///
    /// `pulse_us` is the held command; `load_inertia` (kg·m² or kg) is what the joint moves
    /// beyond the servo; `holding_effort` is the effort gravity asks of the servo (N·m or N);
    /// `position` and `velocity` are the servo output's.
    pub fn acceleration(
        &self,
        pulse_us: f64,
        load_inertia: f64,
        holding_effort: f64,
        position: f64,
        velocity: f64,
    ) -> f64 {
        let inertia = self.motor_inertia + load_inertia;
        let motor = self.stall_effort * self.effort_share(pulse_us, position, velocity);
        let viscous = self.gear_damping(inertia);
        let dry = self.dry_friction * velocity
            / (velocity * velocity + self.friction_smoothing * self.friction_smoothing).sqrt();
        (motor - viscous * velocity - dry - holding_effort) / inertia
    }

    /// Motor effort as a signed share of stall effort: the drive the position loop asks for,
    /// less the back-EMF braking of a DC motor turning at `velocity` (so at full drive the
    /// effort falls linearly to zero at the no-load speed: the torque–speed line).
    pub fn effort_share(&self, pulse_us: f64, position: f64, velocity: f64) -> f64 {
        self.drive_share(pulse_us, position) - velocity / self.no_load_speed
    }

    /// Viscous damping in the gears (N·m·s/rad or N·s/m) that brings the linearised loop up to
    /// the model's damping ratio where the motor's own back-EMF damping (stall effort over
    /// no-load speed) gives less, for a total `inertia` (kg·m² or kg).
    pub fn gear_damping(&self, inertia: f64) -> f64 {
        let wanted = 2.0 * self.damping_ratio * (self.stiffness() * inertia).sqrt();
        (wanted - self.stall_effort / self.no_load_speed).max(0.0)
    }

    /// Share of full drive the position loop asks for (−1..1) at a held pulse and position.
    pub fn drive_share(&self, pulse_us: f64, position: f64) -> f64 {
        // Error in µs, signed in the direction of increasing position.
        let error_us =
            (pulse_us - self.calibration.pulse_us(position)) * self.calibration.slope_us().signum();
        let beyond = (error_us.abs() - self.deadband_us / 2.0).max(0.0);
        (beyond / self.proportional_band_us).min(1.0) * error_us.signum()
    }
}

/// The load on one joint: inertia beyond the servo (kg·m² or kg) and the effort gravity asks
/// of the servo to hold it (N·m or N).
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct JointLoad {
    /// Inertia the joint moves, beyond the servo's own.
    pub inertia: f64,
    /// Effort the servo must give to hold against gravity.
    pub holding_effort: f64,
}

/// What the dry run recorded, one sample per integration step, joints interleaved
/// (`joint_count` values per sample).
#[derive(Debug, Clone, PartialEq)]
pub struct ServoTrace {
    /// Time between samples, in s.
    pub step: f64,
    /// Joints per sample.
    pub joint_count: usize,
    /// Commanded position at each sample (rad or m).
    pub commanded: Vec<f64>,
    /// Link position at each sample, after backlash (rad or m).
    pub actual: Vec<f64>,
    /// Servo output speed at each sample (rad/s or m/s).
    pub velocity: Vec<f64>,
    /// Drive the position loop asks for at each sample, a signed share of full drive (−1..1).
    pub drive_share: Vec<f64>,
    /// Motor effort at each sample, a signed share of stall effort: the drive less the
    /// back-EMF braking at the servo's speed ([`ServoModel::effort_share`]).
    pub effort_share: Vec<f64>,
}

impl ServoTrace {
    /// Number of samples.
    pub fn len(&self) -> usize {
        self.actual.len() / self.joint_count.max(1)
    }

    /// Whether nothing was recorded.
    pub fn is_empty(&self) -> bool {
        self.actual.is_empty()
    }

    /// Link positions at sample `index`.
    pub fn actual_at(&self, index: usize) -> &[f64] {
        &self.actual[index * self.joint_count..(index + 1) * self.joint_count]
    }

    /// Commanded positions at sample `index`.
    pub fn commanded_at(&self, index: usize) -> &[f64] {
        &self.commanded[index * self.joint_count..(index + 1) * self.joint_count]
    }
}

/// Longest run the dry run accepts, in s.
pub const MAX_RUN_DURATION: f64 = 3600.0;

/// Why a dry run could not start.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum ServoSimError {
    /// The step must be positive and divide the pulse frame into a whole number of steps.
    #[error("integration step {step} s must be positive and divide the {frame} s pulse frame")]
    Step {
        /// The step, in s.
        step: f64,
        /// The frame period, in s.
        frame: f64,
    },
    /// One model per joint, 1 to `MAX_JOINTS`.
    #[error("expected 1 to {MAX_JOINTS} servo models, got {got}")]
    JointCount {
        /// Models given.
        got: usize,
    },
    /// The run must last 0 to [`MAX_RUN_DURATION`] s.
    #[error("run duration {duration} s must lie within 0..{MAX_RUN_DURATION} s")]
    Duration {
        /// The duration asked for, in s.
        duration: f64,
    },
}

/// Runs the servo models for `duration` s and records every step.
///
/// `commanded(t, positions)` fills the commanded joint positions (rad or m) at time `t` (s);
/// the device turns them into pulse widths once per frame (rounded, clamped, then held).
/// `loads(t, link_positions, loads)` gives each joint's load at time `t` (s) and the actual pose;
/// it is asked once per frame. Before the recorded run the arm rests for `settle_before` s at the first command.
///
/// # Errors
/// [`ServoSimError`] when the step, joint count or duration is unusable.
pub fn simulate<C, L>(
    models: &[ServoModel],
    options: &ServoModelOptions,
    duration: f64,
    mut commanded: C,
    mut loads: L,
) -> Result<ServoTrace, ServoSimError>
where
    C: FnMut(f64, &mut [f64]),
    L: FnMut(f64, &[f64], &mut [JointLoad]),
{
    let clock = Clock::new(models, options)?;
    if !(duration.is_finite() && (0.0..=MAX_RUN_DURATION).contains(&duration)) {
        return Err(ServoSimError::Duration { duration });
    }
    let samples = clock.samples(duration);
    let start = settled_start(models, options, &clock, &mut commanded, &mut loads);
    let span = Span {
        range: 0..samples,
        start,
        snapshots: &[],
        complete: true,
    };
    Ok(record(models, &clock, span, commanded, loads).0)
}

/// The integration step and how many of them make a pulse frame, checked.
#[derive(Debug, Clone, Copy)]
pub(crate) struct Clock {
    /// Integration step, in s.
    pub step: f64,
    /// Steps per pulse frame.
    pub steps_per_frame: usize,
}

impl Clock {
    /// The clock of `options`, for `models` (1 to `MAX_JOINTS` of them).
    pub fn new(models: &[ServoModel], options: &ServoModelOptions) -> Result<Clock, ServoSimError> {
        let n = models.len();
        if n == 0 || n > MAX_JOINTS {
            return Err(ServoSimError::JointCount { got: n });
        }
        let steps_per_frame = (options.frame_period / options.step).round();
        let step_ok = options.step > 0.0
            && options.step.is_finite()
            && steps_per_frame >= 1.0
            && (steps_per_frame * options.step - options.frame_period).abs() < 1e-9;
        if !step_ok {
            return Err(ServoSimError::Step {
                step: options.step,
                frame: options.frame_period,
            });
        }
        Ok(Clock {
            step: options.step,
            steps_per_frame: steps_per_frame as usize,
        })
    }

    /// Samples a run of `duration` s records, both ends included.
    pub fn samples(&self, duration: f64) -> usize {
        (duration / self.step).ceil() as usize + 1
    }

    /// The first sample of the pulse frame that sample `k` falls in.
    pub fn frame_start(&self, k: usize) -> usize {
        k / self.steps_per_frame * self.steps_per_frame
    }
}

/// Every joint's servo output position and speed and link position at one sample, before that
/// sample's step (rad, rad/s or m, m/s).
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub(crate) struct SimState {
    position: [f64; MAX_JOINTS],
    velocity: [f64; MAX_JOINTS],
    link: [f64; MAX_JOINTS],
}

/// The state after resting `settle_before` s at the command for time 0, under the load there.
pub(crate) fn settled_start<C, L>(
    models: &[ServoModel],
    options: &ServoModelOptions,
    clock: &Clock,
    commanded: &mut C,
    loads: &mut L,
) -> SimState
where
    C: FnMut(f64, &mut [f64]),
    L: FnMut(f64, &[f64], &mut [JointLoad]),
{
    let n = models.len();
    let mut command = [0.0; MAX_JOINTS];
    let mut pulse_us = [0.0; MAX_JOINTS];
    let mut load = [JointLoad::default(); MAX_JOINTS];
    let mut state = SimState::default();
    commanded(0.0, &mut command[..n]);
    for j in 0..n {
        pulse_us[j] = models[j].commanded_pulse_us(command[j]);
        state.position[j] = models[j].calibration.position(pulse_us[j]);
        state.link[j] = state.position[j];
    }
    let mut frames = FrameLoops::idle();
    let settle_steps = (options.settle_before.max(0.0) / clock.step).round() as usize;
    for k in 0..settle_steps {
        if k % clock.steps_per_frame == 0 {
            loads(0.0, &state.link[..n], &mut load[..n]);
            frames = frame_loops(models, &pulse_us, &load);
        }
        advance_all(models, &frames, clock.step, &mut state);
    }
    state
}

/// Which samples [`record`] runs and what it keeps.
pub(crate) struct Span<'a> {
    /// The samples, sample `k` at `k × step` s.
    pub range: std::ops::Range<usize>,
    /// The state at the range's first sample.
    pub start: SimState,
    /// Samples (ascending) whose state to return; those outside the range are left out.
    pub snapshots: &'a [usize],
    /// Whether to record the commanded positions and servo speeds too; without them the
    /// command is asked for only at frame starts, and those two traces stay empty.
    pub complete: bool,
}

/// Records the samples of `span`, and returns the states it asks to keep.
///
/// A new pulse and load are taken at every frame start; a range that begins inside a frame takes
/// them at its first sample from the command at that frame's start.
pub(crate) fn record<C, L>(
    models: &[ServoModel],
    clock: &Clock,
    span: Span<'_>,
    mut commanded: C,
    mut loads: L,
) -> (ServoTrace, Vec<SimState>)
where
    C: FnMut(f64, &mut [f64]),
    L: FnMut(f64, &[f64], &mut [JointLoad]),
{
    let Span {
        range,
        start,
        snapshots,
        complete,
    } = span;
    let n = models.len();
    let dt = clock.step;
    let samples = range.len();
    let kept = if complete { samples * n } else { 0 };
    let mut command = [0.0; MAX_JOINTS];
    let mut pulse_us = [0.0; MAX_JOINTS];
    let mut load = [JointLoad::default(); MAX_JOINTS];
    let mut drive = [0.0; MAX_JOINTS];
    let mut frames = FrameLoops::idle();
    let mut state = start;
    let mut taken = Vec::with_capacity(snapshots.len());
    let mut next_snapshot = snapshots.partition_point(|&k| k < range.start);

    let mut trace = ServoTrace {
        step: dt,
        joint_count: n,
        commanded: Vec::with_capacity(kept),
        actual: Vec::with_capacity(samples * n),
        velocity: Vec::with_capacity(kept),
        drive_share: Vec::with_capacity(samples * n),
        effort_share: Vec::with_capacity(samples * n),
    };
    for k in range.clone() {
        while snapshots.get(next_snapshot) == Some(&k) {
            taken.push(state);
            next_snapshot += 1;
        }
        let t = k as f64 * dt;
        let frame_start = clock.frame_start(k);
        if k == frame_start || k == range.start {
            commanded(frame_start as f64 * dt, &mut command[..n]);
            for j in 0..n {
                pulse_us[j] = models[j].commanded_pulse_us(command[j]);
            }
            loads(t, &state.link[..n], &mut load[..n]);
            frames = frame_loops(models, &pulse_us, &load);
        }
        if complete {
            if k != frame_start || k == range.start {
                commanded(t, &mut command[..n]);
            }
            trace.commanded.extend_from_slice(&command[..n]);
            trace.velocity.extend_from_slice(&state.velocity[..n]);
        }
        trace.actual.extend_from_slice(&state.link[..n]);
        for j in 0..n {
            drive[j] = models[j].drive_share(pulse_us[j], state.position[j]);
        }
        trace.drive_share.extend_from_slice(&drive[..n]);
        for j in 0..n {
            let braking = state.velocity[j] / models[j].no_load_speed;
            trace.effort_share.push(drive[j] - braking);
        }
        if k + 1 < range.end {
            advance_all(models, &frames, dt, &mut state);
        }
    }
    (trace, taken)
}

/// The servo models of an arm's joints run one pulse frame at a time, for a caller that keeps
/// its own clock (a simulated device turning received pulses into motion) rather than handing
/// [`simulate`] a whole run.
///
/// The equations are [`simulate`]'s. A frame is either driven (every joint's pulse held for the
/// frame) or limp (no pulses: the motors neither drive nor brake, so only gear damping, dry
/// friction and gravity act; an unbalanced arm falls). Joint limits act as hard end stops:
/// a joint that reaches one stops there (the model knows no table or other obstacle).
#[derive(Debug, Clone)]
pub struct ServoStepper {
    models: Vec<ServoModel>,
    end_stops: Vec<(f64, f64)>,
    clock: Clock,
    state: SimState,
}

impl ServoStepper {
    /// Joints at rest at `start` (rad or m, one per model), with end stops at
    /// `end_stops` (lowest, highest; rad or m; one pair per model, or none at all).
    ///
    /// # Errors
    /// [`ServoSimError::JointCount`] when there are no models, too many, or `start` or
    /// `end_stops` does not have one entry per model; [`ServoSimError::Step`] when the step
    /// does not divide the pulse frame.
    pub fn new(
        models: Vec<ServoModel>,
        options: &ServoModelOptions,
        start: &[f64],
        end_stops: &[(f64, f64)],
    ) -> Result<ServoStepper, ServoSimError> {
        let clock = Clock::new(&models, options)?;
        let n = models.len();
        if start.len() != n || !(end_stops.is_empty() || end_stops.len() == n) {
            return Err(ServoSimError::JointCount {
                got: start.len().max(end_stops.len()),
            });
        }
        let mut state = SimState::default();
        state.position[..n].copy_from_slice(start);
        state.link[..n].copy_from_slice(start);
        Ok(ServoStepper {
            models,
            end_stops: end_stops.to_vec(),
            clock,
            state,
        })
    }

    /// Runs one pulse frame: driven with `pulse_us` (one held width per joint, in µs) or limp
    /// with `None`, under `loads` (one per joint, taken as constant over the frame).
    pub fn run_frame(&mut self, pulse_us: Option<&[f64]>, loads: &[JointLoad]) {
        let mut frames = FrameLoops::idle();
        for (j, model) in self.models.iter().enumerate() {
            let load = loads.get(j).copied().unwrap_or_default();
            match pulse_us.and_then(|pulses| pulses.get(j)) {
                Some(&pulse) => frames.set(j, model, pulse, &load),
                None => frames.set_limp(j, model, &load),
            }
        }
        self.advance_frame(&frames);
    }

    /// Runs one pulse frame with each joint driven by its width (µs) or limp (`None`, or no
    /// entry), under `loads` as [`ServoStepper::run_frame`].
    pub fn run_frame_each(&mut self, pulse_us: &[Option<f64>], loads: &[JointLoad]) {
        let mut frames = FrameLoops::idle();
        for (j, model) in self.models.iter().enumerate() {
            let load = loads.get(j).copied().unwrap_or_default();
            match pulse_us.get(j).copied().flatten() {
                Some(pulse) => frames.set(j, model, pulse, &load),
                None => frames.set_limp(j, model, &load),
            }
        }
        self.advance_frame(&frames);
    }

    fn advance_frame(&mut self, frames: &FrameLoops) {
        for _ in 0..self.clock.steps_per_frame {
            advance_all(&self.models, frames, self.clock.step, &mut self.state);
            let state = &mut self.state;
            for (j, &(low, high)) in self.end_stops.iter().enumerate() {
                let stopped = (state.position[j] <= low && state.velocity[j] < 0.0)
                    || (state.position[j] >= high && state.velocity[j] > 0.0);
                if stopped {
                    state.velocity[j] = 0.0;
                }
                state.position[j] = state.position[j].clamp(low, high);
                state.link[j] = state.link[j].clamp(low, high);
            }
        }
    }

    /// Link positions after backlash, one per joint (rad or m).
    pub fn positions(&self) -> &[f64] {
        &self.state.link[..self.models.len()]
    }

    /// Servo output speeds, one per joint (rad/s or m/s).
    pub fn velocities(&self) -> &[f64] {
        &self.state.velocity[..self.models.len()]
    }

    /// Length of one frame, in s.
    pub fn frame_period(&self) -> f64 {
        self.clock.step * self.clock.steps_per_frame as f64
    }
}

/// Each joint's loop for the frame now starting: held pulse and load fixed.
fn frame_loops(
    models: &[ServoModel],
    pulse_us: &[f64; MAX_JOINTS],
    load: &[JointLoad; MAX_JOINTS],
) -> FrameLoops {
    let mut frames = FrameLoops::idle();
    for (j, model) in models.iter().enumerate() {
        frames.set(j, model, pulse_us[j], &load[j]);
    }
    frames
}

/// One integration step of every joint, in lanes of two joints side by side.
fn advance_all(models: &[ServoModel], frames: &FrameLoops, dt: f64, state: &mut SimState) {
    match models.len() {
        0..=2 => frames.advance::<2>(dt, state),
        3..=4 => frames.advance::<4>(dt, state),
        5..=6 => frames.advance::<6>(dt, state),
        _ => frames.advance::<MAX_JOINTS>(dt, state),
    }
}

/// Every joint's position loop for one pulse frame, held pulse and load fixed:
/// [`ServoModel::acceleration`] with everything that is constant over the frame worked out once
/// (the same equations, fewer divisions and roots in the integration loop). One array per
/// quantity, so that the joints step side by side; joints the arm does not have are idle.
#[derive(Debug, Clone, Copy)]
struct FrameLoops {
    /// Servo position at which the held pulse gives zero error (rad or m).
    aim: [f64; MAX_JOINTS],
    /// |µs per unit position|.
    gain_us: [f64; MAX_JOINTS],
    half_deadband_us: [f64; MAX_JOINTS],
    inverse_band_us: [f64; MAX_JOINTS],
    stall: [f64; MAX_JOINTS],
    inverse_no_load_speed: [f64; MAX_JOINTS],
    viscous: [f64; MAX_JOINTS],
    dry: [f64; MAX_JOINTS],
    smoothing_squared: [f64; MAX_JOINTS],
    holding: [f64; MAX_JOINTS],
    inverse_inertia: [f64; MAX_JOINTS],
    half_play: [f64; MAX_JOINTS],
}

impl FrameLoops {
    fn idle() -> FrameLoops {
        FrameLoops {
            aim: [0.0; MAX_JOINTS],
            gain_us: [0.0; MAX_JOINTS],
            half_deadband_us: [0.0; MAX_JOINTS],
            inverse_band_us: [0.0; MAX_JOINTS],
            stall: [0.0; MAX_JOINTS],
            inverse_no_load_speed: [0.0; MAX_JOINTS],
            viscous: [0.0; MAX_JOINTS],
            dry: [0.0; MAX_JOINTS],
            smoothing_squared: [1.0; MAX_JOINTS],
            holding: [0.0; MAX_JOINTS],
            inverse_inertia: [0.0; MAX_JOINTS],
            half_play: [0.0; MAX_JOINTS],
        }
    }

    /// Joint `j`'s loop for a held pulse (µs) and a load.
    fn set(&mut self, j: usize, model: &ServoModel, pulse_us: f64, load: &JointLoad) {
        let inertia = model.motor_inertia + load.inertia;
        self.aim[j] = model.calibration.position(pulse_us);
        self.gain_us[j] = model.calibration.slope_us().abs();
        self.half_deadband_us[j] = model.deadband_us / 2.0;
        self.inverse_band_us[j] = 1.0 / model.proportional_band_us;
        self.stall[j] = model.stall_effort;
        self.inverse_no_load_speed[j] = 1.0 / model.no_load_speed;
        self.viscous[j] = model.gear_damping(inertia);
        self.dry[j] = model.dry_friction;
        self.smoothing_squared[j] = model.friction_smoothing * model.friction_smoothing;
        self.holding[j] = load.holding_effort;
        self.inverse_inertia[j] = 1.0 / inertia;
        self.half_play[j] = model.backlash / 2.0;
    }

    /// Joint `j` receiving no pulses: no drive and no back-EMF braking (the motor coasts), the
    /// gears' damping and dry friction still there.
    fn set_limp(&mut self, j: usize, model: &ServoModel, load: &JointLoad) {
        self.set(j, model, model.calibration.pulse_us(0.0), load);
        self.stall[j] = 0.0;
    }

    /// The servo output's acceleration of the first `L` joints, written without branches.
    #[inline(always)]
    fn accelerations<const L: usize>(
        &self,
        position: &[f64; MAX_JOINTS],
        velocity: &[f64; MAX_JOINTS],
        out: &mut [f64; MAX_JOINTS],
    ) {
        for j in 0..L {
            let (p, v) = (position[j], velocity[j]);
            let error_us = (self.aim[j] - p) * self.gain_us[j];
            let excess = error_us.abs() - self.half_deadband_us[j];
            // `max(0)` and `min(1)`: the excess is never −0 (a difference of equal numbers
            // is +0) and the share is never NaN, so the comparisons give the same numbers.
            let beyond = if excess > 0.0 { excess } else { 0.0 };
            let share = beyond * self.inverse_band_us[j];
            let share = if share < 1.0 { share } else { 1.0 };
            let drive = if beyond > 0.0 {
                share.copysign(error_us)
            } else {
                0.0
            };
            let motor = self.stall[j] * (drive - v * self.inverse_no_load_speed[j]);
            let dry = self.dry[j] * v / (v * v + self.smoothing_squared[j]).sqrt();
            out[j] =
                (motor - self.viscous[j] * v - dry - self.holding[j]) * self.inverse_inertia[j];
        }
    }

    /// One Runge–Kutta step of the first `L` joints, then the backlash play between servo and
    /// link.
    fn advance<const L: usize>(&self, dt: f64, state: &mut SimState) {
        let (p0, v0) = (state.position, state.velocity);
        let half = 0.5 * dt;
        let mut a1 = [0.0; MAX_JOINTS];
        let mut a2 = [0.0; MAX_JOINTS];
        let mut a3 = [0.0; MAX_JOINTS];
        let mut a4 = [0.0; MAX_JOINTS];
        let (mut p, mut v2, mut v3, mut v4) = (
            [0.0; MAX_JOINTS],
            [0.0; MAX_JOINTS],
            [0.0; MAX_JOINTS],
            [0.0; MAX_JOINTS],
        );
        self.accelerations::<L>(&p0, &v0, &mut a1);
        for j in 0..L {
            p[j] = p0[j] + half * v0[j];
            v2[j] = v0[j] + half * a1[j];
        }
        self.accelerations::<L>(&p, &v2, &mut a2);
        for j in 0..L {
            p[j] = p0[j] + half * v2[j];
            v3[j] = v0[j] + half * a2[j];
        }
        self.accelerations::<L>(&p, &v3, &mut a3);
        for j in 0..L {
            p[j] = p0[j] + dt * v3[j];
            v4[j] = v0[j] + dt * a3[j];
        }
        self.accelerations::<L>(&p, &v4, &mut a4);
        let sixth = dt / 6.0;
        for j in 0..L {
            let position = p0[j] + sixth * (v0[j] + 2.0 * v2[j] + 2.0 * v3[j] + v4[j]);
            state.position[j] = position;
            state.velocity[j] = v0[j] + sixth * (a1[j] + 2.0 * a2[j] + 2.0 * a3[j] + a4[j]);
            let (low, high) = (position - self.half_play[j], position + self.half_play[j]);
            let link = state.link[j];
            let link = if link < low { low } else { link };
            state.link[j] = if link > high { high } else { link };
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A servo stripped to a linear second-order loop: no deadband, no saturation within the
    /// step, no speed loss, no friction, no backlash, no gravity.
    fn linear_servo(damping_ratio: f64) -> ServoModel {
        ServoModel {
            stall_effort: 2.0,
            no_load_speed: 1e12,
            deadband_us: 0.0,
            proportional_band_us: 400.0,
            calibration: Calibration {
                position_a: 0.0,
                pulse_a_us: 1500.0,
                position_b: 1.0,
                pulse_b_us: 1818.0,
                pulse_min_us: 500.0,
                pulse_max_us: 2500.0,
            },
            backlash: 0.0,
            motor_inertia: 2e-3,
            damping_ratio,
            dry_friction: 0.0,
            friction_smoothing: 0.02,
            pulse_resolution_us: 1e-9,
        }
    }

    fn step_response(model: &ServoModel, step_size: f64, duration: f64) -> (ServoTrace, f64) {
        let options = ServoModelOptions {
            step: 2e-4,
            settle_before: 0.0,
            ..ServoModelOptions::default()
        };
        let load = 1e-3;
        let trace = simulate(
            std::slice::from_ref(model),
            &options,
            duration,
            |t, out| out[0] = if t > 0.0 { step_size } else { 0.0 },
            |_, _, loads| {
                loads[0] = JointLoad {
                    inertia: load,
                    holding_effort: 0.0,
                }
            },
        )
        .expect("valid run");
        (trace, model.natural_frequency(load))
    }

    #[test]
    fn linear_loop_overshoots_as_a_second_order_system() {
        // Ogata, Modern Control Engineering, 5th ed., §5-3: maximum overshoot of a unit step on
        // an underdamped second-order system is exp(−ζπ/√(1−ζ²)).
        for zeta in [0.1, 0.3, 0.5] {
            let model = linear_servo(zeta);
            let step_size = 0.05;
            let (trace, _) = step_response(&model, step_size, 2.0);
            let peak = (0..trace.len())
                .map(|k| trace.actual_at(k)[0])
                .fold(f64::MIN, f64::max);
            let measured = (peak - step_size) / step_size;
            let expected = (-zeta * std::f64::consts::PI / (1.0 - zeta * zeta).sqrt()).exp();
            // The step lands on the first frame boundary after t = 0 and the pulse is held, so
            // the plant sees a clean step; tolerance covers the 0.2 ms sampling of the peak.
            assert!(
                (measured - expected).abs() < 2e-3,
                "ζ = {zeta}: {measured} vs {expected}"
            );
        }
    }

    #[test]
    fn linear_loop_settles_within_the_envelope_estimate() {
        // Ogata, 5th ed., §5-3: the response stays inside exp(−ζωn·t)/√(1−ζ²) of the final
        // value, so the 2 % settling time is at most about 4/(ζωn).
        let zeta = 0.3;
        let model = linear_servo(zeta);
        let step_size = 0.05;
        let (trace, omega) = step_response(&model, step_size, 2.0);
        let start = trace.step * (0.02 / trace.step).round(); // the frame where the step lands
        let mut settled_at = 0.0;
        for k in 0..trace.len() {
            let t = k as f64 * trace.step - start;
            let error = (trace.actual_at(k)[0] - step_size).abs() / step_size;
            if t > 0.0 {
                let envelope = (-zeta * omega * t).exp() / (1.0 - zeta * zeta).sqrt();
                assert!(error <= envelope + 1e-6, "outside the envelope at {t} s");
            }
            if error > 0.02 {
                settled_at = t;
            }
        }
        let estimate = 4.0 / (zeta * omega);
        assert!(
            settled_at <= estimate && settled_at > 0.7 * estimate,
            "{settled_at} vs {estimate}"
        );
    }

    #[test]
    fn the_frame_form_is_the_documented_equation() {
        let mut model = linear_servo(0.3);
        model.deadband_us = 5.0;
        model.no_load_speed = 6.0;
        model.dry_friction = 0.05;
        model.calibration.pulse_b_us = 1200.0; // falling
        let load = JointLoad {
            inertia: 3e-3,
            holding_effort: 0.2,
        };
        for pulse_us in [1490.0, 1500.0, 1502.0, 1530.0, 1700.0] {
            let mut frames = FrameLoops::idle();
            frames.set(0, &model, pulse_us, &load);
            for (p, v) in [(0.0, 0.0), (0.01, -0.5), (-0.2, 2.0), (0.3, 7.0)] {
                let direct = model.acceleration(pulse_us, load.inertia, load.holding_effort, p, v);
                let mut fast = [0.0; MAX_JOINTS];
                frames.accelerations::<2>(&[p; MAX_JOINTS], &[v; MAX_JOINTS], &mut fast);
                assert!(
                    (direct - fast[0]).abs() <= 1e-9 * direct.abs().max(1.0),
                    "{direct} vs {}",
                    fast[0]
                );
            }
        }
    }

    #[test]
    fn the_stepper_is_simulate_one_frame_at_a_time() {
        let mut model = linear_servo(0.3);
        model.deadband_us = 4.0;
        model.no_load_speed = 6.0;
        model.dry_friction = 0.03;
        model.backlash = 0.004;
        let options = ServoModelOptions {
            settle_before: 0.0,
            ..ServoModelOptions::default()
        };
        let load = JointLoad {
            inertia: 2e-3,
            holding_effort: 0.1,
        };
        let command = |t: f64| if t < 0.1 { 0.0 } else { 0.2 };
        let trace = simulate(
            std::slice::from_ref(&model),
            &options,
            0.4,
            |t, out| out[0] = command(t),
            |_, _, loads| loads[0] = load,
        )
        .expect("valid run");
        let mut stepper =
            ServoStepper::new(vec![model.clone()], &options, &[0.0], &[]).expect("valid stepper");
        let frames = (0.4 / options.frame_period).round() as usize;
        let per_frame = (options.frame_period / options.step).round() as usize;
        for frame in 0..frames {
            let pulse = model.commanded_pulse_us(command(frame as f64 * options.frame_period));
            stepper.run_frame(Some(&[pulse]), &[load]);
            let sample = (frame + 1) * per_frame;
            assert_eq!(
                stepper.positions()[0],
                trace.actual_at(sample)[0],
                "frame {frame}"
            );
        }
    }

    #[test]
    fn a_limp_joint_under_gravity_falls_to_its_end_stop_and_stays() {
        let model = linear_servo(0.3);
        let options = ServoModelOptions::default();
        let mut stepper = ServoStepper::new(vec![model], &options, &[0.3], &[(-0.5, 0.5)])
            .expect("valid stepper");
        // Gravity asks the servo for a positive effort to hold, so unheld the joint turns the
        // other way.
        let load = JointLoad {
            inertia: 1e-3,
            holding_effort: 0.5,
        };
        let mut previous = 0.3;
        for _ in 0..10 {
            stepper.run_frame(None, &[load]);
            assert!(stepper.positions()[0] <= previous, "falls, never rises");
            previous = stepper.positions()[0];
        }
        for _ in 0..100 {
            stepper.run_frame(None, &[load]);
        }
        assert_eq!(stepper.positions()[0], -0.5);
        assert_eq!(stepper.velocities()[0], 0.0);
    }

    #[test]
    fn a_stepper_needs_one_start_position_per_joint() {
        let options = ServoModelOptions::default();
        let models = vec![linear_servo(0.3), linear_servo(0.3)];
        assert!(matches!(
            ServoStepper::new(models.clone(), &options, &[0.0], &[]),
            Err(ServoSimError::JointCount { .. })
        ));
        assert!(matches!(
            ServoStepper::new(models, &options, &[0.0, 0.0], &[(0.0, 1.0)]),
            Err(ServoSimError::JointCount { .. })
        ));
    }

    #[test]
    fn a_bad_step_is_refused() {
        let model = linear_servo(0.3);
        let options = ServoModelOptions {
            step: 0.003,
            ..ServoModelOptions::default()
        };
        let result = simulate(
            std::slice::from_ref(&model),
            &options,
            1.0,
            |_, _| {},
            |_, _, _| {},
        );
        assert!(matches!(result, Err(ServoSimError::Step { .. })));
    }
}
