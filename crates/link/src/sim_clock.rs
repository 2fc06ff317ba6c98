//! The clock of a simulated device that runs in a thread of its own: a microcontroller's time,
//! which does not jump when the computer simulating it gives its processor to something else.
//!
//! A microcontroller is never descheduled: it sees each byte as it arrives and judges its
//! watchdog on time that really passed between bytes. A thread that simulates one on a busy
//! computer can wait hundreds of milliseconds for a processor while the host's lines pile up
//! in the pseudo-terminal; on the wall clock that wait would look to the device like a host
//! that said nothing, and its watchdog would trip although the host was on time. So this clock
//! is the wall clock less the time the simulating thread was ready to run but waited for a
//! processor (Linux's run-queue delay of the thread, `/proc/thread-self/schedstat`, second
//! field, in ns). Time the thread slept waiting for input still counts: a host that really
//! stays silent for the watchdog time still trips it. Time the whole process was stopped
//! (SIGSTOP) counts too: the device paused, as a device can. Where the run-queue delay cannot
//! be read (another system, a kernel without it), the clock is the wall clock.
//!
//! What this cannot see: a host that was silent during the very stretch the simulator waited
//! for a processor is forgiven for that stretch. The host measures its own longest silence
//! toward the device ([`crate::StreamStats::send_gap_max`]) for that reason.

use std::time::{Duration, Instant};

use crate::run_delay::RunDelay;

/// How many times [`SimClock::now`] reads the wall clock and the run-queue delay before it
/// takes reads a wait fell between (a wait each time means a machine so busy that the device's
/// time barely moves anyway).
const CONSISTENT_TRIES: usize = 4;

/// A simulated device's clock for the calling thread; see the module's description.
#[derive(Debug)]
pub(crate) struct SimClock {
    start: Instant,
    run_delay: Option<RunDelay>,
    /// Run-queue delay of the thread when the clock started, and at the newest look.
    delay_at_start: Duration,
    delay_seen: Duration,
    /// The largest run-queue delay between two looks at the clock.
    longest_wait: Duration,
    /// The newest time given, which the next is never below.
    last: Duration,
}

impl SimClock {
    /// A clock reading zero now, for the calling thread (read it from that thread only).
    pub(crate) fn start() -> Self {
        let mut run_delay = RunDelay::open();
        let delay_at_start = run_delay
            .as_mut()
            .and_then(RunDelay::read)
            .unwrap_or_default();
        Self {
            start: Instant::now(),
            run_delay,
            delay_at_start,
            delay_seen: delay_at_start,
            longest_wait: Duration::ZERO,
            last: Duration::ZERO,
        }
    }

    /// The device's time since the clock started: wall time less the thread's waits for a
    /// processor.
    ///
    /// The wall clock and the delay are read as one: a wait for a processor between two reads
    /// would count in one and not the other, and put the time up to that wait ahead, to fall
    /// back at the next look. The delay grows only when the thread gets a processor back, so a
    /// delay that reads the same before and after the wall clock saw no wait in between;
    /// otherwise all three are read again, up to [`CONSISTENT_TRIES`] times. The time given
    /// never goes back, whatever the reads.
    pub(crate) fn now(&mut self) -> Duration {
        let mut elapsed = self.start.elapsed();
        if let Some(run_delay) = self.run_delay.as_mut() {
            let mut delay = None;
            for _ in 0..CONSISTENT_TRIES {
                let before = run_delay.read();
                elapsed = self.start.elapsed();
                delay = run_delay.read();
                if before == delay {
                    break;
                }
            }
            if let Some(delay) = delay {
                self.longest_wait = self.longest_wait.max(delay.saturating_sub(self.delay_seen));
                self.delay_seen = self.delay_seen.max(delay);
            }
        }
        self.last = self.last.max(elapsed.saturating_sub(self.not_counted()));
        self.last
    }

    /// Time the thread waited for a processor since the clock started, which the device's
    /// time does not count.
    pub(crate) fn not_counted(&self) -> Duration {
        self.delay_seen.saturating_sub(self.delay_at_start)
    }

    /// The longest such wait between two looks at the clock.
    pub(crate) fn longest_wait(&self) -> Duration {
        self.longest_wait
    }

    /// Whether the clock can see the thread's waits for a processor (else it is the wall
    /// clock).
    pub(crate) fn sees_waits(&self) -> bool {
        self.run_delay.is_some()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_clock_never_runs_ahead_of_the_wall_clock_and_never_goes_back() {
        let wall = Instant::now();
        let mut clock = SimClock::start();
        let mut last = Duration::ZERO;
        // Busy work, so that on a loaded machine the thread waits for a processor.
        let mut sum = 0u64;
        for round in 0..200u64 {
            for i in 0..20_000u64 {
                sum = sum.wrapping_add(std::hint::black_box(i * round));
            }
            let now = clock.now();
            assert!(now >= last, "{now:?} after {last:?}");
            assert!(now <= wall.elapsed(), "{now:?}");
            last = now;
        }
        assert!(clock.longest_wait() <= clock.not_counted());
        std::hint::black_box(sum);
    }

    #[cfg(target_os = "linux")]
    #[test]
    fn on_linux_the_waits_for_a_processor_are_seen() {
        assert!(SimClock::start().sees_waits());
    }
}
