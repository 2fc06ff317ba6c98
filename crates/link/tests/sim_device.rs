//! The simulated device against `PROTOCOL.md` §3–5: acknowledgements, frames, clamping,
//! watchdog, the emergency-stop latch, bad input and flow control, on a simulated clock.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

use std::time::Duration;

use armwright_link::{
    Ack, AckOutcome, ChannelOutput, ChannelValues, DeviceLine, DeviceMessage, DeviceMode,
    DeviceStatus, Faults, HostLine, HostMessage, ReadingsRecording, ReadingsSource, SimDevice,
    SimDeviceConfig,
};

/// A device, a clock in ms and the lines the device has sent.
struct Bench {
    device: SimDevice,
    now_ms: u64,
    seq: u8,
    heard: Vec<DeviceLine>,
}

impl Bench {
    fn new() -> Self {
        let mut bench = Self {
            device: SimDevice::new(SimDeviceConfig::default()),
            now_ms: 0,
            seq: 0,
            heard: Vec::new(),
        };
        bench.collect();
        bench.heard.clear();
        bench
    }

    fn now(&self) -> Duration {
        Duration::from_millis(self.now_ms)
    }

    fn collect(&mut self) {
        let mut out = Vec::new();
        self.device.take_output(&mut out);
        for line in out.split_inclusive(|&b| b == b'\n') {
            self.heard
                .push(DeviceLine::parse(line).expect("the device sends only good lines"));
        }
    }

    /// Sends one host line (without acting on it yet); returns its sequence number.
    fn send(&mut self, message: HostMessage) -> u8 {
        let seq = self.seq;
        self.seq = self.seq.wrapping_add(1);
        let line = HostLine { seq, message }.encode();
        self.raw(line.as_bytes());
        seq
    }

    fn raw(&mut self, bytes: &[u8]) {
        let now = self.now();
        self.device.receive(bytes, now);
        self.collect();
    }

    /// Moves the clock on by `ms` in 1 ms steps.
    fn wait_ms(&mut self, ms: u64) {
        for _ in 0..ms {
            self.now_ms += 1;
            let now = self.now();
            self.device.advance(now);
            self.collect();
        }
    }

    fn acks(&self) -> Vec<Ack> {
        self.heard
            .iter()
            .filter_map(|line| match line.message {
                DeviceMessage::Ack(ack) => Some(ack),
                _ => None,
            })
            .collect()
    }

    fn last_status(&self) -> Option<DeviceStatus> {
        self.heard.iter().rev().find_map(|line| match line.message {
            DeviceMessage::Status(status) => Some(status),
            _ => None,
        })
    }
}

fn setpoint(units: &[u16]) -> HostMessage {
    HostMessage::Setpoint(ChannelValues::from_slice(units).expect("1 to 8 values"))
}

const MID: [u16; 7] = [1500; 7];
const POSE: [u16; 7] = [1000, 1200, 1400, 1600, 1800, 2000, 2200];

#[test]
fn greeting_is_answered_with_an_ack_and_the_device_description() {
    let mut bench = Bench::new();
    let seq = bench.send(HostMessage::Greeting {
        protocol_version: 1,
    });
    bench.wait_ms(1);
    assert_eq!(
        bench.acks(),
        [Ack {
            acked_seq: seq,
            room: 4,
            outcome: AckOutcome::Accepted
        }]
    );
    let info = bench.heard.iter().find_map(|line| match line.message {
        DeviceMessage::Greeting(info) => Some(info),
        _ => None,
    });
    let info = info.expect("a greeting");
    assert_eq!(info.channel_count, 7);
    assert_eq!(info.frame_period_us, 20_000);
}

#[test]
fn a_setpoint_starts_at_the_next_frame() {
    let mut bench = Bench::new();
    bench.wait_ms(5);
    bench.send(setpoint(&POSE));
    bench.wait_ms(1);
    assert_eq!(bench.device.mode(), DeviceMode::Driving);
    assert_eq!(
        bench.device.pulse_units(),
        None,
        "not before the frame at 20 ms"
    );
    bench.wait_ms(14);
    assert_eq!(
        bench.device.pulse_units().map(|v| v.as_slice().to_vec()),
        Some(POSE.to_vec())
    );
    assert_eq!(bench.device.pulse_widths_us()[6], 2200.0);
}

#[test]
fn out_of_range_values_are_clamped_and_flagged() {
    let mut bench = Bench::new();
    let seq = bench.send(setpoint(&[100, 1500, 1500, 1500, 1500, 1500, 3000]));
    bench.wait_ms(20);
    assert_eq!(bench.acks()[0].acked_seq, seq);
    assert_eq!(bench.acks()[0].outcome, AckOutcome::Clamped);
    let pulses = bench.device.pulse_units().expect("driving");
    assert_eq!(pulses.as_slice()[0], 500);
    assert_eq!(pulses.as_slice()[6], 2500);
    let status = bench.last_status().expect("a status after the clamp");
    assert_eq!(status.clamped_values, 2);
    assert!(status.faults.contains(Faults::CLAMPED));
}

#[test]
fn watchdog_holds_after_250_ms_of_silence_and_reports_it() {
    let mut bench = Bench::new();
    bench.send(setpoint(&POSE));
    bench.wait_ms(100);
    bench.send(HostMessage::Heartbeat);
    let last_line_ms = bench.now_ms;
    let mut tripped_at = None;
    for _ in 0..400 {
        bench.wait_ms(1);
        let status = bench.last_status().expect("status lines flow");
        if status.faults.contains(Faults::WATCHDOG) {
            tripped_at = Some(bench.now_ms);
            assert_eq!(status.mode, DeviceMode::Keeping);
            assert_eq!(status.watchdog_trips, 1);
            break;
        }
    }
    let silence_ms = tripped_at.expect("the watchdog trips") - last_line_ms;
    assert!(
        (250..=251).contains(&silence_ms),
        "tripped after {silence_ms} ms"
    );
    assert_eq!(
        bench.device.pulse_units().map(|v| v.as_slice().to_vec()),
        Some(POSE.to_vec()),
        "holds, does not go limp"
    );
    bench.send(setpoint(&MID));
    bench.wait_ms(20);
    assert_eq!(
        bench.device.mode(),
        DeviceMode::Driving,
        "a setpoint resumes driving"
    );
}

#[test]
fn heartbeats_keep_the_watchdog_quiet() {
    let mut bench = Bench::new();
    bench.send(setpoint(&POSE));
    for _ in 0..10 {
        bench.wait_ms(100);
        bench.send(HostMessage::Heartbeat);
    }
    bench.wait_ms(1);
    assert_eq!(bench.device.mode(), DeviceMode::Driving);
    assert_eq!(bench.device.status().watchdog_trips, 0);
}

#[test]
fn emergency_stop_overtakes_the_queue_latches_and_needs_a_reset() {
    let mut bench = Bench::new();
    bench.send(setpoint(&MID));
    bench.wait_ms(20);
    assert_eq!(
        bench.device.pulse_units().map(|v| v.as_slice()[0]),
        Some(1500)
    );
    // A setpoint and then a stop arrive together; the stop is acted on first.
    let moved = bench.send(setpoint(&POSE));
    let stop = bench.send(HostMessage::EmergencyStop);
    assert_eq!(bench.device.mode(), DeviceMode::Stopped, "acts on arrival");
    bench.wait_ms(1);
    let acks = bench.acks();
    assert_eq!(acks[1].acked_seq, stop);
    assert_eq!(
        (acks[2].acked_seq, acks[2].outcome),
        (moved, AckOutcome::Refused)
    );
    bench.wait_ms(100);
    assert_eq!(
        bench.device.pulse_units().map(|v| v.as_slice()[0]),
        Some(1500),
        "held"
    );
    let status = bench.last_status().expect("a status");
    assert_eq!(status.mode, DeviceMode::Stopped);
    assert!(status.faults.contains(Faults::EMERGENCY_STOP));
    // Hold and release are refused too, and the watchdog does not undo the latch.
    for message in [HostMessage::Hold, HostMessage::Release, setpoint(&POSE)] {
        bench.send(message);
        bench.wait_ms(300);
        assert_eq!(
            bench.acks().last().map(|a| a.outcome),
            Some(AckOutcome::Refused)
        );
        assert_eq!(bench.device.mode(), DeviceMode::Stopped);
        assert_eq!(
            bench.device.pulse_units().map(|v| v.as_slice()[0]),
            Some(1500)
        );
    }
    // Reset: keeps holding, clears the fault; a new setpoint drives again.
    bench.send(HostMessage::Reset);
    bench.wait_ms(20);
    assert_eq!(bench.device.mode(), DeviceMode::Keeping);
    assert!(
        !bench
            .last_status()
            .expect("status")
            .faults
            .contains(Faults::EMERGENCY_STOP)
    );
    bench.send(setpoint(&POSE));
    bench.wait_ms(20);
    assert_eq!(
        bench.device.pulse_units().map(|v| v.as_slice().to_vec()),
        Some(POSE.to_vec())
    );
}

#[test]
fn release_goes_limp() {
    let mut bench = Bench::new();
    bench.send(setpoint(&MID));
    bench.wait_ms(20);
    bench.send(HostMessage::Release);
    bench.wait_ms(1);
    assert_eq!(bench.device.mode(), DeviceMode::Limp);
    assert_eq!(bench.device.pulse_units(), None);
}

#[test]
fn bad_lines_are_not_acted_on_but_counted_and_reported() {
    let mut bench = Bench::new();
    bench.send(setpoint(&MID));
    bench.wait_ms(20);
    let before = bench.acks().len();
    // Bad checksum (last digit changed), truncated line, a setpoint with the wrong channel
    // count; the unknown kind has its own test below.
    bench.raw(b"s01:05DC05DC05DC05DC05DC05DC/E8F6\n");
    bench.raw(b"s01:05DC05DC05DC05DC05DC05DC/E8\n");
    bench.raw(b"q09/");
    bench.raw(b"\n"); // completes "q09/" as a truncated line
    bench.send(setpoint(&[2000; 6]));
    bench.wait_ms(40);
    assert_eq!(bench.acks().len(), before, "no bad line is acknowledged");
    assert_eq!(
        bench.device.pulse_units().map(|v| v.as_slice()[0]),
        Some(1500),
        "not acted on"
    );
    let status = bench.last_status().expect("reported");
    assert_eq!(status.bad_checksums, 1);
    assert_eq!(status.bad_lines, 3);
    assert!(status.faults.contains(Faults::BAD_INPUT));
}

#[test]
fn unknown_kind_with_a_good_check_is_a_bad_line() {
    let mut bench = Bench::new();
    let mut line = b"j09".to_vec();
    let check = armwright_link::crc16_ccitt_false(&line);
    line.extend(format!("/{check:04X}\n").bytes());
    bench.raw(&line);
    bench.wait_ms(20);
    assert!(bench.acks().is_empty());
    assert_eq!(
        bench.last_status().map(|s| (s.bad_lines, s.bad_checksums)),
        Some((1, 0))
    );
}

#[test]
fn room_shrinks_as_the_queue_fills_and_overflow_is_flagged() {
    let mut bench = Bench::new();
    for _ in 0..6 {
        bench.send(HostMessage::Heartbeat);
    }
    bench.wait_ms(1);
    let rooms: Vec<u8> = bench.acks().iter().map(|ack| ack.room).collect();
    assert_eq!(
        rooms,
        [1, 2, 3, 4],
        "4 queued, acked as the queue drains; 2 overflowed"
    );
    let status = bench.device.status();
    assert_eq!(status.bad_lines, 2);
    assert!(status.faults.contains(Faults::OVERFLOW));
}

#[test]
fn status_lines_come_at_most_once_per_frame() {
    let mut bench = Bench::new();
    for _ in 0..50 {
        bench.send(HostMessage::Heartbeat);
        bench.wait_ms(2);
    }
    let statuses = bench
        .heard
        .iter()
        .filter(|line| matches!(line.message, DeviceMessage::Status(_)))
        .count();
    // 100 ms → at most 5 full frames plus the first line.
    assert!((5..=6).contains(&statuses), "{statuses} status lines");
    // The device's own count (what a window watching it waits on) agrees with the lines heard.
    assert_eq!(bench.device.statuses_sent(), statuses as u64);
}

#[test]
fn random_bytes_do_not_disturb_the_device() {
    let mut bench = Bench::new();
    bench.send(setpoint(&MID));
    bench.wait_ms(20);
    let mut rng = armwright_test_support::seeded::Lcg32::new(12_345);
    let noise: Vec<u8> = (0..5000).map(|_| (rng.next_u32() >> 16) as u8).collect();
    for chunk in noise.chunks(50) {
        bench.raw(chunk);
        bench.wait_ms(1);
    }
    bench.raw(b"\n");
    let frames_before = bench.device.frames_started();
    bench.send(HostMessage::Heartbeat);
    bench.wait_ms(40);
    assert_eq!(
        bench.device.frames_started(),
        frames_before + 2,
        "frames keep coming"
    );
    assert!(bench.device.status().bad_lines + bench.device.status().bad_checksums > 0);
    assert_eq!(
        bench.device.pulse_units().map(|v| v.as_slice()[3]),
        Some(1500)
    );
}

mod properties {
    use super::*;
    use proptest::prelude::*;

    #[derive(Debug, Clone)]
    enum Input {
        Line(HostMessage),
        Noise(Vec<u8>),
    }

    fn input() -> impl Strategy<Value = Input> {
        let values = proptest::collection::vec(any::<u16>(), 7..=7)
            .prop_map(|v| ChannelValues::from_slice(&v).expect("seven values"));
        let planned = proptest::collection::vec(proptest::option::of(any::<u16>()), 7..=7)
            .prop_map(|mut v| {
                v[0].get_or_insert(1500);
                ChannelOutput::from_slice(&v).expect("seven values")
            });
        prop_oneof![
            4 => values.prop_map(|v| Input::Line(HostMessage::Setpoint(v))),
            4 => planned.prop_map(|v| Input::Line(HostMessage::Planned(v))),
            1 => Just(Input::Line(HostMessage::Hold)),
            1 => Just(Input::Line(HostMessage::Release)),
            1 => Just(Input::Line(HostMessage::EmergencyStop)),
            1 => Just(Input::Line(HostMessage::Reset)),
            1 => Just(Input::Line(HostMessage::Heartbeat)),
            1 => proptest::collection::vec(any::<u8>(), 0..80).prop_map(Input::Noise),
        ]
    }

    proptest! {
        /// Whatever arrives: pulses stay in the accepted range, a latched stop keeps the
        /// pulses unchanged until a reset line, and frames keep their 20 ms beat.
        #[test]
        fn the_device_keeps_its_promises(
            steps in proptest::collection::vec((input(), 0u64..60), 1..60)
        ) {
            let mut bench = Bench::new();
            let info = bench.device.info();
            // The last observation after the clock moved: was the device stopped, and with
            // which pulses; and whether a reset line was sent since.
            let mut before: Option<(bool, ChannelOutput)> = None;
            let mut reset_sent = false;
            for (input, wait_ms) in steps {
                match input {
                    Input::Line(message) => {
                        reset_sent |= message == HostMessage::Reset;
                        bench.send(message);
                    }
                    Input::Noise(bytes) => bench.raw(&bytes),
                }
                if wait_ms == 0 {
                    continue; // queued lines are acted on when the clock moves
                }
                bench.wait_ms(wait_ms);
                let pulses = bench.device.output();
                for &units in pulses.as_slice().iter().flatten() {
                    prop_assert!(units >= info.min_pulse_units && units <= info.max_pulse_units);
                }
                let stopped = bench.device.mode() == DeviceMode::Stopped;
                if let Some((was_stopped, held)) = before
                    && was_stopped
                    && stopped
                    && !reset_sent
                {
                    prop_assert_eq!(held, pulses, "pulses moved while the stop was latched");
                }
                before = Some((stopped, pulses));
                reset_sent = false;
                prop_assert_eq!(bench.device.frames_started(), bench.now_ms / 20 + 1);
            }
        }
    }
}

fn outputs(bench: &Bench) -> Vec<armwright_link::ChannelOutput> {
    bench
        .heard
        .iter()
        .filter_map(|line| match line.message {
            DeviceMessage::Output(output) => Some(output),
            _ => None,
        })
        .collect()
}

#[test]
fn the_output_query_reports_limp_then_the_pulses_being_sent() {
    let mut bench = Bench::new();
    let seq = bench.send(HostMessage::OutputQuery);
    bench.wait_ms(1);
    assert_eq!(bench.acks().last().map(|a| a.acked_seq), Some(seq));
    let limp = outputs(&bench);
    assert_eq!(limp.len(), 1);
    assert_eq!(limp[0].as_slice(), [None; 7]);
    assert!(limp[0].any_limp());
    bench.send(setpoint(&POSE));
    // Accepted but not yet started: the device still sends nothing.
    bench.send(HostMessage::OutputQuery);
    bench.wait_ms(1);
    assert_eq!(outputs(&bench)[1].as_slice(), [None; 7]);
    bench.wait_ms(20);
    bench.send(HostMessage::OutputQuery);
    bench.wait_ms(1);
    let driven = outputs(&bench)[2];
    assert_eq!(
        driven.pulses().map(|p| p.as_slice().to_vec()),
        Some(POSE.to_vec())
    );
    // Held after a stop: the same pulses.
    bench.send(HostMessage::EmergencyStop);
    bench.send(HostMessage::OutputQuery);
    bench.wait_ms(1);
    assert_eq!(outputs(&bench)[3], driven);
}

#[test]
fn the_greeting_answer_speaks_the_lower_version() {
    for (asked, answered) in [(1u8, 1u8), (2, 2), (3, 3), (4, 4), (9, 4)] {
        let mut bench = Bench::new();
        bench.send(HostMessage::Greeting {
            protocol_version: asked,
        });
        bench.wait_ms(1);
        let info = bench.heard.iter().find_map(|line| match line.message {
            DeviceMessage::Greeting(info) => Some(info),
            _ => None,
        });
        assert_eq!(
            info.map(|i| i.protocol_version),
            Some(answered),
            "asked {asked}"
        );
    }
}

#[test]
fn a_protocol_1_device_counts_the_output_query_as_a_bad_line() {
    let mut bench = Bench::new();
    bench.device = SimDevice::new(SimDeviceConfig {
        protocol_version: 1,
        ..SimDeviceConfig::default()
    });
    bench.send(HostMessage::OutputQuery);
    bench.wait_ms(20);
    assert!(bench.acks().is_empty());
    assert!(outputs(&bench).is_empty());
    assert_eq!(bench.last_status().map(|s| s.bad_lines), Some(1));
}

fn readings_heard(bench: &Bench) -> Vec<Vec<u16>> {
    bench
        .heard
        .iter()
        .filter_map(|line| match line.message {
            DeviceMessage::Analog(values) => Some(values.as_slice().to_vec()),
            _ => None,
        })
        .collect()
}

#[test]
fn readings_play_a_recording_at_the_rate_asked_until_turned_off() {
    let recording = ReadingsRecording::parse(
        "0 100 200 300
0.1 400 500 600
",
    )
    .expect("a recording");
    let mut bench = Bench::new();
    bench.device = SimDevice::new(SimDeviceConfig::default())
        .with_readings(ReadingsSource::Recorded(recording));
    // Nothing until asked.
    bench.wait_ms(50);
    assert!(readings_heard(&bench).is_empty());
    let ask = bench.send(HostMessage::ReadingsRate { rate_hz: 40 });
    bench.wait_ms(1);
    assert!(
        bench
            .acks()
            .iter()
            .any(|a| a.acked_seq == ask && a.outcome == AckOutcome::Accepted)
    );
    // Asked at 50 ms: lines at 51, 76, 101, 126, 151, 176 ms — one every 25 ms from the line
    // that acted on the rate (the clock moves in 1 ms steps).
    bench.wait_ms(129);
    let heard = readings_heard(&bench);
    assert_eq!(heard.len(), 6, "{heard:?}");
    // The recording's first row holds until 0.1 s, the second after; then it repeats (one
    // pass is 0.2 s).
    assert_eq!(heard[0], [100, 200, 300]);
    assert_eq!(heard[1], [100, 200, 300]);
    assert_eq!(heard[2], [400, 500, 600]);
    assert_eq!(heard[5], [400, 500, 600]);
    // Readings go on in every mode, a latched stop included; a greeting turns them off.
    bench.send(HostMessage::EmergencyStop);
    bench.wait_ms(100);
    assert_eq!(readings_heard(&bench).len(), 10);
    bench.send(HostMessage::Greeting {
        protocol_version: 3,
    });
    bench.wait_ms(100);
    assert_eq!(readings_heard(&bench).len(), 10);
    assert_eq!(bench.device.readings_rate_hz(), 0);
}

#[test]
fn a_device_held_up_sends_the_newest_readings_line_not_a_burst() {
    let mut bench = Bench::new();
    bench.device =
        SimDevice::new(SimDeviceConfig::default()).with_readings(ReadingsSource::Scripted {
            inputs: 2,
            period: Duration::from_secs(8),
        });
    bench.send(HostMessage::ReadingsRate { rate_hz: 100 });
    bench.wait_ms(1);
    let before = readings_heard(&bench).len();
    // 300 ms pass in one step (a host or thread held up).
    bench.now_ms += 300;
    let now = bench.now();
    bench.device.advance(now);
    bench.collect();
    assert_eq!(readings_heard(&bench).len(), before + 1);
    assert_eq!(
        readings_heard(&bench).last().cloned(),
        bench.device.readings().map(|r| r.as_slice().to_vec())
    );
}

#[test]
fn an_older_device_counts_the_readings_rate_as_a_bad_line() {
    let mut bench = Bench::new();
    bench.device = SimDevice::new(SimDeviceConfig {
        protocol_version: 2,
        ..SimDeviceConfig::default()
    })
    .with_readings(ReadingsSource::Scripted {
        inputs: 1,
        period: Duration::from_secs(1),
    });
    bench.send(HostMessage::ReadingsRate { rate_hz: 10 });
    bench.wait_ms(200);
    assert!(bench.acks().is_empty());
    assert!(readings_heard(&bench).is_empty());
    assert_eq!(bench.last_status().map(|s| s.bad_lines), Some(1));
}

#[test]
fn a_device_without_inputs_acknowledges_the_rate_and_sends_nothing() {
    let mut bench = Bench::new();
    let ask = bench.send(HostMessage::ReadingsRate { rate_hz: 50 });
    bench.wait_ms(100);
    assert!(bench.acks().iter().any(|a| a.acked_seq == ask));
    assert!(readings_heard(&bench).is_empty());
}

/// Sends one line and lets the device act on it at once (the clock does not move), as a
/// host that waits for each acknowledgement.
fn send_now(bench: &mut Bench, message: HostMessage) -> u8 {
    let seq = bench.send(message);
    let now = bench.now();
    bench.device.advance(now);
    bench.collect();
    seq
}

/// Planned frame `i`: channel 0 at 1000 + 10 i µs (each frame told apart), channel 2 limp in
/// the first `limp` frames, the rest at 1500 µs.
fn planned(i: u16, limp: u16) -> ChannelOutput {
    let mut frame = [Some(1500); 7];
    frame[0] = Some(1000 + 10 * i);
    if i < limp {
        frame[2] = None;
    }
    ChannelOutput::from_slice(&frame).expect("seven")
}

#[test]
fn planned_setpoints_play_one_a_frame_in_order_and_hold_the_last() {
    let mut bench = Bench::new();
    bench.wait_ms(5);
    for i in 0..20 {
        send_now(&mut bench, HostMessage::Planned(planned(i, 5)));
    }
    bench.wait_ms(1);
    assert_eq!(bench.device.planned_waiting(), 20);
    // The room is never more than the play queue's free entries: here the input queue's 4.
    assert!(bench.acks().iter().all(|ack| ack.room <= 4));
    let mut seen = Vec::new();
    for _ in 0..25 {
        bench.wait_ms(20);
        seen.push(bench.device.output());
    }
    // Frames start at 20, 40, …: the first planned frame at 20 ms, then one a frame.
    for (i, output) in seen.iter().take(20).enumerate() {
        assert_eq!(*output, planned(i as u16, 5), "frame {i}");
    }
    assert!(seen[20..].iter().all(|output| *output == planned(19, 5)));
    assert_eq!(bench.device.mode(), DeviceMode::Driving);
}

#[test]
fn the_watchdog_counts_from_when_the_play_queue_runs_dry() {
    let mut bench = Bench::new();
    bench.wait_ms(5);
    for i in 0..30 {
        send_now(&mut bench, HostMessage::Planned(planned(i, 0)));
    }
    // 30 frames from 20 ms: the last is taken at 600 ms; the watchdog trips 250 ms later,
    // although the host said nothing since 5 ms.
    bench.wait_ms(595 + 240);
    assert_eq!(bench.device.mode(), DeviceMode::Driving);
    assert_eq!(bench.device.status().watchdog_trips, 0);
    bench.wait_ms(20);
    assert_eq!(bench.device.mode(), DeviceMode::Keeping);
    assert_eq!(bench.device.status().watchdog_trips, 1);
    assert_eq!(bench.device.output(), planned(29, 0));
}

#[test]
fn a_stop_a_hold_or_a_setpoint_drops_the_planned_frames() {
    for (name, message) in [
        ("stop", HostMessage::EmergencyStop),
        ("hold", HostMessage::Hold),
        ("setpoint", setpoint(&MID)),
    ] {
        let mut bench = Bench::new();
        bench.wait_ms(5);
        for i in 0..20 {
            send_now(&mut bench, HostMessage::Planned(planned(i, 0)));
        }
        bench.wait_ms(45); // frames at 20 and 40 ms played planned 0 and 1
        bench.send(message);
        bench.wait_ms(1);
        assert_eq!(bench.device.planned_waiting(), 0, "{name}");
        bench.wait_ms(100);
        let expected = if name == "setpoint" {
            ChannelOutput::driven(&ChannelValues::from_slice(&MID).expect("seven"))
        } else {
            planned(1, 0)
        };
        assert_eq!(bench.device.output(), expected, "{name}");
    }
}

#[test]
fn a_full_play_queue_gives_no_room_and_an_older_device_refuses_planned_lines() {
    let mut bench = Bench::new();
    bench.wait_ms(5);
    for i in 0..64 {
        send_now(&mut bench, HostMessage::Planned(planned(i, 0)));
        bench.wait_ms(0);
        let now = bench.now();
        bench.device.advance(now);
        bench.collect();
    }
    assert_eq!(bench.device.planned_waiting(), 64);
    assert_eq!(bench.acks().last().map(|ack| ack.room), Some(0));
    // A heartbeat still goes through and is answered with the room, 0 until a frame plays.
    let beat = bench.send(HostMessage::Heartbeat);
    bench.wait_ms(1);
    assert!(
        bench
            .acks()
            .iter()
            .any(|ack| ack.acked_seq == beat && ack.room == 0)
    );
    // One more planned line breaks flow control: counted, not queued, not acknowledged.
    let extra = bench.send(HostMessage::Planned(planned(0, 0)));
    bench.wait_ms(1);
    assert!(bench.acks().iter().all(|ack| ack.acked_seq != extra));
    assert!(bench.device.status().faults.contains(Faults::OVERFLOW));
    bench.wait_ms(20);
    let beat = bench.send(HostMessage::Heartbeat);
    bench.wait_ms(1);
    assert!(
        bench
            .acks()
            .iter()
            .any(|ack| ack.acked_seq == beat && ack.room == 1)
    );

    let mut old = SimDevice::new(SimDeviceConfig {
        protocol_version: 3,
        ..SimDeviceConfig::default()
    });
    let line = HostLine {
        seq: 1,
        message: HostMessage::Planned(planned(0, 0)),
    }
    .encode();
    old.receive(line.as_bytes(), Duration::from_millis(1));
    old.advance(Duration::from_millis(50));
    assert_eq!(old.status().bad_lines, 1);
    assert_eq!(old.mode(), DeviceMode::Limp);
}
