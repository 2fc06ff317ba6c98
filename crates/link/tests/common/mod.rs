//! A transport wrapper for the streaming tests: records every line the host writes, and can
//! swallow lines or fail writes to imitate a bad link.

#![allow(dead_code)]

use std::io;
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::{Arc, Mutex};
use std::time::{Duration, Instant};

use armwright_link::{
    ChannelValues, HostLine, HostMessage, Link, LinkEvent, SimTransport, Transport,
};

/// How the wrapper misbehaves.
#[derive(Debug, Clone, Copy, Default)]
pub struct Faults {
    /// Swallow this many emergency-stop lines before passing one on.
    pub swallow_stops: usize,
    /// After this many writes, every write fails.
    pub fail_writes_after: Option<usize>,
    /// After this many writes, writes vanish without error (a cut cable with a live adapter).
    pub vanish_after: Option<usize>,
}

/// One line the host wrote, when, and whether it reached the device.
#[derive(Debug, Clone, Copy)]
pub struct Written {
    pub at: Instant,
    pub line: HostLine,
    pub delivered: bool,
}

/// Switches a test flips while the link runs.
#[derive(Debug, Default)]
pub struct Control {
    /// The device is paused (as by SIGSTOP): it neither reads nor answers nor runs its
    /// clock; what the host writes meanwhile waits in the cable and arrives on resume.
    pub paused: AtomicBool,
    /// Writes vanish without error from now on (a cut cable with a live adapter).
    pub muted: AtomicBool,
}

pub struct Recorder {
    inner: SimTransport,
    faults: Faults,
    writes: usize,
    waiting: Vec<u8>,
    pub control: Arc<Control>,
    pub log: Arc<Mutex<Vec<Written>>>,
}

impl Recorder {
    pub fn new(inner: SimTransport, faults: Faults) -> (Self, Arc<Mutex<Vec<Written>>>) {
        let log = Arc::new(Mutex::new(Vec::new()));
        let recorder = Self {
            inner,
            faults,
            writes: 0,
            waiting: Vec::new(),
            control: Arc::default(),
            log: Arc::clone(&log),
        };
        (recorder, log)
    }

    fn paused(&self) -> bool {
        self.control.paused.load(Ordering::SeqCst)
    }
}

impl Transport for Recorder {
    fn write_all(&mut self, bytes: &[u8]) -> io::Result<()> {
        self.writes += 1;
        if self
            .faults
            .fail_writes_after
            .is_some_and(|n| self.writes > n)
        {
            return Err(io::Error::new(io::ErrorKind::BrokenPipe, "cable pulled"));
        }
        let line = HostLine::parse(bytes).expect("the host writes good lines");
        let mut delivered = self.faults.vanish_after.is_none_or(|n| self.writes <= n)
            && !self.control.muted.load(Ordering::SeqCst);
        if line.message == HostMessage::EmergencyStop && self.faults.swallow_stops > 0 {
            self.faults.swallow_stops -= 1;
            delivered = false;
        }
        self.log.lock().expect("log").push(Written {
            at: Instant::now(),
            line,
            delivered,
        });
        if delivered {
            self.waiting.extend_from_slice(bytes);
            if !self.paused() {
                let waiting = std::mem::take(&mut self.waiting);
                self.inner.write_all(&waiting)?;
            }
        }
        Ok(())
    }

    fn read_timeout(&mut self, buf: &mut [u8], timeout: Duration) -> io::Result<usize> {
        if self.paused() {
            std::thread::sleep(timeout);
            return Ok(0);
        }
        if !self.waiting.is_empty() {
            let waiting = std::mem::take(&mut self.waiting);
            self.inner.write_all(&waiting)?;
        }
        self.inner.read_timeout(buf, timeout)
    }

    fn idle_look_interval(&self) -> Option<Duration> {
        self.inner.idle_look_interval()
    }
}

/// Seven pulse widths (µs, 1 µs units) sweeping smoothly with `step`.
pub fn sweep(step: u32) -> ChannelValues {
    let mut values = [0u16; 7];
    for (channel, value) in values.iter_mut().enumerate() {
        *value = 1000 + ((step * 7 + channel as u32 * 50) % 1000) as u16;
    }
    ChannelValues::from_slice(&values).expect("seven values")
}

/// Waits up to `within` for the first event `wanted` accepts; panics naming the link's
/// statistics when none comes.
pub fn wait_for(link: &Link, within: Duration, wanted: impl Fn(&LinkEvent) -> bool) -> LinkEvent {
    let until = Instant::now() + within;
    while let Some(left) = until.checked_duration_since(Instant::now()) {
        if let Some(event) = link.next_event(left)
            && wanted(&event)
        {
            return event;
        }
    }
    panic!("no such event within {within:?}; stats {:?}", link.stats());
}

/// Waits up to `within` for `done` to hold, looking every 2 ms; panics saying `what` did not
/// happen when it does not.
pub fn wait_until(what: &str, within: Duration, mut done: impl FnMut() -> bool) {
    let until = Instant::now() + within;
    while !done() {
        assert!(Instant::now() < until, "{what}: not within {within:?}");
        std::thread::sleep(Duration::from_millis(2));
    }
}
