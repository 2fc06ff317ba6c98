//! The emergency-stop path out of the editor: a small trait the link plugs into, a channel
//! implementation, and the pair the editor sends every stop through (its device link first,
//! then whoever else listens).
//!
//! The editor calls [`StopLink::send_stop`] in the same frame as the click or key press, before
//! anything else in that frame's command list is applied. A software stop is not a safety device:
//! keep a hard power cut-off within reach.

use std::sync::mpsc::{Receiver, Sender, channel};

use armwright_link::ResetConfirmation;

/// Where an emergency-stop request came from.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum StopSource {
    /// The button in the top bar.
    Button,
    /// The emergency-stop key on the keyboard.
    Key,
}

/// The emergency-stop latch. Once stopped, only a confirmed reset clears it.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum StopState {
    /// No stop is latched.
    Clear,
    /// A stop was requested and is latched.
    Latched {
        /// What requested it.
        source: StopSource,
        /// egui frame number in which the request left the editor.
        frame: u64,
    },
}

/// The key that requests an emergency stop whatever has keyboard focus.
///
/// Escape: every keyboard has it, laptops included, in the same top-left corner where a hand
/// finds it without looking, and "get out" is already its meaning. The editor gives Escape no
/// other job (dialogs close with their buttons), so it never means two things; a stop pressed by
/// mistake only costs a confirmed reset.
pub const STOP_KEY: egui::Key = egui::Key::Escape;

/// The key's name as shown in the window and in DEVELOPERS.md.
pub const STOP_KEY_NAME: &str = "Esc";

/// One request to stop the arm now.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct StopRequest {
    /// What requested it.
    pub source: StopSource,
    /// egui frame number in which the request was sent.
    pub frame: u64,
}

/// Where the editor sends a stop request: the device link
/// ([`LinkStopLink`](super::LinkStopLink)), or [`ChannelStopLink`] to whoever listens.
pub trait StopLink: Send {
    /// Sends the request at once. Must not block: it runs on the UI thread.
    fn send_stop(&mut self, request: StopRequest);

    /// Clears the latch at the far end, once a person has confirmed the reset. Must not
    /// block. A listener that keeps no latch of its own has nothing to clear, so by default
    /// this does nothing.
    fn confirm_reset(&mut self, confirmation: ResetConfirmation) {
        let _ = confirmation;
    }
}

/// Two stop links told in turn: the editor's device link first, so the stop line leaves
/// before anything else is done, then the listener the editor was opened with.
pub(crate) struct StopPair<'a> {
    /// Told first.
    pub first: &'a mut dyn StopLink,
    /// Told second.
    pub then: &'a mut dyn StopLink,
}

impl StopLink for StopPair<'_> {
    fn send_stop(&mut self, request: StopRequest) {
        self.first.send_stop(request);
        self.then.send_stop(request);
    }

    fn confirm_reset(&mut self, confirmation: ResetConfirmation) {
        self.first.confirm_reset(confirmation);
        self.then.confirm_reset(confirmation);
    }
}

/// A [`StopLink`] that puts each request on a channel.
#[derive(Debug, Clone)]
pub struct ChannelStopLink {
    sender: Sender<StopRequest>,
}

impl ChannelStopLink {
    /// A link and the receiving end of its channel.
    pub fn new() -> (ChannelStopLink, Receiver<StopRequest>) {
        let (sender, receiver) = channel();
        (ChannelStopLink { sender }, receiver)
    }
}

impl StopLink for ChannelStopLink {
    fn send_stop(&mut self, request: StopRequest) {
        // A receiver that has gone away cannot be helped from here; the latch still shows the
        // stop in the window.
        let _ = self.sender.send(request);
    }
}
