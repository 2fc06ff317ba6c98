//! The fixed-size line buffer, line assembly from a byte stream, the shared line checks
//! (`PROTOCOL.md` §1–2) and the parse error every parser returns.

use std::fmt;

use super::crc::crc16_ccitt_false;

/// Longest line in bytes, line feed included (`PROTOCOL.md` §1).
pub const MAX_LINE_LEN: usize = 64;

/// Most pulse channels (or analog inputs) one line can carry.
pub const MAX_CHANNELS: usize = 8;

/// The newest protocol version this crate speaks (2 adds the output query, 3 the readings
/// rate, 4 the planned setpoint, `PROTOCOL.md` §3).
pub const PROTOCOL_VERSION: u8 = 4;

/// The largest analog reading on the wire: readings are on a 12-bit scale, 0 to 4095
/// (`PROTOCOL.md` §4).
pub const READING_FULL_SCALE: u16 = 4095;

/// The oldest protocol version this crate still speaks to a device.
pub const OLDEST_PROTOCOL_VERSION: u8 = 1;

/// One protocol line in a fixed 64-byte buffer; encoders produce it with its line feed.
#[derive(Clone, Copy, PartialEq, Eq)]
pub struct LineBuf {
    bytes: [u8; MAX_LINE_LEN],
    len: u8,
}

impl LineBuf {
    /// An empty line.
    pub const fn new() -> Self {
        Self {
            bytes: [0; MAX_LINE_LEN],
            len: 0,
        }
    }

    /// A copy of up to the first 64 bytes of `bytes`, with bytes outside printable ASCII
    /// shown as `?`; used to quote bad input in errors.
    pub fn quoting(bytes: &[u8]) -> Self {
        let mut line = Self::new();
        for &byte in bytes.iter().take(MAX_LINE_LEN) {
            line.push(if (0x20..=0x7E).contains(&byte) {
                byte
            } else {
                b'?'
            });
        }
        line
    }

    /// The bytes of the line.
    pub fn as_bytes(&self) -> &[u8] {
        &self.bytes[..usize::from(self.len)]
    }

    /// The line as text, or `""` if it somehow holds non-UTF-8 bytes (encoders never write any).
    pub fn as_str(&self) -> &str {
        std::str::from_utf8(self.as_bytes()).unwrap_or("")
    }

    /// Number of bytes in the line.
    pub fn len(&self) -> usize {
        usize::from(self.len)
    }

    /// Whether the line holds no bytes.
    pub fn is_empty(&self) -> bool {
        self.len == 0
    }

    /// Appends one byte; a byte past the 64th is dropped (encoders never need one).
    pub(crate) fn push(&mut self, byte: u8) {
        if let Some(slot) = self.bytes.get_mut(usize::from(self.len)) {
            *slot = byte;
            self.len += 1;
        }
    }

    pub(crate) fn push_str(&mut self, text: &[u8]) {
        for &byte in text {
            self.push(byte);
        }
    }

    /// Appends `value` as `digits` upper-case hex digits (the low `4 * digits` bits).
    pub(crate) fn push_hex(&mut self, value: u16, digits: u32) {
        const HEX: &[u8; 16] = b"0123456789ABCDEF";
        let start = usize::from(self.len);
        let end = start + digits as usize;
        // One range check for the whole field rather than one per digit.
        if let Some(slots) = self.bytes.get_mut(start..end) {
            for (slot, shift) in slots.iter_mut().zip((0..digits).rev()) {
                *slot = HEX[usize::from((value >> (shift * 4)) & 0xF)];
            }
            self.len = end as u8;
        }
    }

    /// Appends `value` in decimal without leading zeros.
    pub(crate) fn push_decimal(&mut self, value: u16) {
        let mut digits = [0u8; 5];
        let mut count = 0;
        let mut rest = value;
        loop {
            digits[count] = b'0' + (rest % 10) as u8;
            count += 1;
            rest /= 10;
            if rest == 0 {
                break;
            }
        }
        for &digit in digits[..count].iter().rev() {
            self.push(digit);
        }
    }

    /// Closes a line whose kind, sequence number and body are written: appends `/`, the
    /// CRC of everything so far in 4 hex digits, and the line feed.
    pub(crate) fn finish(mut self) -> Self {
        let check = crc16_ccitt_false(self.as_bytes());
        self.push(b'/');
        self.push_hex(check, 4);
        self.push(b'\n');
        self
    }
}

impl Default for LineBuf {
    fn default() -> Self {
        Self::new()
    }
}

impl fmt::Debug for LineBuf {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{:?}", self.as_str())
    }
}

impl fmt::Display for LineBuf {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        for &byte in self.as_bytes() {
            match byte {
                b'\n' => f.write_str("\\n")?,
                b'\r' => f.write_str("\\r")?,
                0x20..=0x7E => write!(f, "{}", char::from(byte))?,
                _ => f.write_str("?")?,
            }
        }
        Ok(())
    }
}

/// One to eight 16-bit values, one per channel (pulse widths in device units) or per analog
/// input, in a fixed array.
#[derive(Clone, Copy, PartialEq, Eq, Hash)]
pub struct ChannelValues {
    values: [u16; MAX_CHANNELS],
    len: u8,
}

impl ChannelValues {
    /// The values of `values`, or `None` when it is empty or longer than [`MAX_CHANNELS`].
    pub fn from_slice(values: &[u16]) -> Option<Self> {
        if values.is_empty() || values.len() > MAX_CHANNELS {
            return None;
        }
        let mut all = [0u16; MAX_CHANNELS];
        all[..values.len()].copy_from_slice(values);
        Some(Self {
            values: all,
            len: values.len() as u8,
        })
    }

    /// The values, channel 0 first.
    pub fn as_slice(&self) -> &[u16] {
        &self.values[..usize::from(self.len)]
    }

    /// Mutable access to the values, channel 0 first.
    pub fn as_mut_slice(&mut self) -> &mut [u16] {
        &mut self.values[..usize::from(self.len)]
    }

    /// Number of channels (1 to 8).
    pub fn len(&self) -> usize {
        usize::from(self.len)
    }

    /// Always false: there is at least one channel. Present for API symmetry with `len`.
    pub fn is_empty(&self) -> bool {
        self.len == 0
    }
}

impl fmt::Debug for ChannelValues {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.debug_list().entries(self.as_slice()).finish()
    }
}

/// What a byte fed to [`LineAssembler::push`] completed.
#[derive(Debug, PartialEq, Eq)]
pub enum Assembled<'a> {
    /// No line feed yet.
    Pending,
    /// A whole line, without its line feed (a carriage return before it is kept).
    Line(&'a [u8]),
    /// A line longer than 64 bytes ended; its bytes were discarded.
    Overlong,
}

/// Cuts a byte stream into lines of at most 64 bytes, discarding overlong ones up to their
/// line feed (`PROTOCOL.md` §1). Works byte by byte, without allocating.
#[derive(Debug, Clone)]
pub struct LineAssembler {
    bytes: [u8; MAX_LINE_LEN],
    len: usize,
    overlong: bool,
    completed: bool,
}

impl LineAssembler {
    /// An assembler waiting for the first byte.
    pub const fn new() -> Self {
        Self {
            bytes: [0; MAX_LINE_LEN],
            len: 0,
            overlong: false,
            completed: false,
        }
    }

    /// Takes one byte of the stream; returns a whole line when `byte` is its line feed.
    pub fn push(&mut self, byte: u8) -> Assembled<'_> {
        if self.completed {
            self.completed = false;
            self.len = 0;
        }
        if byte == b'\n' {
            if std::mem::take(&mut self.overlong) {
                self.len = 0;
                return Assembled::Overlong;
            }
            self.completed = true;
            return Assembled::Line(&self.bytes[..self.len]);
        }
        if self.overlong {
            return Assembled::Pending;
        }
        // Room for the line feed is kept: a line holds at most 63 bytes before it.
        if self.len + 1 >= MAX_LINE_LEN {
            self.overlong = true;
            return Assembled::Pending;
        }
        self.bytes[self.len] = byte;
        self.len += 1;
        Assembled::Pending
    }
}

impl Default for LineAssembler {
    fn default() -> Self {
        Self::new()
    }
}

/// What was wrong with a line, naming what was expected.
#[derive(Debug, Clone, Copy, PartialEq, Eq, thiserror::Error)]
pub enum LineErrorKind {
    /// The line had no bytes before its line feed.
    #[error("empty line, expected a kind letter")]
    Empty,
    /// The line was longer than the 64-byte limit.
    #[error("line of {len} bytes, expected at most 64 with the line feed")]
    TooLong {
        /// Length in bytes, line feed included.
        len: usize,
    },
    /// A byte outside printable ASCII.
    #[error("byte 0x{byte:02X} is not printable ASCII")]
    NotPrintable {
        /// The offending byte.
        byte: u8,
    },
    /// No `/` followed by exactly 4 hex digits at the end; typically a truncated line.
    #[error("expected \"/\" and 4 upper-case hex check digits at the end (truncated line?)")]
    MissingCheck,
    /// The check digits do not match the CRC of the line.
    #[error("check is {received:04X} but the line's CRC is {computed:04X}")]
    ChecksumMismatch {
        /// CRC-16/CCITT-FALSE of the received bytes.
        computed: u16,
        /// The check digits as received.
        received: u16,
    },
    /// The kind letter is not defined for this direction.
    #[error("unknown kind {:?} for this direction", char::from(*.kind))]
    UnknownKind {
        /// The kind byte.
        kind: u8,
    },
    /// Upper-case hex digits were expected.
    #[error("expected {digits} upper-case hex digits")]
    ExpectedHex {
        /// How many digits the field has.
        digits: u8,
    },
    /// A decimal number of 1 to 5 digits was expected.
    #[error("expected a decimal number of 1 to 5 digits")]
    ExpectedDecimal,
    /// A particular separator byte was expected.
    #[error("expected {:?}", char::from(*.expected))]
    ExpectedByte {
        /// The byte that should be here.
        expected: u8,
    },
    /// The line should have ended here.
    #[error("expected the end of the body")]
    TrailingText,
    /// A value does not fit its field's range.
    #[error("{field} out of range, expected {min} to {max}")]
    OutOfRange {
        /// Which field.
        field: &'static str,
        /// Smallest allowed value.
        min: u32,
        /// Largest allowed value.
        max: u32,
    },
    /// A fixed-width value list whose length is not a whole number of 1 to 8 values.
    #[error("{len} value digits, expected 1 to 8 values of {width} hex digits each")]
    BadValueCount {
        /// Number of digits found.
        len: usize,
        /// Digits per value.
        width: u8,
    },
    /// One of a fixed set of words or letters was expected.
    #[error("expected one of {expected}")]
    ExpectedWord {
        /// The allowed words, for the message.
        expected: &'static str,
    },
}

/// A line that could not be parsed: what was wrong, where, and the line itself.
#[derive(Debug, Clone, Copy, PartialEq, Eq, thiserror::Error)]
#[error("{kind} at byte {column} of \"{text}\"")]
pub struct ParseLineError {
    /// What was wrong and what was expected.
    pub kind: LineErrorKind,
    /// Zero-based byte offset in the line where the problem starts.
    pub column: usize,
    /// The line as received without its line end (first 64 bytes, other non-printable
    /// bytes shown as `?`).
    pub text: LineBuf,
}

impl ParseLineError {
    pub(crate) fn new(kind: LineErrorKind, column: usize, line: &[u8]) -> Self {
        let line = line.strip_suffix(b"\n").unwrap_or(line);
        Self {
            kind,
            column,
            text: LineBuf::quoting(line.strip_suffix(b"\r").unwrap_or(line)),
        }
    }

    /// Whether the line was well formed but its check digits were wrong; a device counts
    /// these as bad checksums and everything else as bad lines.
    pub fn is_checksum_mismatch(&self) -> bool {
        matches!(self.kind, LineErrorKind::ChecksumMismatch { .. })
    }
}

/// A line that passed the checks of `PROTOCOL.md` §2 steps 1–3, split into its parts.
pub(crate) struct CheckedLine<'a> {
    pub kind: u8,
    pub seq: u8,
    /// The body after `:` (empty when the line has none), positioned at its column.
    pub body: Cursor<'a>,
}

fn hex_value(byte: u8) -> Option<u16> {
    match byte {
        b'0'..=b'9' => Some(u16::from(byte - b'0')),
        b'A'..=b'F' => Some(u16::from(byte - b'A' + 10)),
        _ => None,
    }
}

/// Runs the checks of `PROTOCOL.md` §2 that do not depend on the direction: length,
/// bytes, check digits, CRC, sequence number and the `:` before a body.
pub(crate) fn check_line(raw: &[u8]) -> Result<CheckedLine<'_>, ParseLineError> {
    let fail = |kind, column| Err(ParseLineError::new(kind, column, raw));
    let mut content = raw.strip_suffix(b"\n").unwrap_or(raw);
    if raw.len() + usize::from(!raw.ends_with(b"\n")) > MAX_LINE_LEN {
        return fail(
            LineErrorKind::TooLong {
                len: raw.len() + usize::from(!raw.ends_with(b"\n")),
            },
            MAX_LINE_LEN - 1,
        );
    }
    content = content.strip_suffix(b"\r").unwrap_or(content);
    if let Some(column) = content.iter().position(|b| !(0x20..=0x7E).contains(b)) {
        return fail(
            LineErrorKind::NotPrintable {
                byte: content[column],
            },
            column,
        );
    }
    if content.is_empty() {
        return fail(LineErrorKind::Empty, 0);
    }
    let Some(slash) = content.len().checked_sub(5) else {
        return fail(LineErrorKind::MissingCheck, content.len());
    };
    if content[slash] != b'/' {
        return fail(LineErrorKind::MissingCheck, slash);
    }
    let mut received = 0u16;
    for &digit in &content[slash + 1..] {
        let Some(value) = hex_value(digit) else {
            return fail(LineErrorKind::MissingCheck, slash);
        };
        received = received << 4 | value;
    }
    let covered = &content[..slash];
    let computed = crc16_ccitt_false(covered);
    if computed != received {
        return fail(
            LineErrorKind::ChecksumMismatch { computed, received },
            slash + 1,
        );
    }
    let mut cursor = Cursor {
        bytes: covered,
        pos: 0,
        line: raw,
    };
    let kind = cursor
        .byte()
        .ok_or_else(|| cursor.error(LineErrorKind::Empty))?;
    let seq = cursor.hex(2)? as u8;
    if !cursor.at_end() {
        cursor.expect(b':')?;
    }
    Ok(CheckedLine {
        kind,
        seq,
        body: cursor,
    })
}

/// Reads fields from the checked part of a line, reporting errors with their column.
pub(crate) struct Cursor<'a> {
    bytes: &'a [u8],
    pos: usize,
    line: &'a [u8],
}

impl<'a> Cursor<'a> {
    pub fn error(&self, kind: LineErrorKind) -> ParseLineError {
        ParseLineError::new(kind, self.pos, self.line)
    }

    pub fn at_end(&self) -> bool {
        self.pos >= self.bytes.len()
    }

    pub fn remaining(&self) -> &'a [u8] {
        self.bytes.get(self.pos..).unwrap_or(&[])
    }

    fn byte(&mut self) -> Option<u8> {
        let byte = *self.bytes.get(self.pos)?;
        self.pos += 1;
        Some(byte)
    }

    /// Fails unless the cursor has reached the end of the body.
    pub fn end(&self) -> Result<(), ParseLineError> {
        if self.at_end() {
            Ok(())
        } else {
            Err(self.error(LineErrorKind::TrailingText))
        }
    }

    pub fn expect(&mut self, expected: u8) -> Result<(), ParseLineError> {
        if self.bytes.get(self.pos) == Some(&expected) {
            self.pos += 1;
            Ok(())
        } else {
            Err(self.error(LineErrorKind::ExpectedByte { expected }))
        }
    }

    /// Exactly `digits` (at most 4) upper-case hex digits.
    pub fn hex(&mut self, digits: u8) -> Result<u16, ParseLineError> {
        let start = self.pos;
        let mut value = 0u16;
        for _ in 0..digits {
            match self.bytes.get(self.pos).copied().and_then(hex_value) {
                Some(nibble) => {
                    value = value << 4 | nibble;
                    self.pos += 1;
                }
                None => {
                    self.pos = start;
                    return Err(self.error(LineErrorKind::ExpectedHex { digits }));
                }
            }
        }
        Ok(value)
    }

    /// 1 to 5 decimal digits, no larger than `max`; `field` names it in the error.
    pub fn decimal(
        &mut self,
        field: &'static str,
        min: u32,
        max: u32,
    ) -> Result<u32, ParseLineError> {
        let start = self.pos;
        let mut value = 0u32;
        while let Some(&byte) = self.bytes.get(self.pos) {
            if !byte.is_ascii_digit() {
                break;
            }
            if self.pos - start == 5 {
                return Err(self.error(LineErrorKind::ExpectedDecimal));
            }
            value = value * 10 + u32::from(byte - b'0');
            self.pos += 1;
        }
        if self.pos == start {
            return Err(self.error(LineErrorKind::ExpectedDecimal));
        }
        if value < min || value > max {
            self.pos = start;
            return Err(self.error(LineErrorKind::OutOfRange { field, min, max }));
        }
        Ok(value)
    }

    /// The bytes up to the next `,` or the end, not consuming the separator.
    pub fn word(&mut self) -> &'a [u8] {
        let start = self.pos;
        while self.bytes.get(self.pos).is_some_and(|&b| b != b',') {
            self.pos += 1;
        }
        &self.bytes[start..self.pos]
    }

    /// Moves past `count` bytes already checked by the caller.
    pub fn skip(&mut self, count: usize) {
        self.pos = (self.pos + count).min(self.bytes.len());
    }

    /// Moves back to `pos` (used to point an error at the start of a word).
    pub fn rewind(&mut self, pos: usize) {
        self.pos = pos;
    }

    pub fn pos(&self) -> usize {
        self.pos
    }

    /// The rest of the body as fixed-width hex values of `width` digits each.
    pub fn hex_values(&mut self, width: u8) -> Result<ChannelValues, ParseLineError> {
        let rest = self.remaining().len();
        let count = rest / usize::from(width);
        if !rest.is_multiple_of(usize::from(width)) || count == 0 || count > MAX_CHANNELS {
            return Err(self.error(LineErrorKind::BadValueCount { len: rest, width }));
        }
        let mut values = [0u16; MAX_CHANNELS];
        for value in values.iter_mut().take(count) {
            *value = self.hex(width)?;
        }
        ChannelValues::from_slice(&values[..count])
            .ok_or_else(|| self.error(LineErrorKind::BadValueCount { len: rest, width }))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn assembler_splits_lines_and_drops_overlong_ones() {
        let mut assembler = LineAssembler::new();
        let mut lines = Vec::new();
        let mut overlong = 0;
        let long = [b'a'; 70];
        let stream: Vec<u8> = [&b"ab\n"[..], &long, b"\ncd\r\n"].concat();
        for byte in stream {
            match assembler.push(byte) {
                Assembled::Line(line) => lines.push(line.to_vec()),
                Assembled::Overlong => overlong += 1,
                Assembled::Pending => {}
            }
        }
        assert_eq!(lines, vec![b"ab".to_vec(), b"cd\r".to_vec()]);
        assert_eq!(overlong, 1);
    }

    #[test]
    fn assembler_keeps_a_line_of_exactly_63_bytes() {
        let mut assembler = LineAssembler::new();
        for _ in 0..63 {
            assert_eq!(assembler.push(b'z'), Assembled::Pending);
        }
        assert!(matches!(assembler.push(b'\n'), Assembled::Line(line) if line.len() == 63));
    }

    #[test]
    fn decimal_push_writes_without_leading_zeros() {
        let mut line = LineBuf::new();
        for value in [0, 7, 10, 65535] {
            line.push_decimal(value);
            line.push(b',');
        }
        assert_eq!(line.as_str(), "0,7,10,65535,");
    }
}
