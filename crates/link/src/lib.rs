//! Armwright's link to a servo-pulse device: our own line protocol (`PROTOCOL.md`), a
//! streaming thread with deadline timing and an emergency stop, serial-port discovery and
//! a simulated device, which can move an arm's servo model (from `armwright-trajectory`)
//! with the pulses it sends, so a user sees the arm as the device moves it
//! ([`SimDevice::with_arm`], [`SimDevice::arm_positions`]).
//!
//! Conventions: pulse widths on the wire are integers in the device's pulse unit (announced
//! in its greeting, 1 µs by default); a number in µs or ns says so in its name
//! (`pulse_us`, `pulse_unit_ns`); intervals are `Duration`s and deadlines `Instant`s.
//! Sequence numbers are `u8` and wrap. The protocol code never allocates.
//!
//! A software stop is not a safety device: keep a hard power cut-off within reach of
//! anyone near a powered arm.
#![warn(missing_docs)]

mod error; // LinkError and the reasons a link is lost
mod estop; // emergency-stop request handle and the reset confirmation
mod port; // transports (serial port, pty, simulated device) and port discovery
mod protocol; // line protocol: encoder and parser for both directions, CRC, line assembly
mod pulse; // joint position → pulse width through the calibration, rounding and clamping
mod run_delay; // a thread's waits for a processor (Linux's run-queue delay)
mod setpoints; // a plan's samples → device setpoints, for streaming
mod sim_arm; // the arm as the simulated device moves it: pulses → servo model, frame by frame
#[cfg(unix)]
mod sim_clock; // a simulated microcontroller's clock: wall time less the thread's waits for a processor
mod sim_device; // in-process simulated device with watchdog, clamping and stop latch
mod sim_readings; // the simulated device's analog readings: a recording or a scripted motion
mod stream; // streaming thread: schedule, flow control, stop path, link watch, statistics

pub use crate::error::{LinkError, LinkLoss};
pub use crate::estop::{EmergencyStop, ResetConfirmation};
pub use crate::port::{PortSummary, SerialTransport, SimTransport, Transport, UsbIds, list_ports};
#[cfg(unix)]
pub use crate::port::{ProcessorWaits, SimPty};
pub use crate::protocol::{
    Ack, AckOutcome, Assembled, ChannelOutput, ChannelValues, DeviceInfo, DeviceLine,
    DeviceMessage, DeviceMode, DeviceStatus, Faults, FirmwareVersion, HostLine, HostMessage,
    LineAssembler, LineBuf, LineErrorKind, MAX_CHANNELS, MAX_LINE_LEN, MAX_READINGS_RATE_HZ,
    OLDEST_PROTOCOL_VERSION, PROTOCOL_VERSION, ParseLineError, READING_FULL_SCALE,
    crc16_ccitt_false, setpoint_capacity_hz, setpoint_line_len,
};
pub use crate::pulse::{
    ArmSetpoint, JointPulse, PulseError, arm_setpoint, gripper_pulse, joint_pulse,
};
pub use crate::setpoints::{
    DevicePose, DeviceSetpoints, SetpointError, device_pose, device_setpoints,
};
pub use crate::sim_arm::SimArmError;
pub use crate::sim_device::{SimDevice, SimDeviceConfig};
pub use crate::sim_readings::{
    ReadingsRecording, ReadingsSource, RecordingError, SCRIPTED_AMPLITUDE,
};
pub use crate::stream::{DeviceState, Link, LinkEvent, LinkState, StreamOptions, StreamStats};
