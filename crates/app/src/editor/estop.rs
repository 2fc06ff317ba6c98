//! The emergency-stop path out of the editor: a small trait the link plugs into, and a channel
//! implementation.
//!
//! The editor calls [`StopLink::send_stop`] in the same frame as the click or key press, before
//! anything else in that frame's command list is applied. A software stop is not a safety device:
//! keep a hard power cut-off within reach.

use std::sync::mpsc::{Receiver, Sender, channel};

use super::state::StopSource;

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

/// Where the editor sends a stop request. The link crate implements this to reach the device;
/// until it does, [`ChannelStopLink`] carries requests to whoever listens.
pub trait StopLink: Send {
    /// Sends the request at once. Must not block: it runs on the UI thread.
    fn send_stop(&mut self, request: StopRequest);
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
