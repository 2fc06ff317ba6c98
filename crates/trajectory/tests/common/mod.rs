//! Shared helpers for the integration tests: the reference library, sampled checks of a
//! profile and a plant to excite (the seeded generator is the test-support crate's `XorShift`).
#![allow(dead_code)]

use rsruckig::prelude::*;

/// One joint for the reference library: start, end, start/end velocity, vmax, amax, jmax.
#[derive(Debug, Clone, Copy)]
pub struct ReferenceJoint {
    pub from: f64,
    pub to: f64,
    pub from_velocity: f64,
    pub to_velocity: f64,
    pub velocity: f64,
    pub acceleration: f64,
    pub jerk: f64,
}

/// Synchronised duration (s) of the reference library (`rsruckig`, a Rust port of the
/// time-optimal jerk-limited generator of Berscheid & Kröger, RSS 2021) for `N` joints, with
/// zero boundary accelerations. `None` when it reports an error.
pub fn reference_duration<const N: usize>(joints: &[ReferenceJoint; N]) -> Option<f64> {
    let mut otg = Ruckig::<N, ThrowErrorHandler>::new(None, 0.001);
    let mut input = InputParameter::<N>::new(None);
    for (index, joint) in joints.iter().enumerate() {
        input.current_position[index] = joint.from;
        input.target_position[index] = joint.to;
        input.current_velocity[index] = joint.from_velocity;
        input.target_velocity[index] = joint.to_velocity;
        input.max_velocity[index] = joint.velocity;
        input.max_acceleration[index] = joint.acceleration;
        input.max_jerk[index] = joint.jerk;
    }
    let mut trajectory = Trajectory::<N>::new(None);
    otg.calculate(&input, &mut trajectory).ok()?;
    Some(trajectory.get_duration())
}

use armwright_trajectory::{Profile, ProfileShape};

/// Sampling step of the limit and continuity checks: 10 kHz.
pub const SAMPLE_STEP: f64 = 1e-4;

/// Samples `profile` at 10 kHz and checks that no limit is exceeded (relative tolerance
/// 1e-9), that position and velocity (and, for the double-S, acceleration) are continuous —
/// no change between samples larger than the limit of its derivative allows — and that both
/// ends are exact. Returns what failed.
pub fn check_sampled(profile: &Profile) -> Result<(), String> {
    let limits = *profile.limits();
    let joint_move = *profile.joint_move();
    let duration = profile.duration();
    let slack = |limit: f64| limit * (1.0 + 1e-9) + 1e-12;
    let double_s = profile.shape() == ProfileShape::DoubleS;
    let steps = (duration / SAMPLE_STEP).ceil() as usize;
    let mut previous = profile.state_at(0.0);
    let mut previous_t = 0.0;
    for k in 0..=steps + 1 {
        let t = (k as f64 * SAMPLE_STEP).min(duration);
        let state = profile.state_at(t);
        if state.velocity.abs() > slack(limits.velocity) {
            return Err(format!("velocity {} at t = {t}", state.velocity));
        }
        if state.acceleration.abs() > slack(limits.acceleration) {
            return Err(format!("acceleration {} at t = {t}", state.acceleration));
        }
        if double_s && state.jerk.abs() > slack(limits.jerk) {
            return Err(format!("jerk {} at t = {t}", state.jerk));
        }
        let dt = t - previous_t;
        if (state.position - previous.position).abs() > slack(limits.velocity) * dt + 1e-12 {
            return Err(format!("position jumps near t = {t}"));
        }
        if (state.velocity - previous.velocity).abs() > slack(limits.acceleration) * dt + 1e-12 {
            return Err(format!("velocity jumps near t = {t}"));
        }
        if double_s
            && (state.acceleration - previous.acceleration).abs() > slack(limits.jerk) * dt + 1e-9
        {
            return Err(format!("acceleration jumps near t = {t}"));
        }
        previous = state;
        previous_t = t;
    }
    let start = profile.state_at(0.0);
    let end = profile.state_at(duration);
    if start.position != joint_move.from || start.velocity != joint_move.from_velocity {
        return Err(format!("start state {start:?} is not the move's start"));
    }
    if end.position != joint_move.to || end.velocity != joint_move.to_velocity {
        return Err(format!("end state {end:?} is not the move's end"));
    }
    let just_before = profile.state_at(duration * (1.0 - 1e-12));
    if (just_before.position - joint_move.to).abs() > 1e-9 * (1.0 + joint_move.to.abs()) {
        return Err(format!(
            "position just before the end is {}, not {}",
            just_before.position, joint_move.to
        ));
    }
    if (just_before.velocity - joint_move.to_velocity).abs() > 1e-7 * (1.0 + limits.velocity) {
        return Err(format!(
            "velocity just before the end is {}, not {}",
            just_before.velocity, joint_move.to_velocity
        ));
    }
    Ok(())
}

/// A linear second-order plant `x'' + 2ζωₙ x' + ωₙ² x = ωₙ² u`, integrated with the classical
/// fourth-order Runge–Kutta method: an integration independent of the closed forms under test.
#[derive(Debug, Clone, Copy)]
pub struct Plant {
    pub natural_frequency: f64,
    pub damping_ratio: f64,
    pub position: f64,
    pub velocity: f64,
}

impl Plant {
    /// At rest at zero.
    pub fn at_rest(natural_frequency: f64, damping_ratio: f64) -> Self {
        Self {
            natural_frequency,
            damping_ratio,
            position: 0.0,
            velocity: 0.0,
        }
    }

    fn derivative(&self, x: f64, v: f64, u: f64) -> (f64, f64) {
        let w = self.natural_frequency;
        (v, w * w * (u - x) - 2.0 * self.damping_ratio * w * v)
    }

    /// One RK4 step of length `dt` (s) with input `input(t)` starting at time `t`.
    pub fn step(&mut self, t: f64, dt: f64, input: &impl Fn(f64) -> f64) {
        let (x, v) = (self.position, self.velocity);
        let k1 = self.derivative(x, v, input(t));
        let k2 = self.derivative(
            x + 0.5 * dt * k1.0,
            v + 0.5 * dt * k1.1,
            input(t + 0.5 * dt),
        );
        let k3 = self.derivative(
            x + 0.5 * dt * k2.0,
            v + 0.5 * dt * k2.1,
            input(t + 0.5 * dt),
        );
        let k4 = self.derivative(x + dt * k3.0, v + dt * k3.1, input(t + dt));
        self.position += dt / 6.0 * (k1.0 + 2.0 * k2.0 + 2.0 * k3.0 + k4.0);
        self.velocity += dt / 6.0 * (k1.1 + 2.0 * k2.1 + 2.0 * k3.1 + k4.1);
    }

    /// Runs from `t0` to `t1` (s) in `steps` equal steps with input `input(t)`.
    pub fn run(&mut self, t0: f64, t1: f64, steps: usize, input: &impl Fn(f64) -> f64) {
        let dt = (t1 - t0) / steps as f64;
        for k in 0..steps {
            self.step(t0 + k as f64 * dt, dt, input);
        }
    }

    /// Amplitude of the free oscillation about the rest point `target` (same unit as
    /// position), from the present state: for x − target = e, √(e² + ((e' + ζωₙe)/ω_d)²).
    pub fn vibration_about(&self, target: f64) -> f64 {
        let w = self.natural_frequency;
        let zeta = self.damping_ratio;
        let damped = w * (1.0 - zeta * zeta).sqrt();
        let e = self.position - target;
        e.hypot((self.velocity + zeta * w * e) / damped)
    }
}
