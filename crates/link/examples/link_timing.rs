//! Measures the link's timing against the simulated device behind a pseudo-terminal (the
//! real serial code path): 100 Hz streaming for 10 s (jitter, drift), and the emergency-stop
//! latency when idle and while streaming. Prints the figures; asserts nothing.
//!
//! `cargo run --release -p armwright-link --example link_timing`
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

use std::time::{Duration, Instant};

use armwright_link::{
    ChannelValues, Link, LinkEvent, SerialTransport, SimDeviceConfig, SimPty, StreamOptions,
    StreamStats,
};

fn connect() -> (SimPty, Link) {
    let pty = SimPty::spawn(SimDeviceConfig::default()).expect("pseudo-terminal");
    let transport = SerialTransport::open(pty.path(), 115_200).expect("open pty");
    let link = Link::connect(Box::new(transport), StreamOptions::default()).expect("greeting");
    (pty, link)
}

fn wait_for(link: &Link, wanted: impl Fn(&LinkEvent) -> bool) -> LinkEvent {
    loop {
        if let Some(event) = link.next_event(Duration::from_secs(30))
            && wanted(&event)
        {
            return event;
        }
    }
}

fn pose(step: u32) -> ChannelValues {
    let mut values = [1500u16; 7];
    for (channel, value) in values.iter_mut().enumerate() {
        let phase = f64::from(step) * 0.01 + channel as f64;
        *value = (1500.0 + 400.0 * phase.sin()) as u16;
    }
    ChannelValues::from_slice(&values).expect("seven values")
}

fn print_stats(label: &str, stats: &StreamStats) {
    println!(
        "{label}: sent {} acked {} late {} dropped {} underruns {}; jitter mean {:?} p99 {:?} max {:?}",
        stats.frames_sent,
        stats.frames_acked,
        stats.frames_late,
        stats.frames_dropped,
        stats.underruns,
        stats.jitter_mean,
        stats.jitter_p99,
        stats.jitter_max
    );
}

fn main() {
    // 100 Hz for 10 s.
    let (_pty, link) = connect();
    link.start_stream().expect("stream");
    let frames = 1000;
    let started = Instant::now();
    let producer = {
        let link = &link;
        move || {
            for step in 0..frames {
                link.push_setpoint(pose(step)).expect("queued");
            }
            link.finish_stream().expect("alive");
        }
    };
    std::thread::scope(|scope| {
        scope.spawn(producer);
    });
    wait_for(&link, |e| matches!(e, LinkEvent::StreamFinished { .. }));
    let elapsed = started.elapsed();
    let stats = link.stats();
    print_stats("100 Hz for 10 s over a pty", &stats);
    // The stream ends at the deadline after the last frame: 1000 periods of 10 ms.
    println!(
        "run took {elapsed:?} for {frames} periods of 10 ms (drift {:+.3} ms)",
        (elapsed.as_secs_f64() - 10.0) * 1e3
    );

    // Stop while streaming.
    link.start_stream().expect("stream");
    for step in 0..50 {
        link.push_setpoint(pose(step)).expect("queued");
    }
    std::thread::sleep(Duration::from_millis(205));
    link.emergency_stop().trigger();
    wait_for(&link, |e| matches!(e, LinkEvent::StopConfirmed { .. }));
    let stats = link.stats();
    println!(
        "stop while streaming: line written after {:?}, acknowledged after {:?}, {} queued setpoints dropped",
        stats.stop_write_latency.unwrap_or_default(),
        stats.stop_ack_latency.unwrap_or_default(),
        stats.frames_dropped
    );
    drop(link);

    // Stop when idle, ten times.
    let mut written = Vec::new();
    let mut acked = Vec::new();
    for _ in 0..10 {
        let (_pty, link) = connect();
        std::thread::sleep(Duration::from_millis(37));
        link.emergency_stop().trigger();
        wait_for(&link, |e| matches!(e, LinkEvent::StopConfirmed { .. }));
        let stats = link.stats();
        written.push(stats.stop_write_latency.unwrap_or_default());
        acked.push(stats.stop_ack_latency.unwrap_or_default());
    }
    written.sort();
    acked.sort();
    println!(
        "stop when idle (10 runs): written median {:?} max {:?}; acknowledged median {:?} max {:?}",
        written[5], written[9], acked[5], acked[9]
    );
}
