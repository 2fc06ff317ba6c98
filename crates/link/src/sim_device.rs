//! The simulated device: the protocol of `PROTOCOL.md` as the reference firmware speaks it,
//! in process, driven by a clock the caller passes in, so tests are deterministic. Given an
//! arm, it also moves that arm's servo model with the pulses it sends.

use std::collections::VecDeque;
use std::time::Duration;

use armwright_kinematics::Arm;
use armwright_trajectory::ServoModelOptions;

use crate::protocol::{
    Ack, AckOutcome, Assembled, ChannelOutput, ChannelValues, DeviceInfo, DeviceLine,
    DeviceMessage, DeviceMode, DeviceStatus, Faults, FirmwareVersion, HostLine, HostMessage,
    LineAssembler, LineBuf, PROTOCOL_VERSION,
};
use crate::sim_arm::{SimArm, SimArmError};
use crate::sim_readings::ReadingsSource;

/// How a simulated device is built: what it announces and its timing.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SimDeviceConfig {
    /// Number of pulse channels, 1 to 8.
    pub channel_count: u8,
    /// Pulse unit in nanoseconds (1000 = 1 µs).
    pub pulse_unit_ns: u16,
    /// Lowest accepted pulse width, in pulse units.
    pub min_pulse_units: u16,
    /// Highest accepted pulse width, in pulse units.
    pub max_pulse_units: u16,
    /// Pulse frame period.
    pub frame_period: Duration,
    /// Silence after which a driving device holds (250 ms in the protocol).
    pub watchdog: Duration,
    /// Lines the input queue holds.
    pub queue_capacity: u8,
    /// Planned setpoints (`p`, protocol 4) the play queue holds: 64 (1.28 s of 20 ms frames),
    /// as the reference firmware.
    pub play_queue_capacity: u8,
    /// Newest protocol version the device speaks: 4, or 3 to play a device that knows no
    /// planned setpoint, 2 one that knows no readings rate either, 1 one that knows no output
    /// query either (it counts such lines as bad).
    pub protocol_version: u8,
    /// The device runs as a process of its own on a general-purpose computer (`armwright
    /// device-sim` behind a pseudo-terminal), which that computer's load can hold up: it says
    /// so in its firmware version (`simpty-…`, `PROTOCOL.md` §9).
    pub own_process: bool,
}

/// The firmware version of a simulated device in a process of its own
/// ([`SimDeviceConfig::own_process`]); [`crate::DeviceInfo::is_simulated_process`] knows it.
const SIM_PROCESS_FIRMWARE: &str = "simpty-0.1.0";

impl Default for SimDeviceConfig {
    /// Seven channels (six joints and the gripper), 1 µs units, 500–2500 µs, a 20 ms
    /// frame, a 250 ms watchdog, a 4-line input queue, a 64-entry play queue and protocol
    /// version 4, in the host's process.
    fn default() -> Self {
        Self {
            channel_count: 7,
            pulse_unit_ns: 1000,
            min_pulse_units: 500,
            max_pulse_units: 2500,
            frame_period: Duration::from_millis(20),
            watchdog: Duration::from_millis(250),
            queue_capacity: 4,
            play_queue_capacity: 64,
            protocol_version: PROTOCOL_VERSION,
            own_process: false,
        }
    }
}

/// A servo-pulse device simulated in process.
///
/// Feed it host bytes with [`SimDevice::receive`], move its clock with
/// [`SimDevice::advance`] and collect its answer with [`SimDevice::take_output`]. Times are
/// durations since power-up; they must not go backwards (an earlier time is treated as the
/// latest one seen).
#[derive(Debug, Clone)]
pub struct SimDevice {
    config: SimDeviceConfig,
    info: DeviceInfo,
    assembler: LineAssembler,
    queue: VecDeque<(HostLine, Duration)>,
    output: VecDeque<u8>,
    seq: u8,
    mode: DeviceMode,
    status: DeviceStatus,
    /// The newest accepted setpoint, started at the next frame.
    next_pulses: Option<ChannelOutput>,
    /// Planned setpoints waiting to be played, one a frame.
    planned: VecDeque<ChannelOutput>,
    /// What the device sends now, channel by channel; `None` while limp on every channel.
    pulses: Option<ChannelOutput>,
    /// The pulse frame from which `pulses` is what it is (see [`SimDevice::output_since`]).
    pulses_since: u64,
    /// Per channel, the pulse frame that gave it its first pulse after it was limp.
    woken_at: [Option<u64>; crate::protocol::MAX_CHANNELS],
    /// When the watchdog starts counting: the later of the last good line and the frame that
    /// took the play queue's last entry.
    watchdog_from: Duration,
    next_frame: Duration,
    frames: u64,
    status_pending: bool,
    last_status: Option<Duration>,
    statuses_sent: u64,
    now: Duration,
    arm: Option<Box<SimArm>>,
    readings: Readings,
}

/// The analog inputs and the readings lines the host asked for.
#[derive(Debug, Clone, Default)]
struct Readings {
    source: Option<ReadingsSource>,
    rate_hz: u8,
    /// When the host set the rate, and how many lines have been sent since.
    since: Duration,
    sent: u64,
}

impl SimDevice {
    /// A device at power-up (time zero): limp, with its greeting waiting in the output.
    pub fn new(config: SimDeviceConfig) -> Self {
        let info = DeviceInfo {
            protocol_version: config.protocol_version.clamp(1, PROTOCOL_VERSION),
            firmware: FirmwareVersion::new(if config.own_process {
                SIM_PROCESS_FIRMWARE
            } else {
                "sim-0.1.0"
            })
            .unwrap_or_default(),
            channel_count: config.channel_count.clamp(1, 8),
            pulse_unit_ns: config.pulse_unit_ns.max(1),
            min_pulse_units: config.min_pulse_units.min(config.max_pulse_units),
            max_pulse_units: config.max_pulse_units.max(config.min_pulse_units),
            frame_period_us: u16::try_from(config.frame_period.as_micros()).unwrap_or(u16::MAX),
        };
        let mut device = Self {
            config,
            info,
            assembler: LineAssembler::new(),
            queue: VecDeque::new(),
            output: VecDeque::new(),
            seq: 0,
            mode: DeviceMode::Limp,
            status: DeviceStatus {
                mode: DeviceMode::Limp,
                faults: Faults::default(),
                bad_checksums: 0,
                bad_lines: 0,
                clamped_values: 0,
                watchdog_trips: 0,
            },
            next_pulses: None,
            planned: VecDeque::new(),
            pulses: None,
            pulses_since: 0,
            woken_at: [None; crate::protocol::MAX_CHANNELS],
            watchdog_from: Duration::ZERO,
            next_frame: Duration::ZERO,
            frames: 0,
            status_pending: false,
            last_status: None,
            statuses_sent: 0,
            now: Duration::ZERO,
            arm: None,
            readings: Readings::default(),
        };
        device.send(DeviceMessage::Greeting(info));
        device
    }

    /// This device driving `arm`'s servo model (see [`armwright_trajectory::ServoStepper`]):
    /// from then on every pulse frame turns the widths it sends (joint `i` on channel `i`,
    /// the gripper on the last channel) back into commanded joint positions through each
    /// joint's calibration and runs the model for that frame under gravity, with the payload
    /// while the gripper channel is nearer its closed width. The arm starts at rest at
    /// `start` (rad or m, one per joint). `options` sets the model; its pulse frame and
    /// resolution are the device's.
    ///
    /// While the device holds (emergency stop, watchdog, hold) the model keeps the last
    /// pulses and stays where they put it; while it is limp (power-up, release) the motors
    /// do nothing, so an unbalanced arm falls until it hangs at rest or a joint reaches its
    /// limit, which the model takes as a hard end stop (it knows no table or other obstacle).
    ///
    /// # Errors
    /// [`SimArmError::TooFewChannels`] when the device has fewer channels than the arm's
    /// joints and gripper; [`SimArmError::Model`] when `start` does not have one position
    /// per joint or the model's step does not divide the device's frame.
    pub fn with_arm(
        mut self,
        arm: Arm,
        options: &ServoModelOptions,
        start: &[f64],
    ) -> Result<Self, SimArmError> {
        self.arm = Some(Box::new(SimArm::new(arm, options, start, &self.info)?));
        Ok(self)
    }

    /// This device reading analog inputs from `source` (a recording or a scripted motion, on
    /// the device's clock); it sends them in readings lines at the rate a host asks for. A
    /// device without a source acknowledges a readings rate and sends none.
    pub fn with_readings(mut self, source: ReadingsSource) -> Self {
        self.readings.source = Some(source);
        self
    }

    /// What the analog inputs read now (0–4095 each); `None` without a source.
    pub fn readings(&self) -> Option<ChannelValues> {
        self.readings.source.as_ref()?.readings_at(self.now)
    }

    /// Readings lines a second the host asked for; 0 while off.
    pub fn readings_rate_hz(&self) -> u8 {
        self.readings.rate_hz
    }

    /// Plugs another source into the analog inputs, or unplugs them (`None`: readings lines
    /// stop, as from a loose input arm, while the rate the host asked for stands).
    pub fn set_readings(&mut self, source: Option<ReadingsSource>) {
        self.readings.source = source;
    }

    /// The arm's joint positions as the device has moved them, rad (revolute) or m
    /// (prismatic), at the start of the newest pulse frame; `None` without an arm.
    pub fn arm_positions(&self) -> Option<&[f64]> {
        self.arm.as_deref().map(SimArm::positions)
    }

    /// The arm's tool point as the device has moved it, in the base frame, in m; `None`
    /// without an arm.
    pub fn arm_tool_point(&self) -> Option<[f64; 3]> {
        self.arm.as_deref().and_then(SimArm::tool_point)
    }

    /// What the device announces in its greeting.
    pub fn info(&self) -> DeviceInfo {
        self.info
    }

    /// Current mode.
    pub fn mode(&self) -> DeviceMode {
        self.mode
    }

    /// Current mode, faults and counters, as a status line would report them.
    pub fn status(&self) -> DeviceStatus {
        DeviceStatus {
            mode: self.mode,
            ..self.status
        }
    }

    /// The pulse widths being sent, in pulse units, channel 0 first; `None` while any
    /// channel is limp (see [`SimDevice::output`] for each channel).
    pub fn pulse_units(&self) -> Option<ChannelValues> {
        self.pulses.and_then(|output| output.pulses())
    }

    /// What the device is sending now, as an output line reports it.
    pub fn output(&self) -> ChannelOutput {
        self.pulses
            .unwrap_or_else(|| ChannelOutput::limp(self.info.channel_count))
    }

    /// The pulse frame (counted as [`SimDevice::frames_started`] counts, from 0 at power-up)
    /// from which the device has sent what it sends now: a test's record of when its output
    /// last changed, however seldom it looked.
    pub fn output_since(&self) -> u64 {
        self.pulses_since
    }

    /// The pulse frame (as [`SimDevice::output_since`]) in which `channel` got its first pulse
    /// after it was limp (since power-up, or since the release that made it limp); `None`
    /// while it is limp or for a channel the device does not have. A test's record of how a
    /// limp arm was woken, channel by channel.
    pub fn woken_at(&self, channel: usize) -> Option<u64> {
        let sending = self
            .pulses
            .is_some_and(|pulses| pulses.as_slice().get(channel).copied().flatten().is_some());
        self.woken_at
            .get(channel)
            .copied()
            .flatten()
            .filter(|_| sending)
    }

    /// Starts sending `next` from the pulse frame about to start, noting what changed.
    fn send_pulses(&mut self, next: Option<ChannelOutput>) {
        if next == self.pulses {
            return;
        }
        let channels = usize::from(self.info.channel_count);
        let sends = |output: Option<&ChannelOutput>, channel: usize| {
            output.is_some_and(|output| output.as_slice().get(channel).copied().flatten().is_some())
        };
        for channel in 0..channels.min(self.woken_at.len()) {
            let before = sends(self.pulses.as_ref(), channel);
            let after = sends(next.as_ref(), channel);
            if after && !before {
                self.woken_at[channel] = Some(self.frames);
            } else if !after {
                self.woken_at[channel] = None;
            }
        }
        self.pulses = next;
        self.pulses_since = self.frames;
    }

    /// Planned setpoints waiting in the play queue.
    pub fn planned_waiting(&self) -> usize {
        self.planned.len()
    }

    /// The pulse widths being sent, in µs, channel 0 first; empty while any channel is limp.
    pub fn pulse_widths_us(&self) -> Vec<f64> {
        self.pulse_units()
            .map(|values| {
                values
                    .as_slice()
                    .iter()
                    .map(|&units| self.info.us_from_units(units))
                    .collect()
            })
            .unwrap_or_default()
    }

    /// The pulse frame period.
    pub fn frame_period(&self) -> Duration {
        self.config.frame_period
    }

    /// The latest time the device has seen, since power-up.
    pub fn clock(&self) -> Duration {
        self.now
    }

    /// Number of pulse frames started since power-up.
    pub fn frames_started(&self) -> u64 {
        self.frames
    }

    /// Number of status lines sent since power-up (one answers each heartbeat; others report a
    /// change of mode, faults or counters).
    pub fn statuses_sent(&self) -> u64 {
        self.statuses_sent
    }

    /// Takes host bytes arriving at `now`. Whole lines go to the input queue; an emergency
    /// stop acts at once, ahead of the queue; bad lines are counted and dropped.
    pub fn receive(&mut self, bytes: &[u8], now: Duration) {
        self.now = self.now.max(now);
        for &byte in bytes {
            let line = match self.assembler.push(byte) {
                Assembled::Pending => continue,
                Assembled::Overlong => {
                    self.count_bad_line();
                    continue;
                }
                Assembled::Line(line) => HostLine::parse(line),
            };
            match line {
                Err(error) if error.is_checksum_mismatch() => {
                    self.status.bad_checksums = self.status.bad_checksums.saturating_add(1);
                    self.flag(Faults::BAD_INPUT);
                }
                Err(_) => self.count_bad_line(),
                Ok(line) if line.message == HostMessage::EmergencyStop => {
                    self.watchdog_from = self.now;
                    self.latch_stop();
                    self.acknowledge(line.seq, AckOutcome::Accepted);
                }
                Ok(line) if self.queue.len() >= usize::from(self.config.queue_capacity) => {
                    let _ = line;
                    self.count_bad_line();
                    self.flag(Faults::OVERFLOW);
                }
                Ok(line) => {
                    self.watchdog_from = self.now;
                    self.queue.push_back((line, self.now));
                }
            }
        }
    }

    /// Moves the clock to `now`: acts on queued lines, starts the pulse frames that fall
    /// due, runs the watchdog and sends a waiting status line (at most one per frame).
    pub fn advance(&mut self, now: Duration) {
        self.now = self.now.max(now);
        while let Some((line, _)) = self.queue.pop_front() {
            self.act_on(line);
        }
        while self.next_frame <= self.now {
            let frame_start = self.next_frame;
            let watchdog_due = self.watchdog_from + self.config.watchdog;
            self.check_watchdog(frame_start.max(watchdog_due).min(self.now));
            if self.frames > 0
                && let Some(arm) = &mut self.arm
            {
                // The frame that ends here ran with the pulses sent during it.
                arm.run_frame(self.pulses.as_ref(), &self.info);
            }
            if self.mode == DeviceMode::Driving {
                if let Some(next) = self.planned.pop_front() {
                    self.send_pulses(Some(next));
                    self.watchdog_from = self.watchdog_from.max(frame_start);
                } else if let Some(next) = self.next_pulses.take() {
                    self.send_pulses(Some(next));
                }
            }
            self.frames += 1;
            self.next_frame = frame_start + self.config.frame_period;
        }
        self.check_watchdog(self.now);
        self.send_status_if_due();
        self.send_readings_due();
    }

    /// Sends the readings lines that fall due by now: line `k` after the rate was set is due
    /// `k / rate` later. A device held up longer than a line's period sends only the newest.
    fn send_readings_due(&mut self) {
        let rate = u64::from(self.readings.rate_hz);
        if rate == 0 || self.readings.source.is_none() {
            return;
        }
        let due = |sent: u64| Duration::from_nanos(sent.saturating_mul(1_000_000_000) / rate);
        let elapsed = self.now.saturating_sub(self.readings.since);
        if due(self.readings.sent) > elapsed {
            return;
        }
        // The newest line due: k = ⌊elapsed × rate⌋.
        let newest =
            u64::try_from(elapsed.as_nanos().saturating_mul(u128::from(rate)) / 1_000_000_000)
                .unwrap_or(u64::MAX);
        let at = self.readings.since + due(newest);
        self.readings.sent = newest.saturating_add(1);
        if let Some(values) = self
            .readings
            .source
            .as_ref()
            .and_then(|source| source.readings_at(at))
        {
            self.send(DeviceMessage::Analog(values));
        }
    }

    /// Moves the bytes the device has sent into `out`.
    pub fn take_output(&mut self, out: &mut Vec<u8>) {
        out.extend(self.output.drain(..));
    }

    /// Copies up to `buf.len()` sent bytes into `buf`; returns how many.
    pub fn read_output(&mut self, buf: &mut [u8]) -> usize {
        let count = buf.len().min(self.output.len());
        for (slot, byte) in buf.iter_mut().zip(self.output.drain(..count)) {
            *slot = byte;
        }
        count
    }

    fn check_watchdog(&mut self, at: Duration) {
        if self.mode == DeviceMode::Driving
            && self.planned.is_empty()
            && at >= self.watchdog_from + self.config.watchdog
        {
            self.mode = DeviceMode::Keeping;
            self.next_pulses = None;
            self.status.watchdog_trips = self.status.watchdog_trips.saturating_add(1);
            self.flag(Faults::WATCHDOG);
        }
    }

    fn act_on(&mut self, line: HostLine) {
        let stopped = self.mode == DeviceMode::Stopped;
        let outcome = match line.message {
            HostMessage::Greeting { protocol_version } => {
                // Answer in the lower of the two versions, so an older host is not refused.
                let answer = DeviceInfo {
                    protocol_version: protocol_version.min(self.info.protocol_version),
                    ..self.info
                };
                // A new host starts without readings until it asks.
                self.readings.rate_hz = 0;
                self.acknowledge(line.seq, AckOutcome::Accepted);
                self.send(DeviceMessage::Greeting(answer));
                return;
            }
            HostMessage::ReadingsRate { .. } if self.info.protocol_version < 3 => {
                self.count_bad_line();
                return;
            }
            HostMessage::ReadingsRate { rate_hz } => {
                self.readings.rate_hz = rate_hz;
                self.readings.since = self.now;
                self.readings.sent = 0;
                AckOutcome::Accepted
            }
            HostMessage::OutputQuery if self.info.protocol_version < 2 => {
                self.count_bad_line();
                return;
            }
            HostMessage::OutputQuery => {
                self.acknowledge(line.seq, AckOutcome::Accepted);
                self.send(DeviceMessage::Output(self.output()));
                return;
            }
            HostMessage::Heartbeat => {
                self.status_pending = true;
                AckOutcome::Accepted
            }
            HostMessage::EmergencyStop => {
                self.latch_stop();
                AckOutcome::Accepted
            }
            HostMessage::Setpoint(values)
                if values.len() != usize::from(self.info.channel_count) =>
            {
                self.count_bad_line();
                return;
            }
            HostMessage::Planned(values)
                if self.info.protocol_version < 4
                    || values.len() != usize::from(self.info.channel_count) =>
            {
                self.count_bad_line();
                return;
            }
            HostMessage::Setpoint(_)
            | HostMessage::Planned(_)
            | HostMessage::Hold
            | HostMessage::Release
                if stopped =>
            {
                AckOutcome::Refused
            }
            HostMessage::Planned(_)
                if self.planned.len() >= usize::from(self.config.play_queue_capacity) =>
            {
                // More than the room it was given: the host broke flow control.
                self.count_bad_line();
                self.flag(Faults::OVERFLOW);
                return;
            }
            HostMessage::Setpoint(values) => {
                // The newest setpoint wins over anything planned.
                self.planned.clear();
                let (output, outcome) = self.clamped(ChannelOutput::driven(&values));
                self.next_pulses = Some(output);
                self.set_mode(DeviceMode::Driving);
                outcome
            }
            HostMessage::Planned(values) => {
                let (output, outcome) = self.clamped(values);
                self.planned.push_back(output);
                self.next_pulses = None;
                self.set_mode(DeviceMode::Driving);
                outcome
            }
            HostMessage::Hold => {
                self.planned.clear();
                self.next_pulses = None;
                if self.mode != DeviceMode::Limp {
                    self.set_mode(DeviceMode::Keeping);
                }
                AckOutcome::Accepted
            }
            HostMessage::Release => {
                self.planned.clear();
                self.next_pulses = None;
                self.send_pulses(None);
                self.set_mode(DeviceMode::Limp);
                AckOutcome::Accepted
            }
            HostMessage::Reset => {
                self.status.faults = Faults::default();
                self.status_pending = true;
                if matches!(self.mode, DeviceMode::Stopped | DeviceMode::Driving) {
                    self.planned.clear();
                    self.next_pulses = None;
                    self.set_mode(if self.pulses.is_some() {
                        DeviceMode::Keeping
                    } else {
                        DeviceMode::Limp
                    });
                }
                AckOutcome::Accepted
            }
        };
        self.acknowledge(line.seq, outcome);
    }

    /// `values` clamped into the announced range (limp channels stay limp), counted.
    fn clamped(&mut self, values: ChannelOutput) -> (ChannelOutput, AckOutcome) {
        let mut clamped = 0u16;
        let mut limited = [None; crate::protocol::MAX_CHANNELS];
        for (slot, value) in limited.iter_mut().zip(values.as_slice()) {
            *slot = value.map(|units| {
                let (units, was_clamped) = self.info.clamp_units(units);
                clamped += u16::from(was_clamped);
                units
            });
        }
        let output = ChannelOutput::from_slice(&limited[..values.len()]).unwrap_or(values);
        if clamped > 0 {
            self.status.clamped_values = self.status.clamped_values.saturating_add(clamped);
            self.flag(Faults::CLAMPED);
            (output, AckOutcome::Clamped)
        } else {
            (output, AckOutcome::Accepted)
        }
    }

    fn latch_stop(&mut self) {
        self.planned.clear();
        self.next_pulses = None;
        self.set_mode(DeviceMode::Stopped);
        self.flag(Faults::EMERGENCY_STOP);
    }

    fn set_mode(&mut self, mode: DeviceMode) {
        if self.mode != mode {
            self.mode = mode;
            self.status_pending = true;
        }
    }

    fn flag(&mut self, fault: Faults) {
        self.status.faults.insert(fault);
        self.status_pending = true;
    }

    fn count_bad_line(&mut self) {
        self.status.bad_lines = self.status.bad_lines.saturating_add(1);
        self.flag(Faults::BAD_INPUT);
    }

    fn acknowledge(&mut self, acked_seq: u8, outcome: AckOutcome) {
        let free = usize::from(self.config.queue_capacity)
            .saturating_sub(self.queue.len())
            .min(usize::from(self.config.play_queue_capacity).saturating_sub(self.planned.len()));
        self.send(DeviceMessage::Ack(Ack {
            acked_seq,
            room: u8::try_from(free.min(99)).unwrap_or(99),
            outcome,
        }));
        self.send_status_if_due();
    }

    fn send_status_if_due(&mut self) {
        let due = self
            .last_status
            .is_none_or(|last| self.now >= last + self.config.frame_period);
        if self.status_pending && due {
            self.status_pending = false;
            self.last_status = Some(self.now);
            if self.mode == DeviceMode::Stopped {
                self.status.faults.insert(Faults::EMERGENCY_STOP);
            } else {
                self.status.faults.remove(Faults::EMERGENCY_STOP);
            }
            self.statuses_sent += 1;
            self.send(DeviceMessage::Status(self.status()));
        }
    }

    fn send(&mut self, message: DeviceMessage) {
        let line: LineBuf = DeviceLine {
            seq: self.seq,
            message,
        }
        .encode();
        self.seq = self.seq.wrapping_add(1);
        self.output.extend(line.as_bytes());
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn power_up_sends_the_greeting_and_stays_limp() {
        let mut device = SimDevice::new(SimDeviceConfig::default());
        device.advance(Duration::from_millis(100));
        let mut out = Vec::new();
        device.take_output(&mut out);
        let first = out.split(|&b| b == b'\n').next().unwrap_or_default();
        assert!(matches!(
            DeviceLine::parse(first).map(|line| line.message),
            Ok(DeviceMessage::Greeting(_))
        ));
        assert_eq!(device.mode(), DeviceMode::Limp);
        assert_eq!(device.pulse_units(), None);
        // Frames start at 0, 20, …, 100 ms.
        assert_eq!(device.frames_started(), 6);
    }
}
