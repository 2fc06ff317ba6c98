//! The streaming thread: owns the transport, sends setpoints on an absolute-time schedule
//! with flow control from the acknowledgements, runs the emergency stop ahead of
//! everything, watches the link, and publishes statistics for the UI.

use std::collections::VecDeque;
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::mpsc::{self, Receiver, Sender, SyncSender, TryRecvError};
use std::sync::{Arc, Mutex, PoisonError};
use std::thread::JoinHandle;
use std::time::{Duration, Instant};

use crate::error::{LinkError, LinkLoss};
use crate::estop::{EmergencyStop, ResetConfirmation};
use crate::port::Transport;
use crate::protocol::{
    AckOutcome, Assembled, ChannelOutput, ChannelValues, DeviceInfo, DeviceLine, DeviceMessage,
    DeviceMode, DeviceStatus, HostLine, HostMessage, LineAssembler, OLDEST_PROTOCOL_VERSION,
    PROTOCOL_VERSION,
};
use crate::run_delay::RunDelay;

/// Timing of the link. Every interval is a `Duration`.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct StreamOptions {
    /// Interval between setpoints (10 ms = 100 Hz).
    pub period: Duration,
    /// Setpoints the queue between producer and thread holds; a full queue blocks the producer.
    pub queue_capacity: usize,
    /// An acknowledgement later than this is counted as late ([`StreamStats::acks_late`]);
    /// the stream goes on.
    pub ack_late_after: Duration,
    /// The link is lost when a line has waited this long for its acknowledgement and the
    /// device has sent nothing for as long: by then its watchdog (250 ms) has tripped or is
    /// about to.
    pub silence_limit: Duration,
    /// Send a heartbeat when nothing else was sent for this long (the device holds after 250 ms).
    pub heartbeat_interval: Duration,
    /// How long [`Link::connect`] waits for the device's greeting.
    pub greeting_timeout: Duration,
    /// Interval at which an unacknowledged emergency stop is sent again.
    pub stop_repeat: Duration,
    /// A setpoint sent later than its deadline by more than this counts as late.
    pub late_after: Duration,
    /// How far ahead to send a stream as planned setpoints (`p`, `PROTOCOL.md` §3), which
    /// the device plays from its queue one a pulse frame: a host held up for up to this long
    /// plus the device's watchdog time (250 ms) neither ends the stream nor trips the
    /// watchdog. Used when the device speaks protocol 4 and its pulse frame equals `period`
    /// ([`Link::plays_ahead`]); zero streams in real time (`s`) always.
    pub play_ahead: Duration,
}

impl Default for StreamOptions {
    /// 100 Hz, a 64-setpoint queue, acknowledgements late after 60 ms, the link lost after
    /// 250 ms of silence, 100 ms heartbeat, 2 s greeting timeout, stop repeated every 20 ms,
    /// setpoints late after 1 ms, no playing ahead.
    fn default() -> Self {
        Self {
            period: Duration::from_millis(10),
            queue_capacity: 64,
            ack_late_after: Duration::from_millis(60),
            silence_limit: Duration::from_millis(250),
            heartbeat_interval: Duration::from_millis(100),
            greeting_timeout: Duration::from_secs(2),
            stop_repeat: Duration::from_millis(20),
            late_after: Duration::from_millis(1),
            play_ahead: Duration::ZERO,
        }
    }
}

/// What the link is doing.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum LinkState {
    /// Connected, not streaming.
    #[default]
    Idle,
    /// Sending setpoints.
    Streaming,
    /// Emergency stop sent, not yet acknowledged; being repeated.
    Stopping,
    /// Emergency stop acknowledged; latched until a confirmed reset.
    Stopped,
    /// Reset sent after a person confirmed, waiting for its acknowledgement.
    Resetting,
    /// The link was lost; see [`StreamStats::loss`].
    Lost,
}

/// Streaming state and statistics, as the UI reads them.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct StreamStats {
    /// What the link is doing.
    pub state: LinkState,
    /// Setpoints written to the device.
    pub frames_sent: u64,
    /// Setpoints the device acknowledged.
    pub frames_acked: u64,
    /// Setpoints the device acknowledged as clamped.
    pub frames_clamped: u64,
    /// Setpoints written later than their deadline by more than `late_after`.
    pub frames_late: u64,
    /// Queued setpoints dropped by an emergency stop, a lost link or a halt
    /// ([`Link::halt_stream`]).
    pub frames_dropped: u64,
    /// Deadlines that came with the queue empty (the producer fell behind).
    pub underruns: u64,
    /// Mean of |write time − deadline| over sent setpoints.
    pub jitter_mean: Duration,
    /// 99th percentile of |write time − deadline|, to 10 µs.
    pub jitter_p99: Duration,
    /// Largest |write time − deadline|.
    pub jitter_max: Duration,
    /// Lines from the device that failed to parse.
    pub bad_device_lines: u64,
    /// Acknowledgements that came later than `ack_late_after` (the stream went on).
    pub acks_late: u64,
    /// Longest wait for an acknowledgement so far.
    pub ack_wait_max: Duration,
    /// Longest time between two lines written while streaming: the longest silence the
    /// device heard from this host (its watchdog trips after 250 ms of it). A host held up
    /// by a busy computer shows here, whatever the device made of it.
    pub send_gap_max: Duration,
    /// Longest time this host's link thread waited for a processor (ready to run, another
    /// program running) between two lines written while streaming: Linux's run-queue delay of
    /// the thread; zero where it cannot be read. Near [`StreamStats::send_gap_max`] it says the
    /// computer, busy with other programs, held the stream up, not the device or the link.
    pub host_wait_max: Duration,
    /// Times the device fell silent past the silence limit while it still held planned
    /// setpoints to play (§8 of `PROTOCOL.md`): noticed and counted, not yet a lost link.
    pub device_quiet: u64,
    /// How long the device had said nothing when the first such silence was noticed
    /// (time the host was watching the line).
    pub device_quiet_noticed_after: Option<Duration>,
    /// The device's newest status line (one is read at connect).
    pub last_status: Option<DeviceStatus>,
    /// What the device said it was sending, newest first read at connect; `None` for a
    /// device speaking protocol 1, which cannot say.
    pub device_output: Option<ChannelOutput>,
    /// The newest analog readings the device sent (0–4095 each, input 0 first), after
    /// [`Link::request_readings`].
    pub readings: Option<ChannelValues>,
    /// Readings lines received since connect.
    pub readings_received: u64,
    /// Why the link was lost, once it is.
    pub loss: Option<LinkLoss>,
    /// From the newest emergency-stop request to its first stop line written.
    pub stop_write_latency: Option<Duration>,
    /// From the newest emergency-stop request to the device's acknowledgement.
    pub stop_ack_latency: Option<Duration>,
}

/// Something that happened on the link, in order.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum LinkEvent {
    /// The stream ran to its end: every setpoint was sent.
    StreamFinished {
        /// Setpoints sent in this stream.
        frames_sent: u64,
    },
    /// The device acknowledged the emergency stop.
    StopConfirmed {
        /// Time from the request to the acknowledgement.
        after: Duration,
    },
    /// The device acknowledged the reset; streaming is allowed again.
    ResetDone,
    /// The link was lost; streaming stopped.
    Lost(LinkLoss),
}

/// The device's state as it reported it: its status and, for a device speaking protocol 2,
/// what it is sending.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct DeviceState {
    /// Mode, faults and counters.
    pub status: DeviceStatus,
    /// Each channel's pulse (pulse units) or limp; `None` when the device cannot say.
    pub output: Option<ChannelOutput>,
}

enum Command {
    /// Start a stream; `true`: in real time even on a link that plays ahead.
    Start(Sender<Result<(), LinkError>>, bool),
    /// End the stream at once and hold, answered once the device acknowledged the hold.
    Halt(Sender<Result<(), LinkError>>),
    Finish,
    Send(HostMessage),
    Reset(Sender<Result<(), LinkError>>),
    Refresh(Sender<Result<DeviceState, LinkError>>),
}

/// An open link to a device, served by its own streaming thread. Dropping it asks the
/// device to hold and ends the thread. It can be shared between threads (a producer pushing
/// setpoints, a UI reading statistics).
pub struct Link {
    commands: Option<Sender<Command>>,
    setpoints: Option<SyncSender<ChannelOutput>>,
    stats: Arc<Mutex<StreamStats>>,
    events: Mutex<Receiver<LinkEvent>>,
    stop: EmergencyStop,
    device: DeviceInfo,
    greeting_timeout: Duration,
    plays_ahead: bool,
    /// The stream started last goes out in real time ([`Link::start_live_stream`]).
    live: AtomicBool,
    thread: Option<JoinHandle<()>>,
}

impl Link {
    /// Starts the streaming thread on `transport`, greets the device, waits for its
    /// description, then asks for its status and (protocol 2) what it is sending, so the
    /// link starts from the device's real state: a device whose emergency stop is latched
    /// gives a link in [`LinkState::Stopped`] that needs a confirmed reset.
    ///
    /// # Errors
    /// [`LinkError::NoGreeting`] when the device does not answer within
    /// `options.greeting_timeout`, [`LinkError::NoStatus`] when it then does not report its
    /// state within the same time, [`LinkError::ProtocolVersion`] when it speaks a version
    /// this host does not, [`LinkError::Lost`] when the transport fails.
    pub fn connect(
        transport: Box<dyn Transport>,
        options: StreamOptions,
    ) -> Result<Self, LinkError> {
        let (command_tx, command_rx) = mpsc::channel();
        let (setpoint_tx, setpoint_rx) = mpsc::sync_channel(options.queue_capacity.max(1));
        let (event_tx, event_rx) = mpsc::channel();
        let (greeting_tx, greeting_rx) = mpsc::channel();
        let stats = Arc::new(Mutex::new(StreamStats::default()));
        let stop = EmergencyStop::default();
        let mut worker = Worker {
            transport,
            options,
            commands: command_rx,
            setpoints: setpoint_rx,
            shared: Arc::clone(&stats),
            stop: stop.clone(),
            events: event_tx,
            assembler: LineAssembler::new(),
            seq: 0,
            in_flight: VecDeque::new(),
            room: 1,
            last_heard: Instant::now(),
            listened: Duration::ZERO,
            heard_listened: Duration::ZERO,
            quiet_counted: false,
            talking_since: Duration::ZERO,
            plays_until: None,
            last_turn: Instant::now(),
            statuses_seen: 0,
            outputs_seen: 0,
            refresh: None,
            stats: StreamStats::default(),
            schedule: None,
            controls: VecDeque::new(),
            last_sent: Instant::now(),
            run_delay: None,
            delay_at_last_sent: None,
            stop_requested_at: None,
            stop_last_written: None,
            reset_reply: None,
            device: None,
            greeting_requested: false,
            greetings_seen: 0,
            greeting_acked_at: None,
            watchdog_trips_at_start: 0,
            lead_frames: 0,
            stream_lead: 0,
            halt_replies: Vec::new(),
            last_frame: None,
            setpoints_dry: false,
            jitter: Jitter::default(),
        };
        let thread = std::thread::Builder::new()
            .name("armwright-link".to_owned())
            .spawn(move || worker.run(greeting_tx))
            .map_err(|_| LinkError::Closed)?;
        let device = match greeting_rx.recv() {
            Ok(Ok(device)) => device,
            Ok(Err(error)) => {
                let _ = thread.join();
                return Err(error);
            }
            Err(_) => return Err(LinkError::Closed),
        };
        Ok(Self {
            commands: Some(command_tx),
            setpoints: Some(setpoint_tx),
            stats,
            events: Mutex::new(event_rx),
            stop,
            device,
            greeting_timeout: options.greeting_timeout,
            plays_ahead: plays_ahead(&options, &device),
            live: AtomicBool::new(false),
            thread: Some(thread),
        })
    }

    /// Whether streams on this link are sent ahead as planned setpoints that the device plays
    /// from its queue (`StreamOptions::play_ahead`): the device speaks protocol 4 and its
    /// pulse frame equals the stream's period. Only then may a pushed frame leave a channel
    /// without a pulse ([`Link::push_frame`]).
    pub fn plays_ahead(&self) -> bool {
        self.plays_ahead
    }

    /// What the device said about itself.
    pub fn device(&self) -> DeviceInfo {
        self.device
    }

    /// What the device said it was sending, newest report (the first is read at connect):
    /// each channel's pulse in pulse units, or `None` for a limp channel. `None` altogether
    /// for a device speaking protocol 1.
    pub fn device_output(&self) -> Option<ChannelOutput> {
        self.stats().device_output
    }

    /// The device's newest status (the first is read at connect).
    pub fn device_status(&self) -> Option<DeviceStatus> {
        self.stats().last_status
    }

    /// Asks the device for its status and (protocol 2) its output now, and waits for both.
    ///
    /// # Errors
    /// [`LinkError::Lost`] when the link is or becomes lost, [`LinkError::NoStatus`] when
    /// the answer does not come within the greeting timeout.
    pub fn refresh_state(&self) -> Result<DeviceState, LinkError> {
        let (reply_tx, reply_rx) = mpsc::channel();
        self.command(Command::Refresh(reply_tx))?;
        let waited = self.greeting_timeout;
        match reply_rx.recv_timeout(waited) {
            Ok(answer) => answer,
            Err(mpsc::RecvTimeoutError::Timeout) => Err(LinkError::NoStatus { waited }),
            Err(mpsc::RecvTimeoutError::Disconnected) => Err(LinkError::Closed),
        }
    }

    /// Asks the device to send its analog readings `rate_hz` times a second (1 to
    /// [`crate::MAX_READINGS_RATE_HZ`]), or to stop with 0. The newest readings are then in
    /// [`StreamStats::readings`]. Readings move nothing and are allowed in any state.
    ///
    /// # Errors
    /// [`LinkError::NoReadings`] when the device speaks a protocol older than 3,
    /// [`LinkError::ReadingsRate`] for a rate above the limit, [`LinkError::Closed`] if the
    /// thread has ended.
    pub fn request_readings(&self, rate_hz: u8) -> Result<(), LinkError> {
        if self.device.protocol_version < 3 {
            return Err(LinkError::NoReadings {
                protocol_version: self.device.protocol_version,
            });
        }
        if rate_hz > crate::MAX_READINGS_RATE_HZ {
            return Err(LinkError::ReadingsRate { rate_hz });
        }
        self.command(Command::Send(HostMessage::ReadingsRate { rate_hz }))
    }

    /// A handle for the emergency stop, for key and Ctrl-C handlers.
    pub fn emergency_stop(&self) -> EmergencyStop {
        self.stop.clone()
    }

    /// Streaming state and statistics now.
    pub fn stats(&self) -> StreamStats {
        self.stats
            .lock()
            .unwrap_or_else(PoisonError::into_inner)
            .clone()
    }

    /// The next event, waiting at most `timeout`.
    pub fn next_event(&self, timeout: Duration) -> Option<LinkEvent> {
        self.events
            .lock()
            .unwrap_or_else(PoisonError::into_inner)
            .recv_timeout(timeout)
            .ok()
    }

    fn command(&self, command: Command) -> Result<(), LinkError> {
        self.commands
            .as_ref()
            .ok_or(LinkError::Closed)?
            .send(command)
            .map_err(|_| LinkError::Closed)?;
        self.stop.wake_link();
        Ok(())
    }

    /// Starts a stream: the first setpoint pushed goes out at once, each later one a
    /// period after the one before, on a fixed schedule.
    ///
    /// # Errors
    /// [`LinkError::StopLatched`] after an emergency stop until a confirmed reset,
    /// [`LinkError::Lost`] after a lost link, [`LinkError::AlreadyStreaming`].
    pub fn start_stream(&self) -> Result<(), LinkError> {
        self.start(false)
    }

    /// Starts a stream sent in real time (setpoints `s`, one a period as they are due) even on
    /// a link that plays streams ahead ([`Link::plays_ahead`]): for a stream whose setpoints
    /// are made as it runs (following a pose live, a single pulse), where a second sent ahead
    /// would be a second of lag. Otherwise as [`Link::start_stream`]; such a stream takes no
    /// frame with a limp channel ([`Link::push_frame`]).
    ///
    /// # Errors
    /// As [`Link::start_stream`].
    pub fn start_live_stream(&self) -> Result<(), LinkError> {
        self.start(true)
    }

    fn start(&self, live: bool) -> Result<(), LinkError> {
        let (reply_tx, reply_rx) = mpsc::channel();
        self.command(Command::Start(reply_tx, live))?;
        let started = reply_rx.recv().map_err(|_| LinkError::Closed)?;
        if started.is_ok() {
            self.live.store(live, Ordering::SeqCst);
        }
        started
    }

    /// Ends the stream now and holds the arm where it is, for a pause: drops the setpoints not
    /// yet written (counted in [`StreamStats::frames_dropped`]), asks the device to hold —
    /// which also drops the planned setpoints it has not played yet (`PROTOCOL.md` §3), so a
    /// stream played ahead stops within a pulse frame of the hold instead of playing on for the
    /// second it was sent ahead — and waits for the device to acknowledge the hold. From then
    /// on the device keeps the pulses of the frame it was sending; ask
    /// [`Link::refresh_state`] which. No [`LinkEvent::StreamFinished`] follows; the link is
    /// idle. On an idle link it only holds.
    ///
    /// # Errors
    /// [`LinkError::StopLatched`] when the emergency stop is (or becomes) latched, which holds
    /// already; [`LinkError::Lost`] when the link is or becomes lost before the device
    /// acknowledges the hold.
    pub fn halt_stream(&self) -> Result<(), LinkError> {
        let (reply_tx, reply_rx) = mpsc::channel();
        self.command(Command::Halt(reply_tx))?;
        reply_rx.recv().map_err(|_| LinkError::Closed)?
    }

    /// Queues one setpoint (pulse widths in device units, channel 0 first), waiting while
    /// the queue is full.
    ///
    /// # Errors
    /// [`LinkError::WrongChannelCount`]; [`LinkError::NotStreaming`] before
    /// [`Link::start_stream`] or after the stream ended; [`LinkError::StopLatched`] or
    /// [`LinkError::Lost`] once the stream has been stopped.
    pub fn push_setpoint(&self, values: ChannelValues) -> Result<(), LinkError> {
        let expected = usize::from(self.device.channel_count);
        if values.len() != expected {
            return Err(LinkError::WrongChannelCount {
                expected,
                got: values.len(),
            });
        }
        self.push(ChannelOutput::driven(&values))
    }

    /// Queues one frame in which some channels may send no pulse (`None`: the servo stays
    /// limp), for waking a limp arm one joint at a time; otherwise as
    /// [`Link::push_setpoint`].
    ///
    /// # Errors
    /// As [`Link::push_setpoint`], and [`LinkError::NoPlayAhead`] for a frame with a limp
    /// channel on a link that does not play ahead ([`Link::plays_ahead`]) or in a stream
    /// started with [`Link::start_live_stream`].
    pub fn push_frame(&self, frame: ChannelOutput) -> Result<(), LinkError> {
        let expected = usize::from(self.device.channel_count);
        if frame.len() != expected {
            return Err(LinkError::WrongChannelCount {
                expected,
                got: frame.len(),
            });
        }
        if frame.any_limp() && (!self.plays_ahead || self.live.load(Ordering::SeqCst)) {
            return Err(LinkError::NoPlayAhead);
        }
        self.push(frame)
    }

    fn push(&self, frame: ChannelOutput) -> Result<(), LinkError> {
        self.refuse_unless_streaming()?;
        self.setpoints
            .as_ref()
            .ok_or(LinkError::Closed)?
            .send(frame)
            .map_err(|_| LinkError::Closed)?;
        self.stop.wake_link();
        self.refuse_unless_streaming()
    }

    fn refuse_unless_streaming(&self) -> Result<(), LinkError> {
        let stats = self.stats();
        match stats.state {
            LinkState::Streaming => Ok(()),
            LinkState::Idle => Err(LinkError::NotStreaming),
            LinkState::Stopping | LinkState::Stopped | LinkState::Resetting => {
                Err(LinkError::StopLatched)
            }
            LinkState::Lost => Err(LinkError::Lost(
                stats.loss.unwrap_or(LinkLoss::DeviceRestarted),
            )),
        }
    }

    /// Says no more setpoints will come: the stream finishes when the queue is empty,
    /// with [`LinkEvent::StreamFinished`].
    ///
    /// # Errors
    /// [`LinkError::Closed`] if the thread has ended.
    pub fn finish_stream(&self) -> Result<(), LinkError> {
        self.command(Command::Finish)
    }

    /// Asks the device to keep its current pulses (the joints stay stiff).
    ///
    /// # Errors
    /// [`LinkError::Closed`] if the thread has ended.
    pub fn hold(&self) -> Result<(), LinkError> {
        self.command(Command::Send(HostMessage::Hold))
    }

    /// Asks the device to stop all pulses. The servos go limp: an unbalanced arm falls.
    ///
    /// # Errors
    /// [`LinkError::Closed`] if the thread has ended.
    pub fn release(&self) -> Result<(), LinkError> {
        self.command(Command::Send(HostMessage::Release))
    }

    /// Clears a latched emergency stop (this host's, or one the device reported at connect)
    /// and the device's sticky faults once a person has confirmed the arm is safe, and
    /// waits for the device's acknowledgement. The device keeps holding; stream again to
    /// move. On an idle link it only clears the sticky faults.
    ///
    /// # Errors
    /// [`LinkError::StopLatched`] while a stop is being sent and not yet acknowledged,
    /// [`LinkError::AlreadyStreaming`] while streaming, [`LinkError::Lost`] when the link
    /// is lost or the device does not acknowledge the reset.
    pub fn reset_after_stop(&self, confirmation: ResetConfirmation) -> Result<(), LinkError> {
        let _ = confirmation;
        let (reply_tx, reply_rx) = mpsc::channel();
        self.command(Command::Reset(reply_tx))?;
        reply_rx.recv().map_err(|_| LinkError::Closed)?
    }
}

impl Drop for Link {
    fn drop(&mut self) {
        // Closing both channels tells the thread to hold the device and end.
        self.commands.take();
        self.setpoints.take();
        self.stop.wake_link();
        if let Some(thread) = self.thread.take() {
            let _ = thread.join();
        }
    }
}

/// Histogram of |write time − deadline| in 10 µs bins up to 20 ms, for the percentile.
struct Jitter {
    bins: Box<[u32; 2000]>,
    count: u64,
    sum_ns: u128,
    max: Duration,
}

impl Default for Jitter {
    fn default() -> Self {
        Self {
            bins: Box::new([0; 2000]),
            count: 0,
            sum_ns: 0,
            max: Duration::ZERO,
        }
    }
}

impl Jitter {
    fn record(&mut self, offset: Duration) {
        let bin = usize::try_from(offset.as_micros() / 10).unwrap_or(usize::MAX);
        self.bins[bin.min(self.bins.len() - 1)] += 1;
        self.count += 1;
        self.sum_ns += offset.as_nanos();
        self.max = self.max.max(offset);
    }

    fn publish(&self, stats: &mut StreamStats) {
        if self.count == 0 {
            return;
        }
        let mean_ns = self.sum_ns / u128::from(self.count);
        stats.jitter_mean = Duration::from_nanos(u64::try_from(mean_ns).unwrap_or(u64::MAX));
        stats.jitter_max = self.max;
        let wanted = self.count.saturating_mul(99).div_ceil(100);
        let mut seen = 0u64;
        for (bin, &count) in self.bins.iter().enumerate() {
            seen += u64::from(count);
            if seen >= wanted {
                stats.jitter_p99 = Duration::from_micros(10 * (bin as u64 + 1));
                break;
            }
        }
    }
}

/// Whether a link with `options` to `device` plays streams ahead (see [`Link::plays_ahead`]).
fn plays_ahead(options: &StreamOptions, device: &DeviceInfo) -> bool {
    let frame = Duration::from_micros(u64::from(device.frame_period_us));
    let period_matches = options.period.abs_diff(frame) <= Duration::from_micros(1);
    !options.play_ahead.is_zero() && device.protocol_version >= 4 && period_matches
}

/// `frame` as `device` clamps it into its announced range.
fn clamp_frame(device: Option<&DeviceInfo>, frame: ChannelOutput) -> ChannelOutput {
    let Some(device) = device else {
        return frame;
    };
    let mut clamped = [None; crate::protocol::MAX_CHANNELS];
    for (slot, value) in clamped.iter_mut().zip(frame.as_slice()) {
        *slot = value.map(|units| device.clamp_units(units).0);
    }
    ChannelOutput::from_slice(&clamped[..frame.len()]).unwrap_or(frame)
}

/// While a stream played ahead plays out, how long the device's output may stay the same
/// (not the last frame) before the host calls the stream finished anyway. A device whose
/// clock runs slow (a simulated one on a busy computer) is still playing while its output
/// changes, so it is waited for however late it is.
const DRAIN_GRACE: Duration = Duration::from_secs(2);

/// A setpoint schedule: deadline k is `start + (k − lead) × period` (the first `lead` are due
/// at once when playing ahead), so nothing drifts.
struct Schedule {
    start: Option<Instant>,
    index: u32,
    finishing: bool,
    frames_sent: u64,
    /// The index whose deadline found the queue empty, counted once as an underrun.
    underrun_at: Option<u32>,
    /// Playing ahead, after the last setpoint went out: the device is still playing its queue.
    draining: Option<Drain>,
}

/// The end of a stream played ahead: finished once the device reports it sends the last
/// frame (as it clamped it), asked every frame from the time it should have reached it.
struct Drain {
    last: ChannelOutput,
    from: Instant,
    /// The device's output as last seen while draining, and since when it has not changed.
    seen: Option<ChannelOutput>,
    unchanged_since: Instant,
    outputs_at: u64,
    asked_at: Option<Instant>,
}

struct InFlight {
    seq: u8,
    sent_at: Instant,
    /// [`Worker::listened`] when it was written.
    sent_listened: Duration,
    message: HostMessage,
    /// A hold written while a halt waited for one: its acknowledgement answers the halt.
    halting: bool,
}

/// A request for the device's state, answered once a status (and, for protocol 2, an
/// output line) newer than the request has come.
struct Refresh {
    reply: Sender<Result<DeviceState, LinkError>>,
    statuses_at: u64,
    outputs_at: u64,
}

/// How long a simulated device in a process of its own may say nothing before the link is
/// given up (`PROTOCOL.md` §9): a busy computer can hold that process up for hundreds of
/// milliseconds, and its clock (so its watchdog) leaves such waits out.
const SIMULATED_PROCESS_SILENCE: Duration = Duration::from_secs(2);

/// The most one turn of the link thread's loop counts toward the time it watched the line:
/// its turns are a millisecond or two apart unless the computer held it up.
const LISTEN_TURN_CAP: Duration = Duration::from_millis(10);

struct Worker {
    transport: Box<dyn Transport>,
    options: StreamOptions,
    commands: Receiver<Command>,
    setpoints: Receiver<ChannelOutput>,
    shared: Arc<Mutex<StreamStats>>,
    stop: EmergencyStop,
    events: Sender<LinkEvent>,
    assembler: LineAssembler,
    seq: u8,
    in_flight: VecDeque<InFlight>,
    room: usize,
    stats: StreamStats,
    schedule: Option<Schedule>,
    controls: VecDeque<HostMessage>,
    last_sent: Instant,
    /// This thread's run-queue delay, opened by the thread itself ([`Worker::run`]), and
    /// what it read at the last line written.
    run_delay: Option<RunDelay>,
    delay_at_last_sent: Option<Duration>,
    stop_requested_at: Option<Instant>,
    stop_last_written: Option<Instant>,
    reset_reply: Option<Sender<Result<(), LinkError>>>,
    device: Option<DeviceInfo>,
    greeting_requested: bool,
    /// Greetings heard so far, and how many had been heard when our greeting was acknowledged.
    greetings_seen: u32,
    greeting_acked_at: Option<u32>,
    watchdog_trips_at_start: u16,
    /// Setpoints a stream played ahead sends ahead of their time; 0 on a link that does not
    /// play ahead.
    lead_frames: u32,
    /// Setpoints the stream now sends ahead: `lead_frames`, or 0 for a live stream.
    stream_lead: u32,
    /// Waiting for the device to acknowledge the hold that halts a stream ([`Link::halt_stream`]).
    halt_replies: Vec<Sender<Result<(), LinkError>>>,
    /// The newest frame sent in this stream.
    last_frame: Option<ChannelOutput>,
    /// No setpoint was waiting the last time one was due.
    setpoints_dry: bool,
    /// When the device last sent anything.
    last_heard: Instant,
    /// How long this thread has watched the line: the wall time between its turns, each
    /// turn counted for at most [`LISTEN_TURN_CAP`], so a thread held up by a busy computer
    /// does not take its own absence for the device's silence. Silence is judged in it.
    listened: Duration,
    /// `listened` when the device last sent anything.
    heard_listened: Duration,
    /// `listened` when the device spoke after its last silence longer than the limit: a line
    /// waits on a talking device only from then.
    talking_since: Duration,
    /// The current silence has been counted in `device_quiet`.
    quiet_counted: bool,
    /// When the device will have played the newest planned setpoint it acknowledged.
    plays_until: Option<Instant>,
    /// When the last turn of the loop began.
    last_turn: Instant,
    /// Status and output lines heard so far, to tell a fresh answer from an older one.
    statuses_seen: u64,
    outputs_seen: u64,
    refresh: Option<Refresh>,
    jitter: Jitter,
}

impl Worker {
    fn run(&mut self, greeting_reply: Sender<Result<DeviceInfo, LinkError>>) {
        self.stop.serve_from(std::thread::current());
        self.run_delay = RunDelay::open();
        match self
            .greet()
            .and_then(|device| self.learn_state().map(|()| device))
        {
            Ok(device) => {
                if plays_ahead(&self.options, &device) {
                    let frames =
                        self.options.play_ahead.as_nanos() / self.options.period.as_nanos().max(1);
                    self.lead_frames = u32::try_from(frames).unwrap_or(u32::MAX);
                }
                let _ = greeting_reply.send(Ok(device));
            }
            Err(error) => {
                let _ = greeting_reply.send(Err(error));
                return;
            }
        }
        while self.step() {}
        if matches!(self.stats.state, LinkState::Streaming | LinkState::Idle) {
            // The host is going away: ask the device to keep still rather than wait for
            // its watchdog.
            let _ = self.write(HostMessage::Hold, Instant::now());
        }
    }

    /// Greets the device until it acknowledges a greeting and then describes itself. A
    /// description that arrives before the acknowledgement (the one a device sends at
    /// power-up) is not taken as the answer, so the real answer is not mistaken later for
    /// a restart.
    fn greet(&mut self) -> Result<DeviceInfo, LinkError> {
        let started = Instant::now();
        let mut last_greeting: Option<Instant> = None;
        loop {
            let now = Instant::now();
            if now - started > self.options.greeting_timeout {
                return Err(LinkError::NoGreeting {
                    waited: self.options.greeting_timeout,
                });
            }
            let answered = self.greeting_acked_at.is_some();
            if !answered && last_greeting.is_none_or(|at| now - at >= Duration::from_millis(250)) {
                self.in_flight.clear();
                self.room = 1;
                self.write(
                    HostMessage::Greeting {
                        protocol_version: PROTOCOL_VERSION,
                    },
                    now,
                )
                .map_err(LinkError::Lost)?;
                last_greeting = Some(now);
            }
            self.read_lines(Duration::from_millis(5))
                .map_err(LinkError::Lost)?;
            let answer_seen = self
                .greeting_acked_at
                .is_some_and(|acked_at| self.greetings_seen > acked_at);
            if let (true, Some(device)) = (answer_seen, self.device) {
                if !(OLDEST_PROTOCOL_VERSION..=PROTOCOL_VERSION).contains(&device.protocol_version)
                {
                    return Err(LinkError::ProtocolVersion {
                        device: device.protocol_version,
                        expected: PROTOCOL_VERSION,
                    });
                }
                self.greeting_requested = false;
                return Ok(device);
            }
        }
    }

    /// After the greeting: asks for the device's status and (protocol 2) its output, and
    /// waits for both, so the link starts from the device's real state.
    fn learn_state(&mut self) -> Result<(), LinkError> {
        let started = Instant::now();
        let (reply_tx, reply_rx) = mpsc::channel();
        self.ask_state(reply_tx);
        loop {
            if let Some(requested_at) = self.stop.take_request() {
                self.emergency_stop(requested_at);
            }
            let now = Instant::now();
            self.serve_controls(now);
            self.read_lines(Duration::from_millis(5))
                .map_err(LinkError::Lost)?;
            match reply_rx.try_recv() {
                Ok(Ok(state)) => {
                    if state.status.mode == DeviceMode::Stopped
                        && self.stats.state == LinkState::Idle
                    {
                        // A stop latched before this host connected: it needs a reset too.
                        self.stats.state = LinkState::Stopped;
                    }
                    self.publish();
                    return Ok(());
                }
                Ok(Err(error)) => return Err(error),
                Err(_) => {}
            }
            if now - started > self.options.greeting_timeout {
                return Err(LinkError::NoStatus {
                    waited: self.options.greeting_timeout,
                });
            }
        }
    }

    /// Queues a heartbeat (answered by a status line) and, for protocol 2, an output query.
    fn ask_state(&mut self, reply: Sender<Result<DeviceState, LinkError>>) {
        if self.stats.state == LinkState::Lost {
            let loss = self.stats.loss.unwrap_or(LinkLoss::DeviceRestarted);
            let _ = reply.send(Err(LinkError::Lost(loss)));
            return;
        }
        if let Some(previous) = self.refresh.take() {
            let _ = previous.reply.send(Err(LinkError::Closed));
        }
        self.controls.push_back(HostMessage::Heartbeat);
        if self.speaks_output() {
            self.controls.push_back(HostMessage::OutputQuery);
        }
        self.refresh = Some(Refresh {
            reply,
            statuses_at: self.statuses_seen,
            outputs_at: self.outputs_seen,
        });
    }

    fn speaks_output(&self) -> bool {
        self.device
            .is_some_and(|device| device.protocol_version >= 2)
    }

    /// Answers a waiting state request once its status (and output) have come.
    fn answer_refresh(&mut self) {
        let Some(refresh) = &self.refresh else { return };
        let output_due = self.speaks_output() && self.outputs_seen <= refresh.outputs_at;
        if self.statuses_seen <= refresh.statuses_at || output_due {
            return;
        }
        let Some(status) = self.stats.last_status else {
            return;
        };
        let output = self.stats.device_output;
        if let Some(refresh) = self.refresh.take() {
            let _ = refresh.reply.send(Ok(DeviceState { status, output }));
        }
    }

    /// Reads everything that has already arrived, without waiting.
    fn drain_input(&mut self) -> Result<(), LinkLoss> {
        // Bounded: a device cannot keep the loop here forever.
        for _ in 0..64 {
            if self.read_lines(Duration::ZERO)? == 0 {
                break;
            }
        }
        Ok(())
    }

    /// One turn of the loop; `false` when the handle has gone.
    fn step(&mut self) -> bool {
        let turn = Instant::now();
        self.listened += turn
            .saturating_duration_since(self.last_turn)
            .min(LISTEN_TURN_CAP);
        self.last_turn = turn;
        if let Some(requested_at) = self.stop.take_request() {
            self.emergency_stop(requested_at);
        }
        if !self.take_commands() {
            return false;
        }
        // Everything already received is read before any wait is judged: after this thread
        // was held up, an acknowledgement that is waiting in the input is not a lost link.
        if let Err(loss) = self.drain_input() {
            self.lose(loss);
        }
        let now = Instant::now();
        self.repeat_stop(now);
        self.check_acks();
        self.serve_stream(now);
        self.serve_controls(now);
        self.publish_unless_busy();
        if let Some(sleep) = self.idle_sleep(Instant::now()) {
            // Nothing to send and no answer awaited: sleep until the next heartbeat is due.
            // A stop, a command, a setpoint or the handle going away wakes the thread at
            // once (they unpark it); what the device sent meanwhile is read on waking.
            std::thread::park_timeout(sleep);
            return true;
        }
        let wait = self.wait_budget(Instant::now());
        if let Err(loss) = self.read_lines(wait) {
            self.lose(loss);
        }
        true
    }

    /// How long the thread may sleep when it is idle: no stream, no line waiting for its
    /// acknowledgement, nothing queued to send, no stop being repeated, no state asked
    /// for; `None` when it is not idle and must keep watching the line.
    fn idle_sleep(&self, now: Instant) -> Option<Duration> {
        let stop_unanswered =
            self.stop_requested_at.is_some() && self.stats.stop_ack_latency.is_none();
        let idle = self.schedule.is_none()
            && self.in_flight.is_empty()
            && self.controls.is_empty()
            && self.refresh.is_none()
            && self.reset_reply.is_none()
            && !stop_unanswered
            && matches!(
                self.stats.state,
                LinkState::Idle | LinkState::Stopped | LinkState::Lost
            );
        if !idle {
            return None;
        }
        let next_heartbeat = self.last_sent + self.options.heartbeat_interval;
        let until_heartbeat = if self.stats.state == LinkState::Lost {
            // No heartbeats on a lost link: only a command can change anything.
            self.options.heartbeat_interval
        } else {
            next_heartbeat.saturating_duration_since(now)
        };
        Some(
            self.transport
                .idle_look_interval()
                .map_or(until_heartbeat, |look| look.min(until_heartbeat)),
        )
    }

    /// How long to wait for input before the next turn: nothing when a setpoint is due and
    /// can go, else up to a millisecond (so a stop request waits at most that long). A due
    /// setpoint that cannot go (no room at the device, or none pushed yet) waits for input
    /// rather than spinning: an acknowledgement brings room and ends the wait at once.
    fn wait_budget(&self, now: Instant) -> Duration {
        let tick = Duration::from_millis(1);
        let can_send = self.has_credit() && !self.setpoints_dry;
        match self.next_deadline() {
            Some(deadline) if deadline <= now && can_send => Duration::ZERO,
            Some(deadline) if deadline <= now => tick,
            // Played ahead, a setpoint's moment is not its playing time: no need to spin.
            Some(deadline) if self.stream_lead > 0 => (deadline - now).min(tick),
            Some(deadline) if deadline - now < tick => {
                // Sleep most of the last millisecond, then spin the final 200 µs: waking from
                // a sleep can take longer than that, spinning cannot.
                let spin = Duration::from_micros(200);
                if deadline - now > spin {
                    std::thread::sleep(deadline - now - spin);
                }
                while Instant::now() < deadline {
                    std::hint::spin_loop();
                }
                Duration::ZERO
            }
            _ => tick,
        }
    }

    fn next_deadline(&self) -> Option<Instant> {
        let schedule = self.schedule.as_ref()?;
        let start = schedule.start?;
        let due = start + self.options.period * schedule.index.saturating_sub(self.stream_lead);
        schedule.draining.is_none().then_some(due)
    }

    fn take_commands(&mut self) -> bool {
        loop {
            match self.commands.try_recv() {
                Ok(Command::Start(reply, live)) => {
                    let _ = reply.send(self.start_stream(live));
                }
                Ok(Command::Halt(reply)) => self.halt(reply),
                Ok(Command::Finish) => {
                    if let Some(schedule) = &mut self.schedule {
                        schedule.finishing = true;
                    }
                }
                Ok(Command::Send(message)) => {
                    if self.stats.state != LinkState::Lost {
                        self.controls.push_back(message);
                    }
                }
                Ok(Command::Reset(reply)) => match self.stats.state {
                    LinkState::Stopped | LinkState::Idle => {
                        self.stats.state = LinkState::Resetting;
                        self.controls.push_front(HostMessage::Reset);
                        self.reset_reply = Some(reply);
                    }
                    LinkState::Streaming => {
                        let _ = reply.send(Err(LinkError::AlreadyStreaming));
                    }
                    LinkState::Lost => {
                        let loss = self.stats.loss.unwrap_or(LinkLoss::DeviceRestarted);
                        let _ = reply.send(Err(LinkError::Lost(loss)));
                    }
                    LinkState::Stopping | LinkState::Resetting => {
                        let _ = reply.send(Err(LinkError::StopLatched));
                    }
                },
                Ok(Command::Refresh(reply)) => self.ask_state(reply),
                Err(TryRecvError::Empty) => return true,
                Err(TryRecvError::Disconnected) => return false,
            }
        }
    }

    fn start_stream(&mut self, live: bool) -> Result<(), LinkError> {
        match self.stats.state {
            LinkState::Idle => {}
            LinkState::Streaming => return Err(LinkError::AlreadyStreaming),
            LinkState::Lost => {
                return Err(LinkError::Lost(
                    self.stats.loss.unwrap_or(LinkLoss::DeviceRestarted),
                ));
            }
            LinkState::Stopping | LinkState::Stopped | LinkState::Resetting => {
                return Err(LinkError::StopLatched);
            }
        }
        self.stats.state = LinkState::Streaming;
        self.stream_lead = if live { 0 } else { self.lead_frames };
        // The device's own count, read at connect and with every heartbeat since: a trip
        // before this stream (even one before this host connected) is not this stream's.
        self.watchdog_trips_at_start = self.stats.last_status.map_or(0, |s| s.watchdog_trips);
        self.plays_until = None;
        self.schedule = Some(Schedule {
            start: None,
            index: 0,
            finishing: false,
            frames_sent: 0,
            underrun_at: None,
            draining: None,
        });
        self.publish();
        Ok(())
    }

    /// Ends the stream at once and queues a hold ahead of every other line; `reply` is answered
    /// when the device acknowledges it (see [`Link::halt_stream`]).
    fn halt(&mut self, reply: Sender<Result<(), LinkError>>) {
        match self.stats.state {
            LinkState::Streaming | LinkState::Idle => {}
            LinkState::Lost => {
                let loss = self.stats.loss.unwrap_or(LinkLoss::DeviceRestarted);
                let _ = reply.send(Err(LinkError::Lost(loss)));
                return;
            }
            LinkState::Stopping | LinkState::Stopped | LinkState::Resetting => {
                let _ = reply.send(Err(LinkError::StopLatched));
                return;
            }
        }
        self.schedule = None;
        self.last_frame = None;
        self.plays_until = None;
        self.drop_queued();
        self.stats.state = LinkState::Idle;
        self.halt_replies.push(reply);
        self.controls.push_front(HostMessage::Hold);
        self.publish();
    }

    /// Answers every halt waiting for the device's word.
    fn answer_halts(&mut self, answer: &Result<(), LinkError>) {
        for reply in self.halt_replies.drain(..) {
            let _ = reply.send(answer.clone());
        }
    }

    /// The emergency stop: out before anything else, queued setpoints dropped.
    fn emergency_stop(&mut self, requested_at: Instant) {
        self.schedule = None;
        self.controls.clear();
        // The stop holds too: a halt waiting for its hold gets the stop's word.
        self.answer_halts(&Err(LinkError::StopLatched));
        self.drop_queued();
        self.stop_requested_at = Some(requested_at);
        self.stats.stop_ack_latency = None;
        if self.stats.state != LinkState::Lost {
            self.stats.state = LinkState::Stopping;
        }
        self.write_stop();
        self.stats.stop_write_latency = Some(requested_at.elapsed());
        self.publish();
    }

    fn write_stop(&mut self) {
        let now = Instant::now();
        self.stop_last_written = Some(now);
        if let Err(loss) = self.write(HostMessage::EmergencyStop, now) {
            self.lose(loss);
        }
    }

    fn repeat_stop(&mut self, now: Instant) {
        let waiting = self.stats.state == LinkState::Stopping
            || (self.stats.state == LinkState::Lost && self.stop_requested_at.is_some());
        if waiting
            && self.stats.stop_ack_latency.is_none()
            && self
                .stop_last_written
                .is_some_and(|at| now - at >= self.options.stop_repeat)
        {
            self.write_stop();
        }
    }

    fn drop_queued(&mut self) {
        while self.setpoints.try_recv().is_ok() {
            self.stats.frames_dropped += 1;
        }
    }

    fn has_credit(&self) -> bool {
        self.in_flight.len() < self.room
    }

    fn serve_stream(&mut self, now: Instant) {
        let lead = self.stream_lead;
        let period = self.options.period;
        let Some(schedule) = &mut self.schedule else {
            self.drop_queued();
            return;
        };
        if self.stats.state != LinkState::Streaming {
            return;
        }
        if schedule.draining.is_some() {
            self.serve_drain(now);
            return;
        }
        let deadline_of = |start: Instant, index: u32| start + period * index.saturating_sub(lead);
        let deadline = match schedule.start {
            Some(start) => deadline_of(start, schedule.index),
            None => now,
        };
        if now < deadline || self.in_flight.len() >= self.room {
            return;
        }
        let next = self.setpoints.try_recv();
        self.setpoints_dry = next.is_err();
        match next {
            Ok(frame) => {
                let schedule_start = *schedule.start.get_or_insert(now);
                let index = schedule.index;
                let deadline = deadline_of(schedule_start, index);
                schedule.index += 1;
                schedule.frames_sent += 1;
                let message = match frame.pulses() {
                    _ if lead > 0 => HostMessage::Planned(frame),
                    Some(values) => HostMessage::Setpoint(values),
                    // Refused by `Link::push_frame` before it gets here.
                    None => return,
                };
                let written = Instant::now();
                if let Err(loss) = self.write(message, written) {
                    self.lose(loss);
                    return;
                }
                self.stats.frames_sent += 1;
                // The first `lead` frames are due at once, not at a time of their own: only
                // the later ones keep a schedule to be late for.
                if index >= lead {
                    let offset = written.saturating_duration_since(deadline);
                    self.jitter.record(offset);
                    if offset > self.options.late_after {
                        self.stats.frames_late += 1;
                    }
                    self.jitter.publish(&mut self.stats);
                }
                self.last_frame = Some(frame);
            }
            Err(_) if schedule.finishing => match (lead, self.last_frame, schedule.start) {
                (1.., Some(last), Some(start)) => {
                    // The device plays the last frame about a period after it was due; ask
                    // what it sends from then on.
                    let from = start + period * schedule.index;
                    schedule.draining = Some(Drain {
                        last: clamp_frame(self.device.as_ref(), last),
                        from,
                        seen: None,
                        unchanged_since: from,
                        outputs_at: self.outputs_seen,
                        asked_at: None,
                    });
                }
                _ => {
                    let frames_sent = schedule.frames_sent;
                    self.finish(frames_sent);
                }
            },
            Err(_) => {
                if schedule.start.is_some() {
                    if lead == 0 {
                        schedule.index += 1;
                        self.stats.underruns += 1;
                    } else if schedule.underrun_at != Some(schedule.index) {
                        // The device plays its queue at its own pace: wait, do not skip.
                        schedule.underrun_at = Some(schedule.index);
                        self.stats.underruns += 1;
                    }
                }
            }
        }
    }

    fn finish(&mut self, frames_sent: u64) {
        self.schedule = None;
        self.last_frame = None;
        self.stats.state = LinkState::Idle;
        self.emit(LinkEvent::StreamFinished { frames_sent });
    }

    /// After the last planned setpoint: asks the device what it sends, once a frame, until it
    /// sends the last one (its queue has played out), then the stream has finished.
    fn serve_drain(&mut self, now: Instant) {
        let Some(schedule) = &mut self.schedule else {
            return;
        };
        let frames_sent = schedule.frames_sent;
        let Some(drain) = &mut schedule.draining else {
            return;
        };
        let answered = self.outputs_seen > drain.outputs_at;
        if answered && drain.seen != self.stats.device_output {
            drain.seen = self.stats.device_output;
            drain.unchanged_since = now;
        }
        let stuck = now >= drain.from && now - drain.unchanged_since >= DRAIN_GRACE;
        if answered && self.stats.device_output == Some(drain.last) || stuck {
            self.finish(frames_sent);
            return;
        }
        let asking = drain
            .asked_at
            .is_some_and(|at| !answered && now - at < self.options.silence_limit);
        let frame_since_ask = drain
            .asked_at
            .is_none_or(|at| now - at >= self.options.period);
        if now >= drain.from && !asking && frame_since_ask {
            drain.asked_at = Some(now);
            drain.outputs_at = self.outputs_seen;
            self.controls.push_back(HostMessage::OutputQuery);
        }
    }

    fn serve_controls(&mut self, now: Instant) {
        if self.stats.state == LinkState::Lost {
            return;
        }
        if self.controls.is_empty() && now - self.last_sent >= self.options.heartbeat_interval {
            self.controls.push_back(HostMessage::Heartbeat);
        }
        // With nothing awaiting an answer the device's input queue is empty: one line may go
        // even when the room is 0 (a full play queue), and its answer brings the room again.
        while self.has_credit() || self.in_flight.is_empty() {
            let Some(message) = self.controls.pop_front() else {
                break;
            };
            if let Err(loss) = self.write(message, now) {
                self.lose(loss);
                return;
            }
        }
    }

    /// The link is lost when the oldest line has waited the silence limit and the device
    /// has said nothing for as long, or when it has waited twice the limit while the device
    /// talks but does not answer it (counted from when it spoke again after a longer silence,
    /// as a device catching up answers its lines in order); counted in time this thread was watching the line
    /// (`listened`). A device silent that long while it still held planned setpoints to play
    /// goes on playing them and trips its watchdog only the silence limit after its queue ran
    /// dry: the silence is noticed and counted (`device_quiet`), and the link is lost if it
    /// lasts until then (for a simulated device in a process of its own, at least
    /// [`SIMULATED_PROCESS_SILENCE`]).
    fn check_acks(&mut self) {
        if self.stats.state == LinkState::Lost {
            return;
        }
        if let Some(oldest) = self.in_flight.front() {
            let waited = self.listened.saturating_sub(oldest.sent_listened);
            let silent = self.listened.saturating_sub(self.heard_listened);
            let limit = self.options.silence_limit;
            let plays_for = self.plays_until.map_or(Duration::ZERO, |until| {
                until.saturating_duration_since(self.last_heard)
            });
            let give_up_after = if self
                .device
                .as_ref()
                .is_some_and(DeviceInfo::is_simulated_process)
            {
                (limit + plays_for).max(SIMULATED_PROCESS_SILENCE)
            } else {
                limit + plays_for
            };
            if waited > limit && silent > limit && silent <= give_up_after {
                if !self.quiet_counted {
                    self.quiet_counted = true;
                    self.stats.device_quiet += 1;
                    self.stats.device_quiet_noticed_after.get_or_insert(silent);
                    self.publish();
                }
                return;
            }
            // Waiting while the device talks, as opposed to waiting out its silence.
            let talk_wait = self
                .listened
                .saturating_sub(oldest.sent_listened.max(self.talking_since));
            if (waited > limit && silent > limit) || talk_wait > limit * 2 {
                let seq = oldest.seq;
                self.lose(LinkLoss::NoAck {
                    seq,
                    waited,
                    silent,
                });
            }
        }
    }

    fn write(&mut self, message: HostMessage, now: Instant) -> Result<(), LinkLoss> {
        let seq = self.seq;
        self.seq = self.seq.wrapping_add(1);
        let line = HostLine { seq, message }.encode();
        self.transport
            .write_all(line.as_bytes())
            .map_err(|error| LinkLoss::WriteFailed { kind: error.kind() })?;
        if matches!(message, HostMessage::Greeting { .. }) {
            self.greeting_requested = true;
        }
        let halting = message == HostMessage::Hold && !self.halt_replies.is_empty();
        self.in_flight.push_back(InFlight {
            seq,
            sent_at: now,
            sent_listened: self.listened,
            message,
            halting,
        });
        let delay = self.run_delay.as_mut().and_then(RunDelay::read);
        if self.stats.state == LinkState::Streaming {
            let gap = now.saturating_duration_since(self.last_sent);
            self.stats.send_gap_max = self.stats.send_gap_max.max(gap);
            if let (Some(delay), Some(before)) = (delay, self.delay_at_last_sent) {
                // Read a moment after the line's clock: a wait in that moment may count in the
                // delay and not the gap. No wait between two lines is longer than the time
                // between them.
                let waited = delay.saturating_sub(before).min(gap);
                self.stats.host_wait_max = self.stats.host_wait_max.max(waited);
            }
        }
        self.last_sent = now;
        self.delay_at_last_sent = delay.or(self.delay_at_last_sent);
        Ok(())
    }

    fn lose(&mut self, loss: LinkLoss) {
        if self.stats.state == LinkState::Lost {
            return;
        }
        let stopping = self.stop_requested_at.is_some()
            || matches!(
                self.stats.state,
                LinkState::Stopping | LinkState::Stopped | LinkState::Resetting
            );
        if !stopping && !matches!(loss, LinkLoss::WriteFailed { .. }) {
            // The line may still work: ask the device to keep its pulses rather than leave
            // it to its watchdog.
            let _ = self.write(HostMessage::Hold, Instant::now());
        }
        self.stats.state = LinkState::Lost;
        self.stats.loss = Some(loss);
        self.schedule = None;
        self.controls.clear();
        self.in_flight.clear();
        self.drop_queued();
        self.publish();
        if let Some(reply) = self.reset_reply.take() {
            let _ = reply.send(Err(LinkError::Lost(loss)));
        }
        if let Some(refresh) = self.refresh.take() {
            let _ = refresh.reply.send(Err(LinkError::Lost(loss)));
        }
        self.answer_halts(&Err(LinkError::Lost(loss)));
        self.emit(LinkEvent::Lost(loss));
    }

    /// Reads what arrives within `wait` and acts on each whole line; returns the bytes read.
    fn read_lines(&mut self, wait: Duration) -> Result<usize, LinkLoss> {
        let mut buf = [0u8; 256];
        let count = self
            .transport
            .read_timeout(&mut buf, wait)
            .map_err(|error| LinkLoss::ReadFailed { kind: error.kind() })?;
        if count > 0 {
            self.last_heard = Instant::now();
            if self.listened.saturating_sub(self.heard_listened) > self.options.silence_limit {
                self.talking_since = self.listened;
            }
            self.heard_listened = self.listened;
            self.quiet_counted = false;
        }
        for &byte in &buf[..count] {
            let parsed = match self.assembler.push(byte) {
                Assembled::Pending => continue,
                Assembled::Overlong => {
                    self.stats.bad_device_lines += 1;
                    continue;
                }
                Assembled::Line(line) => DeviceLine::parse(line),
            };
            match parsed {
                Ok(line) => self.on_line(line),
                Err(_) => self.stats.bad_device_lines += 1,
            }
        }
        Ok(count)
    }

    fn on_line(&mut self, line: DeviceLine) {
        match line.message {
            DeviceMessage::Ack(ack) => {
                let Some(position) = self.in_flight.iter().position(|f| f.seq == ack.acked_seq)
                else {
                    return;
                };
                let halted = self.in_flight.iter().take(position + 1).any(|f| f.halting);
                let acked = self.in_flight.drain(..=position).next_back();
                if halted {
                    self.answer_halts(&Ok(()));
                }
                self.room = usize::from(ack.room);
                let Some(acked) = acked else { return };
                let waited = self.last_heard.saturating_duration_since(acked.sent_at);
                self.stats.ack_wait_max = self.stats.ack_wait_max.max(waited);
                if waited > self.options.ack_late_after {
                    self.stats.acks_late += 1;
                }
                match acked.message {
                    HostMessage::Setpoint(_) | HostMessage::Planned(_) => {
                        self.stats.frames_acked += 1;
                        if matches!(acked.message, HostMessage::Planned(_)) {
                            // Played one a frame in order, none before it was sent: at the
                            // earliest a frame after the later of its sending and the end of
                            // the one before (a device whose clock runs slow plays later).
                            let from = self
                                .plays_until
                                .map_or(acked.sent_at, |until| until.max(acked.sent_at));
                            self.plays_until = Some(from + self.options.period);
                        }
                        match ack.outcome {
                            AckOutcome::Clamped => self.stats.frames_clamped += 1,
                            AckOutcome::Refused if self.stats.state == LinkState::Streaming => {
                                let status = self.stats.last_status.unwrap_or(DeviceStatus {
                                    mode: DeviceMode::Stopped,
                                    faults: crate::protocol::Faults::EMERGENCY_STOP,
                                    bad_checksums: 0,
                                    bad_lines: 0,
                                    clamped_values: 0,
                                    watchdog_trips: 0,
                                });
                                self.lose(LinkLoss::DeviceFault { status });
                            }
                            AckOutcome::Accepted | AckOutcome::Refused => {}
                        }
                    }
                    HostMessage::EmergencyStop => self.on_stop_acknowledged(),
                    HostMessage::Greeting { .. } => {
                        self.greeting_acked_at = Some(self.greetings_seen);
                    }
                    HostMessage::Reset if self.stats.state == LinkState::Resetting => {
                        self.stats.state = LinkState::Idle;
                        self.stop_requested_at = None;
                        self.publish();
                        if let Some(reply) = self.reset_reply.take() {
                            let _ = reply.send(Ok(()));
                        }
                        self.emit(LinkEvent::ResetDone);
                    }
                    _ => {}
                }
            }
            DeviceMessage::Status(status) => {
                self.stats.last_status = Some(status);
                self.statuses_seen += 1;
                let tripped = status.watchdog_trips != self.watchdog_trips_at_start;
                if self.stats.state == LinkState::Streaming
                    && (status.mode == DeviceMode::Stopped || tripped)
                {
                    self.lose(LinkLoss::DeviceFault { status });
                } else if self.stats.state == LinkState::Idle && status.mode == DeviceMode::Stopped
                {
                    // Stopped from elsewhere (another host, a button on the device).
                    self.stats.state = LinkState::Stopped;
                }
                self.answer_refresh();
            }
            DeviceMessage::Output(output) => {
                self.stats.device_output = Some(output);
                self.outputs_seen += 1;
                self.answer_refresh();
            }
            DeviceMessage::Greeting(info) => {
                self.greetings_seen += 1;
                let unrequested = !self.greeting_requested;
                self.greeting_requested = false;
                self.device = Some(info);
                if unrequested && self.stats.state == LinkState::Streaming {
                    self.lose(LinkLoss::DeviceRestarted);
                }
            }
            DeviceMessage::Analog(values) => {
                self.stats.readings = Some(values);
                self.stats.readings_received += 1;
            }
        }
    }

    fn on_stop_acknowledged(&mut self) {
        let Some(requested_at) = self.stop_requested_at else {
            return;
        };
        if self.stats.stop_ack_latency.is_some() {
            return;
        }
        let after = requested_at.elapsed();
        self.stats.stop_ack_latency = Some(after);
        if self.stats.state == LinkState::Stopping {
            self.stats.state = LinkState::Stopped;
        }
        self.emit(LinkEvent::StopConfirmed { after });
    }

    /// Publishes the statistics, then the event, so a reader woken by the event sees the
    /// state it describes.
    fn emit(&self, event: LinkEvent) {
        self.publish();
        let _ = self.events.send(event);
    }

    /// Publishes the statistics unless a reader holds them now: a reader held up by a busy
    /// computer while holding the lock must not hold up the link; the next turn publishes.
    fn publish_unless_busy(&self) {
        if let Ok(mut shared) = self.shared.try_lock()
            && *shared != self.stats
        {
            shared.clone_from(&self.stats);
        }
    }

    fn publish(&self) {
        let mut shared = self.shared.lock().unwrap_or_else(PoisonError::into_inner);
        if *shared != self.stats {
            shared.clone_from(&self.stats);
        }
    }
}
