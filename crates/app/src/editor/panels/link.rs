//! The link panel: which device (the in-process simulated device or a serial port), connect
//! and disconnect, what the device is and its faults, the streaming caution, stream and
//! pause, statistics, and the arm's joints as the device moves them.

use egui::{Color32, Grid, RichText, Ui};

use armwright_link::{DeviceMode, Faults, LinkState};

use crate::approach::StartFrom;
use crate::editor::command::Command;
use crate::editor::device::{LinkAction, LinkView, StreamEnd, StreamPhase};
use crate::editor::state::EditorState;
use crate::link_capacity::PLAY_AHEAD;
use crate::scene::{Device, pose_to_file_units};

use super::status_bar::CAUTION;

/// The button that acknowledges the caution.
pub const ACKNOWLEDGE_LABEL: &str = "I have read the caution";

/// The checkbox that ends each stream at the rest pose.
pub const PARK_LABEL: &str = "End at the rest pose";

/// The caution's part about limp servos and the approach.
const LIMP_CAUTION: &str = "A limp servo jumps to its first pulse at its own top speed. Every \
stream first asks the device what it sends: a limp arm is woken at its rest pose (each joint's \
home) — one joint at a time, the slowest first, when the device plays setpoints ahead, else all \
joints together — then every stream approaches the first waypoint slowly.";

/// Draws the link panel from the state and the link's view.
pub fn link(ui: &mut Ui, state: &EditorState, view: &LinkView) -> Command {
    let mut command = Command::None;
    if view.arm_changed {
        // At the top, where it is seen: the device arm has gone from the views.
        ui.colored_label(
            Color32::from_rgb(255, 200, 0),
            "The arm changed since connecting: the simulated device still moves the old one. \
             Disconnect and connect again to move this one.",
        );
        ui.separator();
    }
    ui.heading("Device");
    let connected = view.connection.is_some();
    ui.add_enabled_ui(!connected && !view.connecting, |ui| {
        if ui
            .radio(
                state.device.link_device == Device::Simulated,
                "simulated device (in this program)",
            )
            .clicked()
        {
            command = Command::ChooseDevice(Device::Simulated);
        }
        for port in &view.ports {
            let chosen = state.device.link_device == Device::Port(port.path.clone());
            if ui
                .radio(chosen, format!("{} — {}", port.path, port.description))
                .clicked()
            {
                command = Command::ChooseDevice(Device::Port(port.path.clone()));
            }
        }
        let label = if view.listing {
            "Listing ports…"
        } else {
            "List serial ports"
        };
        if ui
            .add_enabled(!view.listing, egui::Button::new(label))
            .clicked()
        {
            command = Command::Link(LinkAction::ListPorts);
        }
    });
    ui.horizontal(|ui| {
        if connected {
            if ui.button("Disconnect").clicked() {
                command = Command::Link(LinkAction::Disconnect);
            }
        } else if ui
            .add_enabled(!view.connecting, egui::Button::new("Connect"))
            .clicked()
        {
            command = Command::Link(LinkAction::Connect(state.device.link_device.clone()));
        }
        if view.connecting {
            ui.spinner();
            ui.label("connecting…");
        }
    });
    if let Some(connection) = &view.connection {
        device_info(ui, view, connection);
        let link = &state.scene.link;
        let channels = usize::from(connection.info.channel_count);
        if let Some(warning) =
            crate::link_capacity::rate_above_capacity(link.rate_hz, channels, link.baud)
        {
            ui.colored_label(
                Color32::from_rgb(255, 200, 0),
                format!("link.rate_hz: {warning}"),
            );
        }
        ui.separator();
        command = command.then(stream_controls(ui, state, view));
        ui.separator();
        statistics(ui, view);
    } else {
        ui.label("not connected");
    }
    if let Some(pose) = &state.device.device_pose {
        ui.separator();
        device_pose(ui, state, pose);
        let limp = view
            .stats
            .as_ref()
            .and_then(|stats| stats.last_status)
            .is_some_and(|status| status.mode == DeviceMode::Limp);
        if limp {
            ui.label("No pulses: the servos are limp and the arm sags or falls under gravity.");
        }
    }
    command
}

fn device_info(ui: &mut Ui, view: &LinkView, connection: &crate::editor::device::Connection) {
    let info = &connection.info;
    Grid::new("link device info").num_columns(2).show(ui, |ui| {
        ui.label("connected to");
        ui.label(&connection.name);
        ui.end_row();
        ui.label("firmware");
        ui.label(info.firmware.as_str());
        ui.end_row();
        ui.label("channels");
        ui.label(info.channel_count.to_string());
        ui.end_row();
        ui.label("pulse range");
        ui.label(format!(
            "{:.1}–{:.1} µs in {} µs steps",
            info.us_from_units(info.min_pulse_units),
            info.us_from_units(info.max_pulse_units),
            info.us_from_units(1)
        ));
        ui.end_row();
        ui.label("frame period");
        ui.label(format!("{:.1} ms", f64::from(info.frame_period_us) / 1e3));
        ui.end_row();
        ui.label("streams");
        ui.label(if connection.plays_ahead {
            "played ahead"
        } else {
            "in real time"
        })
        .on_hover_text(if connection.plays_ahead {
            format!(
                "the device speaks protocol 4 and the scene's rate is its pulse frame rate: \
                 streams go {:.1} s ahead, so a busy computer does not stop the arm, and a limp \
                 arm wakes one joint at a time",
                PLAY_AHEAD.as_secs_f64()
            )
        } else {
            "the device cannot play setpoints ahead at the scene's rate (link.rate_hz must be its \
             pulse frame rate, protocol 4): a limp arm wakes with all joints together"
                .to_owned()
        });
        ui.end_row();
        if let Some(status) = view.stats.as_ref().and_then(|stats| stats.last_status) {
            ui.label("device mode");
            ui.label(format!("{:?}", status.mode));
            ui.end_row();
            ui.label("faults");
            let faults = fault_words(status.faults);
            if faults.is_empty() {
                ui.label("none");
            } else {
                ui.label(RichText::new(faults.join(", ")).color(Color32::from_rgb(255, 120, 80)));
            }
            ui.end_row();
            ui.label("bad lines / checksums");
            ui.label(format!("{} / {}", status.bad_lines, status.bad_checksums));
            ui.end_row();
            // Two rows, not one "clamped values / watchdog trips": that label widened the tools
            // panel at 1280 points.
            ui.label("clamped values");
            ui.label(status.clamped_values.to_string());
            ui.end_row();
            ui.label("watchdog trips");
            ui.label(status.watchdog_trips.to_string());
            ui.end_row();
        }
    });
    if let Some(loss) = view.stats.as_ref().and_then(|stats| stats.loss) {
        ui.colored_label(
            Color32::from_rgb(255, 120, 80),
            format!("link lost: {loss}"),
        );
    }
}

/// The faults a status line reports, in words.
fn fault_words(faults: Faults) -> Vec<&'static str> {
    [
        (Faults::WATCHDOG, "watchdog fired"),
        (Faults::EMERGENCY_STOP, "emergency stop latched"),
        (Faults::CLAMPED, "values clamped"),
        (Faults::BAD_INPUT, "bad input"),
        (Faults::OVERFLOW, "queue overflow"),
    ]
    .into_iter()
    .filter(|(fault, _)| faults.contains(*fault))
    .map(|(_, words)| words)
    .collect()
}

/// The session's caution in its amber frame, with `note` (what this path adds: how a limp servo
/// behaves here) and the acknowledge button; true when the button was pressed.
pub(super) fn caution_box(ui: &mut Ui, note: &str) -> bool {
    let mut acknowledged = false;
    egui::Frame::group(ui.style())
        .stroke(egui::Stroke::new(2.0, Color32::from_rgb(255, 200, 0)))
        .show(ui, |ui| {
            ui.label(
                RichText::new("CAUTION")
                    .strong()
                    .color(Color32::from_rgb(255, 200, 0)),
            );
            ui.label(CAUTION);
            ui.label(note);
            acknowledged = ui.button(ACKNOWLEDGE_LABEL).clicked();
        });
    acknowledged
}

fn stream_controls(ui: &mut Ui, state: &EditorState, view: &LinkView) -> Command {
    let mut command = Command::None;
    if !state.device.caution_acknowledged && caution_box(ui, LIMP_CAUTION) {
        command = Command::AcknowledgeCaution;
    }
    let link_idle = view
        .stats
        .as_ref()
        .is_some_and(|stats| stats.state == LinkState::Idle);
    let may_move = state.device.caution_acknowledged && link_idle;
    ui.horizontal(|ui| match view.phase {
        StreamPhase::Streaming => {
            if ui.button("Pause stream").clicked() {
                command = Command::Link(LinkAction::Pause);
            }
        }
        StreamPhase::Paused => {
            if ui
                .add_enabled(may_move, egui::Button::new("Resume stream"))
                .clicked()
            {
                command = Command::Link(LinkAction::Resume);
            }
            if ui
                .add_enabled(may_move, egui::Button::new("Stream from the start"))
                .clicked()
            {
                command = Command::Link(LinkAction::Stream {
                    park: state.device.park_after_stream,
                });
            }
        }
        StreamPhase::Planning | StreamPhase::Pausing => {
            ui.spinner();
        }
        StreamPhase::Idle | StreamPhase::Finished | StreamPhase::Ended => {
            if ui
                .add_enabled(may_move, egui::Button::new("Stream sequence"))
                .on_disabled_hover_text(
                    "needs the caution acknowledged, no stop latched and the link idle",
                )
                .clicked()
            {
                command = Command::Link(LinkAction::Stream {
                    park: state.device.park_after_stream,
                });
            }
        }
    });
    let mut park = state.device.park_after_stream;
    if ui
        .checkbox(&mut park, PARK_LABEL)
        .on_hover_text(
            "after the last waypoint, move to the rest pose (each joint's home) at the approach \
             speed share and hold there, as `armwright stream --park` does",
        )
        .changed()
    {
        command = Command::ParkAfterStream(park);
    }
    ui.label(RichText::new(approach_words(state, view)).small());
    let total = view.progress.1;
    ui.label(stream_words(view));
    if total > 0 {
        ui.add(egui::ProgressBar::new(
            view.sent.min(total) as f32 / total as f32,
        ));
    }
    if view.clamped > 0 {
        ui.label(format!(
            "{} setpoints limited to their servo's range",
            view.clamped
        ));
    }
    command
}

/// How the next stream will start, from what the device last reported sending.
pub(crate) fn approach_words(state: &EditorState, view: &LinkView) -> String {
    let share = state.scene.timing.approach_speed_share_pct;
    let output = view.stats.as_ref().map(|stats| stats.device_output);
    match (&view.connection, output) {
        (Some(_), Some(Some(output))) if !output.any_limp() => format!(
            "a stream starts with an approach at {share} % speed share from the pulses the device \
             sends (asked again at stream time)"
        ),
        (Some(_), Some(Some(_))) => format!(
            "{} (wake pause {:.0} ms, approach at {share} % speed share)",
            StartFrom::Limp.describe_waking(view.wake_mode()),
            state.scene.timing.wake_pause_ms
        ),
        _ => format!(
            "a stream starts with an approach at {share} % speed share, planned from what the \
             device reports at stream time"
        ),
    }
}

/// Where the stream stands, in words, counting the setpoints the link wrote to the device (after
/// an emergency stop, those the device had played, when it could say).
pub(crate) fn stream_words(view: &LinkView) -> String {
    let (queued, total) = view.progress;
    let sent = view.sent.min(total);
    match view.phase {
        StreamPhase::Idle => "stream: none".into(),
        StreamPhase::Planning => "stream: planning".into(),
        StreamPhase::Streaming if sent >= total && plays_ahead(view) => {
            format!("stream: all {total} setpoints sent; the device plays the last of them")
        }
        StreamPhase::Streaming if plays_ahead(view) => format!(
            "stream: streaming, {sent} of {total} setpoints sent, up to {:.1} s ahead of the arm",
            PLAY_AHEAD.as_secs_f64()
        ),
        StreamPhase::Streaming => {
            format!("stream: streaming, {sent} of {total} setpoints sent ({queued} queued)")
        }
        StreamPhase::Pausing => format!("stream: pausing at {sent} of {total} setpoints"),
        StreamPhase::Paused => {
            format!("stream: paused at {sent} of {total} setpoints, the device holding")
        }
        StreamPhase::Finished => format!("stream: ran to its end, {total} setpoints sent"),
        StreamPhase::Ended => match view.ended {
            Some(StreamEnd::EmergencyStop) => match view.played_at_stop {
                Some(played) => format!(
                    "stream: stopped by the emergency stop at {played} of {total} setpoints"
                ),
                None => format!(
                    "stream: stopped by the emergency stop, {sent} of {total} setpoints sent"
                ),
            },
            Some(StreamEnd::LinkLost) => {
                format!("stream: link lost at {sent} of {total} setpoints")
            }
            Some(StreamEnd::Error) | None => {
                format!("stream: ended early at {sent} of {total} setpoints (see the messages)")
            }
        },
    }
}

/// Whether the connected link plays streams ahead.
fn plays_ahead(view: &LinkView) -> bool {
    view.connection
        .as_ref()
        .is_some_and(|connection| connection.plays_ahead)
}

fn statistics(ui: &mut Ui, view: &LinkView) {
    let Some(stats) = &view.stats else { return };
    let ms = |d: std::time::Duration| format!("{:.2} ms", d.as_secs_f64() * 1e3);
    Grid::new("link statistics").num_columns(2).show(ui, |ui| {
        ui.label("link");
        ui.label(format!("{:?}", stats.state));
        ui.end_row();
        ui.label("frames sent / acknowledged");
        ui.label(format!("{} / {}", stats.frames_sent, stats.frames_acked));
        ui.end_row();
        ui.label("late / dropped / underruns");
        ui.label(format!(
            "{} / {} / {}",
            stats.frames_late, stats.frames_dropped, stats.underruns
        ));
        ui.end_row();
        ui.label("jitter mean / p99 / max");
        ui.label(format!(
            "{} / {} / {}",
            ms(stats.jitter_mean),
            ms(stats.jitter_p99),
            ms(stats.jitter_max)
        ));
        ui.end_row();
        ui.label("silence / processor wait").on_hover_text(
            "The longest time the device heard nothing from this computer while streaming, and \
             the longest the link's thread waited for a processor meanwhile (other programs \
             running). Near each other, a busy computer held the stream up.",
        );
        ui.label(format!(
            "{} / {}",
            ms(stats.send_gap_max),
            ms(stats.host_wait_max)
        ));
        ui.end_row();
        if let Some(latency) = stats.stop_write_latency {
            ui.label("last stop written after");
            ui.label(ms(latency));
            ui.end_row();
        }
    });
}

fn device_pose(ui: &mut Ui, state: &EditorState, pose: &[f64]) {
    ui.label(RichText::new("Arm as the device moves it").strong());
    Grid::new("link device pose").num_columns(2).show(ui, |ui| {
        for (index, value) in pose_to_file_units(&state.scene.arm, pose)
            .into_iter()
            .enumerate()
        {
            let unit = if state.is_prismatic(index) {
                "mm"
            } else {
                "°"
            };
            ui.label(state.joint_label(index));
            ui.label(format!("{value:.2} {unit}"));
            ui.end_row();
        }
        let tool = state
            .arm()
            .and_then(|arm| armwright_kinematics::tool_pose(arm, pose).ok());
        if let Some(tool) = tool {
            let mm = tool.translation.vector * 1e3;
            ui.label("tool point");
            ui.label(format!("x {:.1}  y {:.1}  z {:.1} mm", mm.x, mm.y, mm.z));
            ui.end_row();
        }
    });
}

#[cfg(test)]
mod tests {
    use armwright_link::{SimDevice, SimDeviceConfig, StreamStats};
    use egui_kittest::Harness;
    use egui_kittest::kittest::{NodeT, Queryable};

    use super::*;
    use crate::editor::device::Connection;
    use crate::editor::sample::sample_scene;

    type PanelState = (EditorState, LinkView, Vec<Command>);

    fn connected() -> Harness<'static, PanelState> {
        let view = LinkView {
            connection: Some(Connection {
                name: "simulated device".into(),
                info: SimDevice::new(SimDeviceConfig::default()).info(),
                plays_ahead: true,
            }),
            stats: Some(StreamStats::default()),
            ..LinkView::default()
        };
        Harness::new_ui_state(
            |ui, (state, view, commands): &mut PanelState| {
                let command = link(ui, state, view);
                if command != Command::None {
                    commands.push(command);
                }
            },
            (EditorState::new(sample_scene(), None), view, Vec::new()),
        )
    }

    #[test]
    fn the_caution_comes_before_the_first_stream() {
        let mut harness = connected();
        harness.run();
        harness.get_by_label_contains("A software stop is not a safety device");
        assert!(
            harness
                .get_by_label("Stream sequence")
                .accesskit_node()
                .is_disabled()
        );
        harness.get_by_label(ACKNOWLEDGE_LABEL).click();
        harness.run();
        assert_eq!(harness.state().2, vec![Command::AcknowledgeCaution]);

        harness.state_mut().0.device.caution_acknowledged = true;
        harness.run();
        assert!(harness.query_by_label(ACKNOWLEDGE_LABEL).is_none());
        harness.get_by_label("Stream sequence").click();
        harness.run();
        assert_eq!(
            harness.state().2.last(),
            Some(&Command::Link(LinkAction::Stream { park: false }))
        );
        harness.get_by_label(PARK_LABEL).click();
        harness.run();
        assert_eq!(
            harness.state().2.last(),
            Some(&Command::ParkAfterStream(true))
        );
        harness.state_mut().0.device.park_after_stream = true;
        harness.run();
        harness.get_by_label("Stream sequence").click();
        harness.run();
        assert_eq!(
            harness.state().2.last(),
            Some(&Command::Link(LinkAction::Stream { park: true }))
        );
    }

    #[test]
    fn a_rate_above_the_link_capacity_is_warned_in_one_line() {
        let mut harness = connected();
        harness.run();
        assert!(
            harness
                .query_by_label_contains("is more than the link carries")
                .is_none()
        );
        harness.state_mut().0.scene.link.rate_hz = 1000.0;
        harness.run();
        harness.get_by_label_contains("link.rate_hz: 1000 Hz is more than the link carries");
    }

    #[test]
    fn the_stream_line_says_where_a_stop_left_it() {
        let view = LinkView {
            phase: StreamPhase::Ended,
            progress: (69, 250),
            sent: 61,
            ended: Some(StreamEnd::EmergencyStop),
            ..LinkView::default()
        };
        // Before the device says what it holds: only what was sent is known.
        assert_eq!(
            stream_words(&view),
            "stream: stopped by the emergency stop, 61 of 250 setpoints sent"
        );
        // Then what it had played, however many were sent ahead.
        let held = LinkView {
            played_at_stop: Some(12),
            ..view
        };
        assert_eq!(
            stream_words(&held),
            "stream: stopped by the emergency stop at 12 of 250 setpoints"
        );
        let finished = LinkView {
            phase: StreamPhase::Finished,
            progress: (250, 250),
            sent: 250,
            ..LinkView::default()
        };
        assert_eq!(
            stream_words(&finished),
            "stream: ran to its end, 250 setpoints sent"
        );
    }

    #[test]
    fn the_device_pose_is_shown_in_the_scene_units() {
        let mut harness = connected();
        let pose = harness.state().0.pose.clone();
        harness.state_mut().0.device.device_pose = Some(pose.clone());
        harness.run();
        let first = pose[0].to_degrees();
        harness.get_by_label(&format!("{first:.2} °"));
        let tool = harness.state().0.tool_point().expect("tool point") * 1e3;
        harness.get_by_label(&format!(
            "x {:.1}  y {:.1}  z {:.1} mm",
            tool.x, tool.y, tool.z
        ));
    }
}
