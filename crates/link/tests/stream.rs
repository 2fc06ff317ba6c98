//! The streaming thread against the in-process simulated device: greeting, a stream on a
//! fixed schedule with flow control, statistics, and loss of link reported within 100 ms.

mod common;

use std::sync::{Arc, Mutex};
use std::time::{Duration, Instant};

use armwright_link::{
    ChannelValues, HostMessage, Link, LinkError, LinkEvent, LinkLoss, LinkState, SimDevice,
    SimDeviceConfig, SimTransport, StreamOptions,
};
use common::{Faults, Recorder, Written, sweep, wait_for};

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
    std::thread::sleep(Duration::from_millis(60));
    let stats = link.stats();
    assert_eq!(stats.state, LinkState::Idle);
    assert_eq!((stats.frames_sent, stats.frames_acked), (60, 60));
    assert_eq!(stats.frames_dropped, 0);
    // The device ends on the last setpoint.
    let pulses = device.lock().expect("device").pulse_units();
    assert_eq!(pulses, Some(sweep(frames - 1)));
    // No drift: setpoint k is due at start + k × 10 ms. A write may be late on a busy
    // machine, but the next ones return to the schedule, so most writes are on time; a
    // schedule that slept a period after each write would fall further behind each time.
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
    let on_time = lateness
        .iter()
        .filter(|&&late| late < Duration::from_millis(1))
        .count();
    assert!(on_time >= 30, "{on_time} of 60 on time: {lateness:?}");
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
    std::thread::sleep(Duration::from_millis(350));
    let beats = log
        .lock()
        .expect("log")
        .iter()
        .filter(|w| w.line.message == HostMessage::Heartbeat)
        .count();
    assert!((3..=4).contains(&beats), "{beats} heartbeats in 350 ms");
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
fn missing_acknowledgements_are_reported_within_100_ms() {
    let (link, _, log) = connect(Faults {
        vanish_after: Some(10),
        ..Faults::default()
    });
    link.start_stream().expect("streams");
    for step in 0..30 {
        if link.push_setpoint(sweep(step)).is_err() {
            break;
        }
    }
    let event = wait_for(&link, Duration::from_secs(1), |e| {
        matches!(e, LinkEvent::Lost(_))
    });
    let reported = Instant::now();
    let LinkEvent::Lost(LinkLoss::NoAck { waited, .. }) = event else {
        panic!("expected a missing acknowledgement, got {event:?}");
    };
    assert!(waited < Duration::from_millis(100));
    let first_vanished = log
        .lock()
        .expect("log")
        .iter()
        .find(|w| !w.delivered)
        .map(|w| w.at)
        .expect("a vanished line");
    assert!(reported - first_vanished < Duration::from_millis(100));
}

#[test]
fn a_device_stop_the_host_did_not_send_ends_the_stream() {
    let (link, device, _) = connect(Faults::default());
    link.start_stream().expect("streams");
    for step in 0..5 {
        link.push_setpoint(sweep(step)).expect("queued");
    }
    std::thread::sleep(Duration::from_millis(30));
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
