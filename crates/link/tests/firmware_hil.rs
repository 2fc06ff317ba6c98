//! The reference firmware (`assets/firmware/`) on a simulated ATmega328P (libsimavr), driven
//! through a pseudo-terminal by the host code, checked pulse by pulse in simulated time.
//!
//! The test builds the firmware (avr-gcc, avr-libc, make) and the harness
//! (`tests/hil/harness.c`, a C compiler and libsimavr). When a tool is missing every firmware
//! test is skipped with a notice `cargo test` shows, or fails under `ARMWRIGHT_STRICT=1`
//! (`armwright_test_support::outside_tool`).
//!
//! Times come from the harness log in CPU cycles at 16 MHz (16 cycles a µs).
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

mod common;
use armwright_test_support::outside_tool;

use std::io::{BufRead, BufReader, Write};
use std::path::{Path, PathBuf};
use std::process::{Child, ChildStdin, Command, Stdio};
use std::sync::atomic::{AtomicU64, Ordering};
use std::sync::{Arc, Mutex, OnceLock};
use std::time::{Duration, Instant};

use armwright_link::{
    AckOutcome, Assembled, ChannelOutput, ChannelValues, DeviceInfo, DeviceLine, DeviceMessage,
    DeviceMode, Faults, HostLine, HostMessage, LineAssembler, Link, LinkError, LinkEvent,
    ResetConfirmation, SerialTransport, StreamOptions, Transport,
};

use common::{wait_for, wait_until};

const CYCLES_PER_US: f64 = 16.0;
const FRAME_CYCLES: u64 = 320_000; // 20 ms
const CHANNELS: usize = 7;

struct Hil {
    firmware: PathBuf,
    harness: PathBuf,
    scratch: PathBuf,
}

/// Builds firmware and harness once; `None` (after printing why) when a tool is missing.
fn hil() -> Option<&'static Hil> {
    static HIL: OnceLock<Result<Hil, String>> = OnceLock::new();
    match HIL.get_or_init(build) {
        Ok(hil) => Some(hil),
        Err(why) => {
            outside_tool::cannot_run("the firmware test", why);
            None
        }
    }
}

fn tool_works(program: &str, args: &[&str]) -> bool {
    Command::new(program)
        .args(args)
        .stdout(Stdio::null())
        .stderr(Stdio::null())
        .status()
        .is_ok_and(|status| status.success())
}

fn build() -> Result<Hil, String> {
    // ARMWRIGHT_AVR_GCC names another compiler (or a missing one, to see the skip).
    let avr_gcc = std::env::var("ARMWRIGHT_AVR_GCC").unwrap_or_else(|_| "avr-gcc".to_owned());
    if !tool_works(&avr_gcc, &["--version"]) {
        return Err(format!(
            "{avr_gcc} not found (Debian packages gcc-avr, avr-libc)"
        ));
    }
    if !tool_works("make", &["--version"]) {
        return Err("make not found".into());
    }
    if !tool_works("cc", &["--version"]) {
        return Err("no C compiler (cc) for the simulator harness".into());
    }
    let simavr_flags = Command::new("pkg-config")
        .args(["--cflags", "--libs", "simavr"])
        .output()
        .ok()
        .filter(|out| out.status.success())
        .map(|out| String::from_utf8_lossy(&out.stdout).into_owned());
    let simavr_flags = match simavr_flags {
        Some(flags) => flags,
        None if Path::new("/usr/include/simavr/sim_avr.h").exists() => {
            "-I/usr/include/simavr -lsimavr".to_owned()
        }
        None => {
            return Err(
                "libsimavr not found (Debian packages simavr, libsimavr-dev, libsimavrparts1, libelf-dev)"
                    .into(),
            );
        }
    };
    let manifest = Path::new(env!("CARGO_MANIFEST_DIR"));
    let scratch = Path::new(env!("CARGO_TARGET_TMPDIR")).join("firmware-hil");
    std::fs::create_dir_all(&scratch).map_err(|e| format!("scratch dir: {e}"))?;
    let out = scratch.join("firmware");
    let make = Command::new("make")
        .arg("-C")
        .arg(manifest.join("../../assets/firmware"))
        .arg(format!("OUT={}", out.display()))
        .arg(format!("CC={avr_gcc}"))
        .output()
        .expect("make runs");
    assert!(
        make.status.success(),
        "firmware build failed:\n{}{}",
        String::from_utf8_lossy(&make.stdout),
        String::from_utf8_lossy(&make.stderr)
    );
    let harness = scratch.join("harness");
    let compile = Command::new("cc")
        .args(["-O2", "-Wall", "-Wextra", "-o"])
        .arg(&harness)
        .arg(manifest.join("tests/hil/harness.c"))
        .args(simavr_flags.split_whitespace())
        .arg("-lelf")
        .output()
        .expect("cc runs");
    if !compile.status.success() {
        let message = String::from_utf8_lossy(&compile.stderr).into_owned();
        if message.contains("sim_avr.h")
            || message.contains("-lsimavr")
            || message.contains("-lelf")
        {
            return Err(format!("libsimavr headers or library missing: {message}"));
        }
        panic!("harness build failed:\n{message}");
    }
    Ok(Hil {
        firmware: out.join("armwright-servo.elf"),
        harness,
        scratch,
    })
}

/// One simulator run; runs are taken one at a time so they do not starve each other.
struct Run {
    child: Child,
    stdin: Option<ChildStdin>,
    /// The newest simulated cycle count the harness has printed.
    cycle: Arc<AtomicU64>,
    log_path: PathBuf,
    pty: String,
    _turn: std::sync::MutexGuard<'static, ()>,
}

fn start(hil: &Hil, name: &str) -> Run {
    static TURN: Mutex<()> = Mutex::new(());
    let turn = TURN
        .lock()
        .unwrap_or_else(std::sync::PoisonError::into_inner);
    let log_path = hil.scratch.join(format!("{name}.log"));
    let mut child = Command::new(&hil.harness)
        .arg(&hil.firmware)
        .arg(&log_path)
        .arg("120")
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .stderr(Stdio::inherit())
        .spawn()
        .expect("harness starts");
    let stdin = child.stdin.take();
    let stdout = child.stdout.take().expect("piped stdout");
    let mut lines = BufReader::new(stdout).lines();
    let mut pty = None;
    for line in lines.by_ref() {
        let line = line.expect("harness output");
        if let Some(path) = line.strip_prefix("pty ") {
            pty = Some(path.to_owned());
            break;
        }
    }
    let cycle = Arc::new(AtomicU64::new(0));
    {
        let cycle = Arc::clone(&cycle);
        std::thread::spawn(move || {
            for line in lines.map_while(Result::ok) {
                if let Some(Ok(now)) = line.strip_prefix("t ").map(str::parse::<u64>) {
                    cycle.store(now, Ordering::SeqCst);
                }
            }
        });
    }
    Run {
        child,
        stdin,
        cycle,
        log_path,
        pty: pty.expect("harness prints its pty"),
        _turn: turn,
    }
}

impl Run {
    /// Waits until `time` of simulated time has passed (the simulator may run slower or
    /// faster than the wall clock).
    fn wait_simulated(&self, time: Duration) {
        let cycles = time.as_micros() as u64 * 16;
        let target = self.cycle.load(Ordering::SeqCst) + cycles;
        let give_up = Instant::now() + Duration::from_secs(60);
        while self.cycle.load(Ordering::SeqCst) < target {
            assert!(Instant::now() < give_up, "the simulator stopped advancing");
            std::thread::sleep(Duration::from_millis(2));
        }
    }

    /// Sets analog input `input` of the simulated chip to `millivolts` (AVCC is 5000 mV).
    fn set_input(&mut self, input: usize, millivolts: u32) {
        let stdin = self.stdin.as_mut().expect("harness stdin open");
        writeln!(stdin, "a {input} {millivolts}").expect("harness takes commands");
        stdin.flush().expect("harness takes commands");
    }

    fn open(&self) -> SerialTransport {
        SerialTransport::open(&self.pty, 115_200).expect("opens the harness pty")
    }

    /// Ends the run and reads its log.
    fn finish(mut self) -> SimLog {
        if let Some(mut stdin) = self.stdin.take() {
            let _ = stdin.flush();
        }
        let status = self.child.wait().expect("harness ends");
        assert!(status.success(), "harness failed: {status}");
        SimLog::read(&self.log_path)
    }
}

/// The harness log: pin edges and UART lines, in cycles.
#[derive(Default)]
struct SimLog {
    edges: Vec<(u64, usize, bool)>,
    host_lines: Vec<(u64, HostLine)>,
    host_raw: Vec<(u64, String)>,
    device_lines: Vec<(u64, DeviceLine)>,
    analog_set: Vec<(u64, usize, u32)>,
    end: String,
}

/// One pulse frame: the cycle channel 0 rose, and each channel's width in µs.
#[derive(Debug, Clone, Copy)]
struct Frame {
    start: u64,
    widths_us: [f64; CHANNELS],
}

impl SimLog {
    fn read(path: &Path) -> Self {
        let text = std::fs::read_to_string(path).expect("harness log");
        let mut log = Self::default();
        for line in text.lines() {
            let mut parts = line.splitn(3, ' ');
            let (Some(tag), Some(cycle), rest) = (parts.next(), parts.next(), parts.next()) else {
                continue;
            };
            let cycle: u64 = cycle.parse().expect("cycle");
            let rest = rest.unwrap_or("");
            match tag {
                "E" => {
                    let (channel, level) = rest.split_once(' ').expect("edge");
                    log.edges
                        .push((cycle, channel.parse().expect("ch"), level == "1"));
                }
                "R" => {
                    log.host_raw.push((cycle, rest.to_owned()));
                    if let Ok(parsed) = HostLine::parse(rest.as_bytes()) {
                        log.host_lines.push((cycle, parsed));
                    }
                }
                "T" => {
                    if let Ok(parsed) = DeviceLine::parse(rest.as_bytes()) {
                        log.device_lines.push((cycle, parsed));
                    }
                }
                "A" => {
                    let mut fields = rest.split(' ').map(|f| f.parse::<u32>().expect("number"));
                    let (Some(input), Some(millivolts)) = (fields.next(), fields.next()) else {
                        panic!("analog record {rest:?}");
                    };
                    log.analog_set.push((cycle, input as usize, millivolts));
                }
                "Q" => log.end = rest.to_owned(),
                _ => {}
            }
        }
        log
    }

    fn frames(&self) -> Vec<Frame> {
        let mut pulses: Vec<Vec<(u64, u64)>> = vec![Vec::new(); CHANNELS];
        let mut rose: [Option<u64>; CHANNELS] = [None; CHANNELS];
        for &(cycle, channel, level) in &self.edges {
            if level {
                rose[channel] = Some(cycle);
            } else if let Some(start) = rose[channel].take() {
                pulses[channel].push((start, cycle - start));
            }
        }
        pulses[0]
            .iter()
            .map(|&(start, _)| {
                let mut widths_us = [f64::NAN; CHANNELS];
                for (channel, width) in widths_us.iter_mut().enumerate() {
                    if let Some(&(_, cycles)) = pulses[channel]
                        .iter()
                        .find(|(rise, _)| *rise >= start && *rise < start + FRAME_CYCLES)
                    {
                        *width = cycles as f64 / CYCLES_PER_US;
                    }
                }
                Frame { start, widths_us }
            })
            // A frame cut off by the end of the run is not a frame.
            .filter(|frame| frame.widths_us.iter().all(|w| w.is_finite()))
            .collect()
    }

    fn setpoints(&self) -> Vec<(u64, ChannelValues)> {
        self.host_lines
            .iter()
            .filter_map(|&(cycle, line)| match line.message {
                HostMessage::Setpoint(values) => Some((cycle, values)),
                _ => None,
            })
            .collect()
    }

    fn first_host_line(&self, wanted: impl Fn(&HostMessage) -> bool) -> u64 {
        self.host_lines
            .iter()
            .find(|(_, line)| wanted(&line.message))
            .map(|&(cycle, _)| cycle)
            .expect("the host line is in the log")
    }

    fn greetings_sent(&self) -> usize {
        self.device_lines
            .iter()
            .filter(|(_, line)| matches!(line.message, DeviceMessage::Greeting(_)))
            .count()
    }
}

fn ms(cycles: u64) -> f64 {
    cycles as f64 / 16_000.0
}

fn same_widths(a: &[f64; CHANNELS], b: &[f64; CHANNELS]) -> bool {
    a.iter().zip(b).all(|(x, y)| (x - y).abs() <= 1.0)
}

fn units_to_us(values: &ChannelValues) -> [f64; CHANNELS] {
    let mut us = [0.0; CHANNELS];
    for (slot, &units) in us.iter_mut().zip(values.as_slice()) {
        *slot = f64::from(units.clamp(1000, 5000)) * 0.5;
    }
    us
}

/// Each frame that started at least 1 ms after a setpoint arrived, with no other setpoint
/// arriving in the 1 ms before it, must carry that setpoint within ±1 µs on every channel.
/// Returns how many frames were compared.
fn check_frames_follow_setpoints(log: &SimLog, until: u64) -> usize {
    let setpoints = log.setpoints();
    let mut compared = 0;
    for frame in log.frames().iter().filter(|f| f.start < until) {
        let before: Vec<_> = setpoints
            .iter()
            .filter(|(cycle, _)| *cycle < frame.start)
            .collect();
        let Some(&&(arrived, values)) = before.last() else {
            continue;
        };
        if frame.start - arrived < 16_000 {
            continue; // ambiguous: it may or may not have been taken for this frame
        }
        let expected = units_to_us(&values);
        for (channel, (measured, commanded)) in frame.widths_us.iter().zip(expected).enumerate() {
            assert!(
                (measured - commanded).abs() <= 1.0,
                "frame at {:.3} ms, channel {channel}: {measured} µs, commanded {commanded} µs",
                ms(frame.start),
            );
        }
        compared += 1;
    }
    compared
}

/// The frame period, 20 ms ± 0.1 %, between every pair of consecutive frames.
fn check_frame_period(frames: &[Frame]) {
    for pair in frames.windows(2) {
        let period = pair[1].start - pair[0].start;
        let error = period.abs_diff(FRAME_CYCLES) as f64 / FRAME_CYCLES as f64;
        assert!(
            error <= 0.001,
            "frame period {:.4} ms at {:.3} ms",
            ms(period),
            ms(pair[0].start)
        );
    }
}

fn hil_options() -> StreamOptions {
    // The simulator may run slower than the wall clock on a busy machine; the protocol's
    // timing is checked in simulated time, so the host is patient in wall time.
    StreamOptions {
        period: Duration::from_millis(20),
        silence_limit: Duration::from_secs(2),
        greeting_timeout: Duration::from_secs(10),
        heartbeat_interval: Duration::from_millis(50),
        ..StreamOptions::default()
    }
}

/// A sample sequence in µs: each joint swings on its own slow sine, the gripper closes.
fn sample_pose_us(step: usize) -> [f64; CHANNELS] {
    let mut pose = [0.0; CHANNELS];
    for (joint, pulse_us) in pose.iter_mut().enumerate().take(6) {
        let phase = step as f64 * 0.09 + joint as f64 * 0.7;
        *pulse_us = 1500.0 + (300.0 + 60.0 * joint as f64) * phase.sin() + 0.3 * joint as f64;
    }
    pose[6] = 1100.0 + 8.25 * step as f64;
    pose
}

fn to_units(info: &DeviceInfo, pose_us: &[f64; CHANNELS]) -> ChannelValues {
    let units: Vec<u16> = pose_us.iter().map(|&us| info.units_from_us(us)).collect();
    ChannelValues::from_slice(&units).expect("seven values")
}

#[test]
fn streamed_sequence_gives_commanded_pulses_and_a_steady_frame() {
    let Some(hil) = hil() else { return };
    let run = start(hil, "stream");
    let link = Link::connect(Box::new(run.open()), hil_options()).expect("greets the firmware");
    let info = link.device();
    assert_eq!(
        (info.channel_count, info.pulse_unit_ns, info.frame_period_us),
        (7, 500, 20_000)
    );
    link.start_stream().expect("streams");
    for step in 0..60 {
        link.push_setpoint(to_units(&info, &sample_pose_us(step)))
            .expect("queued");
    }
    link.finish_stream().expect("alive");
    wait_for(&link, Duration::from_secs(30), |e| {
        matches!(e, LinkEvent::StreamFinished { frames_sent: 60 })
    });
    // Half a second of simulated time after the last setpoint: 25 frames that all carry it,
    // however fast the simulator ran beside the host's wall-clock sending.
    run.wait_simulated(Duration::from_millis(500));
    let stats = link.stats();
    drop(link);
    let log = run.finish();

    let frames = log.frames();
    assert!(frames.len() > 20, "{} frames", frames.len());
    check_frame_period(&frames);
    let compared = check_frames_follow_setpoints(&log, u64::MAX);
    assert!(compared >= 15, "only {compared} frames could be compared");
    assert_eq!(log.setpoints().len(), 60);
    assert_eq!(stats.frames_acked, 60, "{stats:?}");
}

#[test]
fn emergency_stop_holds_within_one_frame_until_a_confirmed_reset() {
    let Some(hil) = hil() else { return };
    let run = start(hil, "estop");
    let link = Link::connect(Box::new(run.open()), hil_options()).expect("greets the firmware");
    let info = link.device();
    link.start_stream().expect("streams");
    for step in 0..25 {
        link.push_setpoint(to_units(&info, &sample_pose_us(step)))
            .expect("queued");
    }
    // Stop in the middle of a moving stream: once half the setpoints are acknowledged and
    // 200 ms of simulated time have passed (the simulator may run faster or slower than the
    // host's wall-clock sending, so both are waited for).
    wait_until("12 setpoints acknowledged", Duration::from_secs(30), || {
        link.stats().frames_acked >= 12
    });
    run.wait_simulated(Duration::from_millis(200));
    link.emergency_stop().trigger();
    wait_for(&link, Duration::from_secs(10), |e| {
        matches!(e, LinkEvent::StopConfirmed { .. })
    });
    assert_eq!(link.start_stream(), Err(LinkError::StopLatched));
    run.wait_simulated(Duration::from_millis(300));
    link.reset_after_stop(ResetConfirmation::confirmed_by_person())
        .expect("firmware acknowledges the reset");
    link.start_stream().expect("streams after the reset");
    for step in 40..50 {
        link.push_setpoint(to_units(&info, &sample_pose_us(step)))
            .expect("queued");
    }
    link.finish_stream().expect("alive");
    wait_for(&link, Duration::from_secs(30), |e| {
        matches!(e, LinkEvent::StreamFinished { .. })
    });
    run.wait_simulated(Duration::from_millis(100));
    drop(link);
    let log = run.finish();

    let stop = log.first_host_line(|m| *m == HostMessage::EmergencyStop);
    let reset = log.first_host_line(|m| *m == HostMessage::Reset);
    let frames = log.frames();
    check_frame_period(&frames);
    // The stop takes effect before the next frame: the first frame starting after the stop
    // line has arrived (plus 1 ms for the firmware to act on it) repeats the frame before
    // it, and every frame up to the reset does too.
    let acting = stop + 16_000;
    let before = frames
        .iter()
        .rev()
        .find(|f| f.start <= acting)
        .expect("a frame before the stop");
    let held: Vec<_> = frames
        .iter()
        .filter(|f| f.start > acting && f.start < reset)
        .collect();
    assert!(
        held.len() >= 12,
        "{} frames between stop and reset",
        held.len()
    );
    for frame in &held {
        assert!(
            same_widths(&frame.widths_us, &before.widths_us),
            "frame at {:.3} ms moved after the stop at {:.3} ms",
            ms(frame.start),
            ms(stop)
        );
    }
    // After the reset the arm follows setpoints again.
    let last = frames.last().expect("frames");
    assert!(!same_widths(&last.widths_us, &before.widths_us));
    let compared = check_frames_follow_setpoints(&log, stop);
    assert!(compared >= 5, "{compared} frames compared before the stop");
}

/// A pty opened without the streaming thread, to send exactly the bytes a test wants.
struct RawPort {
    transport: SerialTransport,
    assembler: LineAssembler,
    seq: u8,
    heard: Vec<DeviceLine>,
    unread: std::collections::VecDeque<DeviceLine>,
}

impl RawPort {
    fn new(run: &Run) -> Self {
        let mut port = Self {
            transport: run.open(),
            assembler: LineAssembler::new(),
            seq: 0x40,
            heard: Vec::new(),
            unread: std::collections::VecDeque::new(),
        };
        // Bytes sent while the firmware is still starting are lost, as on a board that
        // resets when its port opens: greet until the greeting is acknowledged.
        for _ in 0..20 {
            let greeting = port.send(HostMessage::Greeting {
                protocol_version: 1,
            });
            if port
                .try_read_until(Duration::from_millis(300), |line| {
                    matches!(line.message, DeviceMessage::Ack(ack) if ack.acked_seq == greeting)
                })
                .is_some()
            {
                return port;
            }
        }
        panic!(
            "the firmware never acknowledged a greeting; heard {:?}",
            port.heard
        );
    }

    fn send(&mut self, message: HostMessage) -> u8 {
        let seq = self.seq;
        self.seq = self.seq.wrapping_add(1);
        self.raw(HostLine { seq, message }.encode().as_bytes());
        seq
    }

    fn raw(&mut self, bytes: &[u8]) {
        self.transport.write_all(bytes).expect("pty write");
    }

    /// Reads until a line satisfies `wanted`, for at most 15 s of wall time.
    fn read_until(&mut self, wanted: impl Fn(&DeviceLine) -> bool) -> DeviceLine {
        match self.try_read_until(Duration::from_secs(15), wanted) {
            Some(line) => line,
            None => panic!(
                "the firmware did not answer in time; heard {:?}",
                self.heard
            ),
        }
    }

    /// The next line satisfying `wanted`, skipping others, waiting at most `within`.
    fn try_read_until(
        &mut self,
        within: Duration,
        wanted: impl Fn(&DeviceLine) -> bool,
    ) -> Option<DeviceLine> {
        let until = Instant::now() + within;
        let mut buf = [0u8; 256];
        loop {
            while let Some(line) = self.unread.pop_front() {
                if wanted(&line) {
                    return Some(line);
                }
            }
            if Instant::now() >= until {
                return None;
            }
            let count = self
                .transport
                .read_timeout(&mut buf, Duration::from_millis(5))
                .expect("pty read");
            for &byte in &buf[..count] {
                if let Assembled::Line(line) = self.assembler.push(byte)
                    && let Ok(parsed) = DeviceLine::parse(line)
                {
                    self.heard.push(parsed);
                    self.unread.push_back(parsed);
                }
            }
        }
    }

    fn expect_ack(&mut self, seq: u8, outcome: AckOutcome) {
        let line = self.read_until(
            |line| matches!(line.message, DeviceMessage::Ack(ack) if ack.acked_seq == seq),
        );
        let DeviceMessage::Ack(ack) = line.message else {
            unreachable!()
        };
        assert_eq!(ack.outcome, outcome, "acknowledgement of line {seq:02X}");
    }

    fn acked(&self, seq: u8) -> bool {
        self.heard
            .iter()
            .any(|line| matches!(line.message, DeviceMessage::Ack(ack) if ack.acked_seq == seq))
    }

    fn status_after_heartbeat(&mut self) -> armwright_link::DeviceStatus {
        let beat = self.send(HostMessage::Heartbeat);
        self.expect_ack(beat, AckOutcome::Accepted);
        let line = self.read_until(|line| matches!(line.message, DeviceMessage::Status(_)));
        let DeviceMessage::Status(status) = line.message else {
            unreachable!()
        };
        status
    }
}

fn setpoint(units: [u16; CHANNELS]) -> HostMessage {
    HostMessage::Setpoint(ChannelValues::from_slice(&units).expect("seven values"))
}

fn with_check(text: &str) -> Vec<u8> {
    let check = armwright_link::crc16_ccitt_false(text.as_bytes());
    format!("{text}/{check:04X}\n").into_bytes()
}

#[test]
fn watchdog_holds_after_250_ms_of_silence_and_reports_it() {
    let Some(hil) = hil() else { return };
    let run = start(hil, "watchdog");
    let mut port = RawPort::new(&run);
    let pose = [2000, 2400, 2800, 3200, 3600, 4000, 4400];
    let seq = port.send(setpoint(pose));
    port.expect_ack(seq, AckOutcome::Accepted);
    let tripped = port.read_until(|line| {
        matches!(line.message, DeviceMessage::Status(s) if s.faults.contains(Faults::WATCHDOG))
    });
    let DeviceMessage::Status(status) = tripped.message else {
        unreachable!()
    };
    assert_eq!(status.mode, DeviceMode::Keeping);
    assert_eq!(status.watchdog_trips, 1);
    run.wait_simulated(Duration::from_millis(200));
    drop(port);
    let log = run.finish();

    let last_host_line = log
        .host_lines
        .last()
        .map(|&(cycle, _)| cycle)
        .expect("lines");
    let report = log
        .device_lines
        .iter()
        .find(|(_, line)| line.seq == tripped.seq)
        .map(|&(cycle, _)| cycle)
        .expect("the status line is in the log");
    let silence_ms = ms(report - last_host_line);
    assert!(
        (230.0..=270.0).contains(&silence_ms),
        "watchdog reported after {silence_ms:.1} ms of silence"
    );
    // It holds: the pulses go on at the last setpoint, not limp.
    let expected = units_to_us(&ChannelValues::from_slice(&pose).expect("seven"));
    let after: Vec<_> = log
        .frames()
        .into_iter()
        .filter(|f| f.start > report)
        .collect();
    assert!(after.len() >= 5, "{} frames after the trip", after.len());
    assert!(after.iter().all(|f| same_widths(&f.widths_us, &expected)));
    check_frame_period(&log.frames());
}

fn output_of(line: &DeviceLine) -> Option<armwright_link::ChannelOutput> {
    match line.message {
        DeviceMessage::Output(output) => Some(output),
        _ => None,
    }
}

#[test]
fn the_output_query_reports_limp_then_the_pulses_on_the_pins() {
    let Some(hil) = hil() else { return };
    let run = start(hil, "output");
    let mut port = RawPort::new(&run);
    // RawPort greeted with version 1 and the firmware answered 1; greeted with 2 it says 2
    // (it speaks 4, the lower of the two wins).
    let first = port.read_until(|line| matches!(line.message, DeviceMessage::Greeting(_)));
    assert!(matches!(
        first.message,
        DeviceMessage::Greeting(info) if info.protocol_version == 1
    ));
    let greeting = port.send(HostMessage::Greeting {
        protocol_version: 2,
    });
    port.expect_ack(greeting, AckOutcome::Accepted);
    let answer = port.read_until(|line| matches!(line.message, DeviceMessage::Greeting(_)));
    assert!(matches!(
        answer.message,
        DeviceMessage::Greeting(info) if info.protocol_version == 2
    ));

    // A greeting cut short while the firmware was starting may count as a bad line: only
    // lines after this one are the query's.
    let bad_before = port.status_after_heartbeat().bad_lines;
    let query = port.send(HostMessage::OutputQuery);
    port.expect_ack(query, AckOutcome::Accepted);
    let limp = port.read_until(|line| output_of(line).is_some());
    assert_eq!(
        output_of(&limp).map(|o| o.as_slice().to_vec()),
        Some(vec![None; CHANNELS])
    );

    let pose = [2000, 2400, 2800, 3200, 3600, 4000, 4400];
    let seq = port.send(setpoint(pose));
    port.expect_ack(seq, AckOutcome::Accepted);
    run.wait_simulated(Duration::from_millis(60));
    let query = port.send(HostMessage::OutputQuery);
    port.expect_ack(query, AckOutcome::Accepted);
    let driven = port.read_until(|line| output_of(line).is_some());
    let reported = output_of(&driven)
        .and_then(|o| o.pulses())
        .expect("every channel driven");
    assert_eq!(reported.as_slice(), pose);

    let release = port.send(HostMessage::Release);
    port.expect_ack(release, AckOutcome::Accepted);
    run.wait_simulated(Duration::from_millis(60));
    let query = port.send(HostMessage::OutputQuery);
    port.expect_ack(query, AckOutcome::Accepted);
    let released = port.read_until(|line| output_of(line).is_some());
    assert!(output_of(&released).is_some_and(|o| o.as_slice().iter().all(Option::is_none)));
    let bad_lines = port.status_after_heartbeat().bad_lines;
    assert_eq!(bad_lines, bad_before, "the firmware knows the query");
    drop(port);
    let log = run.finish();

    // What it reported is what its pins did: the last frame before the report had those
    // widths, measured in the simulator.
    let reported_at = log
        .device_lines
        .iter()
        .find(|(_, line)| line.seq == driven.seq)
        .map(|&(cycle, _)| cycle)
        .expect("the output line is in the log");
    let frame = log
        .frames()
        .into_iter()
        .rev()
        .find(|f| f.start < reported_at)
        .expect("a frame before the report");
    assert!(
        same_widths(&frame.widths_us, &units_to_us(&reported)),
        "pins {:?}, reported {reported:?}",
        frame.widths_us
    );
}

#[test]
fn a_link_to_the_firmware_reads_its_state_at_connect() {
    let Some(hil) = hil() else { return };
    let run = start(hil, "connect-state");
    let link = Link::connect(Box::new(run.open()), hil_options()).expect("greets the firmware");
    assert_eq!(link.device().protocol_version, 4);
    let output = link
        .device_output()
        .expect("protocol 2 firmware reports its output");
    assert_eq!(output.as_slice(), [None; CHANNELS]);
    assert_eq!(link.device_status().map(|s| s.mode), Some(DeviceMode::Limp));
    drop(link);
    run.finish();
}

/// This test binary run again on one firmware test, with the AVR compiler pointed at nothing,
/// the harness's output capture on (as `cargo test` runs it) and `ARMWRIGHT_STRICT` as given.
fn run_without_the_compiler(strict: bool) -> std::process::Output {
    let mut command = Command::new(std::env::current_exe().expect("the test binary"));
    command
        .args([
            "a_link_to_the_firmware_reads_its_state_at_connect",
            "--exact",
        ])
        .env("ARMWRIGHT_AVR_GCC", "/nonexistent/avr-gcc")
        .env_remove("ARMWRIGHT_STRICT");
    if strict {
        command.env("ARMWRIGHT_STRICT", "1");
    }
    command.output().expect("the test binary runs")
}

#[test]
fn a_missing_compiler_skips_the_firmware_test_visibly_and_fails_it_under_strict() {
    // What a newcomer without the AVR tools sees: the test passes, but a line naming the tool
    // stands in the output although the harness captures a passing test's output.
    let skipped = run_without_the_compiler(false);
    let text = String::from_utf8_lossy(&skipped.stdout).into_owned()
        + &String::from_utf8_lossy(&skipped.stderr);
    assert!(skipped.status.success(), "{text}");
    assert!(
        text.contains("SKIPPED: the firmware test did not run: /nonexistent/avr-gcc not found"),
        "{text}"
    );
    let failed = run_without_the_compiler(true);
    let text = String::from_utf8_lossy(&failed.stdout).into_owned()
        + &String::from_utf8_lossy(&failed.stderr);
    assert!(!failed.status.success(), "{text}");
    assert!(
        text.contains("ARMWRIGHT_STRICT=1 and the firmware test cannot run"),
        "{text}"
    );
}

#[test]
fn bad_lines_are_counted_not_acted_on_and_out_of_range_values_are_clamped() {
    let Some(hil) = hil() else { return };
    let run = start(hil, "bad-input");
    let mut port = RawPort::new(&run);
    let good = [3000; CHANNELS];
    let seq = port.send(setpoint(good));
    port.expect_ack(seq, AckOutcome::Accepted);
    // Bytes lost while the firmware started may already be counted.
    let before = port.status_after_heartbeat();

    // Bad checksum: a correct line for other widths with its last check digit changed.
    let mut bad_check = HostLine {
        seq: 0x10,
        message: setpoint([4000; CHANNELS]),
    }
    .encode()
    .as_bytes()
    .to_vec();
    let last_digit = bad_check.len() - 2;
    bad_check[last_digit] = if bad_check[last_digit] == b'0' {
        b'1'
    } else {
        b'0'
    };
    port.raw(&bad_check);
    // Unknown kind with a good check, and a truncated setpoint.
    port.raw(&with_check("q11:0FA0"));
    port.raw(b"s12:0FA00FA00FA00FA0\n");
    run.wait_simulated(Duration::from_millis(100));
    let status = port.status_after_heartbeat();
    assert_eq!(
        (
            status.bad_checksums - before.bad_checksums,
            status.bad_lines - before.bad_lines
        ),
        (1, 2),
        "{before:?} → {status:?}"
    );
    assert!(status.faults.contains(Faults::BAD_INPUT));
    assert!(!port.acked(0x10) && !port.acked(0x11) && !port.acked(0x12));

    // Out of range: clamped to 500 µs and 2500 µs and flagged.
    let clamped = [0x0100, 3000, 3000, 3000, 3000, 3000, 0xFFFF];
    let seq = port.send(setpoint(clamped));
    port.expect_ack(seq, AckOutcome::Clamped);
    run.wait_simulated(Duration::from_millis(60));
    let status = port.status_after_heartbeat();
    assert_eq!(status.clamped_values, 2);
    assert!(status.faults.contains(Faults::CLAMPED));

    // While stopped, setpoints are refused.
    let stop = port.send(HostMessage::EmergencyStop);
    port.expect_ack(stop, AckOutcome::Accepted);
    let refused = port.send(setpoint(good));
    port.expect_ack(refused, AckOutcome::Refused);
    let status = port.status_after_heartbeat();
    assert_eq!(status.mode, DeviceMode::Stopped);
    run.wait_simulated(Duration::from_millis(60));
    drop(port);
    let log = run.finish();

    let bad_at = log
        .host_raw
        .iter()
        .find(|(_, text)| text.starts_with("s10"))
        .map(|&(cycle, _)| cycle)
        .expect("bad line in the log");
    let clamp_at = log
        .setpoints()
        .iter()
        .find(|(_, values)| values.as_slice()[0] == 0x0100)
        .map(|&(cycle, _)| cycle)
        .expect("clamped setpoint in the log");
    let frames = log.frames();
    let good_us = [1500.0; CHANNELS];
    let between: Vec<_> = frames
        .iter()
        .filter(|f| f.start > bad_at && f.start + 16_000 < clamp_at)
        .collect();
    assert!(
        between.len() >= 3,
        "{} frames after the bad lines",
        between.len()
    );
    assert!(
        between.iter().all(|f| same_widths(&f.widths_us, &good_us)),
        "a bad line moved the pulses"
    );
    let last = frames.last().expect("frames");
    let expected = [500.0, 1500.0, 1500.0, 1500.0, 1500.0, 1500.0, 2500.0];
    assert!(
        same_widths(&last.widths_us, &expected),
        "{:?}",
        last.widths_us
    );
    check_frame_period(&frames);
}

#[test]
fn a_burst_of_random_bytes_never_hangs_or_resets_the_firmware() {
    let Some(hil) = hil() else { return };
    let run = start(hil, "noise");
    let mut port = RawPort::new(&run);
    let pose = [2100, 2500, 2900, 3300, 3700, 4100, 4500];
    let seq = port.send(setpoint(pose));
    port.expect_ack(seq, AckOutcome::Accepted);
    // 2 000 bytes from a fixed linear congruential sequence, then a line feed.
    let mut rng = armwright_test_support::seeded::Lcg32::new(0x2545_F491);
    let noise: Vec<u8> = (0..2000).map(|_| (rng.next_u32() >> 24) as u8).collect();
    for chunk in noise.chunks(100) {
        port.raw(chunk);
    }
    port.raw(b"\n");
    // Still answering: a heartbeat is acknowledged.
    let status = port.status_after_heartbeat();
    assert!(status.bad_lines + status.bad_checksums > 0, "{status:?}");
    assert_ne!(status.mode, DeviceMode::Stopped);
    drop(port);
    let log = run.finish();

    // The power-up greeting and one for each greeting line that got through; a restart
    // would add one more.
    let greeting_seqs: Vec<u8> = log
        .host_lines
        .iter()
        .filter(|(_, line)| matches!(line.message, HostMessage::Greeting { .. }))
        .map(|(_, line)| line.seq)
        .collect();
    let greetings_answered = log
        .device_lines
        .iter()
        .filter(|(_, line)| {
            matches!(line.message, DeviceMessage::Ack(ack) if greeting_seqs.contains(&ack.acked_seq))
        })
        .count();
    assert_eq!(log.greetings_sent(), 1 + greetings_answered);
    assert_eq!(log.end, "host closed");
    let frames = log.frames();
    let expected = units_to_us(&ChannelValues::from_slice(&pose).expect("seven"));
    let noise_start = log.setpoints()[0].0 + 16_000;
    let during: Vec<_> = frames.iter().filter(|f| f.start > noise_start).collect();
    assert!(
        during.len() >= 10,
        "{} frames during the noise",
        during.len()
    );
    assert!(during.iter().all(|f| same_widths(&f.widths_us, &expected)));
    check_frame_period(&frames);
}

/// The same script of lines, one at a time, to the firmware and to the simulated device:
/// both must acknowledge the same lines with the same outcomes and end with the same mode
/// and counters.
#[test]
fn firmware_and_simulated_device_answer_alike() {
    use armwright_link::{SimDevice, SimDeviceConfig};

    let Some(hil) = hil() else { return };
    let mut bad_check = HostLine {
        seq: 0x23,
        message: setpoint([3200; CHANNELS]),
    }
    .encode()
    .as_bytes()
    .to_vec();
    let last_digit = bad_check.len() - 2;
    bad_check[last_digit] = if bad_check[last_digit] == b'0' {
        b'1'
    } else {
        b'0'
    };
    let line =
        |seq: u8, message: HostMessage| HostLine { seq, message }.encode().as_bytes().to_vec();
    let script: Vec<Vec<u8>> = vec![
        line(0x20, setpoint([3000; CHANNELS])),
        line(
            0x21,
            setpoint([0x0010, 3000, 3000, 3000, 3000, 3000, 0xF000]),
        ),
        line(0x22, HostMessage::Hold),
        bad_check,
        with_check("q24:1"),
        b"s25:0BB80BB8\n".to_vec(),
        line(
            0x26,
            HostMessage::Setpoint(ChannelValues::from_slice(&[3000; 3]).expect("three")),
        ),
        line(0x27, HostMessage::Release),
        line(0x28, setpoint([2800; CHANNELS])),
        line(0x29, HostMessage::EmergencyStop),
        line(0x2A, setpoint([2600; CHANNELS])),
        line(0x2B, HostMessage::Hold),
        line(0x2C, HostMessage::Release),
        line(0x2D, HostMessage::Reset),
        line(0x2E, setpoint([2400; CHANNELS])),
        line(0x2F, HostMessage::Heartbeat),
    ];
    let answered = |heard: &[DeviceLine]| -> Vec<(u8, AckOutcome)> {
        heard
            .iter()
            .filter_map(|line| match line.message {
                DeviceMessage::Ack(ack) if (0x20..=0x2F).contains(&ack.acked_seq) => {
                    Some((ack.acked_seq, ack.outcome))
                }
                _ => None,
            })
            .collect()
    };

    // The firmware, one line at a time, 40 ms of simulated time apart.
    let run = start(hil, "parity");
    let mut port = RawPort::new(&run);
    let firmware_before = port.status_after_heartbeat();
    for bytes in &script {
        port.raw(bytes);
        run.wait_simulated(Duration::from_millis(40));
    }
    let firmware_after = port.status_after_heartbeat();
    let firmware_acks = answered(&port.heard);
    drop(port);
    run.finish();

    // The simulated device, the same way; its queue is set to the firmware's room of 3.
    let config = SimDeviceConfig {
        pulse_unit_ns: 500,
        min_pulse_units: 1000,
        max_pulse_units: 5000,
        queue_capacity: 3,
        ..SimDeviceConfig::default()
    };
    let mut device = SimDevice::new(config);
    let mut now = Duration::ZERO;
    let mut bytes_out = Vec::new();
    for bytes in &script {
        device.receive(bytes, now);
        now += Duration::from_millis(40);
        device.advance(now);
    }
    device.take_output(&mut bytes_out);
    let sim_heard: Vec<DeviceLine> = bytes_out
        .split_inclusive(|&b| b == b'\n')
        .filter_map(|line| DeviceLine::parse(line).ok())
        .collect();
    let sim_acks = answered(&sim_heard);
    let sim_after = device.status();

    assert_eq!(firmware_acks, sim_acks, "acknowledgements differ");
    assert_eq!(firmware_after.mode, sim_after.mode);
    assert_eq!(
        (
            firmware_after.bad_checksums - firmware_before.bad_checksums,
            firmware_after.bad_lines - firmware_before.bad_lines,
            firmware_after.clamped_values - firmware_before.clamped_values,
        ),
        (
            sim_after.bad_checksums,
            sim_after.bad_lines,
            sim_after.clamped_values
        )
    );
    // And the script did what it says: 12 lines acknowledged (the four bad ones not), the
    // three motion lines after the stop refused, 3 bad lines and 1 bad check, 2 values clamped.
    use AckOutcome::{Accepted, Clamped, Refused};
    assert_eq!(
        sim_acks,
        [
            (0x20, Accepted),
            (0x21, Clamped),
            (0x22, Accepted),
            (0x27, Accepted),
            (0x28, Accepted),
            (0x29, Accepted),
            (0x2A, Refused),
            (0x2B, Refused),
            (0x2C, Refused),
            (0x2D, Accepted),
            (0x2E, Accepted),
            (0x2F, Accepted),
        ]
    );
    assert_eq!(sim_after.mode, DeviceMode::Driving);
    assert_eq!(
        (
            sim_after.bad_checksums,
            sim_after.bad_lines,
            sim_after.clamped_values
        ),
        (1, 3, 2)
    );
}

/// The 12-bit reading the firmware reports for `millivolts` on a 10-bit converter referenced
/// to 5000 mV: simavr's count ⌊mV × 1023 / 5000⌋, then PROTOCOL.md §4's scale, 4v + ⌊v / 256⌋.
fn reported_reading(millivolts: u32) -> u16 {
    let count = (millivolts * 1023 / 5000).min(1023) as u16;
    4 * count + count / 256
}

fn readings_of(line: &DeviceLine) -> Option<ChannelValues> {
    match line.message {
        DeviceMessage::Analog(values) => Some(values),
        _ => None,
    }
}

#[test]
fn readings_come_at_the_rate_asked_with_the_voltages_on_the_pins() {
    let Some(hil) = hil() else { return };
    let mut run = start(hil, "readings");
    let first = [0, 1000, 2500, 3300, 4200, 5000];
    let second = [4000, 3000, 1200, 600, 100, 2500];
    for (input, &millivolts) in first.iter().enumerate() {
        run.set_input(input, millivolts);
    }
    let mut port = RawPort::new(&run);
    let greeting = port.send(HostMessage::Greeting {
        protocol_version: 3,
    });
    port.expect_ack(greeting, AckOutcome::Accepted);
    let answer = port.read_until(|line| matches!(line.message, DeviceMessage::Greeting(_)));
    assert!(matches!(
        answer.message,
        DeviceMessage::Greeting(info) if info.protocol_version == 3
    ));
    // Asked before protocol 3 was settled nothing would come; now 25 a second.
    let ask = port.send(HostMessage::ReadingsRate { rate_hz: 25 });
    port.expect_ack(ask, AckOutcome::Accepted);
    run.wait_simulated(Duration::from_millis(600));
    for (input, &millivolts) in second.iter().enumerate() {
        run.set_input(input, millivolts);
    }
    run.wait_simulated(Duration::from_millis(600));
    // Readings go on while stopped: they move nothing.
    let stop = port.send(HostMessage::EmergencyStop);
    port.expect_ack(stop, AckOutcome::Accepted);
    run.wait_simulated(Duration::from_millis(200));
    let off = port.send(HostMessage::ReadingsRate { rate_hz: 0 });
    port.expect_ack(off, AckOutcome::Accepted);
    // Out of range: a bad line, not acted on.
    port.raw(&with_check("rA4:101"));
    run.wait_simulated(Duration::from_millis(200));
    let status = port.status_after_heartbeat();
    assert_eq!(status.mode, DeviceMode::Stopped);
    assert!(!port.acked(0xA4));
    drop(port);
    let log = run.finish();

    let asked_at = log.first_host_line(|m| *m == HostMessage::ReadingsRate { rate_hz: 25 });
    let off_at = log.first_host_line(|m| *m == HostMessage::ReadingsRate { rate_hz: 0 });
    let readings: Vec<(u64, ChannelValues)> = log
        .device_lines
        .iter()
        .filter_map(|(cycle, line)| readings_of(line).map(|values| (*cycle, values)))
        .collect();
    assert!(
        readings.iter().all(|(cycle, _)| *cycle > asked_at),
        "no readings before they were asked for"
    );
    // Nothing after the rate went to 0 (a line already on the wire may finish: 3 ms).
    assert!(
        readings
            .iter()
            .all(|(cycle, _)| *cycle < off_at + 3 * 16_000),
        "readings after they were turned off"
    );
    // The rate: 25 a second, every 40 ms within the 1 ms clock and the wire's jitter (a line
    // waiting behind an acknowledgement leaves up to 2 ms later), and 40 ms on average.
    // A 40 ms lattice has floor(L / 40 ms) or one more points in a span of length L, and the
    // wire's jitter may move one across either end; at most one line is in flight at the off.
    let span_s = ms(off_at - asked_at) / 1000.0;
    let lattice = (span_s * 25.0).floor() as usize;
    let within = readings.iter().filter(|(cycle, _)| *cycle < off_at).count();
    assert!(
        (lattice.saturating_sub(1)..=lattice + 1).contains(&within),
        "{within} readings lines in {span_s:.3} s of simulated time, expected {lattice} - 1 to {lattice} + 1"
    );
    assert!(
        readings.len() - within <= 1,
        "{} lines after the off",
        readings.len() - within
    );
    for pair in readings.windows(2) {
        let gap = ms(pair[1].0 - pair[0].0);
        assert!((37.0..=43.0).contains(&gap), "readings {gap:.2} ms apart");
    }
    let mean = ms(readings[readings.len() - 1].0 - readings[0].0) / (readings.len() - 1) as f64;
    assert!((mean - 40.0).abs() <= 0.2, "mean gap {mean:.3} ms");
    // The values: six inputs on the 12-bit scale, as the pins were set. Every input is read
    // again within a few ms; a line 20 ms after a change carries the new voltages.
    let changed_at = log
        .analog_set
        .iter()
        .map(|&(cycle, _, _)| cycle)
        .max()
        .expect("inputs set");
    let settled = 20 * 16_000;
    let before: Vec<_> = readings
        .iter()
        .filter(|(cycle, _)| *cycle < changed_at)
        .collect();
    let after: Vec<_> = readings
        .iter()
        .filter(|(cycle, _)| *cycle > changed_at + settled)
        .collect();
    assert!(
        before.len() >= 10 && after.len() >= 15,
        "{} / {}",
        before.len(),
        after.len()
    );
    let expect = |millivolts: &[u32; 6]| -> Vec<u16> {
        millivolts.iter().map(|&mv| reported_reading(mv)).collect()
    };
    let stop_at = log.first_host_line(|m| *m == HostMessage::EmergencyStop);
    assert!(
        readings
            .iter()
            .filter(|(cycle, _)| *cycle > stop_at)
            .count()
            >= 4,
        "readings go on while the stop is latched"
    );
    for (cycle, values) in &before {
        assert_eq!(values.as_slice(), expect(&first), "at {:.1} ms", ms(*cycle));
    }
    for (cycle, values) in &after {
        assert_eq!(
            values.as_slice(),
            expect(&second),
            "at {:.1} ms",
            ms(*cycle)
        );
    }
    // The scale's ends: 0 mV reads 000 and 5000 mV reads FFF.
    assert_eq!(expect(&first)[0], 0);
    assert_eq!(expect(&first)[5], 4095);
}

#[test]
fn a_link_to_the_firmware_keeps_the_newest_readings() {
    let Some(hil) = hil() else { return };
    let mut run = start(hil, "link-readings");
    let millivolts = [250, 750, 1250, 1750, 2250, 2750];
    for (input, &mv) in millivolts.iter().enumerate() {
        run.set_input(input, mv);
    }
    let link = Link::connect(Box::new(run.open()), hil_options()).expect("greets the firmware");
    assert_eq!(link.device().protocol_version, 4);
    assert!(link.stats().readings.is_none(), "none before asking");
    link.request_readings(50).expect("a version-3 link");
    let give_up = Instant::now() + Duration::from_secs(60);
    while link.stats().readings_received < 5 {
        assert!(Instant::now() < give_up, "no readings: {:?}", link.stats());
        std::thread::sleep(Duration::from_millis(5));
    }
    let expected: Vec<u16> = millivolts.iter().map(|&mv| reported_reading(mv)).collect();
    assert_eq!(
        link.stats().readings.map(|r| r.as_slice().to_vec()),
        Some(expected)
    );
    assert_eq!(
        link.request_readings(101),
        Err(LinkError::ReadingsRate { rate_hz: 101 })
    );
    drop(link);
    run.finish();
}

/// Each channel's pulse in every frame (channel 0 always driven marks the frame), µs, `None`
/// for a channel without a pulse in that frame.
fn frames_with_limp(log: &SimLog) -> Vec<(u64, [Option<f64>; CHANNELS])> {
    let mut pulses: Vec<Vec<(u64, u64)>> = vec![Vec::new(); CHANNELS];
    let mut rose: [Option<u64>; CHANNELS] = [None; CHANNELS];
    for &(cycle, channel, level) in &log.edges {
        if level {
            rose[channel] = Some(cycle);
        } else if let Some(start) = rose[channel].take() {
            pulses[channel].push((start, cycle - start));
        }
    }
    pulses[0]
        .iter()
        .map(|&(start, _)| {
            let mut widths = [None; CHANNELS];
            for (channel, width) in widths.iter_mut().enumerate() {
                *width = pulses[channel]
                    .iter()
                    .find(|(rise, _)| *rise >= start && *rise < start + FRAME_CYCLES)
                    .map(|&(_, cycles)| cycles as f64 / CYCLES_PER_US);
            }
            (start, widths)
        })
        .collect()
}

/// Planned frame `i` of the test: channel 0 steps 20 µs a frame so each frame is told apart,
/// channel 3 sends no pulse in the first `limp_frames`.
fn planned_frame(i: u16, limp_frames: u16) -> [Option<u16>; CHANNELS] {
    let mut frame = [Some(3000); CHANNELS];
    frame[0] = Some(2000 + 40 * i);
    if i < limp_frames {
        frame[3] = None;
    }
    frame
}

/// Sends planned frames 0 to `frames` − 1 in one write, so that a test host held up by a busy
/// computer does not starve the queue (the harness feeds the UART at its baud rate, slower
/// than the firmware takes lines off its ring, so the ring does not overflow); waits for the
/// last one's acknowledgement and returns its sequence number.
fn send_planned(port: &mut RawPort, frames: u16, limp_frames: u16) -> u8 {
    let mut bytes = Vec::new();
    let mut last_seq = 0;
    for i in 0..frames {
        let frame = ChannelOutput::from_slice(&planned_frame(i, limp_frames)).expect("seven");
        last_seq = port.seq;
        port.seq = port.seq.wrapping_add(1);
        let line = HostLine {
            seq: last_seq,
            message: HostMessage::Planned(frame),
        };
        bytes.extend_from_slice(line.encode().as_bytes());
    }
    port.raw(&bytes);
    port.expect_ack(last_seq, AckOutcome::Accepted);
    last_seq
}

#[test]
fn planned_setpoints_play_one_a_frame_in_order_and_the_watchdog_waits_for_the_queue() {
    let Some(hil) = hil() else { return };
    let run = start(hil, "planned");
    let mut port = RawPort::new(&run);
    let greeting = port.send(HostMessage::Greeting {
        protocol_version: 4,
    });
    port.expect_ack(greeting, AckOutcome::Accepted);
    port.read_until(
        |line| matches!(line.message, DeviceMessage::Greeting(info) if info.protocol_version == 4),
    );
    // 40 frames (800 ms of motion) sent as fast as the acknowledgements allow: far faster than
    // they are played, so they wait in the play queue.
    const FRAMES: u16 = 40;
    const LIMP: u16 = 10;
    let last_seq = send_planned(&mut port, FRAMES, LIMP);
    let tripped = port.read_until(|line| {
        matches!(line.message, DeviceMessage::Status(s) if s.faults.contains(Faults::WATCHDOG))
    });
    run.wait_simulated(Duration::from_millis(100));
    drop(port);
    let log = run.finish();

    let last_host_line = log
        .host_lines
        .iter()
        .find(|(_, line)| line.seq == last_seq)
        .map(|&(cycle, _)| cycle)
        .expect("the last planned line is in the log");
    let frames = frames_with_limp(&log);
    // The planned frames, in order, one a frame: find the first, then every later frame is
    // the next one until the last, which is then held.
    let first = frames
        .iter()
        .position(|(_, widths)| widths[0].is_some_and(|w| (w - 1000.0).abs() <= 1.0))
        .expect("the first planned frame was played");
    for i in 0..FRAMES {
        let (start, widths) = frames[first + usize::from(i)];
        let expected = planned_frame(i, LIMP).map(|v| v.map(|units| f64::from(units) * 0.5));
        for (channel, (got, want)) in widths.iter().zip(expected).enumerate() {
            assert!(
                match (got, want) {
                    (Some(got), Some(want)) => (got - want).abs() <= 1.0,
                    (None, None) => true,
                    _ => false,
                },
                "planned frame {i} at {:.1} ms, channel {channel}: {got:?} µs, planned {want:?}",
                ms(start)
            );
        }
    }
    let last_played = frames[first + usize::from(FRAMES) - 1].0;
    // Most of the motion played after the host's last line: the queue held it.
    assert!(
        ms(last_played - last_host_line) > 500.0,
        "the last frame played {:.1} ms after the last line",
        ms(last_played - last_host_line)
    );
    // The watchdog counted 250 ms from the frame that took the last entry (a frame before it
    // played), not from the host's last line.
    let report = log
        .device_lines
        .iter()
        .find(|(_, line)| line.seq == tripped.seq)
        .map(|&(cycle, _)| cycle)
        .expect("the status line is in the log");
    let after_taken = ms(report) - (ms(last_played) - 20.0);
    assert!(
        (240.0..=280.0).contains(&after_taken),
        "watchdog reported {after_taken:.1} ms after the queue ran dry"
    );
    // It then holds the last frame.
    let held = planned_frame(FRAMES - 1, LIMP).map(|v| v.map(|units| f64::from(units) * 0.5));
    // (The run's last frame may be cut off by its end.)
    let whole = &frames[..frames.len() - 1];
    for (start, widths) in whole.iter().filter(|(start, _)| *start > report) {
        assert!(
            widths
                .iter()
                .zip(held)
                .all(|(got, want)| got.zip(want).is_some_and(|(g, w)| (g - w).abs() <= 1.0)),
            "frame at {:.1} ms after the trip: {widths:?}",
            ms(*start)
        );
    }
}

#[test]
fn an_emergency_stop_drops_the_planned_frames_at_once() {
    let Some(hil) = hil() else { return };
    let run = start(hil, "planned-stop");
    let mut port = RawPort::new(&run);
    let greeting = port.send(HostMessage::Greeting {
        protocol_version: 4,
    });
    port.expect_ack(greeting, AckOutcome::Accepted);
    send_planned(&mut port, 40, 0);
    let stop = port.send(HostMessage::EmergencyStop);
    port.expect_ack(stop, AckOutcome::Accepted);
    run.wait_simulated(Duration::from_millis(200));
    drop(port);
    let log = run.finish();
    let stop_at = log.first_host_line(|message| *message == HostMessage::EmergencyStop);
    let frames = frames_with_limp(&log);
    // From the second frame after the stop arrived, every frame is the same: the queue was
    // dropped and the device holds.
    // (The run's last frame may be cut off by its end.)
    let after: Vec<_> = frames[..frames.len() - 1]
        .iter()
        .filter(|(start, _)| *start > stop_at + FRAME_CYCLES)
        .collect();
    assert!(after.len() >= 5, "{} frames after the stop", after.len());
    assert!(
        after.windows(2).all(|pair| pair[0]
            .1
            .iter()
            .zip(pair[1].1)
            .all(|(a, b)| a.zip(b).is_some_and(|(a, b)| (a - b).abs() <= 1.0))),
        "frames changed after the stop: {after:?}"
    );
    // And motion had not played out: the held frame is not the last planned one.
    let last = f64::from(2000 + 40 * 39) * 0.5;
    assert!(
        after[0].1[0].is_some_and(|w| (w - last).abs() > 10.0),
        "{after:?}"
    );
}
