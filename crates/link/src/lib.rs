//! Armwright's link to a servo-pulse device: our own line protocol (`PROTOCOL.md`), its
//! encoder and parser.
//!
//! Conventions: pulse widths on the wire are integers in the device's pulse unit (announced
//! in its greeting, 1 µs by default); a number in µs or ns says so in its name
//! (`pulse_us`, `pulse_unit_ns`). Sequence numbers are `u8` and wrap. Nothing in the
//! protocol code allocates.
#![warn(missing_docs)]

mod protocol; // line protocol: encoder and parser for both directions, CRC, line assembly
mod sim_device; // in-process simulated device with watchdog, clamping and stop latch

pub use crate::protocol::{
    Ack, AckOutcome, Assembled, ChannelValues, DeviceInfo, DeviceLine, DeviceMessage, DeviceMode,
    DeviceStatus, Faults, FirmwareVersion, HostLine, HostMessage, LineAssembler, LineBuf,
    LineErrorKind, MAX_CHANNELS, MAX_LINE_LEN, PROTOCOL_VERSION, ParseLineError, crc16_ccitt_false,
};
pub use crate::sim_device::{SimDevice, SimDeviceConfig};
