//! `armwright jog` as a process against the in-process simulated device: a typed script jogs
//! a joint and the tool point and quits with the device holding; `stop` sends the emergency
//! stop at once, mid-move, and the device confirms it; no confirmation sends nothing.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

mod common;

use common::{lines_of, wait_for_line};
use std::io::Write;
use std::process::{Command, Stdio};

const SAMPLE: &str = "pen-plotter.armwright.json";

/// A running `jog`: the process, its standard input while left open, its output lines.
struct Jog {
    child: std::process::Child,
    stdin: Option<std::process::ChildStdin>,
    out: std::sync::mpsc::Receiver<String>,
    err: std::sync::mpsc::Receiver<String>,
}

/// Starts `jog --simulated` on the sample with `script` written to its standard input (closed
/// after it when `close`, else left open so the end of input does not end the run).
fn jog(script: &str, close: bool) -> Jog {
    let mut child = Command::new(env!("CARGO_BIN_EXE_armwright"))
        .args(["jog", &common::sample_path(SAMPLE), "--simulated"])
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("the armwright binary runs");
    let mut stdin = child.stdin.take().expect("stdin");
    stdin.write_all(script.as_bytes()).expect("script written");
    let out = lines_of(child.stdout.take().expect("stdout"));
    let err = lines_of(child.stderr.take().expect("stderr"));
    Jog {
        child,
        stdin: (!close).then_some(stdin),
        out,
        err,
    }
}

/// The number after `name ` in a pose line: "at base -7.6°, shoulder 39.2°, …".
fn value_of(line: &str, name: &str) -> f64 {
    let start = line.find(&format!("{name} ")).expect("joint in the line") + name.len() + 1;
    let rest = &line[start..];
    let end = rest.find(['°', ' ']).expect("unit");
    rest[..end].parse().expect("a number")
}

/// The tool point's z (mm) in a pose line.
fn tool_z(line: &str) -> f64 {
    let start = line.find(" z ").expect("tool point z") + 3;
    let rest = &line[start..];
    rest[..rest.find(' ').expect("unit")]
        .parse()
        .expect("a number")
}

#[test]
fn a_typed_script_jogs_a_joint_and_the_tool_point_and_quits_holding() {
    let Jog {
        mut child,
        out,
        err,
        ..
    } = jog("yes\nj 1 5\nt z 10\nshow\nquit\n", true);
    let start = wait_for_line(&out, "at base").pop().expect("first pose");
    let after_joint = wait_for_line(&out, "at base")
        .pop()
        .expect("pose after the joint");
    assert!(
        (value_of(&after_joint, "base") - value_of(&start, "base") - 5.0).abs() < 0.05,
        "{start}\n{after_joint}"
    );
    let after_tool = wait_for_line(&out, "at base")
        .pop()
        .expect("pose after the tool step");
    assert!(
        (tool_z(&after_tool) - tool_z(&after_joint) - 10.0).abs() < 0.05,
        "{after_joint}\n{after_tool}"
    );
    wait_for_line(&out, "the device holds");
    let status = child.wait().expect("jog ends");
    let stderr: Vec<String> = err.try_iter().collect();
    assert!(status.success(), "{stderr:?}");
    assert!(stderr.iter().any(|line| line.contains("CAUTION")));
    assert!(stderr.iter().any(|line| line.contains("local codes")));
}

#[test]
fn stop_sends_the_emergency_stop_mid_move() {
    // A long move at 10 %: the stop comes while the arm is still on its way.
    let Jog {
        mut child,
        stdin,
        out,
        err,
    } = jog("yes\nj 1 60\n", false);
    wait_for_line(&out, "at base");
    wait_for_line(&err, "jogging on simulated");
    let mut stdin = stdin.expect("standard input left open");
    stdin.write_all(b"stop\n").expect("stop written");
    let lines = wait_for_line(&out, "confirmed the emergency stop");
    assert!(
        !lines.iter().skip(1).any(|line| line.starts_with("at base")),
        "the move was not cut short: {lines:?}"
    );
    let status = child.wait().expect("jog ends");
    assert_eq!(status.code(), Some(1));
}

#[test]
fn no_confirmation_sends_nothing() {
    let Jog { mut child, err, .. } = jog("no\n", true);
    wait_for_line(&err, "nothing was sent");
    assert_eq!(child.wait().expect("jog ends").code(), Some(1));
}
