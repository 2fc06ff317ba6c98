//! The emergency-stop path against the in-process simulated device: out within 2 ms when
//! idle, before the next setpoint when streaming, queued setpoints dropped, repeated until
//! acknowledged, and no streaming again until a confirmed reset.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

mod common;

use std::time::{Duration, Instant};

use armwright_link::{
    DeviceMode, HostMessage, Link, LinkError, LinkEvent, LinkState, ResetConfirmation,
    SimDeviceConfig, SimTransport, StreamOptions,
};
use common::{Faults, Recorder, sweep, wait_for, wait_until};

#[test]
fn idle_stop_goes_out_within_2_ms() {
    let mut latencies = Vec::new();
    for _ in 0..5 {
        let sim = SimTransport::new(SimDeviceConfig::default());
        let device = sim.device();
        let (recorder, log) = Recorder::new(sim, Faults::default());
        let link = Link::connect(Box::new(recorder), StreamOptions::default()).expect("connects");
        std::thread::sleep(Duration::from_millis(20));
        let pressed = Instant::now();
        link.emergency_stop().trigger();
        wait_for(&link, Duration::from_secs(1), |e| {
            matches!(e, LinkEvent::StopConfirmed { .. })
        });
        let written = log
            .lock()
            .expect("log")
            .iter()
            .find(|w| w.at >= pressed)
            .map(|w| (w.at, w.line.message))
            .expect("a line after the press");
        assert_eq!(
            written.1,
            HostMessage::EmergencyStop,
            "the stop is the first line"
        );
        latencies.push(written.0 - pressed);
        assert_eq!(device.lock().expect("device").mode(), DeviceMode::Stopped);
        assert_eq!(link.stats().state, LinkState::Stopped);
    }
    latencies.sort();
    // Median of five, so one scheduler hiccup on a shared machine does not decide it.
    assert!(latencies[2] < Duration::from_millis(2), "{latencies:?}");
    assert!(latencies[4] < Duration::from_millis(20), "{latencies:?}");
}

#[test]
fn stop_while_streaming_overtakes_the_queue_and_latches_until_a_confirmed_reset() {
    let sim = SimTransport::new(SimDeviceConfig::default());
    let device = sim.device();
    let (recorder, log) = Recorder::new(sim, Faults::default());
    let link = Link::connect(Box::new(recorder), StreamOptions::default()).expect("connects");
    link.start_stream().expect("streams");
    for step in 0..40 {
        link.push_setpoint(sweep(step)).expect("queued");
    }
    // Stop part way: once ten setpoints are out, thirty still queued.
    wait_until("ten setpoints sent", Duration::from_secs(10), || {
        link.stats().frames_sent >= 10
    });
    let pressed = Instant::now();
    link.emergency_stop().trigger();
    wait_for(&link, Duration::from_secs(1), |e| {
        matches!(e, LinkEvent::StopConfirmed { .. })
    });
    let held = device.lock().expect("device").pulse_units();
    // The device runs five more pulse frames: whatever the host had left to send in that
    // time would have reached it (this is about the device's time passing, measured by the
    // device's own frame count rather than a sleep).
    let frames = device.lock().expect("device").frames_started();
    wait_until("five more device frames", Duration::from_secs(10), || {
        device.lock().expect("device").frames_started() >= frames + 5
    });

    // The stop overtook the queue: no setpoint after it. (How soon it goes out is the idle
    // test's business; here the link's thread may be held up by a busy machine.)
    let log = log.lock().expect("log").clone();
    let setpoints: Vec<_> = log
        .iter()
        .filter(|w| matches!(w.line.message, HostMessage::Setpoint(_)))
        .collect();
    let stop = log
        .iter()
        .find(|w| w.line.message == HostMessage::EmergencyStop)
        .expect("a stop line");
    assert!(stop.at >= pressed);
    assert!(setpoints.iter().all(|w| w.at < stop.at));
    let stats = link.stats();
    assert_eq!(
        stats.frames_dropped + stats.frames_sent,
        40,
        "every queued setpoint was either sent before the stop or dropped: {stats:?}"
    );
    assert!(stats.frames_dropped > 20);

    // The device holds and the host refuses to stream.
    assert_eq!(device.lock().expect("device").mode(), DeviceMode::Stopped);
    assert_eq!(device.lock().expect("device").pulse_units(), held);
    assert_eq!(link.start_stream(), Err(LinkError::StopLatched));
    assert_eq!(link.push_setpoint(sweep(0)), Err(LinkError::StopLatched));

    // A confirmed reset clears it: the device keeps holding, and streaming works again.
    link.reset_after_stop(ResetConfirmation::confirmed_by_person())
        .expect("device acknowledges the reset");
    assert_eq!(device.lock().expect("device").mode(), DeviceMode::Keeping);
    link.start_stream().expect("streams after the reset");
    link.push_setpoint(sweep(3)).expect("queued");
    link.finish_stream().expect("alive");
    wait_for(&link, Duration::from_secs(1), |e| {
        matches!(e, LinkEvent::StreamFinished { .. })
    });
    // The device starts the setpoint at its next pulse frame.
    wait_until("the setpoint output", Duration::from_secs(10), || {
        device.lock().expect("device").pulse_units() == Some(sweep(3))
    });
}

#[test]
fn an_unacknowledged_stop_is_repeated_until_the_device_answers() {
    let sim = SimTransport::new(SimDeviceConfig::default());
    let device = sim.device();
    let (recorder, log) = Recorder::new(
        sim,
        Faults {
            swallow_stops: 2,
            ..Faults::default()
        },
    );
    let link = Link::connect(Box::new(recorder), StreamOptions::default()).expect("connects");
    link.emergency_stop().trigger();
    let LinkEvent::StopConfirmed { after } = wait_for(&link, Duration::from_secs(1), |e| {
        matches!(e, LinkEvent::StopConfirmed { .. })
    }) else {
        unreachable!()
    };
    let stops: Vec<_> = log
        .lock()
        .expect("log")
        .iter()
        .filter(|w| w.line.message == HostMessage::EmergencyStop)
        .map(|w| (w.at, w.delivered))
        .collect();
    assert_eq!(stops.len(), 3, "two swallowed, the third delivered");
    assert_eq!(stops.iter().filter(|s| s.1).count(), 1);
    // Repeated every 20 ms.
    let gap = stops[2].0 - stops[1].0;
    assert!(
        gap >= Duration::from_millis(20) && gap < Duration::from_millis(30),
        "{gap:?}"
    );
    assert!(after >= Duration::from_millis(40));
    assert_eq!(device.lock().expect("device").mode(), DeviceMode::Stopped);
}

#[test]
fn reset_while_streaming_is_refused_and_on_an_idle_link_clears_sticky_faults() {
    let sim = SimTransport::new(SimDeviceConfig::default());
    let device = sim.device();
    let link = Link::connect(Box::new(sim), StreamOptions::default()).expect("connects");
    link.start_stream().expect("streams");
    assert_eq!(
        link.reset_after_stop(ResetConfirmation::confirmed_by_person()),
        Err(LinkError::AlreadyStreaming)
    );
    // A clamped value sets a sticky fault bit.
    link.push_setpoint(armwright_link::ChannelValues::from_slice(&[9000; 7]).expect("seven"))
        .expect("queued");
    link.finish_stream().expect("alive");
    wait_for(&link, Duration::from_secs(1), |e| {
        matches!(e, LinkEvent::StreamFinished { .. })
    });
    let before = link.refresh_state().expect("state").status;
    assert!(before.faults.contains(armwright_link::Faults::CLAMPED));
    link.reset_after_stop(ResetConfirmation::confirmed_by_person())
        .expect("an idle link may clear the sticky faults");
    let after = link.refresh_state().expect("state").status;
    assert_eq!(after.faults.0, 0);
    assert_eq!(after.mode, DeviceMode::Keeping);
    assert_eq!(device.lock().expect("device").mode(), DeviceMode::Keeping);
}
