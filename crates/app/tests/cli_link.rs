//! `armwright ports`, `stream` and `device-sim`: port listing as JSON, a sample streamed to
//! its end (in process and through the pseudo-terminal's real serial path) with one frame per
//! planned sample, a refusal that sends nothing, and Ctrl-C sending the emergency stop.
//!
//! The streams run in real time; the shortest sample sequence at 50 Hz keeps each run short.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

mod common;

use common::{lines_of, wait_for_line};
use std::io::{BufRead, BufReader, Read};
use std::process::{Child, Command, Stdio};

use serde_json::Value;

/// The sample with the shortest sequence.
const SAMPLE: &str = "pen-plotter.armwright.json";

/// Streams run in real time against a deadline and an acknowledgement timeout; on a 2-core
/// machine several at once could starve each other into a spurious "link lost". Each streaming
/// test holds this lock so they take turns.
static REAL_TIME: std::sync::Mutex<()> = std::sync::Mutex::new(());

fn one_stream_at_a_time() -> std::sync::MutexGuard<'static, ()> {
    REAL_TIME
        .lock()
        .unwrap_or_else(std::sync::PoisonError::into_inner)
}

fn binary() -> Command {
    Command::new(env!("CARGO_BIN_EXE_armwright"))
}

/// Runs the binary with standard input closed; returns exit code, stdout, stderr.
fn run(args: &[&str]) -> (i32, String, String) {
    let output = binary()
        .args(args)
        .stdin(Stdio::null())
        .output()
        .expect("the armwright binary runs");
    (
        output.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&output.stdout).into_owned(),
        String::from_utf8_lossy(&output.stderr).into_owned(),
    )
}

fn json_of(stdout: &str, stderr: &str) -> Value {
    serde_json::from_str(stdout)
        .unwrap_or_else(|e| panic!("not JSON ({e}): {stdout}\nstderr: {stderr}"))
}

/// Rows of the plan's setpoint CSV at `rate_hz`: the number of samples the plan has. `test`
/// names the scratch directory, so tests running at once do not share it.
fn planned_samples(test: &str, rate_hz: &str) -> u64 {
    let dir = common::scratch_dir(&format!("cli-link-{test}"));
    let csv = dir.join("setpoints.csv");
    let csv_text = csv.to_string_lossy().into_owned();
    let (code, _, stderr) = run(&[
        "plan",
        &common::sample_path(SAMPLE),
        "--rate",
        rate_hz,
        "--csv",
        &csv_text,
    ]);
    assert_eq!(code, 0, "{stderr}");
    let text = std::fs::read_to_string(&csv).expect("CSV written");
    text.lines().skip(1).filter(|l| !l.is_empty()).count() as u64
}

/// Checks a stream that ran to its end: every planned sample, after the approach's, sent and
/// acknowledged.
fn assert_ran_to_end(code: i32, out: &Value, stderr: &str, planned: u64) {
    assert_eq!(code, 0, "{out}\n{stderr}");
    let approach = out["approach"]["frames"].as_u64().expect("approach frames");
    let planned = planned + approach;
    assert_eq!(out["ok"], Value::Bool(true), "{out}");
    assert_eq!(out["ending"], "finished");
    assert_eq!(out["frames_planned"].as_u64(), Some(planned), "{out}");
    assert_eq!(out["frames_sent"].as_u64(), Some(planned), "{out}");
    assert_eq!(out["frames_acked"].as_u64(), Some(planned), "{out}");
    assert_eq!(out["frames_dropped"].as_u64(), Some(0), "{out}");
    // The caution is shown even with --yes.
    let caution = stderr.replace('\n', " ").to_lowercase();
    assert!(
        caution.contains("a software stop is not a safety device"),
        "{stderr}"
    );
    assert!(
        caution.contains("hard power cut-off within reach"),
        "{stderr}"
    );
}

/// Sends SIGINT, as Ctrl-C in a terminal does (`Child::kill` would send SIGKILL).
fn interrupt(child: &Child) {
    let status = Command::new("kill")
        .args(["-INT", &child.id().to_string()])
        .status()
        .expect("the kill command runs");
    assert!(status.success());
}

#[test]
fn ports_json_lists_ports_with_stable_keys() {
    let (code, stdout, stderr) = run(&["ports", "--json"]);
    assert_eq!(code, 0, "{stderr}");
    let out = json_of(&stdout, &stderr);
    assert_eq!(out["ok"], Value::Bool(true));
    let ports = out["ports"].as_array().expect("a list of ports");
    // A test machine may have no serial ports; every listed one has all four keys.
    for port in ports {
        assert!(port["path"].is_string(), "{port}");
        assert!(port["description"].is_string(), "{port}");
        for key in ["usb_vendor_id", "usb_product_id"] {
            assert!(
                port[key].is_null() || port[key].as_u64().is_some_and(|id| id <= 0xFFFF),
                "{key}: {port}"
            );
        }
    }
}

#[test]
fn a_sample_streams_to_its_end_on_the_simulated_device() {
    let _turn = one_stream_at_a_time();
    let planned = planned_samples("in-process", "50");
    assert!(planned > 100, "the sample plans {planned} samples");
    let (code, stdout, stderr) = run(&[
        "stream",
        &common::sample_path(SAMPLE),
        "--simulated",
        "--rate",
        "50",
        "--yes",
        "--json",
    ]);
    let out = json_of(&stdout, &stderr);
    assert_ran_to_end(code, &out, &stderr, planned);
    assert_eq!(out["device"], "simulated");
    // Real time: one period per setpoint (the approach's, then the plan's samples), give or
    // take scheduling.
    let elapsed = out["elapsed_s"].as_f64().unwrap();
    let expected = out["frames_planned"].as_u64().unwrap() as f64 / 50.0;
    assert!(
        (elapsed - expected).abs() < 1.0,
        "{elapsed} s for {expected} s"
    );
    assert!(
        stderr.contains("sent,"),
        "progress on standard error: {stderr}"
    );
}

#[test]
fn without_yes_and_with_stdin_closed_nothing_is_sent() {
    let (code, stdout, stderr) = run(&[
        "stream",
        &common::sample_path(SAMPLE),
        "--simulated",
        "--json",
    ]);
    assert_eq!(code, 1, "{stdout}\n{stderr}");
    let out = json_of(&stdout, &stderr);
    assert_eq!(out["ok"], Value::Bool(false));
    assert_eq!(out["frames_sent"].as_u64(), Some(0));
    assert!(
        out["error"].as_str().unwrap().contains("nothing was sent"),
        "{out}"
    );
    assert!(stderr.contains("pinch and strike"), "{stderr}");
    assert!(!stderr.contains("streaming to"), "{stderr}");
}

#[test]
fn an_answer_other_than_yes_refuses() {
    let mut child = binary()
        .args(["stream", &common::sample_path(SAMPLE), "--simulated"])
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("the armwright binary runs");
    {
        use std::io::Write;
        let mut stdin = child.stdin.take().unwrap();
        stdin.write_all(b"maybe\n").unwrap();
    }
    let output = child.wait_with_output().unwrap();
    let stderr = String::from_utf8_lossy(&output.stderr);
    assert_eq!(output.status.code(), Some(1), "{stderr}");
    assert!(
        stderr.contains("not confirmed; nothing was sent"),
        "{stderr}"
    );
}

#[test]
fn an_unreadable_scene_or_rate_exits_2() {
    let (code, _, stderr) = run(&["stream", "/nonexistent/scene.armwright.json", "--yes"]);
    assert_eq!(code, 2, "{stderr}");
    let sample = common::sample_path(SAMPLE);
    let (code, _, stderr) = run(&["stream", &sample, "--simulated", "--rate", "5", "--yes"]);
    assert_eq!(code, 2, "{stderr}");
    assert!(stderr.contains("--rate"), "{stderr}");
}

#[test]
fn ctrl_c_sends_the_emergency_stop_and_exits_1() {
    let _turn = one_stream_at_a_time();
    let mut child = binary()
        .args([
            "stream",
            &common::sample_path(SAMPLE),
            "--simulated",
            "--yes",
            "--json",
        ])
        .stdin(Stdio::null())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("the armwright binary runs");
    let lines = lines_of(child.stderr.take().unwrap());
    wait_for_line(&lines, "streaming to simulated");
    // Let some frames go out first, so the stop overtakes a running stream.
    wait_for_line(&lines, "sent,");
    interrupt(&child);
    let mut stdout = String::new();
    child
        .stdout
        .take()
        .unwrap()
        .read_to_string(&mut stdout)
        .unwrap();
    let status = child.wait().unwrap();
    assert_eq!(status.code(), Some(1), "{stdout}");
    let out = json_of(&stdout, "");
    assert_eq!(out["ending"], "emergency_stop", "{out}");
    assert!(
        out["error"]
            .as_str()
            .unwrap()
            .contains("emergency stop sent"),
        "{out}"
    );
    let sent = out["frames_sent"].as_u64().unwrap();
    let planned = out["frames_planned"].as_u64().unwrap();
    assert!(sent > 0 && sent < planned, "{sent} of {planned}");
    assert!(out["stop_write_latency_ms"].as_f64().is_some(), "{out}");
    assert!(out["stop_ack_latency_ms"].as_f64().is_some(), "{out}");
}

#[cfg(unix)]
#[test]
fn a_sample_streams_through_the_device_sim_pty_and_ctrl_c_ends_the_device() {
    let _turn = one_stream_at_a_time();
    let planned = planned_samples("pty", "50");
    let mut device = binary()
        .args(["device-sim"])
        .stdin(Stdio::null())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("the armwright binary runs");
    let mut path = String::new();
    BufReader::new(device.stdout.take().unwrap())
        .read_line(&mut path)
        .unwrap();
    let path = path.trim().to_owned();
    assert!(path.starts_with("/dev/"), "{path}");
    let (code, stdout, stderr) = run(&[
        "stream",
        &common::sample_path(SAMPLE),
        "--port",
        &path,
        "--rate",
        "50",
        "--yes",
        "--json",
    ]);
    interrupt(&device);
    let device_status = device.wait().unwrap();
    let out = json_of(&stdout, &stderr);
    assert_ran_to_end(code, &out, &stderr, planned);
    assert_eq!(out["device"], path.as_str());
    assert_eq!(device_status.code(), Some(0));
}

#[test]
fn device_sim_refuses_a_channel_count_out_of_range() {
    let (code, _, stderr) = run(&["device-sim", "--channels", "9"]);
    assert_eq!(code, 2, "{stderr}");
    assert!(stderr.contains("between 1 and 8"), "{stderr}");
}

#[test]
fn the_link_subcommands_answer_help_with_units_in_their_value_names() {
    let (code, stdout, _) = run(&["--help"]);
    assert_eq!(code, 0);
    for word in ["ports", "stream", "device-sim"] {
        assert!(stdout.contains(word), "{word} missing from:\n{stdout}");
    }
    let expectations: [(&str, &[&str]); 3] = [
        ("ports", &["--json"]),
        (
            "stream",
            &[
                "--port <PATH>",
                "--simulated",
                "--rate <HZ>",
                "--yes",
                "Ctrl-C",
            ],
        ),
        ("device-sim", &["--channels <N>"]),
    ];
    for (subcommand, needles) in expectations {
        let (code, stdout, _) = run(&[subcommand, "--help"]);
        assert_eq!(code, 0, "{subcommand}");
        for needle in needles {
            assert!(
                stdout.contains(needle),
                "{subcommand}: {needle} missing from:\n{stdout}"
            );
        }
    }
}
