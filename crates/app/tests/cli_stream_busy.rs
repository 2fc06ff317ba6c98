//! `armwright stream` of the longest sample through `armwright device-sim`'s pseudo-terminal,
//! as processes, beside six busy-loop processes on this (two-core) machine: the host sends the
//! setpoints a second ahead and the device plays them from its queue (`PROTOCOL.md` §3,
//! planned setpoint), so the stream completes although the busy loops hold the stream's own
//! thread up for hundreds of milliseconds at a time.
//!
//! The busy loops run at nice 5. The simulated device stands in for a microcontroller, which
//! this computer's load never holds up, but it is a process here: beside six loops at the
//! default priority the kernel left it without a processor for up to 2 s at a time (its
//! clock leaves such waits out, `PROTOCOL.md` §9, but it cannot answer meanwhile). At nice 5
//! the loops still take most of both cores and hold the stream up (see `send_gap_max_ms`, and
//! `host_wait_max_ms`, the stream thread's own waits for a processor).
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly
#![cfg(unix)]

mod common;

use common::device_sim::{DeviceSim, stream_child};
use std::io::Read;
use std::process::{Child, Command, Stdio};

use serde_json::Value;

/// The longest sample sequence (about 37 s).
const LONGEST_SAMPLE: &str = "peg-sorter.armwright.json";

/// Niceness of the busy loops.
const NICE: &str = "5";

/// Busy-loop processes at [`NICE`], ended (killed) when dropped.
struct BusyLoops(Vec<Child>);

impl BusyLoops {
    fn start(count: usize) -> Self {
        Self(
            (0..count)
                .map(|_| {
                    Command::new("nice")
                        .args(["-n", NICE, "sh", "-c", "while :; do :; done"])
                        .stdin(Stdio::null())
                        .stdout(Stdio::null())
                        .stderr(Stdio::null())
                        .spawn()
                        .expect("sh runs a busy loop")
                })
                .collect(),
        )
    }
}

impl Drop for BusyLoops {
    fn drop(&mut self) {
        for child in &mut self.0 {
            let _ = child.kill();
            let _ = child.wait();
        }
    }
}

#[test]
fn the_longest_sample_streams_to_its_end_beside_six_busy_loops() {
    let device = DeviceSim::start();
    let busy = BusyLoops::start(6);
    let mut stream = stream_child(LONGEST_SAMPLE, &device);
    let mut stderr = String::new();
    let mut stdout = String::new();
    let mut err_pipe = stream.stderr.take().expect("piped");
    let reader = std::thread::spawn(move || {
        let mut text = String::new();
        let _ = err_pipe.read_to_string(&mut text);
        text
    });
    stream
        .stdout
        .take()
        .expect("piped")
        .read_to_string(&mut stdout)
        .expect("stdout readable");
    let code = stream.wait().expect("the stream ends").code().unwrap_or(-1);
    stderr.push_str(&reader.join().expect("stderr read"));
    drop(busy);
    let out: Value = serde_json::from_str(&stdout)
        .unwrap_or_else(|error| panic!("not JSON ({error}): {stdout}\n{stderr}"));
    assert_eq!(code, 0, "{out}\n{stderr}");
    assert_eq!(out["ending"], "finished", "{out}");
    assert_eq!(out["frames_sent"], out["frames_planned"], "{out}");
    assert_eq!(out["frames_acked"], out["frames_sent"], "{out}");
    // It was played ahead, and said so.
    assert_eq!(out["play_ahead_s"], 1.0, "{out}");
    assert!(stderr.contains("sent 1.0 s ahead"), "{stderr}");
    // The longest sample is the one streamed: more than 30 s of sequence.
    assert!(
        out["approach"]["sequence_s"].as_f64().unwrap_or(0.0) > 30.0,
        "{out}"
    );
    // What the busy loops did to the stream is reported: the longest time the device heard
    // nothing from this host, whatever it was.
    let gap = out["send_gap_max_ms"]
        .as_f64()
        .expect("the longest silence");
    // And how long the host's own link thread waited for a processor between two lines: seen
    // beside the busy loops where Linux says (`/proc/thread-self/schedstat`).
    let waited = out["host_wait_max_ms"].as_f64().expect("the longest wait");
    eprintln!(
        "longest silence toward the device {gap} ms, longest wait for a processor {waited} ms"
    );
    if std::path::Path::new("/proc/thread-self/schedstat").exists() {
        assert!(waited > 0.0, "{out}");
    }
}
