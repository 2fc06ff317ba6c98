//! `armwright device-sim`, `stream` and `reset` as processes, through the pseudo-terminal's
//! real serial path: a device paused five times for 100 ms does not end a stream; a device
//! that stops for good is noticed within 300 ms of its last answer, and given up once its
//! watchdog would have held the arm (the setpoints it held played out); after Ctrl-C, `reset`
//! then `stream` completes; after a watchdog trip, `stream` completes with no reset.
//!
//! Times are measured from events (the stream's own report of how long the device had been
//! silent, the device's report of its trip), never by racing the wall clock; the waits are
//! generous.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly
#![cfg(unix)]

mod common;

use common::device_sim::{DeviceSim, binary, signal, stream_child};
use common::{lines_of, wait_for_line};
use std::io::Read;
use std::process::{Child, Stdio};
use std::sync::mpsc;
use std::time::{Duration, Instant};

use serde_json::Value;

/// The shortest sample sequence (about 7.8 s).
const SAMPLE: &str = "pen-plotter.armwright.json";

/// Real-time streams take turns, so they do not starve each other on a 2-core machine.
static REAL_TIME: std::sync::Mutex<()> = std::sync::Mutex::new(());

fn one_stream_at_a_time() -> std::sync::MutexGuard<'static, ()> {
    REAL_TIME
        .lock()
        .unwrap_or_else(std::sync::PoisonError::into_inner)
}

/// A stream of the sample to `device` at 50 Hz, with --yes and --json, as a child process.
fn spawn_stream(device: &DeviceSim) -> (Child, mpsc::Receiver<String>) {
    let mut child = stream_child(SAMPLE, device);
    let lines = lines_of(child.stderr.take().expect("piped"));
    (child, lines)
}

/// Waits for a stream to end; returns its exit code and its JSON report.
fn finish(mut child: Child) -> (i32, Value) {
    let mut stdout = String::new();
    child
        .stdout
        .take()
        .expect("piped")
        .read_to_string(&mut stdout)
        .expect("stdout readable");
    let code = child.wait().expect("the stream ends").code().unwrap_or(-1);
    let json = serde_json::from_str(&stdout)
        .unwrap_or_else(|error| panic!("not JSON ({error}): {stdout}"));
    (code, json)
}

fn assert_finished(code: i32, out: &Value) {
    assert_eq!(code, 0, "{out}");
    assert_eq!(out["ending"], "finished", "{out}");
    assert_eq!(out["frames_sent"], out["frames_planned"], "{out}");
    assert_eq!(out["frames_acked"], out["frames_sent"], "{out}");
}

/// Runs `armwright reset --port PATH …` with standard input closed.
fn reset(device: &DeviceSim, extra: &[&str]) -> (i32, String, String) {
    let output = binary()
        .args(["reset", "--port", &device.path])
        .args(extra)
        .stdin(Stdio::null())
        .output()
        .expect("the armwright binary runs");
    (
        output.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&output.stdout).into_owned(),
        String::from_utf8_lossy(&output.stderr).into_owned(),
    )
}

#[test]
fn five_device_pauses_of_100_ms_do_not_end_a_stream() {
    let _turn = one_stream_at_a_time();
    let device = DeviceSim::start();
    let (mut stream, lines) = spawn_stream(&device);
    wait_for_line(&lines, "streaming to");
    for pause in 0..5 {
        // Progress lines come once a second; between them the stream is known to be running.
        wait_for_line(&lines, "sent,");
        assert!(
            stream.try_wait().expect("pollable").is_none(),
            "the stream ended before pause {pause}"
        );
        signal(&device.child, "STOP");
        std::thread::sleep(Duration::from_millis(100)); // the pause itself, not a wait
        signal(&device.child, "CONT");
    }
    let (code, out) = finish(stream);
    assert_finished(code, &out);
    // Each pause held at least one acknowledgement back by most of its 100 ms.
    assert!(out["acks_late"].as_u64().unwrap_or(0) >= 5, "{out}");
    assert!(
        out["ack_wait_max_ms"].as_f64().unwrap_or(0.0) >= 80.0,
        "{out}"
    );
}

#[test]
fn a_device_that_stops_for_good_is_noticed_within_300_ms() {
    let _turn = one_stream_at_a_time();
    let device = DeviceSim::start();
    let (stream, lines) = spawn_stream(&device);
    wait_for_line(&lines, "sent,");
    signal(&device.child, "STOP");
    let (code, out) = finish(stream);
    assert_eq!(code, 1, "{out}");
    assert_eq!(out["ending"], "link_lost", "{out}");
    // The stream plays 1 s ahead. It noticed the silence within 300 ms of the device's last
    // answer (at least the device's watchdog time: a shorter silence is no news) ...
    assert_eq!(out["play_ahead_s"], 1.0, "{out}");
    assert_eq!(out["device_quiet"], 1, "{out}");
    let noticed_ms = out["device_quiet_noticed_after_ms"]
        .as_f64()
        .expect("when the silence was noticed");
    assert!((250.0..=300.0).contains(&noticed_ms), "{out}");
    // ... and gave up when a device that had stayed silent would have held the arm (the
    // setpoints it held, at most the 1 s played ahead, played out and its watchdog's 250 ms
    // passed) — for this simulated device, a process of its own that a busy computer can
    // hold up, after 2 s (`PROTOCOL.md` §9).
    let silent_ms = out["device_silent_ms"].as_f64().expect("a silence figure");
    assert!((2000.0..=2400.0).contains(&silent_ms), "{out}");
    assert!(silent_ms > noticed_ms, "{out}");
}

#[test]
fn after_ctrl_c_a_confirmed_reset_lets_the_next_stream_complete() {
    let _turn = one_stream_at_a_time();
    let device = DeviceSim::start();
    let (stream, lines) = spawn_stream(&device);
    // Past the wake (one joint a second, played a second behind): the device then holds
    // every channel when the stop comes.
    for _ in 0..6 {
        wait_for_line(&lines, "sent,");
    }
    signal(&stream, "INT");
    let (code, out) = finish(stream);
    assert_eq!(
        (code, out["ending"].as_str()),
        (1, Some("emergency_stop")),
        "{out}"
    );
    // A fresh device was limp when the stream began: every channel null.
    let start = out["start_pulses_us"]
        .as_array()
        .expect("seven channels")
        .clone();
    assert_eq!(start.len(), 7, "{out}");
    assert!(start.iter().all(Value::is_null), "{out}");

    // The stop is latched in the device: a new stream finds it and says how to reset.
    let (stream, _lines) = spawn_stream(&device);
    let (code, out) = finish(stream);
    assert_eq!(code, 1, "{out}");
    assert_eq!(out["frames_sent"], 0, "{out}");
    let error = out["error"].as_str().unwrap_or("");
    assert!(error.contains("emergency stop is latched"), "{error}");
    assert!(
        error.contains(&format!("armwright reset --port {}", device.path)),
        "{error}"
    );

    // Without a typed confirmation nothing is reset.
    let (code, _, stderr) = reset(&device, &[]);
    assert_eq!(code, 1, "{stderr}");
    assert!(stderr.contains("emergency stop latched"), "{stderr}");
    assert!(stderr.contains("not reset"), "{stderr}");
    let caution = stderr.replace('\n', " ").to_lowercase();
    for phrase in [
        "a software stop is not a safety device",
        "hard power cut-off within reach",
        "local codes",
    ] {
        assert!(caution.contains(phrase), "{phrase}: {stderr}");
    }

    let (code, stdout, stderr) = reset(&device, &["--yes", "--json"]);
    assert_eq!(code, 0, "{stdout}\n{stderr}");
    let out: Value = serde_json::from_str(&stdout).expect("JSON");
    assert_eq!(out["before"]["mode"], "stopped", "{out}");
    assert_eq!(out["after"]["mode"], "holding", "{out}");
    assert_eq!(out["after"]["faults"], "00", "{out}");

    let (stream, _lines) = spawn_stream(&device);
    let (code, out) = finish(stream);
    assert_finished(code, &out);
    // It began from the pulses the device held since the stop, in the servos' range.
    let start = out["start_pulses_us"]
        .as_array()
        .expect("seven channels")
        .clone();
    assert!(
        start.iter().all(|pulse| pulse
            .as_f64()
            .is_some_and(|us| (500.0..=2500.0).contains(&us))),
        "{out}"
    );
}

#[test]
fn after_a_watchdog_trip_the_next_stream_completes_without_a_reset() {
    let _turn = one_stream_at_a_time();
    let device = DeviceSim::start();
    let (mut stream, lines) = spawn_stream(&device);
    wait_for_line(&lines, "sent,");
    // A host that dies sends no hold: the device trips its watchdog and holds.
    stream.kill().expect("killable");
    let _ = stream.wait();
    let seen = wait_for_line(&device.changes, "watchdog trips 1");
    assert!(
        seen.last().is_some_and(|line| line.contains("Keeping")),
        "{seen:?}"
    );
    let started = Instant::now();
    let (stream, _lines) = spawn_stream(&device);
    let (code, out) = finish(stream);
    assert_finished(code, &out);
    assert!(
        started.elapsed() > Duration::from_secs(5),
        "the whole sample ran"
    );
}
