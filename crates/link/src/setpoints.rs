//! A plan's samples as device setpoints: each sample's joint positions and gripper state through
//! the joints' calibrations ([`arm_setpoint`]) for one device, with how many were clamped and
//! the worst rounding. What `armwright stream` and the editor's link both send. And the way
//! back, [`device_pose`]: what the device reports it sends, as the arm's pose, where every
//! stream's approach starts.

use armwright_kinematics::Arm;
use armwright_trajectory::Sample;

use crate::protocol::{ChannelOutput, ChannelValues, DeviceInfo};
use crate::pulse::{PulseError, arm_setpoint};

/// Every sample as device setpoints, with how many were clamped and the worst rounding error.
#[derive(Debug, Clone, PartialEq)]
pub struct DeviceSetpoints {
    /// One setpoint per sample, in the device's pulse units.
    pub values: Vec<ChannelValues>,
    /// Setpoints with a pulse width limited to its servo's or the device's range.
    pub clamped: usize,
    /// Largest rounding error over the revolute joints, in degrees.
    pub worst_rounding_deg: f64,
}

/// A sample that could not be turned into a setpoint.
#[derive(Debug, Clone, Copy, PartialEq, thiserror::Error)]
#[error("setpoint {index} (at {time:.3} s): {problem}")]
pub struct SetpointError {
    /// Index of the sample, from 0.
    pub index: usize,
    /// The sample's time, s from the start of the plan.
    pub time: f64,
    /// What was wrong with it.
    pub problem: PulseError,
}

/// `samples` as setpoints for `device`: joint `i` on channel `i`, the gripper (open or closed as
/// the sample says) on the device's last channel, see [`arm_setpoint`].
///
/// # Errors
/// [`SetpointError`] naming the first sample that does not fit the arm (wrong joint count, a
/// position that is not a finite number) or the device (too few channels).
pub fn device_setpoints(
    arm: &Arm,
    samples: impl IntoIterator<Item = Sample>,
    device: &DeviceInfo,
) -> Result<DeviceSetpoints, SetpointError> {
    let samples = samples.into_iter();
    let mut converted = DeviceSetpoints {
        values: Vec::with_capacity(samples.size_hint().0),
        clamped: 0,
        worst_rounding_deg: 0.0,
    };
    for (index, sample) in samples.enumerate() {
        let closed_share = if sample.gripper_closed { 1.0 } else { 0.0 };
        let setpoint = arm_setpoint(arm, &sample.positions, Some(closed_share), device).map_err(
            |problem| SetpointError {
                index,
                time: sample.time,
                problem,
            },
        )?;
        converted.clamped += usize::from(setpoint.any_clamped());
        converted.worst_rounding_deg = converted
            .worst_rounding_deg
            .max(setpoint.worst_error_deg(arm));
        converted.values.push(setpoint.values);
    }
    Ok(converted)
}

/// The arm's pose as the device holds it: what [`device_pose`] reads from its output.
#[derive(Debug, Clone, PartialEq)]
pub struct DevicePose {
    /// Joint positions, rad (revolute) or m (prismatic), chain order: each joint's pulse
    /// through its calibration ([`armwright_kinematics::Calibration::position`]).
    pub positions: Vec<f64>,
    /// Whether the gripper channel's pulse is nearer its closed width than its open one
    /// (false for an arm without a gripper).
    pub gripper_closed: bool,
}

/// The pose `output` holds the arm in, read with the layout [`arm_setpoint`] sends (joint `i`
/// on channel `i`, the gripper on the device's last channel); `None` when a channel the arm
/// uses is limp or missing, so its servo's position is unknown.
pub fn device_pose(arm: &Arm, output: &ChannelOutput, device: &DeviceInfo) -> Option<DevicePose> {
    let channels = output.as_slice();
    let positions = arm
        .joints()
        .iter()
        .zip(channels.iter().chain(std::iter::repeat(&None)))
        .map(|(joint, units)| {
            units.map(|units| joint.calibration.position(device.us_from_units(units)))
        })
        .collect::<Option<Vec<f64>>>()?;
    let gripper_closed = match arm.gripper() {
        Some(gripper) => {
            let pulse_us = device.us_from_units((*channels.last()?)?);
            (pulse_us - gripper.closed_pulse_us).abs() < (pulse_us - gripper.open_pulse_us).abs()
        }
        None => false,
    };
    (positions.len() == arm.joint_count()).then_some(DevicePose {
        positions,
        gripper_closed,
    })
}
