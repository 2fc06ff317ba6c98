//! `armwright calibrate`: fit a joint's calibration to measured points (pulse width sent,
//! position read), report the fit and its residuals, and optionally write it into the scene.
//! Without points, with a device (`--port`, `--simulated`), it steps the joint's pulse from the
//! terminal first and records the positions typed; there it also finds the servo's deadband,
//! stepping 1 µs at a time until the person says the joint moved.

use std::io::{BufRead, IsTerminal};
use std::path::Path;
use std::sync::{Arc, Mutex, PoisonError};
use std::time::{Duration, Instant};

use armwright_kinematics::{
    Arm, CalibrationFit, CalibrationReading, FitShape, fit_calibration, sent_pulse,
};
use armwright_link::{
    ChannelValues, Link, LinkEvent, SerialTransport, SimDevice, SimDeviceConfig, SimTransport,
    StreamOptions, Transport, arm_setpoint,
};
use serde_json::{Value, json};

use super::Outcome;
use super::report::{all_rounded, fail, load_scene, print_json, rounded};
use super::stream::confirm;
use crate::calibration_fit::{
    DEADBAND_SEARCH_LIMIT_US, fit_options, fitted_points, fitted_uncertainty, si_per_file_unit,
};
use crate::scene::{JointKindDoc, Scene, save, validate};
use crate::task::servo_model_of;

/// What `calibrate` was asked to do.
pub(crate) struct CalibrateRequest<'a> {
    /// The joint's name in the scene.
    pub(crate) joint: &'a str,
    /// Measured points: pulse width in µs, position in degrees (revolute) or mm (prismatic).
    pub(crate) points: &'a [MeasuredPoint],
    /// The device to step the joint on, typing the positions read; `None` fits `points`.
    pub(crate) device: Option<StepDevice>,
    /// `--yes`: no typed confirmation before the first pulse.
    pub(crate) yes: bool,
    /// Where to save the scene with the fitted calibration.
    pub(crate) write: Option<&'a Path>,
}

/// The device an interactive calibration steps the joint on.
#[derive(Debug, Clone, PartialEq, Eq)]
pub(crate) enum StepDevice {
    /// `--port PATH`.
    Port(String),
    /// `--simulated`: the built-in simulated device moving the scene's arm.
    Simulated,
}

/// One measured point as typed: `PULSE:POSITION`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MeasuredPoint {
    /// Pulse width sent, in whole µs.
    pub pulse_us: u32,
    /// Position read: degrees for a revolute joint, mm for a prismatic one.
    pub position: f64,
}

/// Parses `PULSE:POSITION` (µs, then degrees or mm), for clap.
///
/// # Errors
/// A message naming the text and what was expected.
pub fn parse_measured_point(text: &str) -> Result<MeasuredPoint, String> {
    let expected = "expected PULSE_US:POSITION, for example 1500:2.5";
    let (pulse, position) = text
        .split_once(':')
        .ok_or_else(|| format!("\"{text}\": {expected}"))?;
    let pulse: f64 = pulse.trim().parse().map_err(|_| {
        format!("\"{text}\": the pulse width \"{pulse}\" is not a number; {expected}")
    })?;
    if !(pulse.is_finite() && pulse.fract() == 0.0 && (1.0..=u16::MAX as f64).contains(&pulse)) {
        return Err(format!(
            "\"{text}\": the pulse width must be whole µs between 1 and {}",
            u16::MAX
        ));
    }
    let position: f64 = position.trim().parse().map_err(|_| {
        format!("\"{text}\": the position \"{position}\" is not a number; {expected}")
    })?;
    if !position.is_finite() {
        return Err(format!("\"{text}\": the position is not a finite number"));
    }
    Ok(MeasuredPoint {
        pulse_us: pulse as u32,
        position,
    })
}

/// Runs `calibrate`: fits the points given, or steps the joint on a device first.
pub(crate) fn run(file: &Path, request: &CalibrateRequest, json: bool) -> Outcome {
    let (scene, arm) = match load_scene(file, json) {
        Ok(loaded) => loaded,
        Err(outcome) => return outcome,
    };
    let Some(index) = scene
        .arm
        .joints
        .iter()
        .position(|joint| joint.name == request.joint)
    else {
        let names: Vec<String> = scene
            .arm
            .joints
            .iter()
            .map(|joint| format!("\"{}\"", joint.name))
            .collect();
        let message = format!(
            "--joint: no joint is named \"{}\"; the scene's joints are {}",
            request.joint,
            names.join(", ")
        );
        return fail(json, &message, json!({}), Outcome::Unreadable);
    };
    match &request.device {
        None => fit_and_report(&scene, index, request.points, None, request.write, json),
        Some(device) => {
            let (points, deadband) = match step_and_read(&scene, &arm, index, device, request.yes) {
                Ok(read) => read,
                Err(message) => return fail(json, &message, json!({}), Outcome::Refused),
            };
            fit_and_report(
                &scene,
                index,
                &points,
                deadband.as_ref(),
                request.write,
                json,
            )
        }
    }
}

/// A deadband found by stepping: the pulse change that moved the joint after each reversal.
#[derive(Debug, Clone, Copy, PartialEq)]
struct DeadbandFound {
    /// After the reversal downwards, then upwards, in µs.
    widths_us: [f64; 2],
}

impl DeadbandFound {
    /// The deadband proposed: the mean of the two widths, to 0.01 µs, as the scene keeps it.
    fn proposed_us(&self) -> f64 {
        (0.5 * (self.widths_us[0] + self.widths_us[1]) * 100.0).round() / 100.0
    }
}

/// Fits `points` for joint `index`, writes the scene (with the deadband found, if any) when
/// asked and reports the fit and the deadband.
fn fit_and_report(
    scene: &Scene,
    index: usize,
    points: &[MeasuredPoint],
    deadband: Option<&DeadbandFound>,
    write: Option<&Path>,
    json: bool,
) -> Outcome {
    let kind = scene.arm.shape.joint_kinds()[index];
    let unit = match kind {
        JointKindDoc::Revolute => "deg",
        JointKindDoc::Prismatic => "mm",
    };
    let to_si = si_per_file_unit(kind);
    let readings: Vec<CalibrationReading> = points
        .iter()
        .map(|point| CalibrationReading {
            pulse_us: f64::from(point.pulse_us),
            position: point.position * to_si,
        })
        .collect();
    let fit = match fit_calibration(&readings, &fit_options(kind)) {
        Ok(fit) => fit,
        Err(error) => {
            let message = format!("--points: {error}");
            return fail(json, &message, json!({}), Outcome::Refused);
        }
    };
    let written = match write {
        Some(out) => match write_fit(scene, index, &fit, &readings, deadband, out) {
            Ok(()) => Some(out),
            Err(message) => return fail(json, &message, json!({}), Outcome::Refused),
        },
        None => None,
    };
    let report = FitReport::of(&fit, &readings, 1.0 / to_si);
    if json {
        let mut out = report.json(&scene.arm.joints[index].name, index, unit, written);
        out["points"] = points
            .iter()
            .map(|point| json!({ "pulse_us": point.pulse_us, format!("position_{unit}"): point.position }))
            .collect();
        if let Some(found) = deadband {
            out["deadband_us"] = json!(found.proposed_us());
            out["deadband_widths_us"] = json!(found.widths_us);
        }
        print_json(&out);
    } else {
        report.print(&scene.arm.joints[index].name, unit, written);
        if let Some(found) = deadband {
            println!(
                "  deadband {:.2} µs (the joint moved {:.0} µs after turning down, {:.0} µs after \
                 turning up){}",
                found.proposed_us(),
                found.widths_us[0],
                found.widths_us[1],
                if written.is_some() { ", written" } else { "" }
            );
        }
    }
    Outcome::Done
}

/// Shown before the first pulse, whether or not confirmation is asked for.
pub(crate) const STEP_CAUTION: &str = "\
CAUTION: calibrating moves the joint, and a powered servo arm can pinch and strike. A limp
servo jumps to its first pulse at its own top speed: the first pulse wakes this joint at its
home position, and any other limp joint at the scene's home pose. A software stop is not a
safety device: keep a hard power cut-off within reach, keep clear of the arm's reach while it
is powered, and defer to local codes and licensed practice. Ctrl-C sends the emergency stop.";

/// The words the interactive form understands, as it lists them.
const STEP_WORDS: &str = "\
Type a line, then Enter:
  +N or -N   step the pulse by N whole µs (for example +10, -1, +50)
  a number   the position you read now, degrees (mm for a sliding joint): records a point
  drop       forget the last point
  fit        show the fit of the points so far
  deadband   find the servo's deadband: Enter steps the pulse 1 µs, type moved when you see
             the servo's horn move (up, then down, then up again; the link would add the
             gears' backlash); stop leaves the search
  done       fit and report (and write, with --write), then leave
  quit       leave without fitting or writing";

/// How long a pulse may take to go out before the link is taken as stuck.
const PULSE_WAIT: Duration = Duration::from_secs(2);

/// One line typed in the interactive form.
#[derive(Debug, Clone, PartialEq)]
enum Typed {
    Step(i32),
    Position(f64),
    Drop,
    Fit,
    Deadband,
    Done,
    Quit,
    Help,
}

/// Reads one typed line.
fn parse_typed(line: &str) -> Result<Typed, String> {
    let word = line.trim();
    let typed = match word.to_ascii_lowercase().as_str() {
        "drop" => Typed::Drop,
        "fit" => Typed::Fit,
        "deadband" => Typed::Deadband,
        "done" => Typed::Done,
        "quit" => Typed::Quit,
        "help" | "?" | "" => Typed::Help,
        _ if word.starts_with(['+', '-']) && word[1..].chars().all(|c| c.is_ascii_digit()) => {
            let step: i32 = word
                .parse()
                .map_err(|_| format!("\"{word}\": a step is a whole number of µs, such as +10"))?;
            Typed::Step(step)
        }
        _ => match word
            .trim_end_matches(['°', ' '])
            .trim_end_matches("mm")
            .trim()
            .parse()
        {
            Ok(position) if f64::is_finite(position) => Typed::Position(position),
            _ => {
                return Err(format!(
                    "\"{word}\" is not a word this form knows (type help for the list)"
                ));
            }
        },
    };
    Ok(typed)
}

/// The link and what stepping one channel needs.
struct Stepper {
    link: Link,
    channel: usize,
    /// The pulse held, whole µs.
    held_us: f64,
    /// The servo's safe range within the device's, µs.
    safe_us: (f64, f64),
    /// Pulses (device units) for channels the device reports limp: the scene's home pose.
    fill: ChannelValues,
    /// The simulated device, to say where its joint is.
    simulated: Option<Arc<Mutex<SimDevice>>>,
}

impl Stepper {
    /// Holds the channel at `wanted_us` (limited to the safe range, and said so), every other
    /// channel at what the device reports it sends; waits until the setpoint went out.
    fn hold(&mut self, wanted_us: f64) -> Result<(), String> {
        let (low, high) = self.safe_us;
        let sent = sent_pulse(wanted_us, 1.0, low, high);
        if sent.clamped {
            eprintln!(
                "{wanted_us:.0} µs is outside the servo's safe range {low:.0}–{high:.0} µs (its \
                 calibration's pulse_min_us and pulse_max_us, within the device's): held at \
                 {:.0} µs",
                sent.pulse_us
            );
        }
        let info = self.link.device();
        let output = self
            .link
            .refresh_state()
            .map_err(|error| format!("the device did not say what it sends: {error}"))?
            .output;
        let mut values = self.fill;
        let mut woken = Vec::new();
        for (channel, value) in values.as_mut_slice().iter_mut().enumerate() {
            if channel == self.channel {
                *value = info.units_from_us(sent.pulse_us);
            } else {
                match output.and_then(|output| output.as_slice().get(channel).copied().flatten()) {
                    Some(units) => *value = units,
                    None => woken.push(format!("ch{channel}")),
                }
            }
        }
        self.link
            .start_stream()
            .and_then(|()| self.link.push_setpoint(values))
            .and_then(|()| self.link.finish_stream())
            .map_err(|error| format!("cannot send the pulse: {error}"))?;
        let until = Instant::now() + PULSE_WAIT;
        loop {
            match self.link.next_event(Duration::from_millis(20)) {
                Some(LinkEvent::StreamFinished { .. }) => break,
                Some(LinkEvent::StopConfirmed { .. }) => {
                    return Err("emergency stop: the device holds its pulses until reset".into());
                }
                Some(LinkEvent::Lost(loss)) => return Err(format!("link lost: {loss}")),
                Some(LinkEvent::ResetDone) | None => {}
            }
            if Instant::now() >= until {
                return Err("the pulse did not go out: the link is stuck".into());
            }
        }
        if !woken.is_empty() {
            eprintln!(
                "{} had no known pulse (limp): sent the scene's home pose there",
                woken.join(", ")
            );
        }
        self.held_us = sent.pulse_us;
        Ok(())
    }

    /// Where the simulated device's joint came to rest, in rad or m (waits until it stops
    /// moving, at most a few seconds); `None` for a real device.
    fn simulated_position(&self) -> Option<f64> {
        let device = self.simulated.as_ref()?;
        let read = || {
            let device = device.lock().unwrap_or_else(PoisonError::into_inner);
            device
                .arm_positions()
                .and_then(|positions| positions.get(self.channel).copied())
        };
        let until = Instant::now() + Duration::from_secs(5);
        let mut last = read()?;
        loop {
            // Ten pulse frames at 20 ms.
            std::thread::sleep(Duration::from_millis(200));
            let now = read()?;
            if (now - last).abs() < 1e-5 || Instant::now() >= until {
                return Some(now);
            }
            last = now;
        }
    }
}

/// Steps joint `index` on `device` from the terminal, recording the positions typed (and the
/// deadband, when the person asks for its search); returns them once the person types `done`.
fn step_and_read(
    scene: &Scene,
    arm: &Arm,
    index: usize,
    device: &StepDevice,
    yes: bool,
) -> Result<(Vec<MeasuredPoint>, Option<DeadbandFound>), String> {
    let kind = scene.arm.shape.joint_kinds()[index];
    let (symbol, from_si) = match kind {
        JointKindDoc::Revolute => ("°", 1f64.to_degrees()),
        JointKindDoc::Prismatic => (" mm", 1e3),
    };
    let name = match device {
        StepDevice::Port(path) => path.as_str(),
        StepDevice::Simulated => "the simulated device",
    };
    eprintln!("{STEP_CAUTION}");
    let mut input = std::io::stdin().lock();
    if !yes {
        eprint!(
            "Type yes to step joint \"{}\" on {name}: ",
            scene.arm.joints[index].name
        );
        let answer = confirm(&mut input);
        if !std::io::stdin().is_terminal() {
            eprintln!();
        }
        answer.map_err(|reason| format!("{reason}; nothing was sent"))?;
    }
    let home = arm.home_pose();
    let (transport, simulated): (Box<dyn Transport>, _) = match device {
        StepDevice::Simulated => {
            let device = SimDevice::new(SimDeviceConfig::default())
                .with_arm(arm.clone(), &servo_model_of(scene), &home)
                .map_err(|error| format!("the simulated device cannot move this arm: {error}"))?;
            let transport = SimTransport::with_device(device);
            let handle = transport.device();
            (Box::new(transport), Some(handle))
        }
        StepDevice::Port(path) => (
            Box::new(SerialTransport::open(path, scene.link.baud).map_err(|e| e.to_string())?),
            None,
        ),
    };
    let link = Link::connect(transport, StreamOptions::default())
        .map_err(|error| format!("cannot connect to {name}: {error}"))?;
    let info = link.device();
    let fill = arm_setpoint(arm, &home, Some(0.0), &info)
        .map_err(|error| format!("cannot send the arm's pulses: {error}"))?
        .values;
    let calibration = &scene.arm.joints[index].calibration;
    let low = f64::from(calibration.pulse_min_us).max(info.us_from_units(info.min_pulse_units));
    let high = f64::from(calibration.pulse_max_us).min(info.us_from_units(info.max_pulse_units));
    if low > high {
        return Err("the servo's pulse range and the device's do not overlap".into());
    }
    let stop = link.emergency_stop();
    ctrlc::set_handler(move || stop.trigger())
        .map_err(|error| format!("cannot catch Ctrl-C, so it could not stop the arm: {error}"))?;
    let start_us = arm.joints()[index]
        .calibration
        .pulse_us(home[index])
        .round();
    let mut stepper = Stepper {
        link,
        channel: index,
        held_us: start_us,
        safe_us: (low, high),
        fill,
        simulated,
    };
    stepper.hold(start_us)?;
    eprintln!("{STEP_WORDS}");
    let mut points: Vec<MeasuredPoint> = Vec::new();
    let mut deadband = None;
    let say_held = |stepper: &Stepper| {
        eprint!("holding ch{} at {:.0} µs", stepper.channel, stepper.held_us);
        match stepper.simulated_position() {
            Some(position) => eprintln!(
                "; the simulated joint reads {:.3}{symbol}",
                position * from_si
            ),
            None => eprintln!(),
        }
    };
    say_held(&stepper);
    let mut line = String::new();
    loop {
        line.clear();
        match input.read_line(&mut line) {
            Ok(0) => return Err("standard input closed before done: nothing fitted".into()),
            Ok(_) => {}
            Err(error) => return Err(format!("cannot read standard input: {error}")),
        }
        let typed = match parse_typed(&line) {
            Ok(typed) => typed,
            Err(message) => {
                eprintln!("{message}");
                continue;
            }
        };
        match typed {
            Typed::Step(step) => {
                stepper.hold(stepper.held_us + f64::from(step))?;
                say_held(&stepper);
            }
            Typed::Position(position) => {
                points.push(MeasuredPoint {
                    pulse_us: stepper.held_us.round() as u32,
                    position,
                });
                eprintln!(
                    "point {}: {:.0} µs at {position}{symbol}",
                    points.len(),
                    stepper.held_us
                );
            }
            Typed::Drop => match points.pop() {
                Some(point) => eprintln!(
                    "dropped {} µs at {}{symbol}; {} left",
                    point.pulse_us,
                    point.position,
                    points.len()
                ),
                None => eprintln!("no point to drop"),
            },
            Typed::Fit => print_fit_so_far(&points, kind, symbol),
            Typed::Deadband => {
                if let Some(found) = find_deadband(&mut stepper, &mut input, &say_held)? {
                    eprintln!(
                        "deadband: the joint moved {:.0} µs after turning down and {:.0} µs after \
                         turning up: {:.2} µs proposed (--write records it)",
                        found.widths_us[0],
                        found.widths_us[1],
                        found.proposed_us(),
                    );
                    deadband = Some(found);
                }
            }
            Typed::Done => return Ok((points, deadband)),
            Typed::Quit => return Err("quit: nothing fitted or written".into()),
            Typed::Help => eprintln!("{STEP_WORDS}"),
        }
    }
}

/// The deadband search from the pulse held now: each Enter steps 1 µs up until the person types
/// `moved` (taking up the deadband, so the servo rests at its edge), then down until the next
/// `moved`, then up until the third; each reversal spans the deadband. `stop` leaves it (`None`),
/// as do [`DEADBAND_SEARCH_LIMIT_US`] without a movement and the end of the safe range.
fn find_deadband(
    stepper: &mut Stepper,
    input: &mut impl BufRead,
    say_held: &dyn Fn(&Stepper),
) -> Result<Option<DeadbandFound>, String> {
    let legs: [(f64, &str); 3] = [(1.0, "up"), (-1.0, "down"), (1.0, "up")];
    let mut leg = 0;
    let mut from_us = stepper.held_us;
    let mut widths_us = Vec::new();
    eprintln!(
        "deadband search from {from_us:.0} µs: press Enter to step 1 µs up, type moved as soon \
         as you see the servo's horn move, stop to leave the search"
    );
    let mut line = String::new();
    loop {
        line.clear();
        match input.read_line(&mut line) {
            Ok(0) => return Err("standard input closed in the deadband search".into()),
            Ok(_) => {}
            Err(error) => return Err(format!("cannot read standard input: {error}")),
        }
        let (step_us, direction) = legs[leg];
        match line.trim().to_ascii_lowercase().as_str() {
            "" => {
                if (stepper.held_us + step_us - from_us).abs() > DEADBAND_SEARCH_LIMIT_US {
                    eprintln!(
                        "no movement seen within {DEADBAND_SEARCH_LIMIT_US:.0} µs: deadband \
                         search ended (is the servo powered?)"
                    );
                    return Ok(None);
                }
                let wanted = stepper.held_us + step_us;
                stepper.hold(wanted)?;
                if (stepper.held_us - wanted).abs() > 0.5 {
                    eprintln!(
                        "the deadband search reached the end of the safe range: step away from \
                         it and search again"
                    );
                    return Ok(None);
                }
                say_held(stepper);
            }
            "moved" | "m" => {
                if leg > 0 {
                    widths_us.push((stepper.held_us - from_us).abs());
                }
                leg += 1;
                from_us = stepper.held_us;
                match widths_us.as_slice() {
                    &[down, up] => {
                        return Ok(Some(DeadbandFound {
                            widths_us: [down, up],
                        }));
                    }
                    _ => eprintln!(
                        "now stepping {} from {from_us:.0} µs: Enter steps 1 µs, moved when it \
                         moves",
                        legs[leg].1
                    ),
                }
            }
            "stop" => {
                eprintln!("deadband search left; holding {:.0} µs", stepper.held_us);
                return Ok(None);
            }
            other => eprintln!(
                "\"{other}\": in the deadband search, press Enter to step 1 µs {direction}, type \
                 moved when the joint moves, or stop"
            ),
        }
    }
}

/// The fit of the points typed so far, on standard error.
fn print_fit_so_far(points: &[MeasuredPoint], kind: JointKindDoc, symbol: &str) {
    let to_si = si_per_file_unit(kind);
    let readings: Vec<CalibrationReading> = points
        .iter()
        .map(|point| CalibrationReading {
            pulse_us: f64::from(point.pulse_us),
            position: point.position * to_si,
        })
        .collect();
    match fit_calibration(&readings, &fit_options(kind)) {
        Ok(fit) => {
            let residuals: Vec<String> = fit
                .residuals
                .iter()
                .map(|r| format!("{:+.2}", r / to_si))
                .collect();
            let per = if kind == JointKindDoc::Revolute {
                "degree"
            } else {
                "mm"
            };
            eprintln!(
                "{:.3} µs per {per}, {:.1} µs at 0{symbol}; residuals {}{symbol}",
                fit.pulse_per_position_us() * to_si,
                fit.pulse_at_zero_us(),
                residuals.join(", ")
            );
        }
        Err(error) => eprintln!("no fit yet: {error}"),
    }
}

/// The fit in the joint's file unit (degrees or mm per µs).
struct FitReport {
    shape: FitShape,
    pulse_per_unit_us: f64,
    pulse_at_zero_us: f64,
    quadratic_per_us2: f64,
    residuals: Vec<f64>,
    line_residuals: Vec<f64>,
    rms: f64,
    worst: f64,
}

impl FitReport {
    fn of(fit: &CalibrationFit, readings: &[CalibrationReading], from_si: f64) -> FitReport {
        FitReport {
            shape: fit.shape,
            pulse_per_unit_us: fit.pulse_per_position_us() / from_si,
            pulse_at_zero_us: fit.pulse_at_zero_us(),
            quadratic_per_us2: fit.coefficients[2] * from_si,
            residuals: fit.residuals.iter().map(|r| r * from_si).collect(),
            line_residuals: fit
                .line_residuals(readings)
                .iter()
                .map(|r| r * from_si)
                .collect(),
            rms: fit.rms_residual() * from_si,
            worst: fit.max_residual() * from_si,
        }
    }

    fn json(&self, name: &str, index: usize, unit: &str, written: Option<&Path>) -> Value {
        let mut out = json!({
            "ok": true,
            "joint": name,
            "joint_index": index,
            "shape": match self.shape { FitShape::Linear => "line", FitShape::Quadratic => "quadratic" },
            format!("pulse_per_{unit}_us"): rounded(self.pulse_per_unit_us, 4),
            "pulse_at_zero_us": rounded(self.pulse_at_zero_us, 2),
            format!("residuals_{unit}"): all_rounded(&self.residuals, 3),
            format!("rms_residual_{unit}"): rounded(self.rms, 3),
            format!("max_residual_{unit}"): rounded(self.worst, 3),
            "written": written.map(|p| p.display().to_string()),
        });
        if self.shape == FitShape::Quadratic {
            out[format!("quadratic_{unit}_per_us2")] = json!(self.quadratic_per_us2);
            out[format!("line_residuals_{unit}")] = json!(all_rounded(&self.line_residuals, 3));
        }
        out
    }

    fn print(&self, name: &str, unit: &str, written: Option<&Path>) {
        let symbol = if unit == "deg" { "°" } else { " mm" };
        let per = if unit == "deg" { "degree" } else { "mm" };
        let count = self.residuals.len();
        match self.shape {
            FitShape::Linear => println!("joint \"{name}\": straight line through {count} points"),
            FitShape::Quadratic => {
                println!("joint \"{name}\": quadratic through {count} points (they bow clearly)")
            }
        }
        println!(
            "  {:.3} µs per {per}, {:.1} µs at 0{symbol} (straight-line fit)",
            self.pulse_per_unit_us, self.pulse_at_zero_us
        );
        if self.shape == FitShape::Quadratic {
            println!(
                "  quadratic term {:.3e}{symbol} per µs²",
                self.quadratic_per_us2
            );
        }
        let listed: Vec<String> = self.residuals.iter().map(|r| format!("{r:+.2}")).collect();
        println!(
            "  residuals {}{symbol} (rms {:.2}{symbol}, worst {:.2}{symbol})",
            listed.join(", "),
            self.rms,
            self.worst
        );
        if let Some(out) = written {
            println!(
                "wrote {}: the straight-line fit through the measured pulse range",
                out.display()
            );
            if self.shape == FitShape::Quadratic {
                let worst = self
                    .line_residuals
                    .iter()
                    .fold(0.0, |m: f64, r| m.max(r.abs()));
                println!(
                    "  note: a scene's calibration is a straight line; it is off by up to {worst:.2}{symbol} at these points"
                );
            }
        }
    }
}

/// Saves the scene with joint `index`'s calibration points replaced by the straight-line fit
/// at the ends of the measured pulse range, and its uncertainty by the line's residual standard
/// error ([`fitted_uncertainty`]; absent for two points), and the servo's deadband by the one
/// found (if any), after checking the whole scene again.
fn write_fit(
    scene: &Scene,
    index: usize,
    fit: &CalibrationFit,
    readings: &[CalibrationReading],
    deadband: Option<&DeadbandFound>,
    out: &Path,
) -> Result<(), String> {
    let mut scene = scene.clone();
    let kind = scene.arm.shape.joint_kinds()[index];
    let joint = &mut scene.arm.joints[index];
    joint.calibration.points = fitted_points(fit, kind);
    joint.calibration.uncertainty = fitted_uncertainty(fit, readings, kind);
    if let Some(found) = deadband {
        joint.servo.deadband_us = found.proposed_us();
    }
    let problems = validate(&scene);
    if !problems.is_empty() {
        let listed: Vec<String> = problems.iter().map(|p| p.to_string()).collect();
        return Err(format!(
            "the fitted calibration makes the scene invalid, nothing written: {}",
            listed.join("; ")
        ));
    }
    save(&scene, out).map_err(|error| error.to_string())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_point_is_pulse_colon_position() {
        assert_eq!(
            parse_measured_point("1500:-2.5"),
            Ok(MeasuredPoint {
                pulse_us: 1500,
                position: -2.5
            })
        );
    }

    #[test]
    fn a_bad_point_says_what_was_expected() {
        let error = parse_measured_point("1500").unwrap_err();
        assert!(error.contains("PULSE_US:POSITION"), "{error}");
        let error = parse_measured_point("1500.5:3").unwrap_err();
        assert!(error.contains("whole µs"), "{error}");
        let error = parse_measured_point("1500:abc").unwrap_err();
        assert!(error.contains("\"abc\" is not a number"), "{error}");
    }
}
