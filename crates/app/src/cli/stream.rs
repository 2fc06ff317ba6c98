//! `armwright stream`: plans the scene's sequence, starts it with a slow approach from where
//! the device holds the arm (after waking a limp arm at its rest pose; [`crate::approach`]),
//! turns every sample into pulse widths through the joints' calibration, and streams them to a
//! device in real time, with the safety caution, a typed confirmation, progress on standard
//! error, and Ctrl-C wired to the link's emergency stop.

use std::io::{BufRead, IsTerminal};
use std::path::Path;
use std::time::{Duration, Instant};

use armwright_kinematics::Arm;
use armwright_link::{
    Link, LinkError, LinkEvent, LinkLoss, SerialTransport, SimDeviceConfig, SimTransport,
    StreamOptions, StreamStats, Transport,
};
use serde_json::{Value, json};

use super::Outcome;
use super::plan::load_and_plan;
use super::report::{fail, print_json, rounded};
use super::reset::{describe_output, output_json};
use crate::approach::{StreamPlan, WakeMode, stream_plan_waking};
use crate::link_capacity::{PLAY_AHEAD, rate_above_capacity};
use crate::scene::{Device, Scene, pose_to_file_units};

/// Shown before anything is sent, whether or not confirmation is asked for.
pub(crate) const CAUTION: &str = "\
CAUTION: a powered servo arm can pinch and strike, and it moves as soon as streaming starts.
A software stop is not a safety device: keep a hard power cut-off within reach, keep clear
of the arm's reach while it is powered, and defer to local codes and licensed practice.
A limp servo jumps to its first pulse at its own top speed, so a limp arm is woken at its
rest pose first. Ctrl-C sends the emergency stop; the device then holds its pulses until reset.";

/// A wait for a processor this long between two lines of a stream is a computer busy with
/// other programs, not a scheduler's ordinary turn of a few milliseconds (our choice: 100 ms,
/// well under the device's watchdog time).
const BUSY_HOST_WAIT: Duration = Duration::from_millis(100);

/// The device's watchdog time (`PROTOCOL.md` §5).
const DEVICE_WATCHDOG: Duration = Duration::from_millis(250);

/// How often progress is printed on standard error while streaming.
const PROGRESS_INTERVAL: Duration = Duration::from_secs(1);

/// The longest wait for the last acknowledgements after the last setpoint went out. The
/// link itself gives up on an unanswered line within 500 ms (`PROTOCOL.md` §8), which ends
/// the wait sooner; this only bounds it should the link's thread be held up.
const LAST_ACK_WAIT: Duration = Duration::from_secs(2);

/// The options of one `stream` run.
pub(crate) struct StreamRequest<'a> {
    /// `--port PATH`.
    pub port: Option<&'a str>,
    /// `--simulated`.
    pub simulated: bool,
    /// `--rate HZ`, or the scene's link rate.
    pub rate_hz: Option<f64>,
    /// `--yes`: no confirmation asked.
    pub yes: bool,
    /// `--park`: end by moving to the rest pose.
    pub park: bool,
    /// `--json`: the result as JSON on standard output.
    pub json: bool,
}

/// Where the pulses go.
#[derive(Debug, Clone, PartialEq, Eq)]
enum Target {
    Simulated,
    Port(String),
}

impl Target {
    fn name(&self) -> &str {
        match self {
            Target::Simulated => "simulated",
            Target::Port(path) => path,
        }
    }

    /// The options that point `reset` at this device.
    fn reset_args(&self) -> String {
        match self {
            Target::Simulated => "--simulated".to_owned(),
            Target::Port(path) => format!("--port {path}"),
        }
    }
}

/// How a stream ended.
#[derive(Debug, Clone, Copy, PartialEq)]
enum Ending {
    /// Every setpoint was sent.
    Finished,
    /// The emergency stop was sent and acknowledged after this long.
    Stopped { after: Duration },
    /// The link was lost.
    Lost(LinkLoss),
}

pub(crate) fn run(file: &Path, request: &StreamRequest) -> Outcome {
    let json = request.json;
    let (scene, arm, plan) = match load_and_plan(file, json) {
        Ok(planned) => planned,
        Err(outcome) => return outcome,
    };
    let rate_hz = request.rate_hz.unwrap_or(scene.link.rate_hz);
    if let Err(error) = plan.sampler(rate_hz) {
        return fail(
            json,
            &format!("--rate: {error}"),
            json!({}),
            Outcome::Unreadable,
        );
    }
    let target = target_of(request, &scene);
    eprintln!("{CAUTION}");
    if !request.yes {
        eprint!("Type yes to stream to {}: ", target.name());
        let answer = confirm(&mut std::io::stdin().lock());
        if !std::io::stdin().is_terminal() {
            // A typed answer ends the prompt's line; a piped one does not.
            eprintln!();
        }
        if let Err(reason) = answer {
            let message = format!("{reason}; nothing was sent");
            return refused(json, &message);
        }
    }
    let period = Duration::from_secs_f64(1.0 / rate_hz);
    let options = StreamOptions {
        period,
        play_ahead: PLAY_AHEAD,
        ..StreamOptions::default()
    };
    let link = match connect(&target, scene.link.baud, options) {
        Ok(link) => link,
        Err(message) => return refused(json, &message),
    };
    let rate_setting = if request.rate_hz.is_some() {
        "--rate"
    } else {
        "link.rate_hz"
    };
    let channels = usize::from(link.device().channel_count);
    if let Some(warning) = rate_above_capacity(rate_hz, channels, scene.link.baud) {
        eprintln!("warning: {rate_setting}: {warning}");
    }
    eprintln!("{}", describe_pacing(&link, rate_hz, rate_setting));
    // What the device sends before the first setpoint: where the arm is held, or which
    // servos are limp (and will jump to their first pulse at their own top speed).
    let start_output = link.device_output();
    eprintln!(
        "the device is sending: {}",
        describe_output(start_output.as_ref(), &link.device())
    );
    // Only a device that plays planned setpoints can be sent a frame with a channel left
    // without a pulse, which waking one joint at a time needs.
    let wake_mode = if link.plays_ahead() {
        WakeMode::OneAtATime
    } else {
        WakeMode::Together
    };
    let streamed = match stream_plan_waking(
        &scene,
        &arm,
        &plan,
        start_output.as_ref(),
        &link.device(),
        rate_hz,
        request.park,
        wake_mode,
    ) {
        Ok(streamed) => streamed,
        Err(message) => return refused(json, &message),
    };
    eprintln!("{}", streamed.from.describe_waking(wake_mode));
    for (channel, reported, sent) in
        streamed.start_jumps(&arm, start_output.as_ref(), &link.device())
    {
        eprintln!(
            "warning: channel {channel} is held at {reported:.1} µs but its first setpoint is \
             {sent:.1} µs (outside the joint's calibrated range, or a gripper between open and \
             closed): that servo moves there at its own speed"
        );
    }
    say_approach(&scene, &arm, &streamed, rate_hz);
    let start_pulses_us = output_json(start_output.as_ref(), &link.device());
    let approach = approach_json(
        &scene,
        &arm,
        &streamed,
        start_pulses_us.clone(),
        &link.device(),
        rate_hz,
    );
    let converted = &streamed.setpoints;
    let stop = link.emergency_stop();
    if let Err(error) = ctrlc::set_handler(move || stop.trigger()) {
        let message = format!("cannot catch Ctrl-C, so it could not stop the arm: {error}");
        return refused(json, &message);
    }
    if let Err(error) = link.start_stream() {
        let mut message = format!("cannot start streaming: {error}");
        if error == LinkError::StopLatched {
            message.push_str(&format!(
                "; the device reports it: check the arm, then `armwright reset {}`",
                target.reset_args()
            ));
        }
        return refused(json, &message);
    }
    let duration = streamed.cycle_s();
    eprintln!(
        "streaming to {}: {} setpoints at {rate_hz} Hz over {duration:.2} s; Ctrl-C sends the \
         emergency stop",
        target.name(),
        converted.values.len()
    );
    let started = Instant::now();
    let ending = std::thread::scope(|scope| {
        scope.spawn(|| {
            for frame in (0..converted.values.len()).filter_map(|index| streamed.frame(index)) {
                // An error here means the stream was stopped or lost; the watcher reports it.
                if link.push_frame(frame).is_err() {
                    return;
                }
            }
            let _ = link.finish_stream();
        });
        watch(&link, converted.values.len(), duration, started)
    });
    let elapsed = started.elapsed();
    if ending == Ending::Finished {
        wait_for_last_acks(&link);
    }
    let stats = link.stats();
    report(
        json,
        &Summary {
            target: &target,
            rate_hz,
            planned: converted.values.len(),
            clamped_by_host: converted.clamped,
            worst_rounding_deg: converted.worst_rounding_deg,
            elapsed,
            ending,
            stats: &stats,
            start_pulses_us,
            approach,
            plays_ahead: link.plays_ahead(),
        },
    )
}

/// How the stream is paced: played ahead from the device's queue, or sent in real time (and
/// why), for standard error.
fn describe_pacing(link: &Link, rate_hz: f64, rate_setting: &str) -> String {
    let device = link.device();
    let frame_hz = 1e6 / f64::from(device.frame_period_us.max(1));
    if link.plays_ahead() {
        format!(
            "sent {:.1} s ahead: the device plays the setpoints from its queue, one a pulse \
             frame, so this computer may be held up for up to {:.2} s without stopping the arm",
            PLAY_AHEAD.as_secs_f64(),
            PLAY_AHEAD.as_secs_f64() + DEVICE_WATCHDOG.as_secs_f64()
        )
    } else if device.protocol_version >= 4 {
        format!(
            "sent in real time: {rate_setting} {rate_hz} Hz is not the device's pulse frame rate \
             ({frame_hz:.0} Hz), so it cannot play them ahead; a hold-up of this computer longer \
             than {} ms stops the arm",
            DEVICE_WATCHDOG.as_millis()
        )
    } else {
        format!(
            "sent in real time: the device speaks protocol {} and cannot play setpoints ahead; \
             a hold-up of this computer longer than {} ms stops the arm",
            device.protocol_version,
            DEVICE_WATCHDOG.as_millis()
        )
    }
}

/// Says on standard error how the stream starts (and ends, with `--park`).
fn say_approach(scene: &Scene, arm: &Arm, streamed: &StreamPlan, rate_hz: f64) {
    if streamed.from.wakes() {
        eprintln!(
            "rest pose: {} ({}); wake pause {:.0} ms",
            joint_list(scene, &streamed.start.positions),
            joint_units(scene),
            scene.timing.wake_pause_ms
        );
    }
    let steps: Vec<String> = streamed
        .wake_times(rate_hz)
        .iter()
        .map(|&(channel, at_s)| {
            format!(
                "{} (channel {channel}) at {at_s:.2} s",
                channel_name(arm, channel)
            )
        })
        .collect();
    if !steps.is_empty() {
        eprintln!("wake order, slowest first: {}", steps.join(", "));
    }
    eprintln!(
        "approach: {:.2} s at {} % speed share ({} setpoints at {rate_hz} Hz), then the sequence: \
         {:.2} s",
        streamed.approach.duration(),
        scene.timing.approach_speed_share_pct,
        streamed.approach_frames,
        streamed.plan_s
    );
    if let Some(park) = &streamed.park {
        eprintln!(
            "then the park move to the rest pose: {:.2} s; the device holds the arm there",
            park.duration()
        );
    }
}

/// What drives `channel`: a joint's name (joint `i` on channel `i`), "gripper" (the last
/// channel, when the arm has one), or "unused".
fn channel_name(arm: &Arm, channel: usize) -> String {
    match arm.joints().get(channel) {
        Some(joint) => joint.name.clone(),
        None if arm.gripper().is_some() => "gripper".to_owned(),
        None => "unused".to_owned(),
    }
}

/// Joint positions (rad or m) in the scene's file units, one decimal, comma-separated.
fn joint_list(scene: &Scene, positions: &[f64]) -> String {
    pose_to_file_units(&scene.arm, positions)
        .iter()
        .map(|value| format!("{value:.1}"))
        .collect::<Vec<_>>()
        .join(", ")
}

/// "degrees", or "degrees or mm" for an arm with a sliding joint.
fn joint_units(scene: &Scene) -> &'static str {
    if scene
        .arm
        .shape
        .joint_kinds()
        .contains(&crate::scene::JointKindDoc::Prismatic)
    {
        "degrees or mm"
    } else {
        "degrees"
    }
}

/// The approach as `stream --json` reports it.
fn approach_json(
    scene: &Scene,
    arm: &Arm,
    streamed: &StreamPlan,
    start_pulses_us: Value,
    info: &armwright_link::DeviceInfo,
    rate_hz: f64,
) -> Value {
    let order: Vec<Value> = streamed
        .wake_times(rate_hz)
        .iter()
        .map(|&(channel, at_s)| {
            json!({ "channel": channel, "name": channel_name(arm, channel), "at_s": rounded(at_s, 3) })
        })
        .collect();
    // A channel not yet woken in the first frame is null.
    let first_setpoint_us: Vec<Value> = streamed
        .frame(0)
        .map(|frame| {
            frame
                .as_slice()
                .iter()
                .map(|units| {
                    units.map_or(Value::Null, |units| {
                        json!(rounded(info.us_from_units(units), 3))
                    })
                })
                .collect()
        })
        .unwrap_or_default();
    let rounded_pose = |positions: &[f64]| -> Vec<f64> {
        pose_to_file_units(&scene.arm, positions)
            .iter()
            .map(|&value| rounded(value, 4))
            .collect()
    };
    json!({
        "from": match streamed.from {
            crate::approach::StartFrom::Held => "held",
            crate::approach::StartFrom::Limp => "limp",
            crate::approach::StartFrom::Unknown => "unknown",
        },
        "duration_s": rounded(streamed.approach.duration(), 3),
        "speed_share_pct": scene.timing.approach_speed_share_pct,
        "frames": streamed.approach_frames,
        "start_pulses_us": start_pulses_us,
        "start_joints_deg_or_mm": rounded_pose(&streamed.start.positions),
        "first_setpoint_us": first_setpoint_us,
        "wake": if streamed.from.wakes() {
            json!({
                "rest_joints_deg_or_mm": rounded_pose(&streamed.start.positions),
                "pause_s": rounded(scene.timing.wake_pause_ms / 1e3, 3),
                "together": streamed.wake.is_none(),
                "order": order,
            })
        } else {
            Value::Null
        },
        "park_s": streamed.park.as_ref().map_or(Value::Null, |park| json!(rounded(park.duration(), 3))),
        "sequence_s": rounded(streamed.plan_s, 3),
        "cycle_s": rounded(streamed.cycle_s(), 3),
    })
}

/// Reports a stream refused before any setpoint was sent.
fn refused(json: bool, message: &str) -> Outcome {
    fail(json, message, json!({ "frames_sent": 0 }), Outcome::Refused)
}

/// `--port`, `--simulated`, or the scene's link device.
fn target_of(request: &StreamRequest, scene: &Scene) -> Target {
    match (request.port, request.simulated) {
        (Some(path), _) => Target::Port(path.to_owned()),
        (None, true) => Target::Simulated,
        (None, false) => match &scene.link.device {
            Device::Simulated => Target::Simulated,
            Device::Port(path) => Target::Port(path.clone()),
        },
    }
}

/// Reads one answer; only "yes" (or "y"), in any case, confirms.
pub(super) fn confirm(input: &mut impl BufRead) -> Result<(), String> {
    let mut answer = String::new();
    match input.read_line(&mut answer) {
        Ok(0) => Err("no confirmation: standard input is closed".to_owned()),
        Ok(_) => match answer.trim().to_ascii_lowercase().as_str() {
            "yes" | "y" => Ok(()),
            _ => Err("not confirmed".to_owned()),
        },
        Err(error) => Err(format!(
            "no confirmation: cannot read standard input: {error}"
        )),
    }
}

fn connect(target: &Target, baud: u32, options: StreamOptions) -> Result<Link, String> {
    let transport: Box<dyn Transport> = match target {
        Target::Simulated => Box::new(SimTransport::new(SimDeviceConfig::default())),
        Target::Port(path) => {
            Box::new(SerialTransport::open(path, baud).map_err(|error| error.to_string())?)
        }
    };
    Link::connect(transport, options)
        .map_err(|error| format!("cannot connect to {}: {error}", target.name()))
}

/// Waits for the stream's end, printing progress on standard error.
fn watch(link: &Link, planned: usize, duration: f64, started: Instant) -> Ending {
    let mut last_progress = Instant::now();
    let mut quiet_told = 0;
    loop {
        match link.next_event(Duration::from_millis(50)) {
            Some(LinkEvent::StreamFinished { .. }) => return Ending::Finished,
            Some(LinkEvent::StopConfirmed { after }) => return Ending::Stopped { after },
            Some(LinkEvent::Lost(loss)) => return Ending::Lost(loss),
            Some(LinkEvent::ResetDone) | None => {}
        }
        let quiet = link.stats().device_quiet;
        if quiet > quiet_told {
            quiet_told = quiet;
            eprintln!(
                "  the device has said nothing past the silence limit; it plays the setpoints it \
                 holds, and the link counts as lost if it stays silent until its watchdog would \
                 hold the arm"
            );
        }
        if last_progress.elapsed() >= PROGRESS_INTERVAL {
            last_progress = Instant::now();
            let stats = link.stats();
            eprintln!(
                "  {:>6}/{planned} sent, {} acknowledged, {} late; {:.1} s of {duration:.1} s",
                stats.frames_sent,
                stats.frames_acked,
                stats.frames_late,
                started.elapsed().as_secs_f64()
            );
        }
    }
}

/// After the last setpoint went out, gives the device a moment to acknowledge it.
fn wait_for_last_acks(link: &Link) {
    let until = Instant::now() + LAST_ACK_WAIT;
    while Instant::now() < until {
        let stats = link.stats();
        if stats.frames_acked >= stats.frames_sent || stats.loss.is_some() {
            return;
        }
        std::thread::sleep(Duration::from_millis(2));
    }
}

struct Summary<'a> {
    target: &'a Target,
    rate_hz: f64,
    planned: usize,
    clamped_by_host: usize,
    worst_rounding_deg: f64,
    elapsed: Duration,
    ending: Ending,
    stats: &'a StreamStats,
    /// Each channel's pulse (µs) or null (limp) when the stream began; null when the
    /// device cannot say (protocol 1).
    start_pulses_us: Value,
    /// How the stream started: see [`approach_json`].
    approach: Value,
    /// Whether the setpoints were sent ahead for the device to play from its queue.
    plays_ahead: bool,
}

fn ms(duration: Duration) -> f64 {
    rounded(duration.as_secs_f64() * 1e3, 3)
}

/// What to say of a stream that ended early when this computer kept its thread waiting for a
/// processor for [`BUSY_HOST_WAIT`] or more between two lines; `None` otherwise.
fn busy_computer_note(stats: &StreamStats) -> Option<String> {
    (stats.host_wait_max >= BUSY_HOST_WAIT).then(|| {
        format!(
            "this computer kept the stream waiting for a processor for up to {:.0} ms at a time \
             (its longest silence toward the device: {:.0} ms): other programs held it up; close \
             them, or run the stream from a terminal of its own",
            stats.host_wait_max.as_secs_f64() * 1e3,
            stats.send_gap_max.as_secs_f64() * 1e3
        )
    })
}

/// Prints how the stream went and says how to exit: 0 when it ran to its end, 1 otherwise.
fn report(json: bool, summary: &Summary) -> Outcome {
    let stats = summary.stats;
    let (ending, reason) = match summary.ending {
        Ending::Finished => ("finished", None),
        Ending::Stopped { after } => (
            "emergency_stop",
            Some(format!(
                "emergency stop sent and acknowledged by the device after {:.1} ms; it holds its \
                 pulses until reset — check the arm before streaming again",
                after.as_secs_f64() * 1e3
            )),
        ),
        Ending::Lost(loss) if stats.stop_write_latency.is_some() => (
            "emergency_stop",
            Some(format!(
                "emergency stop sent but not acknowledged: link lost: {loss}; cut the arm's power"
            )),
        ),
        Ending::Lost(loss) => ("link_lost", Some(format!("link lost: {loss}"))),
    };
    let finished = summary.ending == Ending::Finished;
    if json {
        print_json(&json!({
            "ok": finished,
            "ending": ending,
            "error": reason,
            "device": summary.target.name(),
            "rate_hz": summary.rate_hz,
            "frames_planned": summary.planned,
            "frames_sent": stats.frames_sent,
            "frames_acked": stats.frames_acked,
            "frames_late": stats.frames_late,
            "frames_clamped_by_device": stats.frames_clamped,
            "frames_clamped_by_host": summary.clamped_by_host,
            "frames_dropped": stats.frames_dropped,
            "acks_late": stats.acks_late,
            "ack_wait_max_ms": ms(stats.ack_wait_max),
            "send_gap_max_ms": ms(stats.send_gap_max),
            "host_wait_max_ms": ms(stats.host_wait_max),
            "play_ahead_s": if summary.plays_ahead { json!(PLAY_AHEAD.as_secs_f64()) } else { Value::Null },
            "device_quiet": stats.device_quiet,
            "device_quiet_noticed_after_ms": stats.device_quiet_noticed_after.map(ms).map_or(Value::Null, |v| json!(v)),
            "device_silent_ms": match stats.loss {
                Some(LinkLoss::NoAck { silent, .. }) => json!(ms(silent)),
                _ => Value::Null,
            },
            "underruns": stats.underruns,
            "worst_rounding_error_deg": rounded(summary.worst_rounding_deg, 4),
            "jitter_mean_ms": ms(stats.jitter_mean),
            "jitter_p99_ms": ms(stats.jitter_p99),
            "jitter_max_ms": ms(stats.jitter_max),
            "elapsed_s": rounded(summary.elapsed.as_secs_f64(), 3),
            "stop_write_latency_ms": stats.stop_write_latency.map(ms).map_or(Value::Null, |v| json!(v)),
            "stop_ack_latency_ms": stats.stop_ack_latency.map(ms).map_or(Value::Null, |v| json!(v)),
            "start_pulses_us": summary.start_pulses_us,
            "approach": summary.approach,
        }));
    } else {
        println!(
            "{} of {} setpoints sent to {}, {} acknowledged ({} late), {} late, {} dropped in \
             {:.2} s; jitter p99 {:.2} ms, worst rounding {:.3}°",
            stats.frames_sent,
            summary.planned,
            summary.target.name(),
            stats.frames_acked,
            stats.acks_late,
            stats.frames_late,
            stats.frames_dropped,
            summary.elapsed.as_secs_f64(),
            stats.jitter_p99.as_secs_f64() * 1e3,
            summary.worst_rounding_deg
        );
        if summary.clamped_by_host > 0 {
            println!(
                "{} setpoints had a pulse width limited to its servo's range",
                summary.clamped_by_host
            );
        }
        match &reason {
            None => println!("the sequence ran to its end"),
            Some(reason) => eprintln!("error: {reason}"),
        }
        if let Some(note) = busy_computer_note(stats).filter(|_| !finished) {
            eprintln!("  {note}");
        }
    }
    if finished {
        Outcome::Done
    } else {
        Outcome::Refused
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_busy_computer_is_named_only_past_100_ms_of_waiting() {
        let mut stats = StreamStats {
            host_wait_max: Duration::from_millis(60),
            send_gap_max: Duration::from_millis(70),
            ..StreamStats::default()
        };
        assert_eq!(busy_computer_note(&stats), None);
        stats.host_wait_max = Duration::from_millis(310);
        stats.send_gap_max = Duration::from_millis(320);
        let note = busy_computer_note(&stats).expect("named");
        assert!(
            note.starts_with(
                "this computer kept the stream waiting for a processor for up to 310 ms at a \
                 time (its longest silence toward the device: 320 ms)"
            ),
            "{note}"
        );
    }

    #[test]
    fn only_a_yes_confirms() {
        assert!(confirm(&mut "yes\n".as_bytes()).is_ok());
        assert!(confirm(&mut " Y \n".as_bytes()).is_ok());
        assert_eq!(
            confirm(&mut "no\n".as_bytes()),
            Err("not confirmed".to_owned())
        );
        assert_eq!(
            confirm(&mut "".as_bytes()),
            Err("no confirmation: standard input is closed".to_owned())
        );
    }

    #[test]
    fn the_caution_says_what_the_sample_scenes_say() {
        let caution = CAUTION.replace('\n', " ").to_lowercase();
        for phrase in [
            "pinch and strike",
            "a software stop is not a safety device",
            "hard power cut-off within reach",
            "keep clear of the arm's reach while it is powered",
            "local codes and licensed practice",
        ] {
            assert!(caution.contains(phrase), "{phrase}");
        }
    }
}
