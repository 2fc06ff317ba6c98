//! The line protocol of `PROTOCOL.md`: encoder and parser side by side, for both directions.
//!
//! Naming: `crc.rs` is the check sum, `line.rs` the line buffer, line assembly and the parse
//! error every parser returns; each direction has one file named after who sends it
//! (`host_message.rs`, `device_message.rs`) holding its message types, encoder and parser.
//! Nothing here allocates: lines live in fixed 64-byte buffers and channel values in
//! fixed 8-slot arrays.

mod crc; // CRC-16/CCITT-FALSE over a line's bytes
mod device_message; // device → host lines: greeting, acknowledgement, status, output, analog readings
mod host_message; // host → device lines: greeting, setpoint, hold, release, stop, reset, heartbeat, output query, readings rate
mod line; // fixed-size line buffer, byte-stream line assembly, the shared parse error

pub use crc::crc16_ccitt_false;
pub use device_message::{
    Ack, AckOutcome, ChannelOutput, DeviceInfo, DeviceLine, DeviceMessage, DeviceMode,
    DeviceStatus, Faults, FirmwareVersion,
};
pub use host_message::{
    HostLine, HostMessage, MAX_READINGS_RATE_HZ, setpoint_capacity_hz, setpoint_line_len,
};
pub use line::{
    Assembled, ChannelValues, LineAssembler, LineBuf, LineErrorKind, MAX_CHANNELS, MAX_LINE_LEN,
    OLDEST_PROTOCOL_VERSION, PROTOCOL_VERSION, ParseLineError, READING_FULL_SCALE,
};
