//! Joint position → pulse width through the joint's calibration, rounded to the device's
//! pulse unit and limited to both the servo's and the device's accepted range. The one place
//! the link converts between joint units (rad, m) and pulse widths (µs, device units); the
//! rounding and clamping are the arm model's pulse rule ([`sent_pulse`]), which the servo model,
//! `armwright pose` and the editor's joint controls use too.

use armwright_kinematics::{Arm, Calibration, Gripper, JointKind, sent_pulse};

use crate::protocol::{ChannelValues, DeviceInfo, MAX_CHANNELS};

/// A problem converting a pose to pulse widths.
#[derive(Debug, Clone, Copy, PartialEq, thiserror::Error)]
pub enum PulseError {
    /// A joint position (or the gripper share) is NaN or infinite.
    #[error("joint {joint} position is not a finite number ({position})")]
    NotFinite {
        /// Joint index, chain order; the gripper is `joint_count`.
        joint: usize,
        /// The value given.
        position: f64,
    },
    /// The pose does not have one position per joint.
    #[error("pose has {got} positions, the arm has {expected} joints")]
    WrongJointCount {
        /// The arm's joint count.
        expected: usize,
        /// Positions given.
        got: usize,
    },
    /// The device has fewer channels than the arm needs.
    #[error("the arm needs {needed} channels, the device has {available}")]
    TooFewChannels {
        /// Joints plus the gripper.
        needed: usize,
        /// The device's channel count.
        available: usize,
    },
}

/// One pulse width worked out for a joint position.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct JointPulse {
    /// What is sent, in the device's pulse units.
    pub units: u16,
    /// The width the device makes from it, in µs.
    pub pulse_us: f64,
    /// The position the sent width stands for minus the one asked for, in rad (revolute)
    /// or m (prismatic): the rounding error, plus the clamping error when clamped.
    pub position_error: f64,
    /// Whether the width was limited to the servo's or the device's range.
    pub clamped: bool,
}

impl JointPulse {
    /// [`JointPulse::position_error`] in degrees, for a revolute joint.
    pub fn position_error_deg(&self) -> f64 {
        self.position_error.to_degrees()
    }
}

/// The accepted pulse range in µs: the servo's range within the device's. If the two do
/// not overlap, the device's range (the device clamps to it anyway).
fn accepted_us(device: &DeviceInfo, pulse_min_us: f64, pulse_max_us: f64) -> (f64, f64) {
    let device_min = device.us_from_units(device.min_pulse_units);
    let device_max = device.us_from_units(device.max_pulse_units);
    let low = pulse_min_us.max(device_min);
    let high = pulse_max_us.min(device_max);
    if low <= high {
        (low, high)
    } else {
        (device_min, device_max)
    }
}

/// `pulse_us` in device units by the pulse rule ([`sent_pulse`]): limited to `low_us..=high_us`
/// and rounded to the nearest whole unit inside it; returns the units and whether the value had
/// to be limited.
fn to_units(device: &DeviceInfo, pulse_us: f64, low_us: f64, high_us: f64) -> (u16, bool) {
    let sent = sent_pulse(pulse_us, device.us_from_units(1), low_us, high_us);
    (device.units_from_us(sent.pulse_us), sent.clamped)
}

/// The pulse for one joint at `position` (rad or m) through `calibration`, for `device`.
///
/// # Errors
/// [`PulseError::NotFinite`] (reported as joint 0) when `position` is NaN or infinite.
///
/// # Example
/// ```
/// # use armwright_kinematics::Calibration;
/// # use armwright_link::{DeviceInfo, FirmwareVersion, joint_pulse};
/// let calibration = Calibration {
///     position_a: -std::f64::consts::FRAC_PI_2, pulse_a_us: 1000.0,
///     position_b: std::f64::consts::FRAC_PI_2, pulse_b_us: 2000.0,
///     pulse_min_us: 900.0, pulse_max_us: 2100.0,
/// };
/// let device = DeviceInfo {
///     protocol_version: 1, firmware: FirmwareVersion::default(), channel_count: 7,
///     pulse_unit_ns: 1000, min_pulse_units: 500, max_pulse_units: 2500, frame_period_us: 20000,
/// };
/// let pulse = joint_pulse(&calibration, 0.3_f64.to_radians(), &device).unwrap();
/// assert_eq!(pulse.units, 1502); // 1501.67 µs rounded to 1 µs
/// assert!((pulse.position_error_deg() - 0.06).abs() < 1e-9);
/// ```
pub fn joint_pulse(
    calibration: &Calibration,
    position: f64,
    device: &DeviceInfo,
) -> Result<JointPulse, PulseError> {
    if !position.is_finite() {
        return Err(PulseError::NotFinite { joint: 0, position });
    }
    let (low_us, high_us) = accepted_us(device, calibration.pulse_min_us, calibration.pulse_max_us);
    let (units, clamped) = to_units(device, calibration.pulse_us(position), low_us, high_us);
    let pulse_us = device.us_from_units(units);
    Ok(JointPulse {
        units,
        pulse_us,
        position_error: calibration.position(pulse_us) - position,
        clamped,
    })
}

/// The gripper's pulse for `closed_share` (0 open … 1 closed), for `device`.
/// `position_error` is in the same share (1 = the whole open-to-closed travel).
///
/// # Errors
/// [`PulseError::NotFinite`] (reported as joint 0) when `closed_share` is NaN or infinite.
pub fn gripper_pulse(
    gripper: &Gripper,
    closed_share: f64,
    device: &DeviceInfo,
) -> Result<JointPulse, PulseError> {
    if !closed_share.is_finite() {
        return Err(PulseError::NotFinite {
            joint: 0,
            position: closed_share,
        });
    }
    let travel_us = gripper.closed_pulse_us - gripper.open_pulse_us;
    let low = gripper.open_pulse_us.min(gripper.closed_pulse_us);
    let high = gripper.open_pulse_us.max(gripper.closed_pulse_us);
    let (low_us, high_us) = accepted_us(device, low, high);
    let wanted_us = gripper.open_pulse_us + closed_share * travel_us;
    let (units, clamped) = to_units(device, wanted_us, low_us, high_us);
    let pulse_us = device.us_from_units(units);
    let share = if travel_us == 0.0 {
        0.0
    } else {
        (pulse_us - gripper.open_pulse_us) / travel_us
    };
    Ok(JointPulse {
        units,
        pulse_us,
        position_error: share - closed_share,
        clamped,
    })
}

/// A whole setpoint for the device, and how each channel came out.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ArmSetpoint {
    /// The values to send, one per device channel.
    pub values: ChannelValues,
    /// How each joint's pulse came out, chain order; `None` past the last joint.
    pub joints: [Option<JointPulse>; MAX_CHANNELS],
    /// How the gripper's pulse came out, if the arm has one and a share was given.
    pub gripper: Option<JointPulse>,
}

impl ArmSetpoint {
    /// Largest rotation error over the revolute joints, in degrees.
    pub fn worst_error_deg(&self, arm: &Arm) -> f64 {
        arm.joints()
            .iter()
            .zip(self.joints.iter().flatten())
            .filter(|(joint, _)| joint.kind == JointKind::Revolute)
            .map(|(_, pulse)| pulse.position_error_deg().abs())
            .fold(0.0, f64::max)
    }

    /// Whether any channel was clamped.
    pub fn any_clamped(&self) -> bool {
        self.joints.iter().flatten().any(|pulse| pulse.clamped)
            || self.gripper.is_some_and(|pulse| pulse.clamped)
    }
}

/// The device setpoint for an arm pose: joint `i` (chain order) on channel `i`, the gripper
/// on the device's last channel, and channels in between at the middle of the device's range.
///
/// `positions` are in rad (revolute) or m (prismatic), one per joint; `gripper_closed` is the
/// gripper's share closed (0 open … 1 closed), or `None` to leave it at the middle of its
/// travel.
///
/// # Errors
/// [`PulseError::WrongJointCount`], [`PulseError::TooFewChannels`], [`PulseError::NotFinite`].
pub fn arm_setpoint(
    arm: &Arm,
    positions: &[f64],
    gripper_closed: Option<f64>,
    device: &DeviceInfo,
) -> Result<ArmSetpoint, PulseError> {
    let joint_count = arm.joint_count();
    if positions.len() != joint_count {
        return Err(PulseError::WrongJointCount {
            expected: joint_count,
            got: positions.len(),
        });
    }
    let channels = usize::from(device.channel_count).min(MAX_CHANNELS);
    let needed = joint_count + usize::from(arm.gripper().is_some());
    if needed > channels {
        return Err(PulseError::TooFewChannels {
            needed,
            available: channels,
        });
    }
    let middle = device.min_pulse_units / 2 + device.max_pulse_units / 2;
    let mut values = [middle; MAX_CHANNELS];
    let mut joints = [None; MAX_CHANNELS];
    for (index, (joint, &position)) in arm.joints().iter().zip(positions).enumerate() {
        let pulse = joint_pulse(&joint.calibration, position, device).map_err(|_| {
            PulseError::NotFinite {
                joint: index,
                position,
            }
        })?;
        values[index] = pulse.units;
        joints[index] = Some(pulse);
    }
    let gripper = match arm.gripper() {
        Some(gripper) => {
            let share = gripper_closed.unwrap_or(0.5);
            let pulse =
                gripper_pulse(gripper, share, device).map_err(|_| PulseError::NotFinite {
                    joint: joint_count,
                    position: share,
                })?;
            values[channels - 1] = pulse.units;
            gripper_closed.map(|_| pulse)
        }
        None => None,
    };
    let values =
        ChannelValues::from_slice(&values[..channels]).ok_or(PulseError::TooFewChannels {
            needed,
            available: channels,
        })?;
    Ok(ArmSetpoint {
        values,
        joints,
        gripper,
    })
}
