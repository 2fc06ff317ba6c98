//! The real serial code path: the simulated device behind a pseudo-terminal, opened with
//! the serial-port transport, streamed to and stopped.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly
#![cfg(unix)]

mod common;

use std::time::Duration;

use armwright_link::{
    ChannelValues, DeviceMode, Link, LinkEvent, SerialTransport, SimDeviceConfig, SimPty,
    StreamOptions,
};
use common::wait_for;

#[test]
fn stream_and_stop_through_a_pseudo_terminal() {
    let pty = SimPty::spawn(SimDeviceConfig::default()).expect("a pseudo-terminal");
    let transport = SerialTransport::open(pty.path(), 115_200).expect("opens the pty");
    let link = Link::connect(Box::new(transport), StreamOptions::default()).expect("greets");
    assert_eq!(link.device().channel_count, 7);
    link.start_stream().expect("streams");
    for step in 0..30u16 {
        let values = ChannelValues::from_slice(&[1200 + step * 10; 7]).expect("seven values");
        link.push_setpoint(values).expect("queued");
    }
    link.finish_stream().expect("alive");
    wait_for(&link, Duration::from_secs(2), |e| {
        matches!(e, LinkEvent::StreamFinished { frames_sent: 30 })
    });
    std::thread::sleep(Duration::from_millis(50));
    let device = pty.device();
    let pulses = device.lock().expect("device").pulse_units();
    assert_eq!(pulses.map(|v| v.as_slice()[0]), Some(1200 + 29 * 10));
    let stats = link.stats();
    assert_eq!(stats.frames_acked, 30, "{stats:?}");

    link.emergency_stop().trigger();
    wait_for(&link, Duration::from_secs(1), |e| {
        matches!(e, LinkEvent::StopConfirmed { .. })
    });
    assert_eq!(device.lock().expect("device").mode(), DeviceMode::Stopped);
}
