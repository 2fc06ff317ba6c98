//! Host → device lines (`PROTOCOL.md` §3): types, encoder and parser side by side.

use super::device_message::{ChannelOutput, LIMP_FIELD, parse_output};
use super::line::{ChannelValues, LineBuf, LineErrorKind, ParseLineError, check_line};

/// What the host asks of the device.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum HostMessage {
    /// `h`: asks the device to describe itself; carries the host's protocol version.
    Greeting {
        /// Protocol version the host speaks (1).
        protocol_version: u8,
    },
    /// `s`: every channel's pulse width, in the device's pulse units, channel 0 first.
    Setpoint(ChannelValues),
    /// `k`: keep sending the current pulses.
    Hold,
    /// `l`: stop sending pulses; the servos go limp and an unbalanced arm falls.
    Release,
    /// `x`: emergency stop; holds the pulses and latches until [`HostMessage::Reset`].
    EmergencyStop,
    /// `c`: clears the emergency-stop latch and the sticky faults.
    Reset,
    /// `b`: keeps the link alive and asks for a status line.
    Heartbeat,
    /// `q` (protocol 2): asks what the device is sending now; answered by an output line.
    OutputQuery,
    /// `p` (protocol 4): a planned setpoint, played from the device's play queue one pulse
    /// frame each, in the order sent; each channel's width in pulse units, or `None` for a
    /// channel that sends no pulse in that frame (its servo stays limp). At least one
    /// channel has a width.
    Planned(ChannelOutput),
    /// `r` (protocol 3): asks for analog readings lines (`V`) at `rate_hz` lines a second,
    /// 1 to [`MAX_READINGS_RATE_HZ`]; 0 turns them off.
    ReadingsRate {
        /// Readings lines a second; 0 for none.
        rate_hz: u8,
    },
}

/// The highest readings rate a host may ask for, in lines a second (`PROTOCOL.md` §3).
pub const MAX_READINGS_RATE_HZ: u8 = 100;

impl HostMessage {
    /// The kind letter on the wire.
    pub fn kind_letter(&self) -> u8 {
        match self {
            Self::Greeting { .. } => b'h',
            Self::Setpoint(_) => b's',
            Self::Planned(_) => b'p',
            Self::Hold => b'k',
            Self::Release => b'l',
            Self::EmergencyStop => b'x',
            Self::Reset => b'c',
            Self::Heartbeat => b'b',
            Self::OutputQuery => b'q',
            Self::ReadingsRate { .. } => b'r',
        }
    }
}

/// One host → device line: a sequence number and a message.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct HostLine {
    /// The host's sequence number for this line (wraps at 256).
    pub seq: u8,
    /// What the line says.
    pub message: HostMessage,
}

impl HostLine {
    /// The line on the wire, with its check digits and line feed.
    ///
    /// # Example
    /// ```
    /// use armwright_link::{HostLine, HostMessage};
    /// let line = HostLine { seq: 5, message: HostMessage::EmergencyStop };
    /// assert_eq!(line.encode().as_str(), "x05/DE56\n");
    /// ```
    pub fn encode(&self) -> LineBuf {
        let mut line = LineBuf::new();
        line.push(self.message.kind_letter());
        line.push_hex(u16::from(self.seq), 2);
        match &self.message {
            HostMessage::Greeting { protocol_version } => {
                line.push(b':');
                line.push_decimal(u16::from(*protocol_version));
            }
            HostMessage::Setpoint(values) => {
                line.push(b':');
                for &value in values.as_slice() {
                    line.push_hex(value, 4);
                }
            }
            HostMessage::Planned(values) => {
                line.push(b':');
                for value in values.as_slice() {
                    match value {
                        Some(units) => line.push_hex(*units, 4),
                        None => line.push_str(LIMP_FIELD),
                    }
                }
            }
            HostMessage::ReadingsRate { rate_hz } => {
                line.push(b':');
                line.push_decimal(u16::from(*rate_hz));
            }
            HostMessage::Hold
            | HostMessage::Release
            | HostMessage::EmergencyStop
            | HostMessage::Reset
            | HostMessage::Heartbeat
            | HostMessage::OutputQuery => {}
        }
        line.finish()
    }

    /// Parses one host → device line, with or without its line feed.
    ///
    /// # Errors
    /// A [`ParseLineError`] naming what was expected and where, for any line that fails the
    /// checks of `PROTOCOL.md` §2.
    pub fn parse(raw: &[u8]) -> Result<Self, ParseLineError> {
        let checked = check_line(raw)?;
        let mut body = checked.body;
        let message = match checked.kind {
            b'h' => {
                let version = body.decimal("protocol version", 1, 255)? as u8;
                HostMessage::Greeting {
                    protocol_version: version,
                }
            }
            b's' => HostMessage::Setpoint(body.hex_values(4)?),
            b'p' => {
                let values = parse_output(&mut body)?;
                if values.as_slice().iter().all(Option::is_none) {
                    return Err(body.error(LineErrorKind::ExpectedWord {
                        expected: "at least one pulse width (release sends none)",
                    }));
                }
                HostMessage::Planned(values)
            }
            b'k' => HostMessage::Hold,
            b'l' => HostMessage::Release,
            b'x' => HostMessage::EmergencyStop,
            b'c' => HostMessage::Reset,
            b'b' => HostMessage::Heartbeat,
            b'q' => HostMessage::OutputQuery,
            b'r' => HostMessage::ReadingsRate {
                rate_hz: body.decimal("readings rate", 0, u32::from(MAX_READINGS_RATE_HZ))? as u8,
            },
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

/// Bytes on the wire for one setpoint line of `channels` channels, line feed included
/// (`PROTOCOL.md` §7): kind, two sequence digits, `:`, four hex digits a channel, `/`, four
/// check digits and the line feed.
pub const fn setpoint_line_len(channels: usize) -> usize {
    10 + 4 * channels
}

/// The most setpoint lines a second a serial link at `baud` (bit/s) carries for `channels`
/// channels: 8N1 framing sends 10 bits a byte (`PROTOCOL.md` §1), so `baud / 10` bytes a second
/// over [`setpoint_line_len`] bytes a line (`PROTOCOL.md` §7), before acknowledgements are
/// counted on the other wire. A stream asked to run faster falls behind its schedule.
///
/// # Example
/// ```
/// use armwright_link::setpoint_capacity_hz;
/// // Seven channels at 115 200 baud: 11 520 bytes/s over 38-byte lines.
/// assert_eq!(setpoint_capacity_hz(7, 115_200).floor(), 303.0);
/// ```
pub fn setpoint_capacity_hz(channels: usize, baud: u32) -> f64 {
    f64::from(baud) / 10.0 / setpoint_line_len(channels) as f64
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn setpoint_capacity_matches_the_protocol_sizes() {
        // PROTOCOL.md §7: 34, 38 and 42 bytes for 6, 7 and 8 channels; at 115 200 baud 338
        // frames/s for 6 channels and 303 for 7.
        assert_eq!(
            [6, 7, 8].map(setpoint_line_len),
            [34, 38, 42],
            "line lengths"
        );
        assert_eq!(setpoint_capacity_hz(6, 115_200).floor(), 338.0);
        assert_eq!(setpoint_capacity_hz(7, 115_200).floor(), 303.0);
        // The length is the encoder's, for every channel count.
        for channels in 1..=crate::protocol::MAX_CHANNELS {
            let values = ChannelValues::from_slice(&vec![0x0FFF; channels]).expect("fits");
            let line = HostLine {
                seq: 0xFE,
                message: HostMessage::Setpoint(values),
            };
            assert_eq!(
                line.encode().len(),
                setpoint_line_len(channels),
                "{channels}"
            );
        }
    }

    fn parse(text: &str) -> Result<HostLine, ParseLineError> {
        HostLine::parse(text.as_bytes())
    }

    #[test]
    fn setpoint_round_trips() {
        let values = ChannelValues::from_slice(&[1500, 1000, 2000, 1234, 900, 2100]);
        let line = HostLine {
            seq: 0x2A,
            message: HostMessage::Setpoint(values.expect("six values")),
        };
        assert_eq!(parse(line.encode().as_str()), Ok(line));
    }

    #[test]
    fn a_body_on_a_bodiless_kind_is_refused() {
        // "k03:1" with a correct check: the body is not allowed for hold.
        let mut line = LineBuf::new();
        line.push_str(b"k03:1");
        let error = parse(line.finish().as_str()).expect_err("body on hold");
        assert_eq!(error.kind, LineErrorKind::TrailingText);
        assert_eq!(error.column, 4);
    }

    #[test]
    fn device_kinds_are_unknown_to_the_device() {
        let mut line = LineBuf::new();
        line.push_str(b"S03");
        let error = parse(line.finish().as_str()).expect_err("upper case is device to host");
        assert_eq!(error.kind, LineErrorKind::UnknownKind { kind: b'S' });
    }

    #[test]
    fn lower_case_hex_is_refused() {
        let mut line = LineBuf::new();
        line.push_str(b"s01:05dc");
        let error = parse(line.finish().as_str()).expect_err("lower-case hex");
        assert_eq!(error.kind, LineErrorKind::ExpectedHex { digits: 4 });
        assert_eq!(error.column, 4);
    }

    #[test]
    fn a_readings_rate_above_the_limit_is_refused() {
        let mut line = LineBuf::new();
        line.push_str(b"r04:101");
        let error = parse(line.finish().as_str()).expect_err("101 Hz");
        assert!(matches!(
            error.kind,
            LineErrorKind::OutOfRange {
                field: "readings rate",
                min: 0,
                max: 100
            }
        ));
        let mut line = LineBuf::new();
        line.push_str(b"r04");
        let error = parse(line.finish().as_str()).expect_err("no rate");
        assert_eq!(error.kind, LineErrorKind::ExpectedDecimal);
    }

    #[test]
    fn too_many_channels_are_refused() {
        let mut line = LineBuf::new();
        line.push_str(b"s01:");
        for _ in 0..9 {
            line.push_str(b"05DC");
        }
        let error = parse(line.finish().as_str()).expect_err("nine channels");
        assert_eq!(
            error.kind,
            LineErrorKind::BadValueCount { len: 36, width: 4 }
        );
    }
}
