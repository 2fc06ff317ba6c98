//! Guided calibration of one joint on the connected device, apart from drawing: the pulse this
//! tool holds on the joint's channel, the positions a person read at each pulse, their fit
//! (`fit_calibration`, as `armwright calibrate` fits), the deadband search, and Apply, which
//! writes the fitted calibration and the deadband into the scene as one undo step.
//!
//! Pulses go out through the device link's worker ([`LinkAction::HoldChannel`]): the joint's
//! channel at the held width, every other channel at what the device reports it sends.

use armwright_kinematics::{CalibrationFit, CalibrationReading, fit_calibration, sent_pulse};
use armwright_link::{DeviceInfo, arm_setpoint};

use super::arm_context::ArmContext;
use super::device::{ChannelPulse, LinkAction};
use super::message::{Level, Message};
use crate::calibration_fit::{
    DEADBAND_SEARCH_LIMIT_US, fit_options, fitted_points, fitted_uncertainty, si_per_file_unit,
};
use crate::scene::{GripperState, JointKindDoc, Scene, validate};

/// The pulse steps offered, in µs.
pub const PULSE_STEPS_US: [f64; 3] = [1.0, 10.0, 50.0];

/// Time between two 1 µs steps of the deadband search, in s: a hobby servo answers a step
/// within a few 20 ms frames, and a person sees a movement and presses within about ¼ s (from
/// memory), so a press lands on the step that moved the joint or the one after it.
pub const DEADBAND_STEP_S: f64 = 0.6;

/// One measured point: the pulse held and the position a person read there.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MeasuredPosition {
    /// The pulse width held on the joint's channel, in µs.
    pub pulse_us: f64,
    /// The position read: degrees (revolute) or mm (prismatic).
    pub position: f64,
}

/// Which way the deadband search is stepping.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SearchLeg {
    /// Upwards until the first movement: it takes up the deadband, so the servo then rests at
    /// one edge of it.
    TakeUp,
    /// Back down until it moves again: one whole deadband.
    Down,
    /// Up again until it moves: the deadband the other way.
    Up,
}

impl SearchLeg {
    /// The step of this leg, in µs.
    pub fn step_us(self) -> f64 {
        match self {
            SearchLeg::TakeUp | SearchLeg::Up => 1.0,
            SearchLeg::Down => -1.0,
        }
    }
}

/// The deadband search: from a held pulse, 1 µs steps until the person says the joint moved,
/// up, then down, then up again; the two reversals each span the deadband.
#[derive(Debug, Clone, PartialEq, Default)]
pub enum DeadbandSearch {
    /// Not searching.
    #[default]
    Idle,
    /// Stepping.
    Stepping {
        /// The direction now.
        leg: SearchLeg,
        /// The pulse this leg started from, in µs.
        from_us: f64,
        /// egui time of the next step, in s; `None` until the next tick sets it.
        next_step_s: Option<f64>,
        /// Widths of the reversals done so far, in µs.
        widths_us: Vec<f64>,
    },
    /// Both reversals done.
    Found {
        /// The pulse change that moved the joint after each reversal (down, up), in µs.
        widths_us: [f64; 2],
        /// The deadband proposed: the mean of the two, in µs.
        proposed_us: f64,
    },
}

/// What the calibration panel asks for.
#[derive(Debug, Clone, PartialEq)]
pub enum CalibrationCommand {
    /// Calibrate this joint (0-based); the points taken so far are dropped.
    ChooseJoint(usize),
    /// Hold the joint at the pulse of the editor's pose.
    HoldAtPose,
    /// Step the held pulse by this many µs.
    Step(f64),
    /// The position typed so far.
    TypePosition(String),
    /// Record the typed position at the held pulse.
    Record,
    /// Remove a recorded point.
    Remove(usize),
    /// Start the deadband search from the held pulse.
    StartDeadband,
    /// The person saw the joint move.
    Moved,
    /// Stop the deadband search.
    CancelDeadband,
    /// Time passes (egui time, s): the deadband search steps when due.
    Tick(f64),
    /// Write the fitted calibration (and the deadband found) into the scene, one undo step.
    Apply,
}

/// The calibration panel's state.
#[derive(Debug, Clone, Default)]
pub struct Calibrating {
    /// The joint being calibrated, 0-based.
    pub joint: usize,
    /// The pulse this tool holds on the joint's channel, in µs, once it sent one.
    pub held_pulse_us: Option<f64>,
    /// Points recorded, in the order taken.
    pub points: Vec<MeasuredPosition>,
    /// The position being typed.
    pub typed: String,
    /// The fit of the points (two or more), or why they cannot be fitted.
    pub fit: Option<Result<CalibrationFit, String>>,
    /// The deadband search.
    pub deadband: DeadbandSearch,
    /// Why the last pulse asked for was limited, if it was.
    pub limited: Option<String>,
    /// The connected device, as of the editor's last look at the link.
    pub device: Option<DeviceInfo>,
}

impl Calibrating {
    /// Whether the deadband search is stepping (it needs ticks).
    pub fn searching(&self) -> bool {
        matches!(self.deadband, DeadbandSearch::Stepping { .. })
    }

    /// The pulse range the joint's channel may be stepped through, in µs: the servo's
    /// accepted range from the scene within the device's.
    pub fn safe_range_us(&self, scene: &Scene) -> Option<(f64, f64)> {
        let calibration = &scene.arm.joints.get(self.joint)?.calibration;
        let (mut low, mut high) = (
            f64::from(calibration.pulse_min_us),
            f64::from(calibration.pulse_max_us),
        );
        if let Some(device) = &self.device {
            low = low.max(device.us_from_units(device.min_pulse_units));
            high = high.min(device.us_from_units(device.max_pulse_units));
        }
        (low <= high).then_some((low, high))
    }
}

/// The fitted calibration Apply writes: the scene with it, for the editor to take as one undo
/// step, and what to say then.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct AppliedFit {
    /// The scene with the joint's new calibration (and deadband).
    pub scene: Scene,
    /// What was applied, in words.
    pub message: String,
}

/// Applies one calibration command to the panel's state `calibrating`, reading the editor
/// `around` it. Messages go to `said`, pulses to send to `link`; Apply returns the scene with
/// the fit for the editor to take.
pub(crate) fn apply(
    calibrating: &mut Calibrating,
    around: &ArmContext<'_>,
    command: CalibrationCommand,
    said: &mut Vec<Message>,
    link: &mut Vec<LinkAction>,
) -> Option<AppliedFit> {
    match command {
        CalibrationCommand::ChooseJoint(joint) => {
            if joint < around.scene.arm.joints.len() && joint != calibrating.joint {
                let device = calibrating.device;
                *calibrating = Calibrating {
                    joint,
                    device,
                    ..Calibrating::default()
                };
            }
        }
        CalibrationCommand::HoldAtPose => {
            let joint = calibrating.joint;
            let wanted = around
                .arm
                .and_then(|arm| arm.joints().get(joint))
                .zip(around.pose.get(joint))
                .map(|(spec, &position)| spec.calibration.pulse_us(position));
            match wanted {
                Some(wanted) => send(calibrating, around, wanted, said, link),
                None => warn(said, "the arm cannot be built: nothing to hold"),
            }
        }
        CalibrationCommand::Step(step_us) => match calibrating.held_pulse_us {
            Some(held) => send(calibrating, around, held + step_us, said, link),
            None => warn(
                said,
                "hold the joint first: its pulse is not known until this tool sends one",
            ),
        },
        CalibrationCommand::TypePosition(text) => calibrating.typed = text,
        CalibrationCommand::Record => record(calibrating, around.scene, said),
        CalibrationCommand::Remove(index) => {
            if index < calibrating.points.len() {
                calibrating.points.remove(index);
                refit(calibrating, around.scene);
            }
        }
        CalibrationCommand::StartDeadband => match calibrating.held_pulse_us {
            Some(held) => {
                calibrating.deadband = DeadbandSearch::Stepping {
                    leg: SearchLeg::TakeUp,
                    from_us: held,
                    next_step_s: None,
                    widths_us: Vec::new(),
                };
            }
            None => warn(said, "hold the joint first, then look for the deadband"),
        },
        CalibrationCommand::Moved => moved(calibrating),
        CalibrationCommand::CancelDeadband => calibrating.deadband = DeadbandSearch::Idle,
        CalibrationCommand::Tick(now_s) => tick(calibrating, around, now_s, said, link),
        CalibrationCommand::Apply => return apply_fit(calibrating, around, said),
    }
    None
}

/// Says `text` as a warning: what the person asked for was not done, and why.
fn warn(said: &mut Vec<Message>, text: impl Into<String>) {
    said.push(Message::new(Level::Warning, text));
}

/// Sends `wanted_us` on the joint's channel through the pulse rule (the device's unit, the
/// servo's safe range), unless hardware may not move now.
fn send(
    calibrating: &mut Calibrating,
    around: &ArmContext<'_>,
    wanted_us: f64,
    said: &mut Vec<Message>,
    link: &mut Vec<LinkAction>,
) {
    let Some(device) = calibrating.device else {
        warn(said, "connect a device first (the Link tab)");
        return;
    };
    if !around.caution_acknowledged {
        warn(
            said,
            "read and acknowledge the caution before the first pulse is sent",
        );
        return;
    }
    if around.stop_latched() {
        warn(
            said,
            "the emergency stop is latched: check the arm and reset the stop first",
        );
        return;
    }
    let joint = calibrating.joint;
    let Some((low, high)) = calibrating.safe_range_us(around.scene) else {
        said.push(Message::new(
            Level::Error,
            "the servo's pulse range and the device's do not overlap: nothing sent",
        ));
        return;
    };
    let Some(arm) = around.arm else {
        warn(said, "the arm cannot be built: nothing sent");
        return;
    };
    let gripper = match around.gripper {
        GripperState::Open => 0.0,
        GripperState::Closed => 1.0,
    };
    let fill = match arm_setpoint(arm, around.pose, Some(gripper), &device) {
        Ok(setpoint) => setpoint.values,
        Err(error) => {
            said.push(Message::new(
                Level::Error,
                format!("cannot send the pulse: {error}"),
            ));
            return;
        }
    };
    let sent = sent_pulse(wanted_us, device.us_from_units(1), low, high);
    calibrating.limited = sent.clamped.then(|| {
        format!(
            "{wanted_us:.1} µs is outside the servo's safe range {low:.0}–{high:.0} µs (its \
             calibration's pulse_min_us and pulse_max_us, within the device's): held at {:.1} µs",
            sent.pulse_us
        )
    });
    if let Some(limited) = calibrating.limited.clone() {
        warn(said, limited);
    }
    calibrating.held_pulse_us = Some(sent.pulse_us);
    link.push(LinkAction::HoldChannel(ChannelPulse {
        channel: joint,
        pulse_us: sent.pulse_us,
        limp_fill: fill,
    }));
}

fn record(calibrating: &mut Calibrating, scene: &Scene, said: &mut Vec<Message>) {
    let Some(pulse_us) = calibrating.held_pulse_us else {
        warn(said, "hold the joint at a pulse before recording a point");
        return;
    };
    let text = calibrating.typed.trim();
    let number = text
        .trim_end_matches(['°', ' '])
        .trim_end_matches("mm")
        .trim();
    match number.parse::<f64>() {
        Ok(position) if position.is_finite() => {
            calibrating
                .points
                .push(MeasuredPosition { pulse_us, position });
            calibrating.typed.clear();
            refit(calibrating, scene);
        }
        _ => {
            let message = format!("the position read, \"{text}\", is not a number");
            warn(said, message);
        }
    }
}

/// Fits the recorded points again (two or more).
fn refit(calibrating: &mut Calibrating, scene: &Scene) {
    let joint = calibrating.joint;
    let Some(&kind) = scene.arm.shape.joint_kinds().get(joint) else {
        calibrating.fit = None;
        return;
    };
    if calibrating.points.len() < 2 {
        calibrating.fit = None;
        return;
    }
    let readings = readings_of(&calibrating.points, kind);
    calibrating.fit =
        Some(fit_calibration(&readings, &fit_options(kind)).map_err(|error| error.to_string()));
}

/// The recorded points as the fit takes them: positions in rad or m.
fn readings_of(points: &[MeasuredPosition], kind: JointKindDoc) -> Vec<CalibrationReading> {
    let to_si = si_per_file_unit(kind);
    points
        .iter()
        .map(|point| CalibrationReading {
            pulse_us: point.pulse_us,
            position: point.position * to_si,
        })
        .collect()
}

fn tick(
    calibrating: &mut Calibrating,
    around: &ArmContext<'_>,
    now_s: f64,
    said: &mut Vec<Message>,
    link: &mut Vec<LinkAction>,
) {
    let DeadbandSearch::Stepping {
        leg,
        from_us,
        next_step_s,
        ..
    } = calibrating.deadband.clone()
    else {
        return;
    };
    if around.stop_latched() {
        calibrating.deadband = DeadbandSearch::Idle;
        warn(said, "deadband search ended by the emergency stop");
        return;
    }
    let Some(due) = next_step_s else {
        set_next_step(calibrating, now_s + DEADBAND_STEP_S);
        return;
    };
    if now_s < due {
        return;
    }
    let Some(held) = calibrating.held_pulse_us else {
        calibrating.deadband = DeadbandSearch::Idle;
        return;
    };
    if (held - from_us).abs() >= DEADBAND_SEARCH_LIMIT_US {
        calibrating.deadband = DeadbandSearch::Idle;
        warn(
            said,
            format!(
                "no movement seen within {DEADBAND_SEARCH_LIMIT_US:.0} µs: deadband search ended \
                 (is the servo powered?)"
            ),
        );
        return;
    }
    let asked = link.len();
    send(calibrating, around, held + leg.step_us(), said, link);
    if link.len() == asked {
        // Refused (no device, a stop latched): the reason is said; the search ends.
        calibrating.deadband = DeadbandSearch::Idle;
        return;
    }
    if calibrating.limited.is_some() {
        calibrating.deadband = DeadbandSearch::Idle;
        warn(
            said,
            "the deadband search reached the end of the safe range: step away from it and start \
             again",
        );
        return;
    }
    set_next_step(calibrating, now_s + DEADBAND_STEP_S);
}

fn set_next_step(calibrating: &mut Calibrating, at_s: f64) {
    if let DeadbandSearch::Stepping { next_step_s, .. } = &mut calibrating.deadband {
        *next_step_s = Some(at_s);
    }
}

fn moved(calibrating: &mut Calibrating) {
    let DeadbandSearch::Stepping {
        leg,
        from_us,
        mut widths_us,
        ..
    } = calibrating.deadband.clone()
    else {
        return;
    };
    let Some(at) = calibrating.held_pulse_us else {
        return;
    };
    let next_leg = match leg {
        SearchLeg::TakeUp => SearchLeg::Down,
        SearchLeg::Down => {
            widths_us.push((at - from_us).abs());
            SearchLeg::Up
        }
        SearchLeg::Up => {
            widths_us.push((at - from_us).abs());
            let widths_us = [widths_us[0], widths_us[widths_us.len() - 1]];
            let proposed_us = 0.5 * (widths_us[0] + widths_us[1]);
            calibrating.deadband = DeadbandSearch::Found {
                widths_us,
                proposed_us,
            };
            return;
        }
    };
    calibrating.deadband = DeadbandSearch::Stepping {
        leg: next_leg,
        from_us: at,
        next_step_s: None,
        widths_us,
    };
}

/// The scene with the fit's straight line, its uncertainty (the line's residual standard error,
/// as `armwright calibrate --write` records it; none from two points) and the deadband found,
/// if any, in the joint, after checking the scene with it; `None` (and why, in `said`) when
/// there is nothing to apply or the scene would not be valid.
fn apply_fit(
    calibrating: &Calibrating,
    around: &ArmContext<'_>,
    said: &mut Vec<Message>,
) -> Option<AppliedFit> {
    let joint = calibrating.joint;
    let Some(Ok(fit)) = &calibrating.fit else {
        warn(said, "record at least two points that fit before applying");
        return None;
    };
    let &kind = around.scene.arm.shape.joint_kinds().get(joint)?;
    let mut scene = around.scene.clone();
    let doc = &mut scene.arm.joints[joint];
    doc.calibration.points = fitted_points(fit, kind);
    let uncertainty = fitted_uncertainty(fit, &readings_of(&calibrating.points, kind), kind);
    doc.calibration.uncertainty = uncertainty;
    let deadband = match calibrating.deadband {
        DeadbandSearch::Found { proposed_us, .. } => Some((proposed_us * 100.0).round() / 100.0),
        _ => None,
    };
    if let Some(deadband_us) = deadband {
        doc.servo.deadband_us = deadband_us;
    }
    let problems = validate(&scene);
    if let Some(first) = problems.first() {
        said.push(Message::new(
            Level::Error,
            format!("the fitted calibration makes the scene invalid, nothing applied: {first}"),
        ));
        return None;
    }
    let (per, unit) = match kind {
        JointKindDoc::Revolute => ("degree", "°"),
        JointKindDoc::Prismatic => ("mm", " mm"),
    };
    let mut message = format!(
        "applied the calibration of {}: {:.3} µs per {per}, {:.1} µs at 0",
        around.joint_label(joint),
        fit.pulse_per_position_us() * si_per_file_unit(kind),
        fit.pulse_at_zero_us()
    );
    if let Some(uncertainty) = uncertainty {
        message.push_str(&format!(", uncertainty {uncertainty}{unit}"));
    }
    if let Some(deadband_us) = deadband {
        message.push_str(&format!(", deadband {deadband_us} µs"));
    }
    message.push_str(" (one undo step)");
    Some(AppliedFit { scene, message })
}

#[cfg(test)]
mod tests {
    use armwright_kinematics::Arm;

    use super::*;
    use crate::editor::estop::{StopSource, StopState};
    use crate::editor::sample::sample_scene;
    use crate::scene::build_arm;

    /// The editor around the panel: the caution not yet acknowledged, no stop latched.
    fn around<'a>(scene: &'a Scene, arm: Option<&'a Arm>, pose: &'a [f64]) -> ArmContext<'a> {
        ArmContext {
            scene,
            arm,
            pose,
            gripper: GripperState::Open,
            input_pose: None,
            caution_acknowledged: false,
            stop: StopState::Clear,
        }
    }

    #[test]
    fn a_position_that_is_not_a_number_is_refused_and_named() {
        let scene = sample_scene();
        let mut calibrating = Calibrating {
            held_pulse_us: Some(1500.0),
            typed: "twelve".into(),
            ..Calibrating::default()
        };
        let mut said = Vec::new();
        record(&mut calibrating, &scene, &mut said);
        assert!(calibrating.points.is_empty());
        let said = &said.last().expect("a message").text;
        assert!(said.contains("\"twelve\""), "{said}");
    }

    #[test]
    fn the_search_proposes_the_mean_of_its_two_reversals() {
        let scene = sample_scene();
        let around = around(&scene, None, &[]);
        let mut calibrating = Calibrating {
            held_pulse_us: Some(1500.0),
            ..Calibrating::default()
        };
        let (mut said, mut link) = (Vec::new(), Vec::new());
        let command = CalibrationCommand::StartDeadband;
        let _ = apply(&mut calibrating, &around, command, &mut said, &mut link);
        // Moved after 2 µs up, then 5 µs down, then 6 µs up.
        for (steps, leg_step) in [(2, 1.0), (5, -1.0), (6, 1.0)] {
            for _ in 0..steps {
                let held = calibrating.held_pulse_us.expect("held");
                calibrating.held_pulse_us = Some(held + leg_step);
            }
            let command = CalibrationCommand::Moved;
            let _ = apply(&mut calibrating, &around, command, &mut said, &mut link);
        }
        assert_eq!(
            calibrating.deadband,
            DeadbandSearch::Found {
                widths_us: [5.0, 6.0],
                proposed_us: 5.5
            }
        );
        assert!(said.is_empty() && link.is_empty());
    }

    #[test]
    fn no_pulse_is_sent_without_a_device_the_caution_or_with_the_stop_latched() {
        let scene = sample_scene();
        let arm = build_arm(&scene.arm).expect("the sample's arm");
        let pose = arm.home_pose();
        let mut around = around(&scene, Some(&arm), &pose);
        let mut calibrating = Calibrating::default();
        let (mut said, mut link) = (Vec::new(), Vec::new());
        let hold = CalibrationCommand::HoldAtPose;
        let _ = apply(
            &mut calibrating,
            &around,
            hold.clone(),
            &mut said,
            &mut link,
        );
        assert!(link.is_empty());
        calibrating.device = Some(DeviceInfo {
            protocol_version: 2,
            firmware: armwright_link::FirmwareVersion::default(),
            channel_count: 7,
            pulse_unit_ns: 1000,
            min_pulse_units: 500,
            max_pulse_units: 2500,
            frame_period_us: 20000,
        });
        let _ = apply(
            &mut calibrating,
            &around,
            hold.clone(),
            &mut said,
            &mut link,
        );
        assert!(link.is_empty(), "the caution comes first");
        around.caution_acknowledged = true;
        around.stop = StopState::Latched {
            source: StopSource::Key,
            frame: 1,
        };
        let _ = apply(
            &mut calibrating,
            &around,
            hold.clone(),
            &mut said,
            &mut link,
        );
        assert!(link.is_empty(), "not while stopped");
        around.stop = StopState::Clear;
        let _ = apply(&mut calibrating, &around, hold, &mut said, &mut link);
        assert_eq!(link.len(), 1);
        // Stepping far past the servo's range is held at its end, and said.
        let step = CalibrationCommand::Step(5000.0);
        let _ = apply(&mut calibrating, &around, step, &mut said, &mut link);
        let (_, high) = calibrating.safe_range_us(&scene).expect("a range");
        let servo_max = f64::from(scene.arm.joints[0].calibration.pulse_max_us);
        assert_eq!(high, servo_max.min(2500.0));
        assert_eq!(calibrating.held_pulse_us, Some(high));
        assert!(calibrating.limited.is_some());
        assert!(said.last().is_some_and(|m| m.text.contains("safe range")));
    }
}
