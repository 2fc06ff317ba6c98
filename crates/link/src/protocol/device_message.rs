//! Device → host lines (`PROTOCOL.md` §4): types, encoder and parser side by side.

use std::fmt;

use super::line::{
    ChannelValues, Cursor, LineBuf, LineErrorKind, MAX_CHANNELS, ParseLineError, check_line,
};

/// A firmware version: 1 to 12 bytes of `0-9 A-Z a-z . + -`.
#[derive(Clone, Copy, PartialEq, Eq, Hash)]
pub struct FirmwareVersion {
    bytes: [u8; 12],
    len: u8,
}

impl FirmwareVersion {
    /// The version `text`, or `None` if it is empty, longer than 12 bytes or holds other bytes.
    pub fn new(text: &str) -> Option<Self> {
        Self::from_bytes(text.as_bytes())
    }

    fn from_bytes(text: &[u8]) -> Option<Self> {
        let allowed = |b: &u8| b.is_ascii_alphanumeric() || matches!(b, b'.' | b'+' | b'-');
        if text.is_empty() || text.len() > 12 || !text.iter().all(allowed) {
            return None;
        }
        let mut bytes = [0u8; 12];
        bytes[..text.len()].copy_from_slice(text);
        Some(Self {
            bytes,
            len: text.len() as u8,
        })
    }

    /// The version as text.
    pub fn as_str(&self) -> &str {
        std::str::from_utf8(&self.bytes[..usize::from(self.len)]).unwrap_or("")
    }
}

impl Default for FirmwareVersion {
    /// The version `0`.
    fn default() -> Self {
        let mut bytes = [0u8; 12];
        bytes[0] = b'0';
        Self { bytes, len: 1 }
    }
}

impl fmt::Debug for FirmwareVersion {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{:?}", self.as_str())
    }
}

impl fmt::Display for FirmwareVersion {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.as_str())
    }
}

/// What a device says about itself in its greeting (`H`).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct DeviceInfo {
    /// Protocol version the device speaks: in answer to a host greeting, the lower of the
    /// host's and the device's newest.
    pub protocol_version: u8,
    /// Firmware version text.
    pub firmware: FirmwareVersion,
    /// Number of pulse channels, 1 to 8; every setpoint carries exactly this many values.
    pub channel_count: u8,
    /// Length of one pulse unit in nanoseconds (1000 = 1 µs).
    pub pulse_unit_ns: u16,
    /// Lowest accepted pulse width, in pulse units.
    pub min_pulse_units: u16,
    /// Highest accepted pulse width, in pulse units.
    pub max_pulse_units: u16,
    /// Pulse frame period in microseconds.
    pub frame_period_us: u16,
}

impl DeviceInfo {
    /// Whether this is the simulated device running as a process of its own on this or
    /// another general-purpose computer (firmware version `simpty-…`, `PROTOCOL.md` §9): its
    /// silences may be that computer's load rather than a lost link.
    pub fn is_simulated_process(&self) -> bool {
        self.firmware.as_str().starts_with("simpty-")
    }

    /// The pulse width `pulse_us` (µs) in this device's pulse units, rounded to the
    /// nearest unit and limited to 0–65535 (not to the accepted range).
    pub fn units_from_us(&self, pulse_us: f64) -> u16 {
        let units = (pulse_us * 1000.0 / f64::from(self.pulse_unit_ns.max(1))).round();
        // `as` saturates and maps NaN to 0, which is what we want here.
        units as u16
    }

    /// The pulse width of `units` pulse units, in µs.
    pub fn us_from_units(&self, units: u16) -> f64 {
        f64::from(units) * f64::from(self.pulse_unit_ns) / 1000.0
    }

    /// `units` limited to the accepted range, and whether it had to be.
    pub fn clamp_units(&self, units: u16) -> (u16, bool) {
        let clamped = units.clamp(self.min_pulse_units, self.max_pulse_units);
        (clamped, clamped != units)
    }
}

/// Outcome of a line, as its acknowledgement reports it.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum AckOutcome {
    /// `ok`: acted on.
    Accepted,
    /// `clamped`: a setpoint acted on after clamping values into range.
    Clamped,
    /// `refused`: valid but not acted on, because the emergency stop is latched.
    Refused,
}

impl AckOutcome {
    fn word(self) -> &'static [u8] {
        match self {
            Self::Accepted => b"ok",
            Self::Clamped => b"clamped",
            Self::Refused => b"refused",
        }
    }
}

/// An acknowledgement (`A`) of one host line.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub struct Ack {
    /// The host sequence number acknowledged.
    pub acked_seq: u8,
    /// How many more host lines the device's input queue can take (0–99).
    pub room: u8,
    /// What the device did with the line.
    pub outcome: AckOutcome,
}

/// The device's mode, one letter in a status line.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum DeviceMode {
    /// `L`: no pulses (after power-up and after release).
    Limp,
    /// `D`: following setpoints.
    Driving,
    /// `K`: holding the current pulses (after hold, reset or a watchdog trip).
    Keeping,
    /// `X`: emergency stop latched; pulses held.
    Stopped,
}

impl DeviceMode {
    fn letter(self) -> u8 {
        match self {
            Self::Limp => b'L',
            Self::Driving => b'D',
            Self::Keeping => b'K',
            Self::Stopped => b'X',
        }
    }
}

/// Fault bits of a status line (`PROTOCOL.md` §4).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Default)]
pub struct Faults(pub u8);

impl Faults {
    /// The watchdog tripped (sticky until reset).
    pub const WATCHDOG: Self = Self(0x01);
    /// The emergency stop is latched.
    pub const EMERGENCY_STOP: Self = Self(0x02);
    /// A value was clamped (sticky until reset).
    pub const CLAMPED: Self = Self(0x04);
    /// A bad line or bad checksum was seen (sticky until reset).
    pub const BAD_INPUT: Self = Self(0x08);
    /// The input queue overflowed (sticky until reset).
    pub const OVERFLOW: Self = Self(0x10);

    /// Whether every bit of `other` is set.
    pub fn contains(self, other: Self) -> bool {
        self.0 & other.0 == other.0
    }

    /// Sets the bits of `other`.
    pub fn insert(&mut self, other: Self) {
        self.0 |= other.0;
    }

    /// Clears the bits of `other`.
    pub fn remove(&mut self, other: Self) {
        self.0 &= !other.0;
    }
}

/// A status line (`S`): mode, fault bits and counters since power-up.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub struct DeviceStatus {
    /// Current mode.
    pub mode: DeviceMode,
    /// Current fault bits.
    pub faults: Faults,
    /// Lines dropped for a wrong check, since power-up (stops at 65535).
    pub bad_checksums: u16,
    /// Other bad lines (form, kind, length, overflow), since power-up (stops at 65535).
    pub bad_lines: u16,
    /// Setpoint values clamped into range, since power-up (stops at 65535).
    pub clamped_values: u16,
    /// Watchdog trips since power-up (stops at 65535).
    pub watchdog_trips: u16,
}

/// What a device is sending now, channel by channel (`P`, protocol 2): the pulse width in
/// pulse units, or `None` for a channel that sends no pulse (its servo is limp).
#[derive(Clone, Copy, PartialEq, Eq, Hash)]
pub struct ChannelOutput {
    values: [Option<u16>; MAX_CHANNELS],
    len: u8,
}

impl ChannelOutput {
    /// The output `values` (pulse units, `None` for limp), or `None` when it is empty or
    /// longer than [`MAX_CHANNELS`].
    pub fn from_slice(values: &[Option<u16>]) -> Option<Self> {
        if values.is_empty() || values.len() > MAX_CHANNELS {
            return None;
        }
        let mut all = [None; MAX_CHANNELS];
        all[..values.len()].copy_from_slice(values);
        Some(Self {
            values: all,
            len: values.len() as u8,
        })
    }

    /// Every channel of `pulses` driven at its width (pulse units).
    pub fn driven(pulses: &ChannelValues) -> Self {
        let mut values = [None; MAX_CHANNELS];
        for (slot, &units) in values.iter_mut().zip(pulses.as_slice()) {
            *slot = Some(units);
        }
        Self {
            values,
            len: pulses.len() as u8,
        }
    }

    /// `channel_count` channels (1 to 8), all limp.
    pub fn limp(channel_count: u8) -> Self {
        Self {
            values: [None; MAX_CHANNELS],
            len: channel_count.clamp(1, MAX_CHANNELS as u8),
        }
    }

    /// Each channel's pulse width in pulse units, `None` while limp; channel 0 first.
    pub fn as_slice(&self) -> &[Option<u16>] {
        &self.values[..usize::from(self.len)]
    }

    /// Number of channels (1 to 8).
    pub fn len(&self) -> usize {
        usize::from(self.len)
    }

    /// Always false: there is at least one channel. Present for API symmetry with `len`.
    pub fn is_empty(&self) -> bool {
        self.len == 0
    }

    /// Whether any channel is limp (its servo's position is then unknown).
    pub fn any_limp(&self) -> bool {
        self.as_slice().iter().any(Option::is_none)
    }

    /// The pulse widths (pulse units) when every channel is driven, else `None`.
    pub fn pulses(&self) -> Option<ChannelValues> {
        let mut units = [0u16; MAX_CHANNELS];
        for (slot, value) in units.iter_mut().zip(self.as_slice()) {
            *slot = (*value)?;
        }
        ChannelValues::from_slice(&units[..self.len()])
    }
}

impl fmt::Debug for ChannelOutput {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.debug_list().entries(self.as_slice()).finish()
    }
}

/// What the device tells the host.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum DeviceMessage {
    /// `H`: the device describes itself.
    Greeting(DeviceInfo),
    /// `A`: acknowledges one host line.
    Ack(Ack),
    /// `S`: mode, faults and counters.
    Status(DeviceStatus),
    /// `V`: raw analog readings, 0–4095 each (reserved).
    Analog(ChannelValues),
    /// `P` (protocol 2): what the device is sending now, in answer to an output query.
    Output(ChannelOutput),
}

/// One device → host line: a sequence number and a message.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct DeviceLine {
    /// The device's sequence number for this line (wraps at 256).
    pub seq: u8,
    /// What the line says.
    pub message: DeviceMessage,
}

impl DeviceLine {
    /// The line on the wire, with its check digits and line feed. Analog readings above
    /// 4095 are sent as 4095.
    pub fn encode(&self) -> LineBuf {
        let mut line = LineBuf::new();
        let kind = match self.message {
            DeviceMessage::Greeting(_) => b'H',
            DeviceMessage::Ack(_) => b'A',
            DeviceMessage::Status(_) => b'S',
            DeviceMessage::Analog(_) => b'V',
            DeviceMessage::Output(_) => b'P',
        };
        line.push(kind);
        line.push_hex(u16::from(self.seq), 2);
        line.push(b':');
        match &self.message {
            DeviceMessage::Greeting(info) => {
                line.push_decimal(u16::from(info.protocol_version));
                line.push(b',');
                line.push_str(info.firmware.as_str().as_bytes());
                for value in [
                    u16::from(info.channel_count),
                    info.pulse_unit_ns,
                    info.min_pulse_units,
                    info.max_pulse_units,
                    info.frame_period_us,
                ] {
                    line.push(b',');
                    line.push_decimal(value);
                }
            }
            DeviceMessage::Ack(ack) => {
                line.push_hex(u16::from(ack.acked_seq), 2);
                line.push(b',');
                line.push_decimal(u16::from(ack.room.min(99)));
                line.push(b',');
                line.push_str(ack.outcome.word());
            }
            DeviceMessage::Status(status) => {
                line.push(status.mode.letter());
                line.push(b',');
                line.push_hex(u16::from(status.faults.0), 2);
                for value in [
                    status.bad_checksums,
                    status.bad_lines,
                    status.clamped_values,
                    status.watchdog_trips,
                ] {
                    line.push(b',');
                    line.push_decimal(value);
                }
            }
            DeviceMessage::Analog(values) => {
                for &value in values.as_slice() {
                    line.push_hex(value.min(0xFFF), 3);
                }
            }
            DeviceMessage::Output(output) => {
                for value in output.as_slice() {
                    match value {
                        Some(units) => line.push_hex(*units, 4),
                        None => line.push_str(LIMP_FIELD),
                    }
                }
            }
        }
        line.finish()
    }

    /// Parses one device → host line, with or without its line feed.
    ///
    /// # Errors
    /// A [`ParseLineError`] naming what was expected and where, for any line that fails the
    /// checks of `PROTOCOL.md` §2.
    pub fn parse(raw: &[u8]) -> Result<Self, ParseLineError> {
        let checked = check_line(raw)?;
        let mut body = checked.body;
        let message = match checked.kind {
            b'H' => DeviceMessage::Greeting(parse_greeting(&mut body)?),
            b'A' => DeviceMessage::Ack(parse_ack(&mut body)?),
            b'S' => DeviceMessage::Status(parse_status(&mut body)?),
            b'V' => DeviceMessage::Analog(body.hex_values(3)?),
            b'P' => DeviceMessage::Output(parse_output(&mut body)?),
            kind => {
                return Err(ParseLineError::new(
                    LineErrorKind::UnknownKind { kind },
                    0,
                    raw,
                ));
            }
        };
        body.end()?;
        Ok(Self {
            seq: checked.seq,
            message,
        })
    }
}

/// How an output line spells a channel that sends no pulse.
pub(crate) const LIMP_FIELD: &[u8; 4] = b"----";

/// A body of 4-hex-digit pulse widths or `----` per channel (output and planned setpoint).
pub(crate) fn parse_output(body: &mut Cursor<'_>) -> Result<ChannelOutput, ParseLineError> {
    let rest = body.remaining().len();
    let count = rest / 4;
    if !rest.is_multiple_of(4) || count == 0 || count > MAX_CHANNELS {
        return Err(body.error(LineErrorKind::BadValueCount {
            len: rest,
            width: 4,
        }));
    }
    let mut values = [None; MAX_CHANNELS];
    for value in values.iter_mut().take(count) {
        if body.remaining().starts_with(LIMP_FIELD) {
            body.skip(LIMP_FIELD.len());
        } else {
            *value = Some(body.hex(4).map_err(|_| {
                body.error(LineErrorKind::ExpectedWord {
                    expected: "4 hex digits or ----",
                })
            })?);
        }
    }
    ChannelOutput::from_slice(&values[..count]).ok_or_else(|| {
        body.error(LineErrorKind::BadValueCount {
            len: rest,
            width: 4,
        })
    })
}

fn parse_greeting(body: &mut Cursor<'_>) -> Result<DeviceInfo, ParseLineError> {
    let protocol_version = body.decimal("protocol version", 1, 255)? as u8;
    body.expect(b',')?;
    let start = body.pos();
    let firmware = FirmwareVersion::from_bytes(body.word()).ok_or_else(|| {
        body.rewind(start);
        body.error(LineErrorKind::ExpectedWord {
            expected: "1 to 12 bytes of 0-9 A-Z a-z . + -",
        })
    })?;
    body.expect(b',')?;
    let channel_count = body.decimal("channel count", 1, 8)? as u8;
    body.expect(b',')?;
    let pulse_unit_ns = body.decimal("pulse unit", 1, 65535)? as u16;
    body.expect(b',')?;
    let min_pulse_units = body.decimal("lowest pulse", 0, 65535)? as u16;
    body.expect(b',')?;
    let max_pulse_units = body.decimal("highest pulse", u32::from(min_pulse_units), 65535)? as u16;
    body.expect(b',')?;
    let frame_period_us = body.decimal("frame period", 1, 65535)? as u16;
    Ok(DeviceInfo {
        protocol_version,
        firmware,
        channel_count,
        pulse_unit_ns,
        min_pulse_units,
        max_pulse_units,
        frame_period_us,
    })
}

fn parse_ack(body: &mut Cursor<'_>) -> Result<Ack, ParseLineError> {
    let acked_seq = body.hex(2)? as u8;
    body.expect(b',')?;
    let room = body.decimal("room", 0, 99)? as u8;
    body.expect(b',')?;
    let start = body.pos();
    let outcome = match body.word() {
        b"ok" => AckOutcome::Accepted,
        b"clamped" => AckOutcome::Clamped,
        b"refused" => AckOutcome::Refused,
        _ => {
            body.rewind(start);
            return Err(body.error(LineErrorKind::ExpectedWord {
                expected: "ok, clamped, refused",
            }));
        }
    };
    Ok(Ack {
        acked_seq,
        room,
        outcome,
    })
}

fn parse_status(body: &mut Cursor<'_>) -> Result<DeviceStatus, ParseLineError> {
    let start = body.pos();
    let mode = match body.word() {
        b"L" => DeviceMode::Limp,
        b"D" => DeviceMode::Driving,
        b"K" => DeviceMode::Keeping,
        b"X" => DeviceMode::Stopped,
        _ => {
            body.rewind(start);
            return Err(body.error(LineErrorKind::ExpectedWord {
                expected: "L, D, K, X",
            }));
        }
    };
    body.expect(b',')?;
    let faults = Faults(body.hex(2)? as u8);
    let mut counters = [0u16; 4];
    let names = [
        "bad checksums",
        "bad lines",
        "clamped values",
        "watchdog trips",
    ];
    for (counter, name) in counters.iter_mut().zip(names) {
        body.expect(b',')?;
        *counter = body.decimal(name, 0, 65535)? as u16;
    }
    Ok(DeviceStatus {
        mode,
        faults,
        bad_checksums: counters[0],
        bad_lines: counters[1],
        clamped_values: counters[2],
        watchdog_trips: counters[3],
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn greeting_with_max_below_min_is_refused() {
        let mut line = LineBuf::new();
        line.push_str(b"H00:1,0.1.0,7,500,5000,1000,20000");
        let error = DeviceLine::parse(line.finish().as_bytes()).expect_err("max < min");
        assert!(matches!(
            error.kind,
            LineErrorKind::OutOfRange {
                field: "highest pulse",
                ..
            }
        ));
    }

    #[test]
    fn unknown_outcome_points_at_the_word() {
        let mut line = LineBuf::new();
        line.push_str(b"A00:00,4,maybe");
        let error = DeviceLine::parse(line.finish().as_bytes()).expect_err("bad outcome");
        assert_eq!(error.column, 9);
    }

    #[test]
    fn units_round_to_the_device_resolution() {
        let info = DeviceInfo {
            protocol_version: 1,
            firmware: FirmwareVersion::new("t").expect("valid"),
            channel_count: 1,
            pulse_unit_ns: 500,
            min_pulse_units: 1000,
            max_pulse_units: 5000,
            frame_period_us: 20000,
        };
        assert_eq!(info.units_from_us(1500.2), 3000);
        assert_eq!(info.units_from_us(1500.3), 3001);
        assert_eq!(info.us_from_units(3001), 1500.5);
        assert_eq!(info.clamp_units(6000), (5000, true));
        assert_eq!(info.clamp_units(3000), (3000, false));
    }
}
