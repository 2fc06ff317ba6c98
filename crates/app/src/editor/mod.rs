//! The desktop editor: the arm to scale from above and from the side, teaching by dragging the
//! tool point, the sequence of waypoints, files with undo and autosave, and an emergency stop
//! that is always on screen.
//!
//! Naming scheme: `state.rs` holds what is saved, undone and tested (no egui types; `state/`
//! groups its fields by concern);
//! `command.rs` is what panels ask for and how it changes the state (`command/`: one file per
//! area, `apply` only dispatches); `message.rs` a status-bar line; `history.rs` undo and
//! redo; `estop.rs` the path a stop request takes out of the editor; `device.rs` the link to
//! a device and its worker thread (connect, stream, pause, reset); `files.rs` file work off
//! the UI thread; `recovery.rs` the autosaved copy; `sample.rs` the built-in scene;
//! `retime_job.rs` retiming on a worker thread; `arm_form.rs` the arm settings form's fields and
//! typed text; `calibration.rs` guided calibration of one joint (pulse held, points, fit,
//! deadband search); `dry_run_job.rs` plans the sequence and runs the dry run off the UI thread;
//! `traces.rs` what the timeline plots; `follow.rs` the connected device following the edited
//! pose, and jog; `dry_run_marks.rs` the contacts and unsettled stops the
//! views, the timeline and the sequence mark; `playback.rs` the timeline's cursor and playback;
//! `capture.rs` the input arm from the device's analog inputs and capturing its pose;
//! `inputs_form.rs` the input arm's form (the scene's `inputs` as typed);
//! `panels/` one file per panel; `views/` the two to-scale views; `waypoint_name.rs` the names
//! a stored waypoint gets. This file is the shell:
//! [`Editor::logic`] handles what must run whatever is on screen (the emergency-stop key first),
//! [`Editor::ui`] draws the panels and applies their commands after the frame.

mod arm_context;
mod arm_form;
mod calibration;
mod capture;
mod command;
mod device;
mod dry_run_job;
mod dry_run_marks;
mod estop;
mod files;
pub(crate) mod follow;
mod history;
mod inputs_form;
mod message;
mod panels;
mod playback;
mod recovery;
mod retime_job;
mod sample;
mod state;
mod traces;
mod views;
mod waypoint_name;

pub use arm_form::{ArmField, ArmForm, ArmTypeChoice, ChainField, DhParam, JointField};
pub use calibration::{
    Calibrating, CalibrationCommand, DEADBAND_STEP_S, DeadbandSearch, MeasuredPosition,
    PULSE_STEPS_US, SearchLeg,
};
pub use capture::{CAPTURE_KEY, CAPTURE_KEY_NAME, INPUT_ARM, NO_INPUT_ARM, input_arm_pose};
pub use command::{Command, Outside, WaypointField, apply};
pub use device::{
    ChannelPulse, Connection, DeviceLink, LinkAction, LinkStopLink, LinkView, StreamEnd,
    StreamPhase,
};
pub use dry_run_marks::{ContactMark, DryRunMarks, Solid, UnsettledMark, placement_text};
pub use estop::{
    ChannelStopLink, STOP_KEY, STOP_KEY_NAME, StopLink, StopRequest, StopSource, StopState,
};
pub use follow::{
    DEFAULT_FOLLOW_SHARE_PCT, FollowAction, FollowCommand, FollowPhase, FollowSettings,
    FollowSource, FollowView, JOG_WHILE_FOLLOWING_INPUTS, jog_refused,
};
pub use inputs_form::{InputField, InputRow, InputsCommand, InputsForm, PointText, place_in_form};
pub use panels::{
    ACKNOWLEDGE_LABEL, CAUTION, EMERGENCY_STOP_LABEL, MOVED_LABEL, NUDGE_KEYS, PARK_LABEL,
};
pub use panels::{ADD_INPUT_LABEL, TAKE_LABEL};
pub use panels::{FOLLOW_INPUT_LABEL, FOLLOW_LABEL, JOG_BACK_KEY, JOG_KEYS, JOG_ON_KEY};
pub use playback::{AtEnd, DryRunStatus, Playback, PlaybackCommand, SPEEDS, Timeline};
pub use recovery::{Recovery, RecoveryCopy};
pub use retime_job::{RetimeReport, RetimeRun, RetimeState, RunFigures, WaypointFigures};
pub use sample::sample_scene;
pub use state::{
    BranchChoice, DeviceSide, Dialog, Document, EditorState, Level, Message, PoseReadout,
    ReachStatus, ToolsTab, ViewState,
};
pub use traces::{GRID, MAX_BUCKETS, Quantity, Series, Traces, decimate};
pub use views::{
    ArmOverlay, Camera, DEVICE, MapKey, MapLayer, OVER_RATING, Plane, Projection, ReachLayers,
    SIMULATED, SidePlane, TopPlane, TorqueRamp, VIEW_HINT, ViewKind, ViewMaps, viridis,
};

use std::path::PathBuf;
use std::process::ExitCode;
use std::time::Duration;

use egui::{CentralPanel, Event, Key, Modifiers, Panel, Rect, ScrollArea, UiBuilder, pos2, vec2};

use dry_run_job::DryRunJob;
use estop::StopPair;
use files::{FileResult, FileWorker, pick_file, problem_lines};
use message::Report;
use panels::TimelinePlot;
use retime_job::RetimeWorker;

/// Default height of the sequence and timeline at the bottom, in points: room for eight
/// waypoint rows and a readable plot, leaving the views most of a 960-point window.
const BOTTOM_HEIGHT: f32 = 290.0;

/// Widest default of the timeline beside the sequence, in points (42 % of a smaller window): the
/// sequence's columns keep about 880 points of a 1560-point window.
const TIMELINE_WIDTH: f32 = 640.0;

/// The keys that nudge the tool point: key, axis (0 x, 1 y, 2 z) and direction. A press moves
/// it 1 mm, 10 mm with Shift, by the same inverse kinematics as a drag ([`NUDGE_KEYS`] lists
/// them in the window).
pub const NUDGES: [(Key, usize, f64); 6] = [
    (Key::ArrowLeft, 0, -1.0),
    (Key::ArrowRight, 0, 1.0),
    (Key::ArrowDown, 1, -1.0),
    (Key::ArrowUp, 1, 1.0),
    (Key::PageDown, 2, -1.0),
    (Key::PageUp, 2, 1.0),
];

/// How the editor is set up.
#[derive(Debug, Clone)]
pub struct EditorOptions {
    /// The folder the recovery copies are kept in (one per scene file and one per untitled
    /// window); `None` turns autosave off.
    pub recovery: Option<Recovery>,
    /// Time between autosaves while there are unsaved changes.
    pub autosave_interval: Duration,
    /// The device to connect to as the editor opens, if any.
    pub connect_on_start: Option<crate::scene::Device>,
}

impl Default for EditorOptions {
    /// Recovery copy in the per-user state folder, autosave every 30 s, connected to the
    /// in-process simulated device.
    fn default() -> EditorOptions {
        EditorOptions {
            recovery: Recovery::default_dir().map(Recovery::in_dir),
            autosave_interval: Duration::from_secs(30),
            connect_on_start: Some(crate::scene::Device::Simulated),
        }
    }
}

/// The editor: its state plus what only the running window needs (views' zoom and pan, file
/// workers, the stop link, autosave timing).
pub struct Editor {
    /// What is saved, undone and tested.
    pub state: EditorState,
    /// Told of every stop after the device link.
    stop_link: Box<dyn StopLink>,
    device: DeviceLink,
    device_stop: LinkStopLink,
    cameras: [Camera; 2],
    reach: ReachLayers,
    /// The arm the reach maps were started for: their key does not hold the arm, so a changed
    /// arm starts them afresh.
    mapped_arm: Option<crate::scene::ArmDoc>,
    dry_run: DryRunJob,
    timeline_plot: TimelinePlot,
    files: FileWorker,
    retime: RetimeWorker,
    options: EditorOptions,
    /// This window's recovery copy, locked while the window runs, for the scene's file now.
    recovery: Option<RecoveryCopy>,
    /// egui time (s) of the last autosave, or of the first frame.
    last_autosave: Option<f64>,
    recovered: Option<crate::scene::Scene>,
    /// The user chose to close: let the window go.
    closing: bool,
    /// Whether the device link was last asked for analog readings (the scene maps inputs).
    readings_wanted: bool,
    title: String,
}

impl std::fmt::Debug for Editor {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("Editor")
            .field("state", &self.state)
            .finish_non_exhaustive()
    }
}

impl Editor {
    /// An editor on `state` with its own device link (connected as `options` says). Every stop
    /// request goes to the device link first, then to `stop_link` (a log, a test's channel).
    /// Finds and offers a recovery copy left by a session that did not end cleanly.
    pub fn new(state: EditorState, stop_link: Box<dyn StopLink>, options: EditorOptions) -> Editor {
        let device = DeviceLink::start();
        let device_stop = device.stop_link();
        let mut editor = Editor {
            state,
            stop_link,
            device,
            device_stop,
            cameras: [Camera::default(), Camera::default()],
            reach: ReachLayers::default(),
            mapped_arm: None,
            dry_run: DryRunJob::default(),
            timeline_plot: TimelinePlot::default(),
            files: FileWorker::default(),
            retime: RetimeWorker::default(),
            options,
            recovery: None,
            last_autosave: None,
            recovered: None,
            closing: false,
            readings_wanted: false,
            title: String::new(),
        };
        editor.claim_recovery();
        if let Some(device) = editor.options.connect_on_start.clone() {
            editor.state.device.link_device = device.clone();
            editor.request_link(LinkAction::Connect(device));
        }
        editor
    }

    /// Takes the recovery copy for the scene's file now (dropping the one held before, which
    /// stays on disk when it holds unsaved work, for that scene's next opening) and offers what
    /// it holds, if anything.
    fn claim_recovery(&mut self) {
        let Some(folder) = &self.options.recovery else {
            return;
        };
        if let Some(held) = &self.recovery
            && held.scene_file() == self.state.document.file_path.as_deref()
        {
            return;
        }
        let wanted = folder.claim(self.state.document.file_path.as_deref());
        self.recovery = None;
        if wanted.exists() {
            match wanted.load() {
                Ok(scene) => {
                    self.recovered = Some(scene);
                    self.state.view.dialog = Some(Dialog::Recovery {
                        source: wanted.source(),
                    });
                }
                Err(error) => {
                    self.state.say(
                        Level::Warning,
                        format!("a recovery copy was found but cannot be read: {error}"),
                    );
                }
            }
        }
        self.recovery = Some(wanted);
    }

    /// This window's recovery copy, while autosave is on.
    pub fn recovery_copy(&self) -> Option<&RecoveryCopy> {
        self.recovery.as_ref()
    }

    /// The device link: what the link panel shows, the simulated device when connected.
    pub fn device(&self) -> &DeviceLink {
        &self.device
    }

    fn request_link(&mut self, action: LinkAction) {
        self.device.request(
            action,
            &self.state.scene,
            self.state.arm(),
            &self.state.pose,
        );
    }

    /// An editor on the scene at `path`, or on the built-in sample when there is none. A file
    /// that cannot be loaded leaves the sample open and shows why, naming the field.
    pub fn open(
        path: Option<PathBuf>,
        stop_link: Box<dyn StopLink>,
        options: EditorOptions,
    ) -> Editor {
        let Some(path) = path else {
            return Editor::new(EditorState::new(sample_scene(), None), stop_link, options);
        };
        match crate::scene::load(&path) {
            Ok(scene) => Editor::new(EditorState::new(scene, Some(path)), stop_link, options),
            Err(error) => {
                let mut editor =
                    Editor::new(EditorState::new(sample_scene(), None), stop_link, options);
                editor
                    .state
                    .say(Level::Error, format!("cannot open {}", path.display()));
                editor.state.view.dialog = Some(Dialog::LoadError {
                    problems: problem_lines(&error),
                    path,
                });
                editor
            }
        }
    }

    /// A view's camera (zoom, pan, where the tool point was drawn).
    pub fn camera(&self, kind: ViewKind) -> &Camera {
        match kind {
            ViewKind::Top => &self.cameras[0],
            ViewKind::Side => &self.cameras[1],
        }
    }

    /// A view's newest reach envelope and torque-use map at the tool angle a drag holds, once
    /// computed.
    pub fn reach_layer(&self, kind: ViewKind) -> Option<&MapLayer> {
        self.reach.layer(kind)
    }

    /// A view's newest reach envelope over any tool angle, once computed.
    pub fn any_angle_reach_layer(&self, kind: ViewKind) -> Option<&MapLayer> {
        self.reach.any_angle_layer(kind)
    }

    /// Whether a reach map is being computed.
    pub fn is_mapping(&self) -> bool {
        self.reach.busy()
    }

    /// Whether the plan and dry run of the newest scene change are still running.
    pub fn is_dry_running(&self) -> bool {
        self.dry_run.busy()
    }

    /// How many times the arm, sequence or timing changed since the editor opened (each change
    /// starts a new plan and dry run; 1 for the first).
    pub fn dry_run_generation(&self) -> u64 {
        self.dry_run.generation()
    }

    /// How many dry-run results arrived after a newer change and were dropped unseen.
    pub fn dropped_dry_runs(&self) -> u64 {
        self.dry_run.dropped()
    }

    /// The timeline plot's mapping between time (s) and the screen in the last frame, once it
    /// was drawn.
    pub fn timeline_transform(&self) -> Option<&egui_plot::PlotTransform> {
        self.timeline_plot.transform()
    }

    /// The approach the timeline draws before time 0 for the connected device: where it starts
    /// from and how long it lasts (s); `None` without a device that says what it sends.
    pub fn timeline_approach(&self) -> Option<(crate::approach::StartFrom, f64)> {
        self.timeline_plot.approach()
    }

    /// The approach's commanded motion and dry run as the timeline plots them (on the
    /// approach's own clock from 0); `None` without a device that says what it sends.
    pub fn timeline_approach_traces(&self) -> Option<&Traces> {
        self.timeline_plot.approach_traces()
    }

    /// Columns (a time with the smallest and largest value under it) the timeline plot drew in
    /// the last frame, over all its lines.
    pub fn timeline_column_count(&self) -> usize {
        self.timeline_plot.column_count()
    }

    /// Whether file work is still running on a worker thread.
    pub fn is_busy(&self) -> bool {
        self.files.busy()
    }

    /// Whether a retime is running on its worker thread.
    pub fn is_retiming(&self) -> bool {
        self.retime.busy()
    }

    /// Whether the user chose to close the window.
    pub fn is_closing(&self) -> bool {
        self.closing
    }

    /// Work that runs every frame before any panel: the emergency-stop key (whatever has
    /// keyboard focus, dialog open or not), undo and redo keys, finished file work, retime
    /// progress, the close question, autosave, the reach maps and the window title.
    pub fn logic(&mut self, ctx: &egui::Context) {
        let frame = ctx.cumulative_frame_nr();
        let stop_key = ctx.input(|input| {
            input.events.iter().any(|event| {
                matches!(
                    event,
                    Event::Key {
                        key: STOP_KEY,
                        pressed: true,
                        repeat: false,
                        ..
                    }
                )
            })
        });
        if stop_key {
            self.apply(ctx, Command::EmergencyStop(StopSource::Key), frame);
        }
        if self.state.view.dialog.is_none() && !ctx.egui_wants_keyboard_input() {
            let redo = ctx.input_mut(|input| {
                input.consume_key(Modifiers::COMMAND | Modifiers::SHIFT, Key::Z)
            });
            let undo = ctx.input_mut(|input| input.consume_key(Modifiers::COMMAND, Key::Z));
            if redo {
                self.apply(ctx, Command::Redo, frame);
            } else if undo {
                self.apply(ctx, Command::Undo, frame);
            }
        }
        self.nudge(ctx, frame);
        self.calibration_keys(ctx, frame);
        for command in panels::jog_keys(ctx, &self.state) {
            self.apply(ctx, command, frame);
        }
        self.capture_key(ctx, frame);
        for result in self.files.finished() {
            self.file_finished(ctx, result);
        }
        if self.files.busy() {
            ctx.request_repaint_after(Duration::from_millis(50));
        }
        if let Some((level, text)) = self.retime.poll(&mut self.state.retime) {
            self.state.say(level, text);
        }
        if self.retime.busy() {
            ctx.request_repaint_after(Duration::from_millis(50));
        }
        if ctx.input(|input| input.viewport().close_requested()) && !self.closing {
            if self.state.document.dirty {
                ctx.send_viewport_cmd(egui::ViewportCommand::CancelClose);
                self.state.view.dialog = Some(Dialog::UnsavedChanges);
            } else if let Some(recovery) = &self.recovery {
                recovery.discard();
            }
        }
        self.autosave(ctx);
        self.follow_device(ctx);
        if self.state.calibration.searching() {
            // The deadband search steps on its own clock while the person watches the arm.
            let now = ctx.input(|input| input.time);
            let tick = Command::Calibration(CalibrationCommand::Tick(now));
            self.apply(ctx, tick, frame);
            ctx.request_repaint_after(Duration::from_millis(100));
        }
        let (around, follow_settings) = self.state.follow_parts();
        let asked = follow::update(follow_settings, &around, &self.device.view().follow);
        if let Some(action) = asked {
            self.request_link(LinkAction::Follow(action));
        }
        // The side view keeps its plane while the primary button is down (a drag in either
        // view) and turns when it is released; its reach maps are made for the plane it shows.
        let pressed = ctx.input(|input| input.pointer.primary_down());
        self.state.hold_side_view(pressed);
        if self.mapped_arm.as_ref() != Some(&self.state.scene.arm) {
            if self.mapped_arm.is_some() {
                // Maps of the old arm are wrong: drop them (a job still running for it reports
                // to the dropped channel) so that both views start maps of the new one now.
                self.reach = ReachLayers::default();
            }
            self.mapped_arm = Some(self.state.scene.arm.clone());
        }
        self.dry_run.update(ctx, &mut self.state);
        let now = ctx.input(|input| input.time);
        if self.state.advance_playback(now) {
            ctx.request_repaint();
        }
        self.reach.update(ctx, &self.state);
        let title = self.window_title();
        if title != self.title {
            ctx.send_viewport_cmd(egui::ViewportCommand::Title(title.clone()));
            self.title = title;
        }
    }

    /// Moves the tool point by the nudge keys pressed this frame, unless a dialog is open or a
    /// widget has the keyboard (a focused slider or field keeps its own arrow keys).
    fn nudge(&mut self, ctx: &egui::Context, frame: u64) {
        let free = ctx.memory(|memory| memory.focused().is_none());
        if self.state.view.dialog.is_some() || ctx.egui_wants_keyboard_input() || !free {
            return;
        }
        let mut step_mm = [0.0; 3];
        // While following, the nudge keys jog by the follow panel's tool step.
        let unit = if self.state.follow.on {
            self.state.follow.tool_step_mm
        } else {
            1.0
        };
        ctx.input_mut(|input| {
            for (key, axis, direction) in NUDGES {
                // Shift first: a pattern without Shift matches a key pressed with it too.
                for (modifiers, mm) in [(Modifiers::SHIFT, 10.0 * unit), (Modifiers::NONE, unit)] {
                    let presses = input.count_and_consume_key(modifiers, key) as f64;
                    step_mm[axis] += direction * mm * presses;
                }
            }
        });
        if step_mm != [0.0; 3] && self.state.refuse_jog() {
            return;
        }
        if step_mm != [0.0; 3]
            && let Some(point) = self.state.tool_point()
        {
            let target = [
                point.x + step_mm[0] * 1e-3,
                point.y + step_mm[1] * 1e-3,
                point.z + step_mm[2] * 1e-3,
            ];
            self.apply(ctx, Command::DragToolPoint { target }, frame);
        }
    }

    /// Steps the calibrated joint's pulse by the keys pressed this frame while the Calibrate
    /// tab is shown, unless a dialog is open or a widget has the keyboard.
    fn calibration_keys(&mut self, ctx: &egui::Context, frame: u64) {
        let free = ctx.memory(|memory| memory.focused().is_none());
        if self.state.view.tools_tab != ToolsTab::Calibrate
            || self.state.view.dialog.is_some()
            || ctx.egui_wants_keyboard_input()
            || !free
        {
            return;
        }
        let step_us = ctx.input_mut(panels::calibration_step_keys);
        if step_us != 0.0 {
            let step = Command::Calibration(CalibrationCommand::Step(step_us));
            self.apply(ctx, step, frame);
        }
    }

    /// The capture key: stores the input arm's pose as a waypoint, unless a dialog is open or
    /// a widget has the keyboard (typing an "i" into a field is not a capture).
    fn capture_key(&mut self, ctx: &egui::Context, frame: u64) {
        let free = ctx.memory(|memory| memory.focused().is_none());
        if self.state.view.dialog.is_some() || ctx.egui_wants_keyboard_input() || !free {
            return;
        }
        if !ctx.input_mut(|input| input.consume_key(Modifiers::NONE, CAPTURE_KEY)) {
            return;
        }
        match capture::capture_command(&self.state) {
            Some(command) => {
                self.state.say(Level::Info, "captured the input arm's pose");
                self.apply(ctx, command, frame);
            }
            None => self.state.say(Level::Warning, NO_INPUT_ARM),
        }
    }

    /// Takes what the device link published: its messages, and the arm's pose as a simulated
    /// device moves it; tells the link how large the views draw the arm. The link's worker wakes
    /// the window when any of that changes visibly (at most 30 times a second; the device's arm
    /// alone at most 8, and a creeping arm every 10 s), so an idle connection costs no redraws.
    fn follow_device(&mut self, ctx: &egui::Context) {
        self.device.wake(ctx);
        // The scale of the view that draws the arm largest, as of the last frame: the device's
        // arm wakes the window for a move the eye sees there.
        let points_per_mm = self
            .cameras
            .iter()
            .filter_map(|camera| {
                camera
                    .projection()
                    .map(|projection| projection.points_per_mm)
            })
            .fold(None, |largest: Option<f64>, scale| {
                Some(largest.map_or(scale, |largest| largest.max(scale)))
            });
        if let Some(points_per_mm) = points_per_mm {
            self.device
                .drawn_at(points_per_mm * 1e3 * f64::from(ctx.pixels_per_point()));
        }
        for report in self.device.poll(self.state.arm.as_ref()) {
            match report {
                Report::Info(text) => self.state.say(Level::Info, text),
                Report::Problem(text) => self.state.say(Level::Error, text),
            }
        }
        self.state.device.device_pose = self.device.simulated_arm_pose();
        let view = self.device.view();
        let output = view.stats.as_ref().and_then(|stats| stats.device_output);
        let info = view.connection.as_ref().map(|connection| connection.info);
        self.state.calibration.device = info;
        self.timeline_plot
            .set_device(output.zip(info), view.wake_mode());
        // Wanted while the input arm's form has a row too: its first points take readings.
        let wanted = !self.state.scene.inputs.is_empty()
            || self.state.inputs_form.has_rows(&self.state.scene);
        if wanted != self.readings_wanted {
            self.readings_wanted = wanted;
            self.request_link(LinkAction::Readings(wanted));
        }
        let readings = self.device.view().stats.as_ref().and_then(|s| s.readings);
        self.state.device.input_pose = readings
            .filter(|_| self.device.view().connection.is_some())
            .and_then(|readings| capture::input_arm_pose(&self.state, readings.as_slice()));
    }

    /// The window title: the file's name, a mark when there are unsaved changes, the stop.
    pub fn window_title(&self) -> String {
        let name = self
            .state
            .document
            .file_path
            .as_ref()
            .and_then(|path| path.file_name())
            .map(|name| name.to_string_lossy().into_owned())
            .unwrap_or_else(|| "sample scene".into());
        let mark = if self.state.document.dirty { "* " } else { "" };
        let stop = match self.state.stop {
            StopState::Clear => "",
            StopState::Latched { .. } => " — STOPPED",
        };
        format!("{mark}{name}{stop} — Armwright")
    }

    /// Draws every panel, then applies what they asked for, in order; the stop button's press
    /// is applied as soon as the top bar reports it.
    pub fn ui(&mut self, ui: &mut egui::Ui) {
        let frame = ui.ctx().cumulative_frame_nr();
        let mut commands = Vec::new();
        let top = Panel::top("armwright top bar").show(ui, |ui| panels::top_bar(ui, &self.state));
        if matches!(top.inner, Command::EmergencyStop(_)) {
            // The stop button's press goes out now, as the key's does in `logic`, not after the
            // views, the sequence and the timeline are drawn: the link's thread writes the stop
            // line while the rest of this frame is drawn.
            let ctx = ui.ctx().clone();
            self.apply(&ctx, top.inner, frame);
        } else {
            commands.push(top.inner);
        }
        let below_top = Rect::from_min_max(
            pos2(ui.ctx().content_rect().left(), top.response.rect.bottom()),
            ui.ctx().content_rect().max,
        );
        // The views' mouse use goes in the status bar while the pointer is over one (as a
        // tooltip it covered the panels below the views).
        let over_view = ui.ctx().pointer_hover_pos().is_some_and(|pointer| {
            self.cameras.iter().any(|camera| {
                camera
                    .projection()
                    .is_some_and(|projection| projection.rect.contains(pointer))
            })
        });
        let hint = over_view.then_some(VIEW_HINT);
        Panel::bottom("armwright status bar")
            .show(ui, |ui| panels::status_bar(ui, &self.state, hint));
        let bottom = Panel::bottom("armwright sequence")
            .resizable(true)
            .default_size(BOTTOM_HEIGHT)
            .show(ui, |ui| {
                let timeline = Panel::right("armwright timeline")
                    .resizable(true)
                    .default_size(
                        (ui.ctx().content_rect().width() * 0.42).clamp(440.0, TIMELINE_WIDTH),
                    )
                    .show(ui, |ui| {
                        panels::timeline(ui, &self.state, &mut self.timeline_plot)
                    });
                timeline.inner.then(panels::sequence(ui, &self.state))
            });
        commands.push(bottom.inner);
        // Side panels start narrower in a small window so the views keep a useful width.
        let window_width = ui.ctx().content_rect().width();
        let left = Panel::left("armwright joints")
            .default_size((window_width * 0.22).clamp(285.0, 330.0))
            .show(ui, |ui| {
                // The tool point keeps the panel's foot, all of it in view whatever the window's
                // height; the joints above it scroll.
                let tool_point = Panel::bottom("armwright tool point")
                    .show(ui, |ui| panels::tool_point(ui, &self.state));
                let joints = ScrollArea::vertical()
                    .id_salt("armwright joints scroll")
                    .show(ui, |ui| {
                        let pulse_unit_us =
                            self.device.view().connection.as_ref().map_or(
                                armwright_kinematics::DEFAULT_PULSE_UNIT_US,
                                |connection| connection.info.us_from_units(1),
                            );
                        panels::joint_controls(ui, &self.state, pulse_unit_us)
                    })
                    .inner;
                joints.then(tool_point.inner)
            });
        commands.push(left.inner);
        let tools = Panel::right("armwright tools")
            .resizable(true)
            .default_size((window_width * 0.28).clamp(340.0, 450.0))
            .show(ui, |ui| {
                let mut command = Command::None;
                ui.horizontal(|ui| {
                    for (tab, label) in [
                        (ToolsTab::Link, "Link"),
                        (ToolsTab::Retime, "Retime"),
                        (ToolsTab::Arm, "Arm"),
                        (ToolsTab::Calibrate, "Calibrate"),
                        (ToolsTab::Follow, "Follow"),
                    ] {
                        if ui
                            .selectable_label(self.state.view.tools_tab == tab, label)
                            .clicked()
                        {
                            command = Command::ShowToolsTab(tab);
                        }
                    }
                });
                ui.separator();
                let shown = ScrollArea::vertical()
                    .id_salt("armwright tools scroll")
                    .show(ui, |ui| match self.state.view.tools_tab {
                        ToolsTab::Link => panels::link(ui, &self.state, self.device.view()),
                        ToolsTab::Retime => panels::retime(ui, &self.state),
                        ToolsTab::Arm => panels::arm_settings(ui, &self.state)
                            .then(panels::inputs(ui, &self.state, self.device.view())),
                        ToolsTab::Calibrate => {
                            panels::calibration(ui, &self.state, self.device.view())
                        }
                        ToolsTab::Follow => panels::follow(ui, &self.state, self.device.view()),
                    })
                    .inner;
                command.then(shown)
            });
        commands.push(tools.inner);
        let views = CentralPanel::default().show(ui, |ui| {
            let rect = ui.available_rect_before_wrap();
            let gap = 6.0;
            let half = ((rect.width() - gap) / 2.0).max(10.0);
            let top_rect = Rect::from_min_size(rect.min, vec2(half, rect.height()));
            let side_rect =
                Rect::from_min_size(pos2(rect.min.x + half + gap, rect.min.y), top_rect.size());
            let simulated = self
                .state
                .playback
                .simulated_pose(&self.state.pose)
                .map(|pose| ArmOverlay {
                    pose,
                    label: "simulated (dry run)".into(),
                    colour: SIMULATED,
                });
            let device = self
                .state
                .device
                .device_pose
                .clone()
                .map(|pose| ArmOverlay {
                    pose,
                    label: "device (simulated servos)".into(),
                    colour: DEVICE,
                });
            let input = self.state.device.input_pose.clone().map(|pose| ArmOverlay {
                pose,
                label: format!("input arm ({CAPTURE_KEY_NAME} captures)"),
                colour: INPUT_ARM,
            });
            let overlays: Vec<ArmOverlay> =
                simulated.into_iter().chain(device).chain(input).collect();
            let [top_camera, side_camera] = &mut self.cameras;
            let [top_map, side_map] = [ViewKind::Top, ViewKind::Side].map(|kind| ViewMaps {
                at_angle: self.reach.layer(kind),
                any_angle: self.reach.any_angle_layer(kind),
            });
            let from_top = ui
                .scope_builder(UiBuilder::new().max_rect(top_rect), |ui| {
                    views::show_view(
                        ui,
                        &self.state,
                        ViewKind::Top,
                        top_camera,
                        top_map,
                        &overlays,
                    )
                })
                .inner;
            let from_side = ui
                .scope_builder(UiBuilder::new().max_rect(side_rect), |ui| {
                    views::show_view(
                        ui,
                        &self.state,
                        ViewKind::Side,
                        side_camera,
                        side_map,
                        &overlays,
                    )
                })
                .inner;
            from_top.then(from_side)
        });
        commands.push(views.inner);
        commands.push(panels::dialogs(ui.ctx(), below_top, &self.state));
        let ctx = ui.ctx().clone();
        for command in commands {
            self.apply(&ctx, command, frame);
        }
    }

    /// Applies one command, carrying out file and window work it leaves.
    pub fn apply(&mut self, ctx: &egui::Context, command: Command, frame: u64) {
        if command == Command::StoreWaypoint {
            let joints = self.state.pose.len();
            let view = &self.device.view().follow;
            if let Some(pose) = follow::arm_pose(&self.state.follow, view, joints) {
                self.state.move_arm_to(pose);
            }
        }
        let mut outside = Vec::new();
        let mut stops = StopPair {
            first: &mut self.device_stop,
            then: self.stop_link.as_mut(),
        };
        apply(&mut self.state, command, &mut stops, frame, &mut outside);
        for work in outside {
            self.carry_out(ctx, work);
        }
    }

    fn carry_out(&mut self, ctx: &egui::Context, work: Outside) {
        match work {
            Outside::Open(path) => {
                self.files.spawn(ctx, move || FileResult::Loaded {
                    result: crate::scene::load(&path).map(Box::new),
                    path,
                });
            }
            Outside::Save { path, then_close } => {
                // As the file will hold it: each number at the decimals its field keeps.
                let scene = crate::scene::as_saved(&self.state.scene);
                self.files.spawn(ctx, move || FileResult::Saved {
                    result: crate::scene::save(&scene, &path),
                    scene: Box::new(scene),
                    path,
                    then_close,
                });
            }
            Outside::BrowseForOpen => self.files.spawn(ctx, || pick_file(false)),
            Outside::BrowseForSave => self.files.spawn(ctx, || pick_file(true)),
            Outside::Close => {
                self.closing = true;
                if let Some(recovery) = &self.recovery {
                    recovery.discard();
                }
                ctx.send_viewport_cmd(egui::ViewportCommand::Close);
            }
            Outside::Recover => {
                if let Some(scene) = self.recovered.take() {
                    self.retime.cancel();
                    let source = self.recovery.as_ref().and_then(RecoveryCopy::source);
                    self.state.replace_scene(scene.clone(), None);
                    // The copy holds unsaved work: keep it marked so, against the file it
                    // came from.
                    self.state.document.file_path = source;
                    self.state.mark_unsaved();
                    self.state.say(Level::Info, "recovered the autosaved copy");
                    self.reattach_simulated_device();
                }
            }
            Outside::DiscardRecovery => {
                self.recovered = None;
                if let Some(recovery) = &self.recovery {
                    recovery.discard();
                }
            }
            Outside::Link(action) => self.request_link(action),
            Outside::StartRetime { scene, settings } => match self.state.arm().cloned() {
                Some(arm) => self.retime.start(ctx, *scene, arm, settings),
                None => {
                    self.state.retime.run = RetimeRun::Failed {
                        reason: "cannot retime: the arm cannot be built".into(),
                    };
                }
            },
            Outside::CancelRetime => self.retime.cancel(),
        }
    }

    /// After another scene came in: a connected simulated device is connected afresh so that it
    /// moves the new scene's arm (a serial device is left as it is: the real arm did not
    /// change).
    fn reattach_simulated_device(&mut self) {
        if self.device.simulated_device().is_some() {
            self.state.device.link_device = crate::scene::Device::Simulated;
            self.request_link(LinkAction::Connect(crate::scene::Device::Simulated));
            self.state.say(
                Level::Info,
                "the simulated device was connected again to move this scene's arm",
            );
        }
    }

    fn file_finished(&mut self, ctx: &egui::Context, result: FileResult) {
        match result {
            FileResult::Loaded { path, result } => match result {
                Ok(scene) => {
                    self.retime.cancel();
                    self.state.replace_scene(*scene, Some(path.clone()));
                    self.cameras = [Camera::default(), Camera::default()];
                    self.state
                        .say(Level::Info, format!("opened {}", path.display()));
                    self.reattach_simulated_device();
                    self.claim_recovery();
                }
                Err(error) => {
                    self.state
                        .say(Level::Error, format!("cannot open {}", path.display()));
                    self.state.view.dialog = Some(Dialog::LoadError {
                        problems: problem_lines(&error),
                        path,
                    });
                }
            },
            FileResult::Saved {
                path,
                scene,
                result,
                then_close,
            } => match result {
                Ok(()) => {
                    self.state.mark_saved(path.clone(), *scene);
                    self.state
                        .say(Level::Info, format!("saved {}", path.display()));
                    if !self.state.document.dirty
                        && let Some(recovery) = &self.recovery
                    {
                        recovery.discard();
                    }
                    // Saved under another name: the copy follows the file.
                    self.claim_recovery();
                    if then_close {
                        self.carry_out(ctx, Outside::Close);
                    }
                }
                Err(error) => self.state.say(Level::Error, error.to_string()),
            },
            FileResult::Picked { for_save, path } => match path {
                Some(path) => {
                    let text = path.display().to_string();
                    match &mut self.state.view.dialog {
                        Some(Dialog::Open { path }) if !for_save => *path = text,
                        Some(Dialog::SaveAs { path, .. }) if for_save => *path = text,
                        _ => {}
                    }
                }
                None => self.state.say(
                    Level::Info,
                    "no file chosen (or no system file dialog answered): type the path instead",
                ),
            },
            FileResult::Autosaved { result } => {
                if let Err(error) = result {
                    self.state
                        .say(Level::Warning, format!("autosave failed: {error}"));
                }
            }
        }
    }

    fn autosave(&mut self, ctx: &egui::Context) {
        let now = ctx.input(|input| input.time);
        let Some(recovery) = self.recovery.as_ref().map(RecoveryCopy::writer) else {
            return;
        };
        let last = *self.last_autosave.get_or_insert(now);
        let interval = self.options.autosave_interval.as_secs_f64();
        if self.state.document.dirty && now - last >= interval {
            self.last_autosave = Some(now);
            let scene = self.state.scene.clone();
            let source = self.state.document.file_path.clone();
            self.files.spawn(ctx, move || FileResult::Autosaved {
                result: recovery.write(&scene, source.as_deref()),
            });
        }
        if self.state.document.dirty {
            let due = (last + interval - now).max(0.1);
            ctx.request_repaint_after(Duration::from_secs_f64(due));
        }
    }
}

impl eframe::App for Editor {
    fn logic(&mut self, ctx: &egui::Context, _frame: &mut eframe::Frame) {
        Editor::logic(self, ctx);
    }

    fn ui(&mut self, ui: &mut egui::Ui, _frame: &mut eframe::Frame) {
        Editor::ui(self, ui);
    }
}

/// Opens the editor window on `file` (or the built-in sample), connected to the in-process
/// simulated device, and runs until it closes. Stops go to the device link; each is also
/// recorded on standard error.
pub fn run(file: Option<PathBuf>) -> ExitCode {
    let (log, requests) = ChannelStopLink::new();
    let _log = std::thread::Builder::new()
        .name("armwright stop log".into())
        .spawn(move || {
            for request in requests {
                eprintln!(
                    "armwright: emergency stop ({:?}, frame {}) handed to the device link",
                    request.source, request.frame
                );
            }
        });
    let options = eframe::NativeOptions {
        viewport: egui::ViewportBuilder::default()
            .with_title("Armwright")
            .with_inner_size([1560.0, 960.0])
            .with_min_inner_size([900.0, 600.0]),
        ..eframe::NativeOptions::default()
    };
    let result = eframe::run_native(
        "armwright",
        options,
        Box::new(move |_creation| {
            Ok(Box::new(Editor::open(
                file,
                Box::new(log),
                EditorOptions::default(),
            )))
        }),
    );
    match result {
        Ok(()) => ExitCode::SUCCESS,
        Err(error) => {
            eprintln!("armwright: cannot open the editor window: {error}");
            ExitCode::FAILURE
        }
    }
}

/// `armwright edit --help`.
const EDIT_HELP: &str = "Open the desktop editor on FILE, or on the bundled pen-plotter sample.

Usage: armwright edit [FILE]
       armwright FILE          (a path ending in .json, or any existing file)

The emergency stop is the red button in the top bar and the Esc key, whatever has focus.
A software stop is not a safety device: keep a hard power cut-off within reach, keep clear of
the arm's reach while powered, and defer to local codes and licensed practice.";

/// Runs the editor when the command line asks for it: no arguments, `edit [FILE]`, or a scene
/// file alone (`armwright FILE`). Returns `None` for any other command line, which the
/// command-line module handles.
pub fn run_from_args(args: &[std::ffi::OsString]) -> Option<ExitCode> {
    match args {
        [] => Some(run(None)),
        [file] if looks_like_scene_file(file) => Some(run(Some(PathBuf::from(file)))),
        [command, rest @ ..] if command == "edit" => match rest {
            [] => Some(run(None)),
            [flag] if flag == "-h" || flag == "--help" => {
                println!("{EDIT_HELP}");
                Some(ExitCode::SUCCESS)
            }
            [file] if !file.to_string_lossy().starts_with('-') => {
                Some(run(Some(PathBuf::from(file))))
            }
            _ => {
                eprintln!("usage: armwright edit [FILE]");
                Some(ExitCode::from(2))
            }
        },
        _ => None,
    }
}

/// Whether a lone command-line word names a scene file rather than a command: it ends in
/// `.json`, or it is an existing file (command words are bare words that name no file).
fn looks_like_scene_file(word: &std::ffi::OsStr) -> bool {
    let path = std::path::Path::new(word);
    if word.to_string_lossy().starts_with('-') {
        return false;
    }
    let json = path
        .extension()
        .is_some_and(|extension| extension.eq_ignore_ascii_case("json"));
    json || path.is_file()
}

#[cfg(test)]
mod tests {
    use super::*;

    fn args(words: &[&str]) -> Vec<std::ffi::OsString> {
        words.iter().map(Into::into).collect()
    }

    #[test]
    fn other_command_lines_are_left_to_the_command_line_module() {
        assert_eq!(run_from_args(&args(&["check", "scene.json"])), None);
        assert_eq!(run_from_args(&args(&["--help"])), None);
    }

    #[test]
    fn a_lone_scene_file_is_for_the_editor_and_a_command_word_is_not() {
        assert!(looks_like_scene_file("pen.armwright.json".as_ref()));
        assert!(looks_like_scene_file("dir/scene.JSON".as_ref()));
        let file = std::env::temp_dir().join(format!("armwright-lone-{}", std::process::id()));
        std::fs::write(&file, "{}").expect("scratch file");
        assert!(looks_like_scene_file(file.as_os_str()));
        let _ = std::fs::remove_file(&file);
        for word in ["check", "ports", "--help", "-h", "--version"] {
            assert!(!looks_like_scene_file(word.as_ref()), "{word}");
        }
    }

    #[test]
    fn edit_help_and_bad_edit_arguments_do_not_open_a_window() {
        assert_eq!(
            run_from_args(&args(&["edit", "--help"])),
            Some(ExitCode::SUCCESS)
        );
        assert_eq!(
            run_from_args(&args(&["edit", "a.json", "b.json"])),
            Some(ExitCode::from(2))
        );
    }
}
