//! Where the simulated device's analog readings come from: a recording played back from a
//! file, or a slow scripted motion, both as a function of the device's clock. The device sends
//! them in readings lines (`V`, `PROTOCOL.md` §4) at the rate the host asks for.
//!
//! The recording format is our own plain text: one line per instant, the time in seconds since
//! the start and then one reading per input (0–4095, the protocol's 12-bit scale), separated by
//! spaces or tabs. Blank lines and lines starting with `#` are ignored. Times rise from line to
//! line; every line has the same number of readings (1 to 8).
//!
//! ```text
//! # time_s  input0 input1 input2
//! 0.00      2048   1900   2300
//! 0.50      2100   1950   2280
//! ```

use std::f64::consts::TAU;
use std::time::Duration;

use crate::protocol::{ChannelValues, MAX_CHANNELS, READING_FULL_SCALE};

/// Analog readings as a function of time, for the simulated device.
#[derive(Debug, Clone, PartialEq)]
pub enum ReadingsSource {
    /// A recording played back from its start at power-up: each row holds until the next
    /// one's time; after the last row the recording starts again from its first.
    Recorded(ReadingsRecording),
    /// A slow scripted motion of every input: input `i` swings on a sine around mid-scale,
    /// `period` long, a sixth of a turn behind input `i − 1`.
    Scripted {
        /// Number of inputs, 1 to 8.
        inputs: u8,
        /// Time for one full swing and back.
        period: Duration,
    },
}

/// Amplitude of the scripted motion's swing, in readings: about ±25 % of full scale, the
/// span of a potentiometer turned through about 70° of its 270° (our choice).
pub const SCRIPTED_AMPLITUDE: f64 = 1000.0;

impl ReadingsSource {
    /// The readings at `time` since the device powered up (always `Some` for a recording that
    /// parsed and for 1 to 8 scripted inputs).
    pub fn readings_at(&self, time: Duration) -> Option<ChannelValues> {
        match self {
            Self::Recorded(recording) => recording.readings_at(time),
            Self::Scripted { inputs, period } => {
                let count = usize::from((*inputs).clamp(1, MAX_CHANNELS as u8));
                let mut values = [0u16; MAX_CHANNELS];
                let turns = time.as_secs_f64() / period.as_secs_f64().max(1e-3);
                let middle = f64::from(READING_FULL_SCALE) / 2.0;
                for (input, value) in values.iter_mut().take(count).enumerate() {
                    let phase = TAU * turns - input as f64 * TAU / 6.0;
                    let reading = middle + SCRIPTED_AMPLITUDE * phase.sin();
                    *value = reading.round().clamp(0.0, f64::from(READING_FULL_SCALE)) as u16;
                }
                ChannelValues::from_slice(&values[..count])
            }
        }
    }

    /// Number of inputs the source reads.
    pub fn input_count(&self) -> usize {
        match self {
            Self::Recorded(recording) => recording.input_count(),
            Self::Scripted { inputs, .. } => usize::from((*inputs).clamp(1, MAX_CHANNELS as u8)),
        }
    }
}

/// A recording of analog readings: rising times with the readings of every input.
#[derive(Debug, Clone, PartialEq)]
pub struct ReadingsRecording {
    rows: Vec<(Duration, ChannelValues)>,
}

/// What is wrong with a recording, with its line (1-based).
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
pub enum RecordingError {
    /// The text has no rows.
    #[error("the recording has no rows: expected lines of \"time_s reading reading …\"")]
    Empty,
    /// A field is not a number of the expected kind.
    #[error("line {line}: {what} {text:?} is not {expected}")]
    BadField {
        /// 1-based line.
        line: usize,
        /// Which field: "time" or "reading 2".
        what: String,
        /// The text found.
        text: String,
        /// What was expected, in words.
        expected: &'static str,
    },
    /// A row has no readings, more than 8, or not as many as the first row.
    #[error("line {line}: {found} readings, expected {expected}")]
    ReadingCount {
        /// 1-based line.
        line: usize,
        /// Readings found.
        found: usize,
        /// Readings expected (the first row's count, or "1 to 8").
        expected: String,
    },
    /// A time does not rise from the row before.
    #[error("line {line}: time {time_s} s is not after the row before ({previous_s} s)")]
    TimeNotRising {
        /// 1-based line.
        line: usize,
        /// The time found, in s.
        time_s: String,
        /// The row before's time, in s.
        previous_s: String,
    },
}

impl ReadingsRecording {
    /// Reads a recording from its text (see the module's documentation for the format).
    ///
    /// # Errors
    /// A [`RecordingError`] naming the line and what was expected.
    pub fn parse(text: &str) -> Result<Self, RecordingError> {
        let mut rows: Vec<(Duration, ChannelValues)> = Vec::new();
        for (index, raw) in text.lines().enumerate() {
            let line = index + 1;
            let content = raw.trim();
            if content.is_empty() || content.starts_with('#') {
                continue;
            }
            let mut fields = content.split_whitespace();
            let time_text = fields.next().unwrap_or_default();
            let time = time_text
                .parse::<f64>()
                .ok()
                .filter(|t| t.is_finite() && *t >= 0.0 && *t < 1e9)
                .ok_or_else(|| RecordingError::BadField {
                    line,
                    what: "time".to_owned(),
                    text: time_text.to_owned(),
                    expected: "a time in seconds, 0 or more",
                })?;
            let mut values = Vec::new();
            for (position, field) in fields.enumerate() {
                let reading = field
                    .parse::<u16>()
                    .ok()
                    .filter(|value| *value <= READING_FULL_SCALE)
                    .ok_or_else(|| RecordingError::BadField {
                        line,
                        what: format!("reading {position}"),
                        text: field.to_owned(),
                        expected: "a whole number from 0 to 4095",
                    })?;
                values.push(reading);
            }
            let expected = rows.first().map(|(_, first)| first.len());
            let values = match ChannelValues::from_slice(&values) {
                Some(values) if expected.is_none_or(|count| count == values.len()) => values,
                _ => {
                    return Err(RecordingError::ReadingCount {
                        line,
                        found: values.len(),
                        expected: expected.map_or_else(|| "1 to 8".to_owned(), |c| c.to_string()),
                    });
                }
            };
            let time = Duration::from_secs_f64(time);
            if let Some((previous, _)) = rows.last()
                && time <= *previous
            {
                return Err(RecordingError::TimeNotRising {
                    line,
                    time_s: time_text.to_owned(),
                    previous_s: format!("{}", previous.as_secs_f64()),
                });
            }
            rows.push((time, values));
        }
        if rows.is_empty() {
            return Err(RecordingError::Empty);
        }
        Ok(Self { rows })
    }

    /// Number of inputs in every row.
    pub fn input_count(&self) -> usize {
        self.rows.first().map_or(0, |(_, values)| values.len())
    }

    /// Length of one pass: the last row's time plus the gap before it (so the last row holds
    /// as long as the one before it did), or 1 s for a single row.
    pub fn duration(&self) -> Duration {
        match self.rows.as_slice() {
            [.., (before, _), (last, _)] => *last + (*last - *before),
            [(only, _)] => *only + Duration::from_secs(1),
            [] => Duration::from_secs(1),
        }
    }

    /// The readings at `time` since the start: the newest row at or before it, the recording
    /// repeating after [`ReadingsRecording::duration`]; before the first row, the first row.
    /// `None` only for a recording with no rows, which [`ReadingsRecording::parse`] refuses.
    pub fn readings_at(&self, time: Duration) -> Option<ChannelValues> {
        let pass = self.duration().as_nanos().max(1);
        let within = Duration::from_nanos((time.as_nanos() % pass) as u64);
        let index = self.rows.partition_point(|(at, _)| *at <= within);
        let row = index.saturating_sub(1);
        self.rows.get(row).map(|(_, values)| *values)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_recording_holds_each_row_and_repeats() {
        let recording =
            ReadingsRecording::parse("# time_s a b\n0 100 200\n\n0.5 300 400\n1.0 500 600\n")
                .expect("valid");
        let at = |ms| {
            recording
                .readings_at(Duration::from_millis(ms))
                .expect("rows")
                .as_slice()
                .to_vec()
        };
        assert_eq!(at(0), [100, 200]);
        assert_eq!(at(499), [100, 200]);
        assert_eq!(at(500), [300, 400]);
        assert_eq!(at(1400), [500, 600]);
        // One pass is 1.5 s: the last row holds as long as the one before it.
        assert_eq!(recording.duration(), Duration::from_millis(1500));
        assert_eq!(at(1500), [100, 200]);
        assert_eq!(at(2100), [300, 400]);
    }

    #[test]
    fn bad_recordings_name_the_line_and_the_field() {
        let error = |text| ReadingsRecording::parse(text).expect_err("bad").to_string();
        assert_eq!(
            error("0 100\n0.1 5000\n"),
            "line 2: reading 0 \"5000\" is not a whole number from 0 to 4095"
        );
        assert_eq!(error("0 1 2\n1 3\n"), "line 2: 1 readings, expected 2");
        assert_eq!(
            error("0.5 1\n0.5 2\n"),
            "line 2: time 0.5 s is not after the row before (0.5 s)"
        );
        assert_eq!(
            error("x 1\n"),
            "line 1: time \"x\" is not a time in seconds, 0 or more"
        );
        assert_eq!(
            error("# nothing\n"),
            "the recording has no rows: expected lines of \"time_s reading reading …\""
        );
        assert_eq!(error("0\n"), "line 1: 0 readings, expected 1 to 8");
    }

    #[test]
    fn the_scripted_motion_swings_slowly_around_mid_scale() {
        let source = ReadingsSource::Scripted {
            inputs: 6,
            period: Duration::from_secs(8),
        };
        let at = |ms| {
            source
                .readings_at(Duration::from_millis(ms))
                .expect("inputs")
        };
        let start = at(0);
        assert_eq!(start.len(), 6);
        assert_eq!(start.as_slice()[0], 2048);
        // A quarter period later input 0 is at the top of its swing.
        let quarter = at(2000);
        assert_eq!(quarter.as_slice()[0], 3048);
        // Slow: no reading moves more than 20 counts in 20 ms (2π·1000/8 s·0.02 s ≈ 15.7).
        for step in 0..400u64 {
            let (a, b) = (at(step * 20), at(step * 20 + 20));
            for (x, y) in a.as_slice().iter().zip(b.as_slice()) {
                assert!(x.abs_diff(*y) <= 16, "{x} → {y} at step {step}");
            }
        }
    }
}
