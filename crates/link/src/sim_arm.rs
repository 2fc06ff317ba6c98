//! The arm as a simulated device moves it: the pulse widths the device sends, turned back
//! into commanded joint positions through each joint's calibration, drive the trajectory
//! crate's servo model one pulse frame at a time on the device's clock.

use armwright_kinematics::{Arm, gravity_torques, joint_inertias, tool_pose};
use armwright_trajectory::{JointLoad, ServoModel, ServoModelOptions, ServoSimError, ServoStepper};

use crate::protocol::{ChannelOutput, DeviceInfo, MAX_CHANNELS};

/// Why an arm cannot be put on a simulated device.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum SimArmError {
    /// The device has fewer channels than the arm's joints and gripper.
    #[error("the arm needs {needed} channels (joints and gripper), the device has {available}")]
    TooFewChannels {
        /// Joints plus the gripper.
        needed: usize,
        /// The device's channel count.
        available: usize,
    },
    /// The servo model cannot run with these settings or this start pose.
    #[error("the arm's servo model cannot run: {0}")]
    Model(#[from] ServoSimError),
}

/// The arm a simulated device drives: joint `i` on channel `i`, the gripper on the last
/// channel (as [`crate::arm_setpoint`] lays them out).
#[derive(Debug, Clone)]
pub(crate) struct SimArm {
    arm: Arm,
    stepper: ServoStepper,
    loads: Vec<JointLoad>,
    /// The widths of the newest frame, µs, `None` for a channel without a pulse.
    pulses_us: Vec<Option<f64>>,
}

impl SimArm {
    /// `arm` at rest at `start` (rad or m, one per joint), modelled with `options` whose pulse
    /// frame and resolution are replaced by the device's.
    pub(crate) fn new(
        arm: Arm,
        options: &ServoModelOptions,
        start: &[f64],
        device: &DeviceInfo,
    ) -> Result<SimArm, SimArmError> {
        let needed = arm.joint_count() + usize::from(arm.gripper().is_some());
        let available = usize::from(device.channel_count).min(MAX_CHANNELS);
        if needed > available {
            return Err(SimArmError::TooFewChannels { needed, available });
        }
        let options = ServoModelOptions {
            frame_period: f64::from(device.frame_period_us) * 1e-6,
            pulse_resolution_us: f64::from(device.pulse_unit_ns) * 1e-3,
            ..options.clone()
        };
        let models: Vec<ServoModel> = arm
            .joints()
            .iter()
            .map(|joint| ServoModel::of_joint(joint, &options))
            .collect();
        let end_stops: Vec<(f64, f64)> = arm.joints().iter().map(|j| (j.min, j.max)).collect();
        let stepper = ServoStepper::new(models, &options, start, &end_stops)?;
        let joints = arm.joint_count();
        Ok(SimArm {
            arm,
            stepper,
            loads: vec![JointLoad::default(); joints],
            pulses_us: vec![None; joints],
        })
    }

    /// Runs one pulse frame with the channels' widths held (`None`: limp, no pulses, on every
    /// channel or on one).
    pub(crate) fn run_frame(&mut self, pulses: Option<&ChannelOutput>, device: &DeviceInfo) {
        let payload = match pulses {
            Some(values) if self.gripper_closed(values, device) => self.arm.payload_mass(),
            _ => 0.0,
        };
        let positions = self.stepper.positions();
        if let Ok(gravity) = gravity_torques(&self.arm, positions, payload) {
            for (load, effort) in self.loads.iter_mut().zip(gravity.as_slice()) {
                load.holding_effort = *effort;
            }
        }
        if let Ok(inertias) = joint_inertias(&self.arm, positions, payload) {
            for (load, inertia) in self.loads.iter_mut().zip(inertias.as_slice()) {
                load.inertia = *inertia;
            }
        }
        match pulses {
            Some(values) => {
                for (pulse_us, units) in self.pulses_us.iter_mut().zip(values.as_slice()) {
                    *pulse_us = units.map(|units| device.us_from_units(units));
                }
                self.stepper.run_frame_each(&self.pulses_us, &self.loads);
            }
            None => self.stepper.run_frame(None, &self.loads),
        }
    }

    /// Whether the gripper channel's width is nearer its closed width than its open one.
    fn gripper_closed(&self, values: &ChannelOutput, device: &DeviceInfo) -> bool {
        let (Some(gripper), Some(&Some(units))) = (self.arm.gripper(), values.as_slice().last())
        else {
            return false;
        };
        let pulse_us = device.us_from_units(units);
        (pulse_us - gripper.closed_pulse_us).abs() < (pulse_us - gripper.open_pulse_us).abs()
    }

    /// The joints' positions now, rad or m.
    pub(crate) fn positions(&self) -> &[f64] {
        self.stepper.positions()
    }

    /// The tool point now, in the arm's base frame, in m.
    pub(crate) fn tool_point(&self) -> Option<[f64; 3]> {
        let point = tool_pose(&self.arm, self.stepper.positions())
            .ok()?
            .translation
            .vector;
        Some([point.x, point.y, point.z])
    }
}
