//! The emergency-stop request path: a lock-free flag any thread can raise, which the
//! streaming thread checks before everything else, at least once a millisecond while it
//! streams or waits for an answer; an idle streaming thread sleeps until the flag wakes it.

use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::{Arc, Mutex, OnceLock, PoisonError};
use std::thread::Thread;
use std::time::Instant;

/// A handle that asks for an emergency stop. Clone it freely (a key handler, a Ctrl-C
/// handler, a button); [`EmergencyStop::trigger`] never blocks on the streaming thread.
///
/// The stop line overtakes every queued setpoint, queued setpoints are dropped, and the
/// link refuses to stream until [`crate::Link::reset_after_stop`] is called with a
/// person's confirmation. A software stop is not a safety device: keep a hard power
/// cut-off within reach.
#[derive(Debug, Clone, Default)]
pub struct EmergencyStop {
    signal: Arc<StopSignal>,
}

#[derive(Debug, Default)]
struct StopSignal {
    requested: AtomicBool,
    requested_at: Mutex<Option<Instant>>,
    /// The streaming thread, woken from its idle sleep by a request (and by the link's own
    /// commands and setpoints, through [`EmergencyStop::wake_link`]).
    link_thread: OnceLock<Thread>,
}

impl EmergencyStop {
    /// Asks for an emergency stop now.
    pub fn trigger(&self) {
        let mut at = self
            .signal
            .requested_at
            .lock()
            .unwrap_or_else(PoisonError::into_inner);
        at.get_or_insert_with(Instant::now);
        self.signal.requested.store(true, Ordering::SeqCst);
        drop(at);
        self.wake_link();
    }

    /// Names the streaming thread that serves this stop (called once, by that thread).
    pub(crate) fn serve_from(&self, thread: Thread) {
        let _ = self.signal.link_thread.set(thread);
    }

    /// Wakes the streaming thread if it sleeps idle; it then looks at the stop flag, its
    /// commands and its setpoints at once. A wake before it sleeps is kept for that sleep
    /// (the token of [`std::thread::Thread::unpark`]), so none is lost.
    pub(crate) fn wake_link(&self) {
        if let Some(thread) = self.signal.link_thread.get() {
            thread.unpark();
        }
    }

    /// Takes a pending request: the time it was first made, or `None` when there is none.
    pub(crate) fn take_request(&self) -> Option<Instant> {
        if !self.signal.requested.swap(false, Ordering::SeqCst) {
            return None;
        }
        let mut at = self
            .signal
            .requested_at
            .lock()
            .unwrap_or_else(PoisonError::into_inner);
        Some(at.take().unwrap_or_else(Instant::now))
    }
}

/// A person's confirmation that the arm has been checked and may be released from an
/// emergency stop. Build it only in answer to an explicit question to the user.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct ResetConfirmation(());

impl ResetConfirmation {
    /// The confirmation, given by a person who has checked the arm and its surroundings.
    pub fn confirmed_by_person() -> Self {
        Self(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_request_is_taken_once_with_its_first_time() {
        let stop = EmergencyStop::default();
        assert_eq!(stop.take_request(), None);
        let before = Instant::now();
        stop.clone().trigger();
        stop.trigger();
        let at = stop.take_request().expect("requested");
        assert!(at >= before);
        assert_eq!(stop.take_request(), None);
    }
}
