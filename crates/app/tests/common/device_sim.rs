//! `armwright device-sim` as a child process behind its pseudo-terminal, for the tests that
//! drive the stream and reset commands as processes.

use std::io::{BufRead, BufReader};
use std::process::{Child, Command, Stdio};
use std::sync::mpsc;

use super::lines_of;

/// The `armwright` binary under test.
pub fn binary() -> Command {
    Command::new(env!("CARGO_BIN_EXE_armwright"))
}

/// Sends `signal` (STOP, CONT, INT, KILL) to a child, as a shell's `kill -SIGNAL` does.
pub fn signal(child: &Child, signal: &str) {
    let status = Command::new("kill")
        .args([&format!("-{signal}"), &child.id().to_string()])
        .status()
        .expect("the kill command runs");
    assert!(status.success(), "kill -{signal}");
}

/// `armwright stream SAMPLE --port DEVICE --rate 50 --yes --json` as a child process, its
/// standard output and error piped (`sample` names a bundled sample file).
pub fn stream_child(sample: &str, device: &DeviceSim) -> Child {
    binary()
        .args([
            "stream",
            &super::sample_path(sample),
            "--port",
            &device.path,
            "--rate",
            "50",
            "--yes",
            "--json",
        ])
        .stdin(Stdio::null())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("the armwright binary runs")
}

/// A simulated device behind a pseudo-terminal, in its own process; ended with Ctrl-C.
pub struct DeviceSim {
    pub child: Child,
    /// The pseudo-terminal's path, as the device printed it.
    pub path: String,
    /// Its standard error: one line per change of mode, faults or watchdog trips.
    pub changes: mpsc::Receiver<String>,
}

impl DeviceSim {
    /// Starts it in a session of its own (`setsid`, util-linux): it stands in for a
    /// microcontroller, a separate machine, so where the kernel shares the processors out by
    /// session (autogroup) the test's busy loops and streams load the host's session and not
    /// the device's. Its clock already leaves out time it waits for a processor
    /// (`PROTOCOL.md` §9); this keeps such waits short enough for it to answer in time.
    pub fn start() -> Self {
        let mut child = Command::new("setsid")
            .arg(binary().get_program())
            .args(["device-sim"])
            .stdin(Stdio::null())
            .stdout(Stdio::piped())
            .stderr(Stdio::piped())
            .spawn()
            .expect("the armwright binary runs");
        let mut path = String::new();
        BufReader::new(child.stdout.take().expect("piped"))
            .read_line(&mut path)
            .expect("the device prints its path");
        let path = path.trim().to_owned();
        assert!(path.starts_with("/dev/"), "{path}");
        let changes = lines_of(child.stderr.take().expect("piped"));
        Self {
            child,
            path,
            changes,
        }
    }
}

impl Drop for DeviceSim {
    fn drop(&mut self) {
        // Resume it first in case a test left it stopped, then end it as Ctrl-C would.
        signal(&self.child, "CONT");
        signal(&self.child, "INT");
        let _ = self.child.wait();
    }
}
