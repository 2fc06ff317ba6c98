//! The editor's link to a device, apart from drawing: a worker thread owns the
//! [`armwright_link::Link`] and does everything that waits on a port or takes time (listing
//! ports, connecting, planning the scene, pushing setpoints, pause, reset after a stop); the UI
//! thread sends it requests, reads what it publishes once a frame, and raises the emergency
//! stop through the link's lock-free handle, never through the worker.

use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::mpsc::{Receiver, RecvTimeoutError, Sender, TryRecvError, channel};
use std::sync::{Arc, Mutex, PoisonError};
use std::thread::JoinHandle;
use std::time::{Duration, Instant};

use armwright_kinematics::{Arm, forward};
use armwright_link::{
    ChannelOutput, ChannelValues, DeviceInfo, DeviceMode, EmergencyStop, Faults, Link, LinkError,
    LinkEvent, LinkLoss, LinkState, PortSummary, ReadingsSource, ResetConfirmation,
    SerialTransport, SimDevice, SimDeviceConfig, SimTransport, StreamOptions, StreamStats,
    Transport, list_ports,
};
use armwright_trajectory::ServoModelOptions;
use nalgebra::Vector3;

use super::estop::{StopLink, StopRequest};
use super::follow::{FollowAction, FollowPhase, FollowRun, FollowView};
use super::message::Report;
use crate::approach::{StreamPlan, WakeMode, stream_plan_waking};
use crate::link_capacity::PLAY_AHEAD;
use crate::scene::{Device, Scene};
use crate::task::plan_of;

/// Setpoints queued between the worker and the link's thread. On a link that sends streams in
/// real time a pause lets them run out, so it takes effect within this many periods; on one that
/// plays streams ahead ([`PLAY_AHEAD`]) a pause halts the stream at once instead
/// ([`Link::halt_stream`]).
const QUEUE_AHEAD: usize = 8;

/// Readings lines a second the editor asks for while the scene maps inputs: enough for the
/// input arm (`capture.rs`) to move smoothly on screen (the window redraws at most 30 times a
/// second).
pub const EDITOR_READINGS_HZ: u8 = 20;

/// How long a held channel's pulse waits for the one before it to go out.
const HOLD_WAIT: Duration = Duration::from_millis(500);

/// How long a confirmed reset waits for the device to acknowledge the stop it resets: longer
/// than the link waits before calling a silent device lost (250 ms).
const STOP_CONFIRM_WAIT: Duration = Duration::from_secs(1);

/// How long the worker waits for a request when it has nothing else to do.
const IDLE_WAIT: Duration = Duration::from_millis(20);

/// The shortest time between two redraws the worker asks of the window: 30 a second, enough
/// for the eye to follow the device's arm and counters, and nothing while nothing changes.
const WAKE_INTERVAL: Duration = Duration::from_millis(33);

/// How far on screen a point of the simulated device's arm (a joint, the tool point) must
/// move from where the window last drew it before that alone is worth a redraw, in physical
/// pixels: a step the eye sees on the dashed arm; a smaller offset is drawn with the next
/// redraw.
const ARM_STEP_PX: f64 = 3.0;

/// The shortest time between two redraws the simulated device's arm alone asks for: a limp arm
/// falling under gravity is drawn 8 times a second at most, however fast it falls. While a
/// stream or follow run moves the arm, its counters redraw the window every
/// [`WAKE_INTERVAL`] anyway and the arm moves smoothly with them.
const ARM_WAKE_INTERVAL: Duration = Duration::from_millis(125);

/// The on-screen speed below which the arm is taken to creep rather than move, physical pixels
/// a second (a point crossing its 2-pixel line in half a second): a creep is not followed
/// frame by frame, only caught up with every [`ARM_CREEP_INTERVAL`] (a limp arm settling
/// creeps at about 1 pixel a second for tens of seconds after its fall).
const ARM_MOTION_PX_PER_S: f64 = 4.0;

/// How long a creep of [`ARM_STEP_PX`] or more is left undrawn at most.
const ARM_CREEP_INTERVAL: Duration = Duration::from_secs(10);

/// The span over which the arm's speed on screen is measured (a few of the device's pulse
/// frames, which move it in steps).
const SPEED_SPAN: Duration = Duration::from_millis(100);

/// The scale assumed until the window says how large it draws the arm, physical pixels per m
/// (4 pixels a mm: finer than any view's default, so no step is missed).
const DEFAULT_PIXELS_PER_M: f64 = 4000.0;

/// What the user asks of the link, from the link panel.
#[derive(Debug, Clone, PartialEq)]
pub enum LinkAction {
    /// List the serial ports (on the worker).
    ListPorts,
    /// Connect to this device, dropping any link open now.
    Connect(Device),
    /// Close the link; the device is asked to hold.
    Disconnect,
    /// Plan the scene's sequence and stream it from its start (after the approach).
    Stream {
        /// End by moving to the rest pose and holding there, as `stream --park` does.
        park: bool,
    },
    /// Let the queued setpoints run out, then hold.
    Pause,
    /// Go on streaming from where the pause left off.
    Resume,
    /// Follow: start, a new target or share, leave (`follow.rs`).
    Follow(FollowAction),
    /// Hold one channel at a pulse width, every other channel at what the device sends now
    /// (for guided calibration).
    HoldChannel(ChannelPulse),
    /// Ask the device for its analog readings (the scene maps inputs) or stop them; kept for
    /// devices connected later too.
    Readings(bool),
}

/// One channel held at a pulse width, the others kept at what the device reports it sends.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ChannelPulse {
    /// The channel (joint `i` is channel `i`).
    pub channel: usize,
    /// The width, in µs, already through the pulse rule for the device's unit and the servo's
    /// range.
    pub pulse_us: f64,
    /// What a channel the device reports limp (or cannot report) gets instead, in device
    /// units: the editor's pose. A limp servo jumps there at its own top speed.
    pub limp_fill: ChannelValues,
}

/// What the editor's simulated device's analog inputs read: six inputs sweeping slowly, so that
/// the input arm and capturing can be tried with no hardware (`editor/capture.rs`).
fn simulated_inputs() -> ReadingsSource {
    ReadingsSource::Scripted {
        inputs: 6,
        period: Duration::from_secs(8),
    }
}

/// Where a stream stands, as the link panel shows it.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum StreamPhase {
    /// No stream.
    #[default]
    Idle,
    /// The scene's sequence is being planned and turned into setpoints.
    Planning,
    /// Setpoints are going out.
    Streaming,
    /// Stopped pushing; the queue is running out.
    Pausing,
    /// Paused: the device holds; resume carries on.
    Paused,
    /// Every setpoint went out.
    Finished,
    /// Ended early: emergency stop, lost link or an error (see the messages).
    Ended,
}

/// Why a stream ended before its last setpoint went out.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum StreamEnd {
    /// The emergency stop.
    EmergencyStop,
    /// The link to the device was lost.
    LinkLost,
    /// The link refused a setpoint or could not resume (see the messages).
    Error,
}

/// A connected device, as the panel shows it.
#[derive(Debug, Clone, PartialEq)]
pub struct Connection {
    /// What was connected: "simulated device" or the port's path.
    pub name: String,
    /// What the device announced.
    pub info: DeviceInfo,
    /// Streams are sent ahead (1 s, as `armwright stream`) as planned setpoints the device plays
    /// from its queue (protocol 4, the scene's rate equal to the device's pulse frame rate): a limp arm
    /// is then woken one joint at a time ([`Link::plays_ahead`]).
    pub plays_ahead: bool,
}

impl Connection {
    /// How a stream on this link wakes a limp arm: one joint at a time when it plays ahead
    /// (only planned setpoints may leave a channel without a pulse), else all together.
    pub fn wake_mode(&self) -> WakeMode {
        if self.plays_ahead {
            WakeMode::OneAtATime
        } else {
            WakeMode::Together
        }
    }
}

/// Everything the link panel shows; plain data, refreshed once a frame by the editor.
#[derive(Debug, Clone, Default)]
pub struct LinkView {
    /// The serial ports found by the last listing.
    pub ports: Vec<PortSummary>,
    /// Whether a port listing is running.
    pub listing: bool,
    /// Whether a connection is being made.
    pub connecting: bool,
    /// The device connected, if any.
    pub connection: Option<Connection>,
    /// Streaming state and statistics, while connected.
    pub stats: Option<StreamStats>,
    /// Where the stream stands.
    pub phase: StreamPhase,
    /// Setpoints pushed to the link in this stream, and how many there are. After a pause that
    /// halted a stream played ahead, the first is where it resumes.
    pub progress: (usize, usize),
    /// Setpoints of this stream the link wrote to the device (after such a pause, where it
    /// resumes: the ones written ahead were never played).
    pub sent: usize,
    /// Why the stream ended early, once it did.
    pub ended: Option<StreamEnd>,
    /// After an emergency stop, how many of the stream's setpoints the device had played (from
    /// the pulses it holds), when it could say: on a link that plays ahead, up to a second of
    /// those sent were never played.
    pub played_at_stop: Option<usize>,
    /// Planned setpoints whose pulse was limited to its servo's or the device's range.
    pub clamped: usize,
    /// Largest rounding error of the planned setpoints, in degrees.
    pub worst_rounding_deg: f64,
    /// The scene's arm changed since the simulated device was connected: it still moves the
    /// arm it was connected with.
    pub arm_changed: bool,
    /// Where follow stands and the follower's pose.
    pub follow: FollowView,
}

impl LinkView {
    /// How a stream on the connected link wakes a limp arm (all together when not connected).
    pub fn wake_mode(&self) -> WakeMode {
        self.connection
            .as_ref()
            .map_or(WakeMode::Together, Connection::wake_mode)
    }
}

/// The stop handle of the link open now, shared by the UI's stop path and the worker.
#[derive(Debug, Default)]
struct StopShared {
    handle: Mutex<Option<EmergencyStop>>,
    /// A stop is latched in the editor: a device connected from now on is stopped at once.
    latched: AtomicBool,
    /// The newest stop request handed to a link's handle, and when.
    handed: Mutex<Option<(StopRequest, Instant)>>,
}

/// What the worker publishes for the UI.
#[derive(Debug, Default)]
struct Published {
    view: LinkView,
    simulated: Option<Arc<Mutex<SimDevice>>>,
    reports: Vec<Report>,
    /// Reports added since the worker started (the window takes them; this count stays).
    reports_added: u64,
    /// The window to wake when something it shows changed.
    waker: Option<egui::Context>,
    /// How large the window draws the arm: physical pixels per m in the view that shows it
    /// largest; `None` until the window says.
    pixels_per_m: Option<f64>,
}

impl Published {
    /// Adds a report for the window to take.
    fn push(&mut self, report: Report) {
        self.reports.push(report);
        self.reports_added += 1;
    }
}

/// What the window draws of the link, compared from one worker turn to the next to decide
/// whether the window needs a redraw: the values as the panels print them, so that a change
/// nobody can see (a longer acknowledgement wait, a heartbeat's status line saying what the last
/// one said, a reading a hair off the last) wakes nothing.
#[derive(Debug, Clone, PartialEq, Default)]
struct Shown {
    /// Redrawn at once, never held back by [`WAKE_INTERVAL`].
    urgent: Urgent,
    /// Redrawn at most once every [`WAKE_INTERVAL`].
    routine: Routine,
}

/// What a stop, a lost link or the end of a stream or a follow run changes: the window shows
/// each at once.
#[derive(Debug, Clone, PartialEq, Default)]
struct Urgent {
    state: Option<LinkState>,
    loss: Option<LinkLoss>,
    mode: Option<DeviceMode>,
    faults: Option<Faults>,
    phase: StreamPhase,
    ended: Option<StreamEnd>,
    played_at_stop: Option<usize>,
    connection: Option<Connection>,
    follow: (FollowPhase, u64),
    /// Reports added for the window (a lost link, a refused stream say why there).
    reports: u64,
}

/// Counters and figures, as the link panel prints them.
#[derive(Debug, Clone, PartialEq, Default)]
struct Routine {
    /// Setpoints sent, acknowledged, late, dropped; underruns.
    frames: [u64; 5],
    /// Jitter mean, 99th percentile and largest, the last stop's write latency, the longest
    /// silence toward the device and the longest wait for a processor, in the 10 µs the panel
    /// prints (0.01 ms).
    timing: [Option<u128>; 6],
    /// The status line's counters: bad lines, bad checksums, clamped values, watchdog trips.
    counts: Option<[u16; 4]>,
    /// What the device says it sends (the timeline draws the approach from it).
    output: Option<Option<ChannelOutput>>,
    /// The analog readings in steps of [`READING_STEP`] (the input arm is drawn from them).
    readings: Option<Vec<u16>>,
    progress: (usize, usize),
    sent: usize,
    /// The follow share, in the whole % the panel prints.
    follow_share_pct: i64,
    listing: bool,
    connecting: bool,
    ports: usize,
}

/// Analog reading units (of 0–4095) an input must move before that alone redraws the window:
/// about 0.4 % of its travel, below what the eye sees of the input arm, above a potentiometer's
/// flicker.
const READING_STEP: u16 = 16;

impl Shown {
    fn of(published: &Published) -> Shown {
        let view = &published.view;
        let stats = view.stats.as_ref();
        let status = stats.and_then(|stats| stats.last_status);
        let tens_of_us = |duration: Duration| (duration.as_micros() + 5) / 10;
        Shown {
            urgent: Urgent {
                state: stats.map(|stats| stats.state),
                loss: stats.and_then(|stats| stats.loss),
                mode: status.map(|status| status.mode),
                faults: status.map(|status| status.faults),
                phase: view.phase,
                ended: view.ended,
                played_at_stop: view.played_at_stop,
                connection: view.connection.clone(),
                follow: (view.follow.phase, view.follow.ended),
                reports: published.reports_added,
            },
            routine: Routine {
                frames: stats.map_or([0; 5], |stats| {
                    [
                        stats.frames_sent,
                        stats.frames_acked,
                        stats.frames_late,
                        stats.frames_dropped,
                        stats.underruns,
                    ]
                }),
                timing: stats.map_or([None; 6], |stats| {
                    [
                        Some(tens_of_us(stats.jitter_mean)),
                        Some(tens_of_us(stats.jitter_p99)),
                        Some(tens_of_us(stats.jitter_max)),
                        stats.stop_write_latency.map(tens_of_us),
                        Some(tens_of_us(stats.send_gap_max)),
                        Some(tens_of_us(stats.host_wait_max)),
                    ]
                }),
                counts: status.map(|status| {
                    [
                        status.bad_lines,
                        status.bad_checksums,
                        status.clamped_values,
                        status.watchdog_trips,
                    ]
                }),
                output: stats.map(|stats| stats.device_output),
                readings: stats.and_then(|stats| stats.readings).map(|readings| {
                    readings
                        .as_slice()
                        .iter()
                        .map(|reading| (reading + READING_STEP / 2) / READING_STEP)
                        .collect()
                }),
                progress: view.progress,
                sent: view.sent,
                follow_share_pct: (view.follow.share * 100.0).round() as i64,
                listing: view.listing,
                connecting: view.connecting,
                ports: view.ports.len(),
            },
        }
    }
}

/// Wakes the window when what it draws of the link changed: at once for a stop, a lost link or
/// an ended stream ([`Urgent`]); otherwise at most once every [`WAKE_INTERVAL`], a change inside
/// the interval woken for when it ends. The simulated device's arm alone wakes it once a point
/// of the arm is [`ARM_STEP_PX`] on screen from where it was drawn, at most once every
/// [`ARM_WAKE_INTERVAL`] while it moves and every [`ARM_CREEP_INTERVAL`] while it creeps.
#[derive(Debug, Default)]
struct Waking {
    shown: Shown,
    /// The arm the simulated device moves, to place its joints as the views draw them.
    arm: Option<Arm>,
    /// The simulated device's arm as of the last redraw: its joints and tool point (base
    /// frame, m), or `None` when there was none to draw.
    drawn: Option<Vec<Vector3<f64>>>,
    /// The arm's points at the start of the span its speed is measured over, and when.
    sampled: Option<(Vec<Vector3<f64>>, Instant)>,
    /// Whether the arm moved at [`ARM_MOTION_PX_PER_S`] or faster over the last span.
    moving: bool,
    /// A change of [`Shown`] not yet woken for.
    pending: bool,
    last: Option<Instant>,
}

impl Waking {
    /// Notes the arm the simulated device moves.
    fn arm(&mut self, arm: Option<&Arm>) {
        self.arm = arm.cloned();
        self.drawn = None;
        self.sampled = None;
    }

    fn check(&mut self, published: &Published) {
        let pose = published.simulated.as_ref().and_then(|device| {
            let device = device.lock().unwrap_or_else(PoisonError::into_inner);
            device.arm_positions().map(<[f64]>::to_vec)
        });
        let points = pose.and_then(|pose| self.points(&pose));
        let pixels_per_m = published.pixels_per_m.unwrap_or(DEFAULT_PIXELS_PER_M);
        if self.wanted(Shown::of(published), points, pixels_per_m, Instant::now())
            && let Some(waker) = &published.waker
        {
            // A delay, however short, asks egui for one frame; no delay asks for two.
            waker.request_repaint_after(Duration::from_millis(1));
        }
    }

    /// The points the views draw of the simulated device's arm at `pose` (rad or m per joint):
    /// each joint's origin and the tool point, base frame, m.
    fn points(&self, pose: &[f64]) -> Option<Vec<Vector3<f64>>> {
        let chain = forward(self.arm.as_ref()?, pose).ok()?;
        let joints = chain.frames().iter().map(|frame| frame.translation.vector);
        Some(joints.chain([chain.tool().translation.vector]).collect())
    }

    /// Notes what the window would draw now (`shown`; the simulated device's arm as the
    /// `points` of [`Waking::points`], drawn at `pixels_per_m` physical pixels per m in the
    /// view that shows it largest) at `now`; returns whether to wake the window.
    fn wanted(
        &mut self,
        shown: Shown,
        points: Option<Vec<Vector3<f64>>>,
        pixels_per_m: f64,
        now: Instant,
    ) -> bool {
        let urgent = shown.urgent != self.shown.urgent;
        if shown != self.shown {
            self.shown = shown;
            self.pending = true;
        }
        self.measure_speed(points.as_deref(), pixels_per_m, now);
        let since_last = |interval: Duration| {
            self.last
                .is_none_or(|last| now.duration_since(last) >= interval)
        };
        let offset_px = arm_offset_m(self.drawn.as_deref(), points.as_deref()) * pixels_per_m;
        let arm_due = offset_px >= ARM_STEP_PX
            && since_last(ARM_WAKE_INTERVAL)
            && (self.moving || offset_px.is_infinite() || since_last(ARM_CREEP_INTERVAL));
        let wake = (self.pending && (urgent || since_last(WAKE_INTERVAL))) || arm_due;
        if wake {
            // The frame this asks for draws the arm as it is now.
            self.drawn = points;
            self.pending = false;
            self.last = Some(now);
        }
        wake
    }

    /// Updates whether the arm moves or creeps, once a [`SPEED_SPAN`].
    fn measure_speed(&mut self, points: Option<&[Vector3<f64>]>, pixels_per_m: f64, now: Instant) {
        let Some(points) = points else {
            self.sampled = None;
            self.moving = false;
            return;
        };
        if let Some((then, at)) = &self.sampled {
            let span = now.duration_since(*at);
            if span < SPEED_SPAN {
                return;
            }
            let moved_px = arm_offset_m(Some(then), Some(points)) * pixels_per_m;
            self.moving = moved_px >= ARM_MOTION_PX_PER_S * span.as_secs_f64();
        }
        self.sampled = Some((points.to_vec(), now));
    }
}

/// How far the arm drawn at `drawn` is from the arm now at `now` (each joint's origin and the
/// tool point, m): the largest distance of a point, m; infinite when one of them is missing
/// (the arm appeared or went), zero when both are. The views are flat projections that never
/// stretch a length (the top view drops the height, the side view turns the plane about the
/// vertical axis), so no point moves farther on either view.
fn arm_offset_m(drawn: Option<&[Vector3<f64>]>, now: Option<&[Vector3<f64>]>) -> f64 {
    match (drawn, now) {
        (None, None) => 0.0,
        (Some(drawn), Some(now)) if drawn.len() == now.len() => drawn
            .iter()
            .zip(now)
            .map(|(drawn, now)| (now - drawn).norm())
            .fold(0.0, f64::max),
        _ => f64::INFINITY,
    }
}

enum Request {
    ListPorts,
    Connect {
        device: Device,
        baud: u32,
        rate_hz: f64,
        arm: Option<Box<Arm>>,
        start: Vec<f64>,
        servo: ServoModelOptions,
    },
    Disconnect,
    Stream {
        scene: Box<Scene>,
        arm: Box<Arm>,
        park: bool,
    },
    Pause,
    Resume,
    HoldChannel(ChannelPulse),
    Readings(bool),
    Reset(ResetConfirmation),
    Follow(Box<FollowAction>),
    /// The editor is going: drop the link (the device is asked to hold) and end.
    Quit,
}

/// The editor's device link: a handle to the worker thread.
pub struct DeviceLink {
    requests: Sender<Request>,
    published: Arc<Mutex<Published>>,
    stop: Arc<StopShared>,
    view: LinkView,
    simulated: Option<Arc<Mutex<SimDevice>>>,
    /// The arm handed over with the newest connect request.
    connected_arm: Option<Arm>,
    worker: Option<JoinHandle<()>>,
    /// Whether the worker was given the window to wake.
    waker_set: bool,
    /// The scale last handed to the worker ([`DeviceLink::drawn_at`]).
    pixels_per_m: Option<f64>,
}

impl std::fmt::Debug for DeviceLink {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("DeviceLink")
            .field("view", &self.view)
            .finish_non_exhaustive()
    }
}

impl Default for DeviceLink {
    fn default() -> DeviceLink {
        DeviceLink::start()
    }
}

impl DeviceLink {
    /// Starts the worker thread, not connected.
    pub fn start() -> DeviceLink {
        let (requests, inbox) = channel();
        let published = Arc::new(Mutex::new(Published::default()));
        let stop = Arc::new(StopShared::default());
        let mut worker = Worker {
            inbox,
            published: Arc::clone(&published),
            stop: Arc::clone(&stop),
            link: None,
            rate_hz: 50.0,
            readings: false,
            stream: None,
            waking: Waking::default(),
            follow: None,
            follows_ended: 0,
        };
        let handle = std::thread::Builder::new()
            .name("armwright device link".into())
            .spawn(move || worker.run())
            .ok();
        DeviceLink {
            requests,
            published,
            stop,
            view: LinkView::default(),
            simulated: None,
            connected_arm: None,
            worker: handle,
            waker_set: false,
            pixels_per_m: None,
        }
    }

    /// Lets the worker wake the window (`ctx`) when something the window shows of the link
    /// changed: its state, statistics, messages, the simulated device's arm. Only the first
    /// call per link does anything, so it may be called every frame.
    pub(crate) fn wake(&mut self, ctx: &egui::Context) {
        if !self.waker_set {
            self.published
                .lock()
                .unwrap_or_else(PoisonError::into_inner)
                .waker = Some(ctx.clone());
            self.waker_set = true;
        }
    }

    /// Tells the worker how large the window draws the arm (physical pixels per m in the view
    /// that shows it largest), so that the simulated device's arm wakes the window for a move
    /// the eye sees there ([`ARM_STEP_PX`]). Cheap to call every frame.
    pub(crate) fn drawn_at(&mut self, pixels_per_m: f64) {
        if self.pixels_per_m != Some(pixels_per_m) {
            self.pixels_per_m = Some(pixels_per_m);
            self.published
                .lock()
                .unwrap_or_else(PoisonError::into_inner)
                .pixels_per_m = Some(pixels_per_m);
        }
    }

    /// The emergency-stop path onto this link, for the editor's stop commands.
    pub fn stop_link(&self) -> LinkStopLink {
        LinkStopLink {
            stop: Arc::clone(&self.stop),
            requests: self.requests.clone(),
        }
    }

    /// What the link panel shows, as of the editor's last look at the link (once a frame).
    pub fn view(&self) -> &LinkView {
        &self.view
    }

    /// The simulated device while connected to one (to watch its mode and its arm).
    pub fn simulated_device(&self) -> Option<&Arc<Mutex<SimDevice>>> {
        self.simulated.as_ref()
    }

    /// The newest stop request that was handed to a connected link's emergency-stop handle,
    /// with the moment it was.
    pub fn last_stop_handed(&self) -> Option<(StopRequest, Instant)> {
        *self
            .stop
            .handed
            .lock()
            .unwrap_or_else(PoisonError::into_inner)
    }

    /// Takes what the worker has published since the last frame; returns its reports. `arm`
    /// is the scene's arm now, to tell whether the simulated device still moves the same one.
    /// Quick: one short lock, no waiting on the worker.
    pub(crate) fn poll(&mut self, arm: Option<&Arm>) -> Vec<Report> {
        let mut published = self
            .published
            .lock()
            .unwrap_or_else(PoisonError::into_inner);
        self.view.clone_from(&published.view);
        self.simulated.clone_from(&published.simulated);
        self.view.arm_changed = self.simulated.is_some() && self.connected_arm.as_ref() != arm;
        std::mem::take(&mut published.reports)
    }

    /// The simulated device's arm pose (rad or m per joint), if connected to one that moves
    /// the scene's arm as of the editor's last look at the link (once a frame).
    pub fn simulated_arm_pose(&self) -> Option<Vec<f64>> {
        if self.view.arm_changed {
            return None;
        }
        let device = self.simulated.as_ref()?;
        let device = device.lock().unwrap_or_else(PoisonError::into_inner);
        device.arm_positions().map(<[f64]>::to_vec)
    }

    /// Hands `action` to the worker with what it needs from the scene: the scene and its arm,
    /// the current pose (where a simulated arm starts).
    pub(crate) fn request(
        &mut self,
        action: LinkAction,
        scene: &Scene,
        arm: Option<&Arm>,
        pose: &[f64],
    ) {
        let request = match action {
            LinkAction::ListPorts => Request::ListPorts,
            LinkAction::Connect(device) => {
                self.connected_arm = arm.cloned();
                Request::Connect {
                    device,
                    baud: scene.link.baud,
                    rate_hz: scene.link.rate_hz,
                    arm: arm.cloned().map(Box::new),
                    start: pose.to_vec(),
                    servo: crate::task::servo_model_of(scene),
                }
            }
            LinkAction::Disconnect => Request::Disconnect,
            LinkAction::Stream { park } => match arm {
                Some(arm) => Request::Stream {
                    scene: Box::new(scene.clone()),
                    arm: Box::new(arm.clone()),
                    park,
                },
                None => {
                    self.report(Report::Problem(
                        "cannot stream: the scene's arm cannot be built".into(),
                    ));
                    return;
                }
            },
            LinkAction::Pause => Request::Pause,
            LinkAction::Resume => Request::Resume,
            LinkAction::HoldChannel(pulse) => Request::HoldChannel(pulse),
            LinkAction::Follow(action) => Request::Follow(Box::new(action)),
            LinkAction::Readings(wanted) => Request::Readings(wanted),
        };
        // The worker only ends when this handle is dropped.
        let _ = self.requests.send(request);
    }

    fn report(&self, report: Report) {
        self.published
            .lock()
            .unwrap_or_else(PoisonError::into_inner)
            .push(report);
    }
}

impl Drop for DeviceLink {
    fn drop(&mut self) {
        // The worker drops the link as it ends: the device is asked to hold. (Stop links
        // handed out keep the channel open, so it is told rather than left to notice.)
        let _ = self.requests.send(Request::Quit);
        if let Some(worker) = self.worker.take() {
            let _ = worker.join();
        }
    }
}

/// The editor's stop path onto a [`DeviceLink`]: raises the connected link's emergency-stop
/// flag (a lock-free store the link's thread acts on within a millisecond, ahead of every
/// queued setpoint, which it drops). It never waits on the link or the worker.
#[derive(Debug, Clone)]
pub struct LinkStopLink {
    stop: Arc<StopShared>,
    requests: Sender<Request>,
}

impl std::fmt::Debug for Request {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(match self {
            Request::ListPorts => "ListPorts",
            Request::Connect { .. } => "Connect",
            Request::Disconnect => "Disconnect",
            Request::Stream { .. } => "Stream",
            Request::Pause => "Pause",
            Request::Resume => "Resume",
            Request::HoldChannel(_) => "HoldChannel",
            Request::Readings(_) => "Readings",
            Request::Reset(_) => "Reset",
            Request::Follow(_) => "Follow",
            Request::Quit => "Quit",
        })
    }
}

impl StopLink for LinkStopLink {
    fn send_stop(&mut self, request: StopRequest) {
        // Latched under the handle's lock, so a link being connected either gets its handle
        // raised here or sees the latch as it stores the handle.
        let handle = self
            .stop
            .handle
            .lock()
            .unwrap_or_else(PoisonError::into_inner);
        self.stop.latched.store(true, Ordering::SeqCst);
        if let Some(stop) = handle.as_ref() {
            stop.trigger();
            *self
                .stop
                .handed
                .lock()
                .unwrap_or_else(PoisonError::into_inner) = Some((request, Instant::now()));
        }
    }

    fn confirm_reset(&mut self, confirmation: ResetConfirmation) {
        self.stop.latched.store(false, Ordering::SeqCst);
        let _ = self.requests.send(Request::Reset(confirmation));
    }
}

/// How streams go out on a link, for the connect message.
fn pacing_words(plays_ahead: bool) -> String {
    if plays_ahead {
        format!(
            "streams are sent {:.1} s ahead (the device plays them from its queue) and wake a \
             limp arm one joint at a time",
            PLAY_AHEAD.as_secs_f64()
        )
    } else {
        "streams are sent in real time (the device cannot play them ahead at this rate) and \
         wake a limp arm with all joints together"
            .to_owned()
    }
}

/// How a stream starts, for the editor's message as `armwright stream` says it: how a limp arm
/// is woken ([`crate::approach::StartFrom::describe_waking`]), in which order, the approach and
/// the park move.
fn stream_start_words(
    scene: &Scene,
    arm: &Arm,
    streamed: &StreamPlan,
    wake: WakeMode,
    rate_hz: f64,
) -> String {
    let mut words = streamed.from.describe_waking(wake);
    let order: Vec<String> = streamed
        .wake_times(rate_hz)
        .iter()
        .map(|&(channel, at_s)| {
            let name = arm.joints().get(channel).map_or_else(
                || {
                    if arm.gripper().is_some() {
                        "gripper".to_owned()
                    } else {
                        format!("channel {channel}")
                    }
                },
                |joint| joint.name.clone(),
            );
            format!("{name} at {at_s:.2} s")
        })
        .collect();
    if !order.is_empty() {
        words.push_str(&format!(
            "; wake order, slowest first: {}",
            order.join(", ")
        ));
    }
    words.push_str(&format!(
        "; approach {:.2} s at {} % speed share",
        streamed.approach.duration(),
        scene.timing.approach_speed_share_pct
    ));
    if let Some(parked) = &streamed.park {
        words.push_str(&format!(
            "; then the park move to the rest pose, {:.2} s, where the device holds the arm",
            parked.duration()
        ));
    }
    words
}

/// Where a stream halted by a pause goes on, given its `frames` and how many of them the device
/// had `played` ([`played_before`]): after the first frame of the run of equal frames that ends
/// at the last one played. Any frame equal to what the device holds is a place to go on from
/// without a jump; starting again at the run's first frame serves a wake pause or a dwell the
/// pause cut short in full, never shorter. From 0 when none was played.
fn resume_index(frames: &[ChannelOutput], played: usize) -> usize {
    let Some(last) = played.checked_sub(1) else {
        return 0;
    };
    let first = frames[..last]
        .iter()
        .rposition(|frame| *frame != frames[last])
        .map_or(0, |before| before + 1);
    first + 1
}

/// How many of a stream's setpoints the device had played when it stopped sending new ones (a
/// pause's halt, an emergency stop): its `frames`, the first `sent` of which the link wrote, and
/// what the device holds (`held`, as it reported it): up to the last written frame equal to
/// `held` once clamped as the device clamps, or none when it holds what it sent before the
/// stream (`start_output`). `None` when it cannot say what it holds, or holds neither.
fn played_before(
    frames: &[ChannelOutput],
    sent: usize,
    held: Option<&ChannelOutput>,
    start_output: Option<&ChannelOutput>,
    device: &DeviceInfo,
) -> Option<usize> {
    let held = held?;
    let as_device_sends = |frame: &ChannelOutput| {
        let clamped: Vec<Option<u16>> = frame
            .as_slice()
            .iter()
            .map(|units| units.map(|units| device.clamp_units(units).0))
            .collect();
        ChannelOutput::from_slice(&clamped)
    };
    let last = frames[..sent.min(frames.len())]
        .iter()
        .rposition(|frame| as_device_sends(frame).as_ref() == Some(held));
    match last {
        Some(last) => Some(last + 1),
        None => (start_output == Some(held)).then_some(0),
    }
}

/// Adds a report for the UI to take.
fn say(published: &Mutex<Published>, report: Report) {
    published
        .lock()
        .unwrap_or_else(PoisonError::into_inner)
        .push(report);
}

/// A stream being pushed by the worker.
struct Stream {
    /// Every frame as it is sent ([`StreamPlan::frame`]): while a limp arm is woken one joint at
    /// a time, the channels not yet woken have no pulse.
    frames: Vec<ChannelOutput>,
    next: usize,
    phase: StreamPhase,
    /// The link plays this stream ahead: a pause halts it ([`Link::halt_stream`]).
    plays_ahead: bool,
    /// Every frame was pushed and the link told the stream is complete; it is still playing.
    finishing: bool,
    /// What the device sent before the stream's first frame.
    start_output: Option<ChannelOutput>,
    /// The link's count of setpoints written when this stream started, less the frames before
    /// where a halting pause left it (so the count from it is this stream's progress).
    sent_before: u64,
    ended: Option<StreamEnd>,
    /// After an emergency stop, how many setpoints the device had played, from what it holds
    /// ([`played_before`]).
    played_at_stop: Option<usize>,
}

impl Stream {
    fn end(&mut self, why: StreamEnd) {
        self.phase = StreamPhase::Ended;
        self.ended.get_or_insert(why);
    }
}

struct Worker {
    inbox: Receiver<Request>,
    published: Arc<Mutex<Published>>,
    stop: Arc<StopShared>,
    link: Option<Link>,
    rate_hz: f64,
    /// Whether the editor wants analog readings (see [`LinkAction::Readings`]).
    readings: bool,
    stream: Option<Stream>,
    waking: Waking,
    /// The follow run, while the device follows the edited pose.
    follow: Option<FollowRun>,
    /// Follow runs ended (left, stopped, lost, refused) since the worker started.
    follows_ended: u64,
}

impl Worker {
    fn run(&mut self) {
        loop {
            let pushing = self
                .stream
                .as_ref()
                .is_some_and(|stream| stream.phase == StreamPhase::Streaming && !stream.finishing);
            let request = if pushing {
                match self.inbox.try_recv() {
                    Ok(request) => Some(request),
                    Err(TryRecvError::Empty) => None,
                    Err(TryRecvError::Disconnected) => return,
                }
            } else {
                let wait = self
                    .follow
                    .as_ref()
                    .map_or(IDLE_WAIT, |run| run.wait().min(IDLE_WAIT));
                match self.inbox.recv_timeout(wait) {
                    Ok(request) => Some(request),
                    Err(RecvTimeoutError::Timeout) => None,
                    Err(RecvTimeoutError::Disconnected) => return,
                }
            };
            match request {
                Some(Request::Quit) => return,
                Some(request) => self.handle(request),
                None => {}
            }
            self.push_one();
            self.step_follow();
            self.take_events();
            self.publish();
        }
    }

    fn handle(&mut self, request: Request) {
        match request {
            Request::ListPorts => {
                self.with_view(|view| view.listing = true);
                let listed = list_ports();
                let mut published = self.lock();
                published.view.listing = false;
                match listed {
                    Ok(ports) => {
                        let count = ports.len();
                        published.view.ports = ports;
                        published.push(Report::Info(match count {
                            1 => "1 serial port found".to_owned(),
                            count => format!("{count} serial ports found"),
                        }));
                    }
                    Err(error) => published.push(Report::Problem(error.to_string())),
                }
            }
            Request::Connect {
                device,
                baud,
                rate_hz,
                arm,
                start,
                servo,
            } => self.connect(&device, baud, rate_hz, arm.map(|arm| *arm), &start, &servo),
            Request::Disconnect => {
                self.disconnect();
                self.say(Report::Info(
                    "disconnected; the device was asked to hold".into(),
                ));
            }
            Request::Stream { scene, arm, park } => self.start_stream(&scene, &arm, park),
            Request::Pause => self.pause(),
            Request::Resume => self.resume(),
            Request::HoldChannel(pulse) => self.hold_channel(&pulse),
            Request::Follow(request) => self.follow_request(*request),
            Request::Readings(wanted) => {
                self.readings = wanted;
                self.ask_readings();
            }
            Request::Quit => {}
            Request::Reset(confirmation) => {
                if let Some(link) = &self.link {
                    // A reset confirmed while the stop is still on its way (the link repeats it
                    // until the device acknowledges it) would be refused: wait for the device's
                    // word first, as long as the link would before calling it lost.
                    let until = Instant::now() + STOP_CONFIRM_WAIT;
                    while link.stats().state == LinkState::Stopping && Instant::now() < until {
                        std::thread::sleep(Duration::from_millis(1));
                    }
                    match link.reset_after_stop(confirmation) {
                        Ok(()) => self.say(Report::Info(
                            "the device confirmed the reset; it holds until you stream".into(),
                        )),
                        Err(error) => self.say(Report::Problem(format!(
                            "the device did not take the reset: {error}"
                        ))),
                    }
                }
            }
        }
    }

    fn connect(
        &mut self,
        device: &Device,
        baud: u32,
        rate_hz: f64,
        arm: Option<Arm>,
        start: &[f64],
        servo: &ServoModelOptions,
    ) {
        self.disconnect();
        self.with_view(|view| view.connecting = true);
        self.rate_hz = rate_hz;
        self.waking.arm(arm.as_ref());
        let mut simulated = None;
        let (name, transport): (String, Result<Box<dyn Transport>, String>) = match device {
            Device::Simulated => {
                let mut device =
                    SimDevice::new(SimDeviceConfig::default()).with_readings(simulated_inputs());
                if let Some(arm) = arm {
                    match device.clone().with_arm(arm, servo, start) {
                        Ok(with_arm) => device = with_arm,
                        Err(error) => self.say(Report::Problem(format!(
                            "the simulated device runs without the arm's servo model: {error}"
                        ))),
                    }
                }
                let transport = SimTransport::with_device(device);
                simulated = Some(transport.device());
                ("simulated device".into(), Ok(Box::new(transport)))
            }
            Device::Port(path) => (
                path.clone(),
                SerialTransport::open(path, baud)
                    .map(|port| Box::new(port) as Box<dyn Transport>)
                    .map_err(|error| error.to_string()),
            ),
        };
        // As `armwright stream`: played ahead when the device can (protocol 4, the scene's rate
        // its pulse frame rate), which a busy computer cannot stall, and which can wake a limp
        // arm one joint at a time.
        let options = StreamOptions {
            period: Duration::from_secs_f64(1.0 / rate_hz.clamp(1.0, 1000.0)),
            queue_capacity: QUEUE_AHEAD,
            play_ahead: PLAY_AHEAD,
            ..StreamOptions::default()
        };
        let connected = transport.and_then(|transport| {
            Link::connect(transport, options).map_err(|error| error.to_string())
        });
        self.with_view(|view| view.connecting = false);
        match connected {
            Ok(link) => {
                let stop = link.emergency_stop();
                let mut handle = self
                    .stop
                    .handle
                    .lock()
                    .unwrap_or_else(PoisonError::into_inner);
                if self.stop.latched.load(Ordering::SeqCst) {
                    // The editor is stopped: so is a device connected now.
                    stop.trigger();
                }
                *handle = Some(stop);
                drop(handle);
                let info = link.device();
                let plays_ahead = link.plays_ahead();
                self.link = Some(link);
                self.ask_readings();
                let mut published = self.lock();
                published.simulated = simulated;
                published.view.connection = Some(Connection {
                    name: name.clone(),
                    info,
                    plays_ahead,
                });
                published.push(Report::Info(format!(
                    "connected to {name}: firmware {}, {} channels; {}",
                    info.firmware,
                    info.channel_count,
                    pacing_words(plays_ahead)
                )));
            }
            Err(error) => self.say(Report::Problem(format!(
                "cannot connect to {name}: {error}"
            ))),
        }
    }

    /// Asks the link for analog readings at [`EDITOR_READINGS_HZ`], or for none,
    /// as the editor wants; a device that cannot send them is left alone (nothing to show).
    fn ask_readings(&mut self) {
        let Some(link) = &self.link else { return };
        if link.device().protocol_version < 3 {
            return;
        }
        let rate = if self.readings { EDITOR_READINGS_HZ } else { 0 };
        if let Err(error) = link.request_readings(rate) {
            self.say(Report::Problem(format!(
                "cannot read the analog inputs: {error}"
            )));
        }
    }

    fn disconnect(&mut self) {
        *self
            .stop
            .handle
            .lock()
            .unwrap_or_else(PoisonError::into_inner) = None;
        self.stream = None;
        if self.follow.take().is_some() {
            self.follows_ended += 1;
        }
        self.link = None;
        let mut published = self.lock();
        published.simulated = None;
        published.view.connection = None;
        published.view.stats = None;
        published.view.phase = StreamPhase::Idle;
        published.view.progress = (0, 0);
    }

    fn start_stream(&mut self, scene: &Scene, arm: &Arm, park: bool) {
        let Some(link) = &self.link else {
            self.say(Report::Problem(
                "cannot stream: no device is connected".into(),
            ));
            return;
        };
        self.with_view(|view| view.phase = StreamPhase::Planning);
        // As `armwright stream`: only a link that plays ahead may leave a channel without a
        // pulse, which waking one joint at a time needs.
        let plays_ahead = link.plays_ahead();
        let wake = if plays_ahead {
            WakeMode::OneAtATime
        } else {
            WakeMode::Together
        };
        // Every stream starts with the approach from what the device sends now.
        let planned = link
            .refresh_state()
            .map_err(|error| format!("cannot read what the device sends: {error}"))
            .and_then(|state| {
                let plan = plan_of(scene, arm).map_err(|error| format!("cannot plan: {error}"))?;
                let streamed = stream_plan_waking(
                    scene,
                    arm,
                    &plan,
                    state.output.as_ref(),
                    &link.device(),
                    self.rate_hz,
                    park,
                    wake,
                )?;
                Ok((streamed, state.output))
            });
        let (streamed, start_output) = match planned {
            Ok(planned) => planned,
            Err(message) => {
                self.with_view(|view| view.phase = StreamPhase::Ended);
                self.say(Report::Problem(format!("cannot stream: {message}")));
                return;
            }
        };
        let start = stream_start_words(scene, arm, &streamed, wake, self.rate_hz);
        if let Err(error) = link.start_stream() {
            self.with_view(|view| view.phase = StreamPhase::Ended);
            self.say(Report::Problem(format!("cannot stream: {error}")));
            return;
        }
        let frames: Vec<ChannelOutput> = (0..streamed.setpoints.values.len())
            .filter_map(|index| streamed.frame(index))
            .collect();
        let total = frames.len();
        let sent_before = link.stats().frames_sent;
        self.with_view(|view| {
            view.progress = (0, total);
            view.sent = 0;
            view.ended = None;
            view.played_at_stop = None;
            view.clamped = streamed.setpoints.clamped;
            view.worst_rounding_deg = streamed.setpoints.worst_rounding_deg;
        });
        self.stream = Some(Stream {
            frames,
            next: 0,
            phase: StreamPhase::Streaming,
            plays_ahead,
            finishing: false,
            start_output,
            sent_before,
            ended: None,
            played_at_stop: None,
        });
        self.say(Report::Info(format!(
            "streaming {total} setpoints at {} Hz: {start}",
            self.rate_hz
        )));
    }

    /// A pause. On a link that plays ahead the device holds up to [`PLAY_AHEAD`] of planned
    /// setpoints, which it would go on playing: the stream is halted ([`Link::halt_stream`]:
    /// setpoints not yet written are dropped, the device drops its queue and holds the frame it
    /// is sending, acknowledged before this returns), then the device is asked which frame that
    /// is, where a resume goes on ([`resume_index`]). Otherwise the few setpoints queued run
    /// out (at most [`QUEUE_AHEAD`] periods) and the device is asked to hold when the link says
    /// the stream finished.
    fn pause(&mut self) {
        let (Some(stream), Some(link)) = (&mut self.stream, &self.link) else {
            return;
        };
        if stream.phase != StreamPhase::Streaming {
            return;
        }
        if !stream.plays_ahead {
            stream.phase = StreamPhase::Pausing;
            let _ = link.finish_stream();
            return;
        }
        let sent = link.stats().frames_sent.saturating_sub(stream.sent_before) as usize;
        let halted = link
            .halt_stream()
            .and_then(|()| link.refresh_state())
            .map(|state| state.output);
        let held = match halted {
            Ok(held) => held,
            Err(error) => {
                stream.end(match error {
                    LinkError::StopLatched => StreamEnd::EmergencyStop,
                    LinkError::Lost(_) => StreamEnd::LinkLost,
                    _ => StreamEnd::Error,
                });
                say(
                    &self.published,
                    Report::Problem(format!("the pause did not reach the device: {error}")),
                );
                return;
            }
        };
        let info = link.device();
        let played = played_before(
            &stream.frames,
            sent,
            held.as_ref(),
            stream.start_output.as_ref(),
            &info,
        );
        match played.map(|played| resume_index(&stream.frames, played)) {
            Some(next) => {
                stream.next = next;
                stream.finishing = false;
                stream.phase = StreamPhase::Paused;
                // Counted from here, the link's setpoints written are this stream's progress.
                stream.sent_before = link.stats().frames_sent.saturating_sub(next as u64);
                say(
                    &self.published,
                    Report::Info(format!(
                        "paused at setpoint {next} of {}: the device dropped the setpoints sent \
                         ahead and holds",
                        stream.frames.len()
                    )),
                );
            }
            None => {
                stream.end(StreamEnd::Error);
                say(
                    &self.published,
                    Report::Problem(
                        "paused: the device holds, but at pulses none of the stream's setpoints \
                         has, so the stream cannot resume there; stream again (it approaches \
                         from where the arm is)"
                            .into(),
                    ),
                );
            }
        }
    }

    /// Sends one setpoint: `pulse`'s channel at its width, every other channel at what the
    /// device reports it sends now (asked afresh), a limp one at `pulse.limp_fill`. The
    /// setpoint goes out as a stream of one, after the one before it finished.
    fn hold_channel(&mut self, pulse: &ChannelPulse) {
        let Some(link) = &self.link else {
            self.say(Report::Problem(
                "cannot send the pulse: no device is connected".into(),
            ));
            return;
        };
        if self.stream.as_ref().is_some_and(|stream| {
            matches!(
                stream.phase,
                StreamPhase::Planning
                    | StreamPhase::Streaming
                    | StreamPhase::Pausing
                    | StreamPhase::Paused
            )
        }) {
            self.say(Report::Problem(
                "cannot send the pulse while the sequence streams or is paused".into(),
            ));
            return;
        }
        // The previous pulse's stream of one ends within a period or two.
        let until = Instant::now() + HOLD_WAIT;
        while link.stats().state == LinkState::Streaming && Instant::now() < until {
            std::thread::sleep(Duration::from_millis(1));
        }
        let info = link.device();
        let output = match link.refresh_state() {
            Ok(state) => state.output,
            Err(error) => {
                self.say(Report::Problem(format!(
                    "cannot send the pulse: the device did not say what it sends: {error}"
                )));
                return;
            }
        };
        let mut values = pulse.limp_fill;
        let mut woken = Vec::new();
        for (channel, value) in values.as_mut_slice().iter_mut().enumerate() {
            if channel == pulse.channel {
                *value = info.units_from_us(pulse.pulse_us);
            } else {
                match output.and_then(|output| output.as_slice().get(channel).copied().flatten()) {
                    Some(units) => *value = units,
                    None => woken.push(channel.to_string()),
                }
            }
        }
        // In real time even on a link that plays ahead: one pulse, wanted now.
        let sent = link
            .start_live_stream()
            .and_then(|()| link.push_setpoint(values))
            .and_then(|()| link.finish_stream());
        match sent {
            Ok(()) if woken.is_empty() => {}
            Ok(()) => self.say(Report::Info(format!(
                "channel{} {} had no known pulse (limp): sent the editor's pose there",
                if woken.len() == 1 { "" } else { "s" },
                woken.join(", ")
            ))),
            Err(error) => self.say(Report::Problem(format!("cannot send the pulse: {error}"))),
        }
        // This stream of one is not the sequence's: its end is not reported as one.
        self.stream = None;
    }

    fn resume(&mut self) {
        let (Some(stream), Some(link)) = (&mut self.stream, &self.link) else {
            return;
        };
        if stream.phase != StreamPhase::Paused {
            return;
        }
        match link.start_stream() {
            Ok(()) => {
                stream.phase = StreamPhase::Streaming;
                stream.finishing = false;
            }
            Err(error) => {
                stream.end(match error {
                    LinkError::StopLatched => StreamEnd::EmergencyStop,
                    _ => StreamEnd::Error,
                });
                say(
                    &self.published,
                    Report::Problem(format!("cannot resume: {error}")),
                );
            }
        }
    }

    /// Pushes the next frame while streaming; waits at most one period while the link's queue
    /// is full. After the last, tells the link the stream is complete: the stream stays
    /// [`StreamPhase::Streaming`] (and can be paused) until the link says it finished, which on
    /// a link that plays ahead is when the device has played the last frame.
    fn push_one(&mut self) {
        let (Some(stream), Some(link)) = (&mut self.stream, &self.link) else {
            return;
        };
        if stream.phase != StreamPhase::Streaming || stream.finishing {
            return;
        }
        let Some(frame) = stream.frames.get(stream.next) else {
            stream.finishing = true;
            let _ = link.finish_stream();
            return;
        };
        match link.push_frame(*frame) {
            Ok(()) => stream.next += 1,
            Err(error) => {
                stream.end(match error {
                    LinkError::StopLatched => StreamEnd::EmergencyStop,
                    _ => StreamEnd::Error,
                });
                let message = match error {
                    LinkError::StopLatched => "stream ended by the emergency stop".to_owned(),
                    other => format!("stream ended: {other}"),
                };
                say(&self.published, Report::Problem(message));
            }
        }
    }

    fn take_events(&mut self) {
        let Some(link) = &self.link else { return };
        // After a stream ends or stops, ask what the device holds, where the next approach
        // starts (the timeline draws it).
        let mut ask_output = false;
        while let Some(event) = link.next_event(Duration::ZERO) {
            ask_output |= matches!(
                event,
                LinkEvent::StreamFinished { .. } | LinkEvent::StopConfirmed { .. }
            );
            let report = match event {
                LinkEvent::StreamFinished { .. } => match &mut self.stream {
                    Some(stream) if stream.next >= stream.frames.len() => {
                        stream.phase = StreamPhase::Finished;
                        Some(Report::Info("the sequence ran to its end".into()))
                    }
                    Some(stream) => {
                        stream.phase = StreamPhase::Paused;
                        // Keep the pulses as they are while paused.
                        let _ = link.hold();
                        Some(Report::Info(format!(
                            "paused after {} setpoints; the device holds",
                            stream.next
                        )))
                    }
                    None => None,
                },
                LinkEvent::StopConfirmed { after } => {
                    if let Some(stream) = &mut self.stream
                        && stream.phase != StreamPhase::Finished
                    {
                        stream.end(StreamEnd::EmergencyStop);
                    }
                    Some(Report::Info(format!(
                        "the device confirmed the emergency stop after {:.1} ms; it holds until \
                         reset",
                        after.as_secs_f64() * 1e3
                    )))
                }
                LinkEvent::ResetDone => None,
                LinkEvent::Lost(loss) => {
                    if let Some(stream) = &mut self.stream
                        && stream.phase != StreamPhase::Finished
                    {
                        stream.end(StreamEnd::LinkLost);
                    }
                    Some(Report::Problem(format!("link lost: {loss}")))
                }
            };
            if let Some(report) = report {
                say(&self.published, report);
            }
        }
        if ask_output {
            // Not answered (a lost link): the timeline keeps the last report.
            let held = link.refresh_state().map(|state| state.output);
            if let (Some(stream), Ok(held)) = (&mut self.stream, held)
                && stream.ended == Some(StreamEnd::EmergencyStop)
                && stream.played_at_stop.is_none()
            {
                let sent = link.stats().frames_sent.saturating_sub(stream.sent_before) as usize;
                stream.played_at_stop = played_before(
                    &stream.frames,
                    sent,
                    held.as_ref(),
                    stream.start_output.as_ref(),
                    &link.device(),
                );
                if let Some(played) = stream.played_at_stop
                    && played < sent
                {
                    say(
                        &self.published,
                        Report::Info(format!(
                            "the device holds setpoint {played} of {}; the {} sent after it were \
                             dropped unplayed",
                            stream.frames.len(),
                            sent - played
                        )),
                    );
                }
            }
        }
    }

    fn publish(&mut self) {
        let stats = self.link.as_ref().map(Link::stats);
        let (phase, pushed) = self
            .stream
            .as_ref()
            .map_or((None, None), |s| (Some(s.phase), Some(s.next)));
        let sent = match (&self.stream, &stats) {
            (Some(stream), Some(stats)) => {
                Some(stats.frames_sent.saturating_sub(stream.sent_before) as usize)
            }
            _ => None,
        };
        let ended = self.stream.as_ref().and_then(|stream| stream.ended);
        let played_at_stop = self
            .stream
            .as_ref()
            .and_then(|stream| stream.played_at_stop);
        let follow = self.follow.as_ref().map_or_else(
            || FollowView {
                ended: self.follows_ended,
                ..FollowView::default()
            },
            |run| run.view(self.follows_ended),
        );
        let mut published = self
            .published
            .lock()
            .unwrap_or_else(PoisonError::into_inner);
        if published.view.stats != stats {
            published.view.stats = stats;
        }
        published.view.follow = follow;
        if let Some(phase) = phase {
            published.view.phase = phase;
        }
        if let Some(pushed) = pushed {
            published.view.progress.0 = pushed;
        }
        if let Some(sent) = sent {
            published.view.sent = sent;
            published.view.ended = ended;
            published.view.played_at_stop = played_at_stop;
        }
        self.waking.check(&published);
    }

    fn say(&self, report: Report) {
        say(&self.published, report);
    }

    /// A follow request (`follow.rs`): refused while a stream runs or with no device.
    fn follow_request(&mut self, request: FollowAction) {
        let starting = matches!(request, FollowAction::Start { .. });
        let streaming = self.stream.as_ref().is_some_and(|stream| {
            matches!(
                stream.phase,
                StreamPhase::Streaming | StreamPhase::Pausing | StreamPhase::Paused
            )
        });
        let refusal = match &self.link {
            None => Some("cannot follow: no device is connected"),
            Some(_) if starting && self.follow.is_none() && streaming => {
                Some("cannot follow while a stream runs or is paused")
            }
            Some(_) => None,
        };
        if let Some(reason) = refusal {
            if starting {
                self.follows_ended += 1;
                self.say(Report::Problem(reason.into()));
            }
            return;
        }
        let Some(link) = &self.link else { return };
        let (report, ended) = super::follow::handle(&mut self.follow, request, link, self.rate_hz);
        if ended {
            self.follows_ended += 1;
        }
        if let Some(report) = report {
            self.say(report);
        }
    }

    /// Pushes the follow run's next steps (holding when the input arm's readings stopped); ends
    /// it when the link says so.
    fn step_follow(&mut self) {
        let (Some(run), Some(link)) = (&mut self.follow, &self.link) else {
            return;
        };
        if let Some(report) = run.check_readings(link) {
            say(&self.published, report);
        }
        if let Some(end) = run.step(link) {
            self.follow = None;
            self.follows_ended += 1;
            self.say(end.report());
        }
    }

    fn with_view(&self, change: impl FnOnce(&mut LinkView)) {
        change(&mut self.lock().view);
    }

    fn lock(&self) -> std::sync::MutexGuard<'_, Published> {
        self.published
            .lock()
            .unwrap_or_else(PoisonError::into_inner)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn connected() -> Published {
        Published {
            view: LinkView {
                stats: Some(StreamStats {
                    state: LinkState::Idle,
                    ..StreamStats::default()
                }),
                ..LinkView::default()
            },
            ..Published::default()
        }
    }

    fn frame(values: &[Option<u16>]) -> ChannelOutput {
        ChannelOutput::from_slice(values).expect("a frame")
    }

    #[test]
    fn a_halted_stream_resumes_after_the_held_frame_serving_a_cut_wake_pause_again() {
        let info = SimDevice::new(SimDeviceConfig::default()).info();
        let woken = frame(&[Some(1500), None]);
        let rest = frame(&[Some(1500), Some(1500)]);
        let moving = |units| frame(&[Some(1500), Some(units)]);
        // Three frames of the first channel's wake pause, two of the rest pose, then a move.
        let frames = [
            woken,
            woken,
            woken,
            rest,
            rest,
            moving(1510),
            moving(1520),
            moving(3000),
        ];
        let limp = ChannelOutput::limp(2);
        let resume = |held: ChannelOutput, sent: usize| {
            played_before(&frames, sent, Some(&held), Some(&limp), &info)
                .map(|played| resume_index(&frames, played))
        };
        // Held in a wake pause or a dwell: the whole run again.
        assert_eq!(resume(woken, 8), Some(1));
        assert_eq!(resume(rest, 8), Some(4));
        assert_eq!(resume(moving(1520), 8), Some(7));
        // The device clamps 3000 to its 2500 top.
        assert_eq!(resume(moving(2500), 8), Some(8));
        // Nothing played yet: from the start.
        assert_eq!(resume(limp, 8), Some(0));
        // A frame not written, or pulses no frame has: nowhere to go on from.
        assert_eq!(resume(moving(1520), 6), None);
        assert_eq!(resume(moving(1700), 8), None);
        assert_eq!(played_before(&frames, 8, None, Some(&limp), &info), None);
    }

    #[test]
    fn the_setpoints_played_before_a_stop_are_counted_from_the_held_frame() {
        let info = SimDevice::new(SimDeviceConfig::default()).info();
        let rest = frame(&[Some(1500), Some(1500)]);
        let moving = |units| frame(&[Some(1500), Some(units)]);
        let frames = [
            rest,
            rest,
            moving(1510),
            moving(1520),
            moving(3000),
            moving(1530),
        ];
        let limp = ChannelOutput::limp(2);
        let played = |held: ChannelOutput, sent: usize| {
            played_before(&frames, sent, Some(&held), Some(&limp), &info)
        };
        // Held at the third frame of six written: three played, whatever was sent after it.
        assert_eq!(played(moving(1510), 6), Some(3));
        // A run of equal frames counts to its last written one.
        assert_eq!(played(rest, 2), Some(2));
        assert_eq!(played(rest, 6), Some(2));
        // The device clamps 3000 to its 2500 top.
        assert_eq!(played(moving(2500), 6), Some(5));
        // What the device sent before the stream: none played.
        assert_eq!(played(limp, 6), Some(0));
        // Pulses no written frame has, or nothing known: not counted.
        assert_eq!(played(moving(1530), 5), None);
        assert_eq!(played(moving(1700), 6), None);
        assert_eq!(played_before(&frames, 6, None, Some(&limp), &info), None);
    }

    /// Whether the window is woken for `published` at `at`.
    fn wakes(waking: &mut Waking, published: &Published, at: Instant) -> bool {
        waking.wanted(Shown::of(published), None, DEFAULT_PIXELS_PER_M, at)
    }

    fn stats(published: &mut Published) -> &mut StreamStats {
        published
            .view
            .stats
            .get_or_insert_with(StreamStats::default)
    }

    #[test]
    fn a_change_the_window_does_not_draw_wakes_nothing() {
        let start = Instant::now();
        let mut waking = Waking::default();
        let mut published = connected();
        assert!(wakes(&mut waking, &published, start), "the first look");
        // What heartbeats change while the link idles: none of it is drawn.
        for (turn, waited_ms) in [3, 5, 9].into_iter().enumerate() {
            let stats = stats(&mut published);
            stats.ack_wait_max = Duration::from_millis(waited_ms);
            stats.acks_late += 1;
            stats.readings_received += 1;
            stats.stop_ack_latency = Some(Duration::from_micros(waited_ms));
            // Printed to 0.01 ms: a microsecond more is the same text.
            stats.jitter_max = Duration::from_micros(turn as u64);
            let later = start + WAKE_INTERVAL * (turn as u32 + 2);
            assert!(!wakes(&mut waking, &published, later), "turn {turn}");
        }
        // A figure the panel prints differently does: a jitter, the longest silence toward the
        // device, the longest wait for a processor.
        stats(&mut published).jitter_max = Duration::from_micros(40);
        assert!(wakes(&mut waking, &published, start + WAKE_INTERVAL * 10));
        stats(&mut published).send_gap_max = Duration::from_millis(90);
        assert!(wakes(&mut waking, &published, start + WAKE_INTERVAL * 12));
        stats(&mut published).host_wait_max = Duration::from_millis(4);
        assert!(wakes(&mut waking, &published, start + WAKE_INTERVAL * 14));
    }

    #[test]
    fn counters_wake_the_window_at_most_once_an_interval_and_the_last_change_is_not_lost() {
        let start = Instant::now();
        let mut waking = Waking::default();
        let mut published = connected();
        assert!(wakes(&mut waking, &published, start));
        stats(&mut published).frames_sent = 1;
        assert!(wakes(&mut waking, &published, start + WAKE_INTERVAL));
        stats(&mut published).frames_sent = 2;
        let soon = start + WAKE_INTERVAL + WAKE_INTERVAL / 3;
        assert!(!wakes(&mut waking, &published, soon), "inside the interval");
        // Nothing new since, but the change above is still owed a redraw.
        assert!(wakes(&mut waking, &published, start + WAKE_INTERVAL * 2));
        assert!(!wakes(&mut waking, &published, start + WAKE_INTERVAL * 4));
    }

    #[test]
    fn a_stop_and_a_lost_link_wake_the_window_at_once() {
        let start = Instant::now();
        let mut waking = Waking::default();
        let mut published = connected();
        assert!(wakes(&mut waking, &published, start));
        stats(&mut published).frames_sent = 1;
        assert!(wakes(&mut waking, &published, start + WAKE_INTERVAL));
        // A millisecond later, well inside the interval.
        let at = start + WAKE_INTERVAL + Duration::from_millis(1);
        stats(&mut published).state = LinkState::Stopping;
        assert!(wakes(&mut waking, &published, at), "the stop");
        stats(&mut published).last_status = Some(armwright_link::DeviceStatus {
            mode: DeviceMode::Stopped,
            faults: Faults::EMERGENCY_STOP,
            bad_checksums: 0,
            bad_lines: 0,
            clamped_values: 0,
            watchdog_trips: 0,
        });
        assert!(
            wakes(&mut waking, &published, at + Duration::from_millis(1)),
            "the device's word"
        );
        let stats = stats(&mut published);
        stats.state = LinkState::Lost;
        stats.loss = Some(LinkLoss::DeviceRestarted);
        assert!(
            wakes(&mut waking, &published, at + Duration::from_millis(2)),
            "the lost link"
        );
        published.push(Report::Problem("link lost".into()));
        assert!(
            wakes(&mut waking, &published, at + Duration::from_millis(3)),
            "its message"
        );
        // The window taking the messages changes nothing it draws.
        published.reports.clear();
        assert!(!wakes(&mut waking, &published, at + WAKE_INTERVAL * 2));
    }

    /// An arm of a base, an elbow and a tool point whose tool point is `sag_m` along x from
    /// its start.
    fn sagged(sag_m: f64) -> Option<Vec<Vector3<f64>>> {
        Some(vec![
            Vector3::zeros(),
            Vector3::new(0.1, 0.0, 0.1),
            Vector3::new(0.2 + sag_m, 0.0, 0.1),
        ])
    }

    #[test]
    fn the_simulated_arm_wakes_the_window_once_a_point_moved_a_visible_step_on_screen() {
        let start = Instant::now();
        let mut waking = Waking::default();
        let published = connected();
        let shown = || Shown::of(&published);
        // Drawn at 2 pixels a mm: a step on screen is 1.5 mm. The arm moves fast (half a step
        // an interval is 12 pixels a second), never creeps.
        let scale = 2000.0;
        let step = ARM_STEP_PX / scale;
        let at = |n: u32| start + ARM_WAKE_INTERVAL * n;
        assert!(
            waking.wanted(shown(), sagged(0.0), scale, at(0)),
            "the first look"
        );
        assert!(waking.wanted(shown(), sagged(step), scale, at(1)), "a step");
        assert!(
            !waking.wanted(shown(), sagged(step * 1.5), scale, at(2)),
            "under a step"
        );
        // The same offset drawn twice as large is a step.
        assert!(waking.wanted(shown(), sagged(step * 1.9), scale * 2.0, at(3)));
        // A step soon after a redraw waits for the interval's end, and is not lost.
        let soon = at(3) + ARM_WAKE_INTERVAL / 2;
        assert!(
            !waking.wanted(shown(), sagged(step * 3.0), scale, soon),
            "too soon"
        );
        assert!(waking.wanted(shown(), sagged(step * 3.0), scale, at(4)));
        assert!(
            !waking.wanted(shown(), sagged(step * 3.0), scale, at(5)),
            "drawn already"
        );
        assert!(waking.wanted(shown(), None, scale, at(6)), "the arm went");
    }

    #[test]
    fn a_creeping_arm_is_caught_up_with_rarely_a_moving_one_followed() {
        let start = Instant::now();
        let mut waking = Waking::default();
        let published = connected();
        let shown = || Shown::of(&published);
        // 1 pixel a mm; the arm creeps 1 pixel a second, looked at 10 times a second.
        let scale = 1000.0;
        let mut woken = Vec::new();
        for tenth in 0..=250_u32 {
            let seconds = f64::from(tenth) / 10.0;
            let now = start + Duration::from_millis(100 * u64::from(tenth));
            if waking.wanted(shown(), sagged(seconds * 1e-3), scale, now) {
                woken.push(seconds);
            }
        }
        // The first look, then once the creep interval has passed, the offset being over a
        // step.
        let creep = ARM_CREEP_INTERVAL.as_secs_f64();
        assert_eq!(woken, [0.0, creep, 2.0 * creep], "woken at {woken:?} s");
        // Moving at 8 pixels a second, a step is drawn as soon as it is made.
        let mut woken = 0;
        let from = start + Duration::from_secs(30);
        for tenth in 1..=20_u32 {
            let now = from + Duration::from_millis(100 * u64::from(tenth));
            let sag = 0.025 + f64::from(tenth) * 0.8e-3;
            woken += usize::from(waking.wanted(shown(), sagged(sag), scale, now));
        }
        assert!(
            (4..=6).contains(&woken),
            "{woken} redraws for 16 pixels in 2 s"
        );
    }
}
