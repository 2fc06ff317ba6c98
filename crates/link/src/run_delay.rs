//! The calling thread's run-queue delay: how long, in all, it was ready to run but waited for a
//! processor (Linux's `/proc/thread-self/schedstat`, second field, in ns). The simulated device's
//! clock leaves those waits out ([`crate::sim_clock`]); the streaming thread measures them
//! between the lines it writes ([`crate::StreamStats::host_wait_max`]). Elsewhere, or on a kernel
//! without it, there is none to read.

use std::time::Duration;

/// The run-queue delay of the thread that opened it, read from `/proc/thread-self/schedstat`
/// (open it from the thread to be watched: the file stays that thread's).
#[derive(Debug)]
pub(crate) struct RunDelay {
    #[cfg(target_os = "linux")]
    file: std::fs::File,
}

impl RunDelay {
    /// The calling thread's; `None` where it cannot be read.
    #[cfg(target_os = "linux")]
    pub(crate) fn open() -> Option<Self> {
        let mut opened = Self {
            file: std::fs::File::open("/proc/thread-self/schedstat").ok()?,
        };
        opened.read().map(|_| opened)
    }

    #[cfg(not(target_os = "linux"))]
    pub(crate) fn open() -> Option<Self> {
        None
    }

    /// The delay so far; `None` when the read fails.
    #[cfg(target_os = "linux")]
    pub(crate) fn read(&mut self) -> Option<Duration> {
        use std::os::unix::fs::FileExt;
        let mut buf = [0u8; 96];
        let count = self.file.read_at(&mut buf, 0).ok()?;
        parse_run_delay(buf.get(..count)?)
    }

    #[cfg(not(target_os = "linux"))]
    pub(crate) fn read(&mut self) -> Option<Duration> {
        None
    }
}

/// The second field of a schedstat line ("run time, run-queue delay, time slices", ns).
fn parse_run_delay(text: &[u8]) -> Option<Duration> {
    let text = std::str::from_utf8(text).ok()?;
    let nanos = text.split_ascii_whitespace().nth(1)?.parse::<u64>().ok()?;
    Some(Duration::from_nanos(nanos))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_second_schedstat_field_is_the_run_queue_delay() {
        assert_eq!(
            parse_run_delay(b"50539917 573547104 31\n"),
            Some(Duration::from_nanos(573_547_104))
        );
        assert_eq!(parse_run_delay(b"50539917\n"), None);
        assert_eq!(parse_run_delay(b"a b c\n"), None);
    }
}
