//! The streaming thread against the in-process simulated device: greeting, a stream on a
//! fixed schedule with flow control, statistics, the device's state read at connect, late
//! acknowledgements tolerated, and a silent device noticed within 300 ms.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

mod common;

use std::sync::atomic::Ordering;
use std::sync::{Arc, Mutex};
use std::time::{Duration, Instant};

use armwright_link::{
    ChannelValues, DeviceMode, HostMessage, Link, LinkError, LinkEvent, LinkLoss, LinkState,
    ResetConfirmation, SimDevice, SimDeviceConfig, SimTransport, StreamOptions,
};
use common::{Faults, Recorder, Written, sweep, wait_for, wait_until};

type Log = Arc<Mutex<Vec<Written>>>;

fn connect(faults: Faults) -> (Link, Arc<Mutex<SimDevice>>, Log) {
    let sim = SimTransport::new(SimDeviceConfig::default());
    let device = sim.device();
    let (recorder, log) = Recorder::new(sim, faults);
    let link = Link::connect(Box::new(recorder), StreamOptions::default()).expect("connects");
    (link, device, log)
}

#[test]
fn connect_reads_the_device_description() {
    let (link, _, _) = connect(Faults::default());
    assert_eq!(link.device().channel_count, 7);
    assert_eq!(link.device().frame_period_us, 20_000);
    assert_eq!(link.stats().state, LinkState::Idle);
}

#[test]
fn a_stream_runs_on_its_schedule_and_reaches_the_device() {
    let (link, device, log) = connect(Faults::default());
    link.start_stream().expect("idle link streams");
    let frames = 60;
    for step in 0..frames {
        link.push_setpoint(sweep(step)).expect("queued");
    }
    link.finish_stream().expect("thread alive");
    let event = wait_for(&link, Duration::from_secs(3), |e| {
        matches!(e, LinkEvent::StreamFinished { .. })
    });
    assert_eq!(event, LinkEvent::StreamFinished { frames_sent: 60 });
    wait_until("the last acknowledgement", Duration::from_secs(10), || {
        link.stats().frames_acked == 60
    });
    let stats = link.stats();
    assert_eq!(stats.state, LinkState::Idle);
    assert_eq!((stats.frames_sent, stats.frames_acked), (60, 60));
    assert_eq!(stats.frames_dropped, 0);
    // The device ends on the last setpoint (it starts it at its next pulse frame).
    wait_until("the last setpoint output", Duration::from_secs(10), || {
        device.lock().expect("device").pulse_units() == Some(sweep(frames - 1))
    });
    // No drift: setpoint k is due at start + k × 10 ms. A write may be late on a busy
    // machine, but the next ones return to the schedule, so lateness does not add up and
    // the typical write is late by less than a period; a schedule that slept a period after
    // each write would fall further behind each time (by the 60th write, dozens of ms).
    let sent: Vec<Instant> = log
        .lock()
        .expect("log")
        .iter()
        .filter(|w| matches!(w.line.message, HostMessage::Setpoint(_)))
        .map(|w| w.at)
        .collect();
    // The schedule's start as the writes imply it: the earliest of write k − k × 10 ms
    // (the recorder stamps a write a little after the thread decided on it).
    let period = Duration::from_millis(10);
    let start = sent
        .iter()
        .enumerate()
        .map(|(k, &at)| at - period * k as u32)
        .min()
        .expect("60 writes");
    let lateness: Vec<Duration> = sent
        .iter()
        .enumerate()
        .map(|(k, &at)| at - (start + period * k as u32))
        .collect();
    let mut sorted = lateness.clone();
    sorted.sort();
    let median = sorted[sorted.len() / 2];
    assert!(median < period, "median lateness {median:?}: {lateness:?}");
    assert!(
        stats.jitter_mean <= stats.jitter_max
            && stats.jitter_p99 <= stats.jitter_max + Duration::from_micros(10)
    );
}

#[test]
fn setpoints_outside_a_stream_are_refused() {
    let (link, _, _) = connect(Faults::default());
    assert_eq!(link.push_setpoint(sweep(0)), Err(LinkError::NotStreaming));
    link.start_stream().expect("streams");
    link.push_setpoint(sweep(1)).expect("queued");
    link.finish_stream().expect("alive");
    wait_for(&link, Duration::from_secs(1), |e| {
        matches!(e, LinkEvent::StreamFinished { frames_sent: 1 })
    });
    assert_eq!(link.push_setpoint(sweep(2)), Err(LinkError::NotStreaming));
}

#[test]
fn setpoints_with_the_wrong_channel_count_are_refused() {
    let (link, _, _) = connect(Faults::default());
    let six = ChannelValues::from_slice(&[1500; 6]).expect("six values");
    assert_eq!(
        link.push_setpoint(six),
        Err(LinkError::WrongChannelCount {
            expected: 7,
            got: 6
        })
    );
}

#[test]
fn an_idle_link_sends_heartbeats() {
    let (link, _, log) = connect(Faults::default());
    let beats = || -> Vec<Instant> {
        log.lock()
            .expect("log")
            .iter()
            .filter(|w| w.line.message == HostMessage::Heartbeat)
            .map(|w| w.at)
            .collect()
    };
    // One asks for the device's state at connect; then one every 100 ms.
    wait_until("four heartbeats", Duration::from_secs(10), || {
        beats().len() >= 4
    });
    let beats = beats();
    for pair in beats.windows(2) {
        let gap = pair[1] - pair[0];
        // Never more often than the interval (the idle thread sleeps between them); the
        // upper end is the device's watchdog time, which a heartbeat must beat.
        assert!(
            gap >= Duration::from_millis(99),
            "{gap:?} between heartbeats"
        );
        assert!(
            gap < Duration::from_millis(250),
            "{gap:?} between heartbeats"
        );
    }
    assert!(
        link.stats().last_status.is_some(),
        "heartbeats bring status lines"
    );
}

#[test]
fn a_failed_write_stops_the_stream_within_100_ms() {
    let (link, _, log) = connect(Faults {
        fail_writes_after: Some(20),
        ..Faults::default()
    });
    link.start_stream().expect("streams");
    let pusher = std::thread::spawn(move || {
        for step in 0..100 {
            if link.push_setpoint(sweep(step)).is_err() {
                return link;
            }
        }
        link
    });
    let link = pusher.join().expect("pusher");
    let last_good = log
        .lock()
        .expect("log")
        .last()
        .map(|w| w.at)
        .expect("writes");
    let event = wait_for(&link, Duration::from_secs(1), |e| {
        matches!(e, LinkEvent::Lost(_))
    });
    let reported = Instant::now();
    assert_eq!(
        event,
        LinkEvent::Lost(LinkLoss::WriteFailed {
            kind: std::io::ErrorKind::BrokenPipe
        })
    );
    assert!(reported - last_good < Duration::from_millis(100));
    assert_eq!(link.stats().state, LinkState::Lost);
    assert!(matches!(link.start_stream(), Err(LinkError::Lost(_))));
}

#[test]
fn a_silent_device_is_noticed_within_300_ms_and_asked_to_hold() {
    let sim = SimTransport::new(SimDeviceConfig::default());
    let (recorder, log) = Recorder::new(sim, Faults::default());
    let control = Arc::clone(&recorder.control);
    let link = Link::connect(Box::new(recorder), StreamOptions::default()).expect("connects");
    link.start_stream().expect("streams");
    for step in 0..60 {
        if step == 10 {
            // The device stops for good (as a process stopped by SIGSTOP).
            control.paused.store(true, Ordering::SeqCst);
        }
        if link.push_setpoint(sweep(step)).is_err() {
            break;
        }
    }
    let event = wait_for(&link, Duration::from_secs(2), |e| {
        matches!(e, LinkEvent::Lost(_))
    });
    let LinkEvent::Lost(LinkLoss::NoAck { waited, silent, .. }) = event else {
        panic!("expected a missing acknowledgement, got {event:?}");
    };
    // The device's watchdog time, measured by the link thread at the moment it gave up:
    // not before the device could have tripped, and within 300 ms of its last answer.
    assert!(silent > Duration::from_millis(250), "{silent:?}");
    assert!(silent <= Duration::from_millis(300), "{silent:?}");
    assert!(waited > Duration::from_millis(250), "{waited:?}");
    let log = log.lock().expect("log");
    let last = log.last().expect("writes");
    assert_eq!(
        last.line.message,
        HostMessage::Hold,
        "a hold after the loss"
    );
}

#[test]
fn a_device_silent_while_it_plays_its_queue_is_noticed_then_given_up_when_it_would_trip() {
    let sim = SimTransport::new(SimDeviceConfig::default());
    let (recorder, _log) = Recorder::new(sim, Faults::default());
    let control = Arc::clone(&recorder.control);
    // At the device's 20 ms frame, sent 1 s ahead as planned setpoints (`PROTOCOL.md` §3).
    let link = Link::connect(Box::new(recorder), playing_ahead()).expect("connects");
    assert!(link.plays_ahead());
    link.start_stream().expect("streams");
    for step in 0..300 {
        link.push_setpoint(sweep(step)).expect("queued");
    }
    wait_until(
        "a second of setpoints acknowledged",
        Duration::from_secs(10),
        || link.stats().frames_acked >= 50,
    );
    // The device stops answering (as a process stopped by SIGSTOP) holding about a second
    // of setpoints: a real one would play them, then its watchdog would hold the arm.
    control.paused.store(true, Ordering::SeqCst);
    let event = wait_for(&link, Duration::from_secs(10), |e| {
        matches!(e, LinkEvent::Lost(_))
    });
    let LinkEvent::Lost(LinkLoss::NoAck { silent, .. }) = event else {
        panic!("expected a missing acknowledgement, got {event:?}");
    };
    let stats = link.stats();
    // Noticed within 300 ms of its last answer (not before its watchdog time) ...
    assert_eq!(stats.device_quiet, 1);
    let noticed = stats
        .device_quiet_noticed_after
        .expect("the silence was noticed");
    assert!(noticed > Duration::from_millis(250), "{noticed:?}");
    assert!(noticed <= Duration::from_millis(300), "{noticed:?}");
    // ... and given up when the setpoints it held (at least half a second of them, at most
    // its 64-entry queue's 1.28 s) had played and the watchdog's 250 ms had passed.
    assert!(silent > Duration::from_millis(750), "{silent:?}");
    assert!(silent <= Duration::from_millis(1650), "{silent:?}");
}

#[test]
fn device_pauses_of_100_ms_do_not_end_a_stream_and_count_as_late() {
    let sim = SimTransport::new(SimDeviceConfig::default());
    let (recorder, _log) = Recorder::new(sim, Faults::default());
    let control = Arc::clone(&recorder.control);
    let link = Link::connect(Box::new(recorder), StreamOptions::default()).expect("connects");
    link.start_stream().expect("streams");
    let frames = 400u32; // 4 s at 100 Hz
    std::thread::scope(|scope| {
        scope.spawn(|| {
            for _ in 0..5 {
                // Between pauses the device answers again: ten more acknowledgements.
                let acked = link.stats().frames_acked;
                wait_until("the stream going on", Duration::from_secs(10), || {
                    link.stats().frames_acked >= acked + 10
                });
                control.paused.store(true, Ordering::SeqCst);
                // The pause itself: the device is away this long, which is what is tested.
                std::thread::sleep(Duration::from_millis(100));
                control.paused.store(false, Ordering::SeqCst);
            }
        });
        for step in 0..frames {
            link.push_setpoint(sweep(step))
                .expect("the pauses do not end the stream");
        }
        link.finish_stream().expect("alive");
    });
    let event = wait_for(&link, Duration::from_secs(10), |e| {
        matches!(e, LinkEvent::StreamFinished { .. } | LinkEvent::Lost(_))
    });
    assert_eq!(event, LinkEvent::StreamFinished { frames_sent: 400 });
    let stats = link.stats();
    assert!(stats.acks_late >= 5, "{stats:?}");
    assert!(stats.ack_wait_max >= Duration::from_millis(80), "{stats:?}");
    assert!(stats.loss.is_none());
}

#[test]
fn connect_reads_what_the_device_sends_and_a_refresh_reads_it_again() {
    let (link, _, _) = connect(Faults::default());
    let output = link.device_output().expect("a protocol 2 device says");
    assert_eq!(output.as_slice(), [None; 7], "limp at power-up");
    assert_eq!(link.device_status().map(|s| s.mode), Some(DeviceMode::Limp));
    link.start_stream().expect("streams");
    for step in 0..5 {
        link.push_setpoint(sweep(step)).expect("queued");
    }
    link.finish_stream().expect("alive");
    wait_for(&link, Duration::from_secs(2), |e| {
        matches!(e, LinkEvent::StreamFinished { .. })
    });
    // The last setpoint starts at the device's next frame (at most 20 ms on).
    let until = Instant::now() + Duration::from_secs(2);
    loop {
        let state = link.refresh_state().expect("answers");
        if state.output.and_then(|o| o.pulses()) == Some(sweep(4)) {
            assert_eq!(state.status.mode, DeviceMode::Driving);
            break;
        }
        assert!(Instant::now() < until, "output stays {:?}", state.output);
    }
}

#[test]
fn a_protocol_1_device_is_still_served_without_output() {
    let sim = SimTransport::new(SimDeviceConfig {
        protocol_version: 1,
        ..SimDeviceConfig::default()
    });
    let device = sim.device();
    let link = Link::connect(Box::new(sim), StreamOptions::default()).expect("connects");
    assert_eq!(link.device().protocol_version, 1);
    assert_eq!(link.device_output(), None);
    assert!(link.device_status().is_some());
    link.start_stream().expect("streams");
    link.push_setpoint(sweep(1)).expect("queued");
    link.finish_stream().expect("alive");
    wait_for(&link, Duration::from_secs(2), |e| {
        matches!(e, LinkEvent::StreamFinished { frames_sent: 1 })
    });
    assert_eq!(device.lock().expect("device").status().bad_lines, 0);
}

#[test]
fn a_stop_latched_before_connect_is_found_and_needs_a_reset() {
    let sim = SimTransport::new(SimDeviceConfig::default());
    {
        let device = sim.device();
        let mut device = device.lock().expect("device");
        device.receive(b"x05/DE56\n", Duration::ZERO);
        device.advance(Duration::ZERO);
    }
    let link = Link::connect(Box::new(sim), StreamOptions::default()).expect("connects");
    assert_eq!(link.stats().state, LinkState::Stopped);
    assert_eq!(link.start_stream(), Err(LinkError::StopLatched));
    link.reset_after_stop(ResetConfirmation::confirmed_by_person())
        .expect("reset taken");
    let state = link.refresh_state().expect("answers");
    assert_eq!(
        state.status.mode,
        DeviceMode::Limp,
        "it was limp when stopped"
    );
    link.start_stream().expect("streams after the reset");
    link.push_setpoint(sweep(2)).expect("queued");
    link.finish_stream().expect("alive");
    wait_for(&link, Duration::from_secs(2), |e| {
        matches!(e, LinkEvent::StreamFinished { frames_sent: 1 })
    });
}

#[test]
fn a_watchdog_trip_before_connect_does_not_end_the_next_stream() {
    let sim = SimTransport::new(SimDeviceConfig::default());
    let second = sim.share();
    let device = sim.device();
    let (recorder, _) = Recorder::new(sim, Faults::default());
    let control = Arc::clone(&recorder.control);
    let first = Link::connect(Box::new(recorder), StreamOptions::default()).expect("connects");
    first.start_stream().expect("streams");
    for step in 0..10 {
        first.push_setpoint(sweep(step)).expect("queued");
    }
    let until = Instant::now() + Duration::from_secs(2);
    while device.lock().expect("device").mode() != DeviceMode::Driving {
        assert!(Instant::now() < until, "the device never drove");
        std::thread::sleep(Duration::from_millis(2));
    }
    // The cable goes dead mid-stream: the device trips its watchdog.
    control.muted.store(true, Ordering::SeqCst);
    wait_for(&first, Duration::from_secs(2), |e| {
        matches!(e, LinkEvent::Lost(_))
    });
    let until = Instant::now() + Duration::from_secs(2);
    while device.lock().expect("device").status().watchdog_trips == 0 {
        assert!(Instant::now() < until, "the device never tripped");
        std::thread::sleep(Duration::from_millis(5));
    }
    drop(first);
    let link = Link::connect(Box::new(second), StreamOptions::default()).expect("connects");
    let status = link.device_status().expect("read at connect");
    assert_eq!(status.watchdog_trips, 1);
    assert_eq!(status.mode, DeviceMode::Keeping);
    link.start_stream().expect("a trip is not a latched stop");
    for step in 0..20 {
        link.push_setpoint(sweep(step)).expect("queued");
    }
    link.finish_stream().expect("alive");
    let event = wait_for(&link, Duration::from_secs(3), |e| {
        matches!(e, LinkEvent::StreamFinished { .. } | LinkEvent::Lost(_))
    });
    assert_eq!(event, LinkEvent::StreamFinished { frames_sent: 20 });
}

#[test]
fn a_device_stop_the_host_did_not_send_ends_the_stream() {
    let (link, device, _) = connect(Faults::default());
    link.start_stream().expect("streams");
    for step in 0..5 {
        link.push_setpoint(sweep(step)).expect("queued");
    }
    wait_until("the device driving", Duration::from_secs(10), || {
        device.lock().expect("device").mode() == DeviceMode::Driving
    });
    // Someone else latches the device's stop (a second host, a button on the device).
    let injected = Instant::now();
    {
        let mut device = device.lock().expect("device");
        let now = device.clock();
        device.receive(b"x05/DE56\n", now);
    }
    let event = wait_for(&link, Duration::from_secs(1), |e| {
        matches!(e, LinkEvent::Lost(_))
    });
    assert!(matches!(
        event,
        LinkEvent::Lost(LinkLoss::DeviceFault { .. })
    ));
    assert!(injected.elapsed() < Duration::from_millis(100));
}

/// A link at the device's 20 ms frame that sends streams 1 s ahead, and its device.
fn connect_playing_ahead() -> (Link, Arc<Mutex<SimDevice>>, Log) {
    let sim = SimTransport::new(SimDeviceConfig::default());
    let device = sim.device();
    let (recorder, log) = Recorder::new(sim, Faults::default());
    let link = Link::connect(Box::new(recorder), playing_ahead()).expect("connects");
    assert!(link.plays_ahead());
    (link, device, log)
}

/// Streams at the device's 20 ms frame, sent 1 s ahead as planned setpoints.
fn playing_ahead() -> StreamOptions {
    StreamOptions {
        period: Duration::from_millis(20),
        play_ahead: Duration::from_secs(1),
        ..StreamOptions::default()
    }
}

#[test]
fn a_halt_drops_the_setpoints_sent_ahead_and_the_device_holds_at_once() {
    let (link, device, log) = connect_playing_ahead();
    link.start_stream().expect("streams");
    std::thread::scope(|scope| {
        scope.spawn(|| {
            for step in 0..300 {
                if link.push_setpoint(sweep(step)).is_err() {
                    // Halted: the stream is over.
                    return;
                }
            }
        });
        wait_until("ten frames played", Duration::from_secs(10), || {
            let device = device.lock().expect("device");
            device.frames_started() > 10 && device.planned_waiting() > 20
        });
        link.halt_stream().expect("halted");
    });
    // The hold was acknowledged before `halt_stream` returned: the device has nothing left to
    // play and keeps the frame it was sending, frame after frame.
    let (held, since, frames) = {
        let device = device.lock().expect("device");
        assert_eq!(device.planned_waiting(), 0);
        assert_eq!(device.mode(), DeviceMode::Keeping);
        (
            device.output(),
            device.output_since(),
            device.frames_started(),
        )
    };
    let stats = link.stats();
    assert_eq!(stats.state, LinkState::Idle);
    assert!(stats.frames_sent < 300, "{} sent", stats.frames_sent);
    wait_until("ten more pulse frames", Duration::from_secs(10), || {
        device.lock().expect("device").frames_started() > frames + 10
    });
    let device_now = device.lock().expect("device").output();
    assert_eq!(device_now, held);
    assert_eq!(device.lock().expect("device").output_since(), since);
    assert_eq!(link.refresh_state().expect("state").output, Some(held));
    assert!(
        log.lock()
            .expect("log")
            .iter()
            .any(|written| written.line.message == HostMessage::Hold)
    );
    // No stream-finished event: the stream was halted, not run out. A new stream starts.
    assert!(!matches!(
        link.next_event(Duration::ZERO),
        Some(LinkEvent::StreamFinished { .. })
    ));
    link.start_stream().expect("streams again");
}

#[test]
fn a_live_stream_goes_out_in_real_time_on_a_link_that_plays_ahead() {
    let (link, device, log) = connect_playing_ahead();
    link.start_live_stream().expect("streams");
    // A frame with a limp channel needs planned setpoints: refused in a live stream.
    let mut limp = [Some(1500u16); 7];
    limp[3] = None;
    let limp = armwright_link::ChannelOutput::from_slice(&limp).expect("seven channels");
    assert_eq!(link.push_frame(limp), Err(LinkError::NoPlayAhead));
    link.push_setpoint(sweep(1)).expect("queued");
    link.finish_stream().expect("alive");
    wait_for(&link, Duration::from_secs(10), |e| {
        matches!(e, LinkEvent::StreamFinished { .. })
    });
    assert!(log.lock().expect("log").iter().any(|written| matches!(
        written.line.message,
        HostMessage::Setpoint(values) if values == sweep(1)
    )));
    assert!(
        !log.lock()
            .expect("log")
            .iter()
            .any(|written| matches!(written.line.message, HostMessage::Planned(_)))
    );
    wait_until("the setpoint sent", Duration::from_secs(10), || {
        device.lock().expect("device").pulse_units() == Some(sweep(1))
    });
    // The next stream plays ahead again, and takes a limp channel.
    link.start_stream().expect("streams");
    link.push_frame(limp).expect("planned");
}
