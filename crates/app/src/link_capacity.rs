//! What a stream asks of its serial link: whether a scene's setpoint rate fits it (the warning
//! `armwright check` and `stream` print and the editor's Link tab shows), and how far ahead a
//! stream is sent to a device that plays ahead (`stream` and the editor alike).

use std::time::Duration;

use armwright_link::{setpoint_capacity_hz, setpoint_line_len};

/// How far ahead a stream is sent to a device that plays planned setpoints from its queue
/// (`PROTOCOL.md` §3, protocol 4): a host held up for up to this long plus the device's 250 ms
/// watchdog neither ends the stream nor trips the watchdog. Below the reference firmware's
/// 64-frame (1.28 s) play queue, so a device clock a little slower than the host's does not
/// fill it.
pub(crate) const PLAY_AHEAD: Duration = Duration::from_secs(1);

/// Says when `rate_hz` asks for more setpoint lines a second than a serial link at `baud`
/// carries for `channels` channels (`armwright_link::setpoint_capacity_hz`, `PROTOCOL.md` §7);
/// `None` within it. Warned, not refused: the stream's flow control keeps the line from
/// flooding (the emergency stop still goes out at once), the stream only falls behind its
/// schedule, and the simulated device has no baud rate at all.
pub(crate) fn rate_above_capacity(rate_hz: f64, channels: usize, baud: u32) -> Option<String> {
    let capacity = setpoint_capacity_hz(channels, baud);
    (rate_hz > capacity).then(|| {
        format!(
            "{rate_hz} Hz is more than the link carries: {channels}-channel setpoints are {} \
             bytes a line and {baud} baud carries at most {} of them a second, so a stream over \
             a serial port falls behind its schedule; lower the rate or raise link.baud",
            setpoint_line_len(channels),
            capacity.floor()
        )
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_rate_above_the_link_capacity_is_named_with_the_figures() {
        // PROTOCOL.md §7: 7 channels at 115 200 baud carry 303 setpoints a second.
        let warning = rate_above_capacity(1000.0, 7, 115_200).expect("above capacity");
        assert!(
            warning.starts_with("1000 Hz is more than the link carries")
                && warning.contains("7-channel setpoints are 38 bytes a line")
                && warning.contains("at most 303 of them a second"),
            "{warning}"
        );
        assert_eq!(rate_above_capacity(300.0, 7, 115_200), None);
        assert!(rate_above_capacity(300.0, 7, 57_600).is_some());
    }
}
