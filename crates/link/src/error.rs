//! The link's error type, and the reasons a link can be lost.

use std::time::Duration;

use crate::protocol::DeviceStatus;

/// Why the host gave up on a link while it was open.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum LinkLoss {
    /// Writing to the transport failed.
    WriteFailed {
        /// What the operating system reported.
        kind: std::io::ErrorKind,
    },
    /// Reading from the transport failed.
    ReadFailed {
        /// What the operating system reported.
        kind: std::io::ErrorKind,
    },
    /// A line went unacknowledged while the device said nothing for longer than the
    /// silence limit (or it went unanswered for twice that long).
    NoAck {
        /// Host sequence number of the oldest unacknowledged line.
        seq: u8,
        /// How long that line waited, in time the host was watching the line (a host held up
        /// by a busy computer does not count its own absence).
        waited: Duration,
        /// How long the device had said nothing when the host gave up, counted the same way.
        silent: Duration,
    },
    /// The device reported a fault while the host was streaming (watchdog or a stop the
    /// host did not send).
    DeviceFault {
        /// The status line that reported it.
        status: DeviceStatus,
    },
    /// The device sent a greeting nobody asked for: it restarted.
    DeviceRestarted,
}

impl std::fmt::Display for LinkLoss {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            Self::WriteFailed { kind } => write!(f, "writing to the device failed ({kind})"),
            Self::ReadFailed { kind } => write!(f, "reading from the device failed ({kind})"),
            Self::NoAck {
                seq,
                waited,
                silent,
            } => write!(
                f,
                "line {seq:02X} not acknowledged within {} ms; the device said nothing for {} ms",
                waited.as_millis(),
                silent.as_millis()
            ),
            Self::DeviceFault { status } => write!(
                f,
                "device reported a fault (mode {:?}, faults {:02X})",
                status.mode, status.faults.0
            ),
            Self::DeviceRestarted => f.write_str("the device restarted"),
        }
    }
}

/// Everything that can go wrong on the link, apart from parsing a line.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum LinkError {
    /// A serial port could not be opened.
    #[error("cannot open serial port \"{path}\": {reason}")]
    OpenPort {
        /// The port's path.
        path: String,
        /// What the operating system reported.
        reason: String,
    },
    /// A pseudo-terminal for the simulated device could not be made.
    #[error("cannot make a pseudo-terminal for the simulated device: {reason}")]
    Pty {
        /// What the operating system reported.
        reason: String,
    },
    /// Listing serial ports failed.
    #[error("cannot list serial ports: {reason}")]
    ListPorts {
        /// What the operating system reported.
        reason: String,
    },
    /// The device did not answer the greeting in time.
    #[error("no greeting from the device within {} ms", .waited.as_millis())]
    NoGreeting {
        /// How long the host waited.
        waited: Duration,
    },
    /// The device did not report its state (status, output) after its greeting in time.
    #[error("the device greeted but did not report its state within {} ms", .waited.as_millis())]
    NoStatus {
        /// How long the host waited.
        waited: Duration,
    },
    /// The device speaks a protocol version this host does not.
    #[error("device speaks protocol version {device}, expected 1 to {expected}")]
    ProtocolVersion {
        /// The device's version.
        device: u8,
        /// The newest we speak.
        expected: u8,
    },
    /// A setpoint had the wrong number of channels for this device.
    #[error("setpoint has {got} channels, the device has {expected}")]
    WrongChannelCount {
        /// The device's channel count.
        expected: usize,
        /// The setpoint's.
        got: usize,
    },
    /// Analog readings were asked of a device that cannot send them.
    #[error(
        "the device speaks protocol {protocol_version} and cannot send analog readings \
         (they need protocol 3: reference firmware 0.3.0 or newer)"
    )]
    NoReadings {
        /// The link's protocol version.
        protocol_version: u8,
    },
    /// A readings rate above the protocol's limit.
    #[error("readings rate {rate_hz} Hz is above the protocol's 100 Hz")]
    ReadingsRate {
        /// The rate asked for, in lines a second.
        rate_hz: u8,
    },
    /// The emergency stop is latched; streaming is refused until a confirmed reset.
    #[error("emergency stop is latched; reset it (after checking the arm) before streaming")]
    StopLatched,
    /// Setpoints are only taken between [`crate::Link::start_stream`] and the stream's end.
    #[error("no stream is running; start one before queueing setpoints")]
    NotStreaming,
    /// A stream is already running.
    #[error("a stream is already running")]
    AlreadyStreaming,
    /// The link was lost.
    #[error("link lost: {0}")]
    Lost(LinkLoss),
    /// The streaming thread has ended.
    #[error("the streaming thread has ended")]
    Closed,
    /// A frame with a channel left without a pulse, on a link that does not play ahead.
    #[error(
        "a setpoint with a channel left limp needs a device that plays planned setpoints \
         (protocol 4) and a stream played ahead at the device's pulse frame"
    )]
    NoPlayAhead,
}
