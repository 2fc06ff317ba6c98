//! Guided calibration of one joint on the connected device, apart from drawing: the pulse this
//! tool holds on the joint's channel, the positions a person read at each pulse, their fit
//! (`fit_calibration`, as `armwright calibrate` fits), the deadband search, and Apply, which
//! writes the fitted calibration and the deadband into the scene as one undo step.
//!
//! Pulses go out through the device link's worker ([`LinkAction::HoldChannel`]): the joint's
//! channel at the held width, every other channel at what the device reports it sends.

use armwright_kinematics::{CalibrationFit, CalibrationReading, fit_calibration, sent_pulse};
use armwright_link::{DeviceInfo, arm_setpoint};

use super::command::{Outside, edit};
use super::device::{ChannelPulse, LinkAction};
use super::state::{EditorState, Level, StopState};
use crate::cli::calibrate::{
    DEADBAND_SEARCH_LIMIT_US, fit_options, fitted_points, fitted_uncertainty, si_per_file_unit,
};
use crate::scene::{GripperState, JointKindDoc, validate};

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
    pub fn safe_range_us(&self, state: &EditorState) -> Option<(f64, f64)> {
        let calibration = &state.scene.arm.joints.get(self.joint)?.calibration;
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

/// Applies one calibration command.
pub(crate) fn apply(
    state: &mut EditorState,
    command: CalibrationCommand,
    outside: &mut Vec<Outside>,
) {
    match command {
        CalibrationCommand::ChooseJoint(joint) => {
            if joint < state.joint_count() && joint != state.calibration.joint {
                let device = state.calibration.device;
                state.calibration = Calibrating {
                    joint,
                    device,
                    ..Calibrating::default()
                };
            }
        }
        CalibrationCommand::HoldAtPose => {
            let joint = state.calibration.joint;
            let wanted = state
                .arm()
                .and_then(|arm| arm.joints().get(joint))
                .zip(state.pose.get(joint))
                .map(|(spec, &position)| spec.calibration.pulse_us(position));
            match wanted {
                Some(wanted) => send(state, wanted, outside),
                None => state.say(Level::Warning, "the arm cannot be built: nothing to hold"),
            }
        }
        CalibrationCommand::Step(step_us) => match state.calibration.held_pulse_us {
            Some(held) => send(state, held + step_us, outside),
            None => state.say(
                Level::Warning,
                "hold the joint first: its pulse is not known until this tool sends one",
            ),
        },
        CalibrationCommand::TypePosition(text) => state.calibration.typed = text,
        CalibrationCommand::Record => record(state),
        CalibrationCommand::Remove(index) => {
            if index < state.calibration.points.len() {
                state.calibration.points.remove(index);
                refit(state);
            }
        }
        CalibrationCommand::StartDeadband => match state.calibration.held_pulse_us {
            Some(held) => {
                state.calibration.deadband = DeadbandSearch::Stepping {
                    leg: SearchLeg::TakeUp,
                    from_us: held,
                    next_step_s: None,
                    widths_us: Vec::new(),
                };
            }
            None => state.say(
                Level::Warning,
                "hold the joint first, then look for the deadband",
            ),
        },
        CalibrationCommand::Moved => moved(state),
        CalibrationCommand::CancelDeadband => state.calibration.deadband = DeadbandSearch::Idle,
        CalibrationCommand::Tick(now_s) => tick(state, now_s, outside),
        CalibrationCommand::Apply => apply_fit(state),
    }
}

/// Sends `wanted_us` on the joint's channel through the pulse rule (the device's unit, the
/// servo's safe range), unless hardware may not move now.
fn send(state: &mut EditorState, wanted_us: f64, outside: &mut Vec<Outside>) {
    let Some(device) = state.calibration.device else {
        state.say(Level::Warning, "connect a device first (the Link tab)");
        return;
    };
    if !state.caution_acknowledged {
        state.say(
            Level::Warning,
            "read and acknowledge the caution before the first pulse is sent",
        );
        return;
    }
    if matches!(state.stop, StopState::Latched { .. }) {
        state.say(
            Level::Warning,
            "the emergency stop is latched: check the arm and reset the stop first",
        );
        return;
    }
    let joint = state.calibration.joint;
    let Some((low, high)) = state.calibration.safe_range_us(state) else {
        state.say(
            Level::Error,
            "the servo's pulse range and the device's do not overlap: nothing sent",
        );
        return;
    };
    let Some(arm) = state.arm() else {
        state.say(Level::Warning, "the arm cannot be built: nothing sent");
        return;
    };
    let gripper = match state.gripper {
        GripperState::Open => 0.0,
        GripperState::Closed => 1.0,
    };
    let fill = match arm_setpoint(arm, &state.pose, Some(gripper), &device) {
        Ok(setpoint) => setpoint.values,
        Err(error) => {
            state.say(Level::Error, format!("cannot send the pulse: {error}"));
            return;
        }
    };
    let sent = sent_pulse(wanted_us, device.us_from_units(1), low, high);
    state.calibration.limited = sent.clamped.then(|| {
        format!(
            "{wanted_us:.1} µs is outside the servo's safe range {low:.0}–{high:.0} µs (its \
             calibration's pulse_min_us and pulse_max_us, within the device's): held at {:.1} µs",
            sent.pulse_us
        )
    });
    if let Some(limited) = state.calibration.limited.clone() {
        state.say(Level::Warning, limited);
    }
    state.calibration.held_pulse_us = Some(sent.pulse_us);
    outside.push(Outside::Link(LinkAction::HoldChannel(ChannelPulse {
        channel: joint,
        pulse_us: sent.pulse_us,
        limp_fill: fill,
    })));
}

fn record(state: &mut EditorState) {
    let Some(pulse_us) = state.calibration.held_pulse_us else {
        state.say(
            Level::Warning,
            "hold the joint at a pulse before recording a point",
        );
        return;
    };
    let text = state.calibration.typed.trim();
    let number = text
        .trim_end_matches(['°', ' '])
        .trim_end_matches("mm")
        .trim();
    match number.parse::<f64>() {
        Ok(position) if position.is_finite() => {
            state
                .calibration
                .points
                .push(MeasuredPosition { pulse_us, position });
            state.calibration.typed.clear();
            refit(state);
        }
        _ => {
            let message = format!("the position read, \"{text}\", is not a number");
            state.say(Level::Warning, message);
        }
    }
}

/// Fits the recorded points again (two or more).
fn refit(state: &mut EditorState) {
    let joint = state.calibration.joint;
    let Some(&kind) = state.scene.arm.shape.joint_kinds().get(joint) else {
        state.calibration.fit = None;
        return;
    };
    if state.calibration.points.len() < 2 {
        state.calibration.fit = None;
        return;
    }
    let readings = readings_of(&state.calibration.points, kind);
    state.calibration.fit =
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

fn tick(state: &mut EditorState, now_s: f64, outside: &mut Vec<Outside>) {
    let DeadbandSearch::Stepping {
        leg,
        from_us,
        next_step_s,
        ..
    } = state.calibration.deadband.clone()
    else {
        return;
    };
    if matches!(state.stop, StopState::Latched { .. }) {
        state.calibration.deadband = DeadbandSearch::Idle;
        state.say(
            Level::Warning,
            "deadband search ended by the emergency stop",
        );
        return;
    }
    let Some(due) = next_step_s else {
        set_next_step(state, now_s + DEADBAND_STEP_S);
        return;
    };
    if now_s < due {
        return;
    }
    let Some(held) = state.calibration.held_pulse_us else {
        state.calibration.deadband = DeadbandSearch::Idle;
        return;
    };
    if (held - from_us).abs() >= DEADBAND_SEARCH_LIMIT_US {
        state.calibration.deadband = DeadbandSearch::Idle;
        state.say(
            Level::Warning,
            format!(
                "no movement seen within {DEADBAND_SEARCH_LIMIT_US:.0} µs: deadband search ended \
                 (is the servo powered?)"
            ),
        );
        return;
    }
    let asked = outside.len();
    send(state, held + leg.step_us(), outside);
    if outside.len() == asked {
        // Refused (no device, a stop latched): the reason is said; the search ends.
        state.calibration.deadband = DeadbandSearch::Idle;
        return;
    }
    if state.calibration.limited.is_some() {
        state.calibration.deadband = DeadbandSearch::Idle;
        state.say(
            Level::Warning,
            "the deadband search reached the end of the safe range: step away from it and start again",
        );
        return;
    }
    set_next_step(state, now_s + DEADBAND_STEP_S);
}

fn set_next_step(state: &mut EditorState, at_s: f64) {
    if let DeadbandSearch::Stepping { next_step_s, .. } = &mut state.calibration.deadband {
        *next_step_s = Some(at_s);
    }
}

fn moved(state: &mut EditorState) {
    let DeadbandSearch::Stepping {
        leg,
        from_us,
        mut widths_us,
        ..
    } = state.calibration.deadband.clone()
    else {
        return;
    };
    let Some(at) = state.calibration.held_pulse_us else {
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
            state.calibration.deadband = DeadbandSearch::Found {
                widths_us,
                proposed_us,
            };
            return;
        }
    };
    state.calibration.deadband = DeadbandSearch::Stepping {
        leg: next_leg,
        from_us: at,
        next_step_s: None,
        widths_us,
    };
}

/// Writes the fit's straight line, its uncertainty (the line's residual standard error, as
/// `armwright calibrate --write` records it; none from two points) and the deadband found, if
/// any, into the scene's joint as one undo step, after checking the scene with it.
fn apply_fit(state: &mut EditorState) {
    let joint = state.calibration.joint;
    let Some(Ok(fit)) = &state.calibration.fit else {
        state.say(
            Level::Warning,
            "record at least two points that fit before applying",
        );
        return;
    };
    let Some(&kind) = state.scene.arm.shape.joint_kinds().get(joint) else {
        return;
    };
    let mut scene = state.scene.clone();
    let doc = &mut scene.arm.joints[joint];
    doc.calibration.points = fitted_points(fit, kind);
    let uncertainty = fitted_uncertainty(fit, &readings_of(&state.calibration.points, kind), kind);
    doc.calibration.uncertainty = uncertainty;
    let deadband = match state.calibration.deadband {
        DeadbandSearch::Found { proposed_us, .. } => Some((proposed_us * 100.0).round() / 100.0),
        _ => None,
    };
    if let Some(deadband_us) = deadband {
        doc.servo.deadband_us = deadband_us;
    }
    let problems = validate(&scene);
    if let Some(first) = problems.first() {
        state.say(
            Level::Error,
            format!("the fitted calibration makes the scene invalid, nothing applied: {first}"),
        );
        return;
    }
    let (per, unit) = match kind {
        JointKindDoc::Revolute => ("degree", "°"),
        JointKindDoc::Prismatic => ("mm", " mm"),
    };
    let mut message = format!(
        "applied the calibration of {}: {:.3} µs per {per}, {:.1} µs at 0",
        state.joint_label(joint),
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
    edit(state, None, |state| state.scene = scene);
    state.arm_changed();
    state.arm_form.arm_replaced(&state.scene);
    state.say(Level::Info, message);
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::editor::sample::sample_scene;

    fn reading(state: &mut EditorState, pulse_us: f64, position: f64) {
        state.calibration.held_pulse_us = Some(pulse_us);
        state.calibration.typed = format!("{position}°");
        record(state);
    }

    #[test]
    fn points_are_fitted_and_applied_as_one_undo_step() {
        let mut state = EditorState::new(sample_scene(), None);
        for (pulse, degrees) in [
            (1200.0, -30.5),
            (1400.0, -10.0),
            (1600.0, 10.5),
            (1800.0, 30.0),
        ] {
            reading(&mut state, pulse, degrees);
        }
        let Some(Ok(fit)) = state.calibration.fit.clone() else {
            panic!("{:?}", state.calibration.fit);
        };
        // Least-squares slope by the closed form (common practice statistics): Sxy / Sxx.
        let xs = [1200.0, 1400.0, 1600.0, 1800.0];
        let ys = [-30.5, -10.0, 10.5, 30.0];
        let (mx, my) = (1500.0, 0.0);
        let sxy: f64 = xs.iter().zip(ys).map(|(x, y)| (x - mx) * (y - my)).sum();
        let sxx: f64 = xs.iter().map(|x| (x - mx) * (x - mx)).sum();
        let per_degree = fit.pulse_per_position_us() * 1f64.to_radians();
        assert!((per_degree - sxx / sxy).abs() < 1e-9, "{per_degree}");
        let before = state.scene.clone();
        state.calibration.deadband = DeadbandSearch::Found {
            widths_us: [5.0, 6.0],
            proposed_us: 5.5,
        };
        apply_fit(&mut state);
        let joint = &state.scene.arm.joints[0];
        assert_eq!(joint.calibration.points[0].pulse_us, 1200);
        assert_eq!(joint.calibration.points[1].pulse_us, 1800);
        assert_eq!(joint.servo.deadband_us, 5.5);
        // The uncertainty is the line's residual standard error √(Σ r² / (n − 2)) (Draper &
        // Smith, Applied Regression Analysis, 3rd ed., §1.4; from memory), r the degrees off
        // the least-squares line, as `armwright calibrate --write` records it.
        let slope = sxy / sxx;
        let squares: f64 = xs
            .iter()
            .zip(ys)
            .map(|(x, y)| (y - my - slope * (x - mx)).powi(2))
            .sum();
        let standard_error = (squares / 2.0).sqrt();
        let recorded = joint.calibration.uncertainty.expect("an uncertainty");
        assert!(
            (recorded - standard_error).abs() <= 0.5e-4,
            "{recorded} vs {standard_error}"
        );
        assert!(
            state
                .messages
                .last()
                .is_some_and(|m| m.text.contains(&format!("uncertainty {recorded}°"))),
            "{:?}",
            state.messages.last()
        );
        assert_ne!(state.scene, before);
        let mut outside = Vec::new();
        let (mut link, _requests) = crate::editor::estop::ChannelStopLink::new();
        crate::editor::command::apply(
            &mut state,
            crate::editor::command::Command::Undo,
            &mut link,
            1,
            &mut outside,
        );
        assert_eq!(state.scene, before);
        assert!(!state.can_undo());
    }

    #[test]
    fn a_position_that_is_not_a_number_is_refused_and_named() {
        let mut state = EditorState::new(sample_scene(), None);
        state.calibration.held_pulse_us = Some(1500.0);
        state.calibration.typed = "twelve".into();
        record(&mut state);
        assert!(state.calibration.points.is_empty());
        let said = &state.messages.last().expect("a message").text;
        assert!(said.contains("\"twelve\""), "{said}");
    }

    #[test]
    fn the_search_proposes_the_mean_of_its_two_reversals() {
        let mut state = EditorState::new(sample_scene(), None);
        state.calibration.held_pulse_us = Some(1500.0);
        let mut outside = Vec::new();
        apply(&mut state, CalibrationCommand::StartDeadband, &mut outside);
        // Moved after 2 µs up, then 5 µs down, then 6 µs up.
        for (steps, leg_step) in [(2, 1.0), (5, -1.0), (6, 1.0)] {
            for _ in 0..steps {
                let held = state.calibration.held_pulse_us.expect("held");
                state.calibration.held_pulse_us = Some(held + leg_step);
            }
            apply(&mut state, CalibrationCommand::Moved, &mut outside);
        }
        assert_eq!(
            state.calibration.deadband,
            DeadbandSearch::Found {
                widths_us: [5.0, 6.0],
                proposed_us: 5.5
            }
        );
    }

    #[test]
    fn no_pulse_is_sent_without_a_device_the_caution_or_with_the_stop_latched() {
        let mut state = EditorState::new(sample_scene(), None);
        let mut outside = Vec::new();
        apply(&mut state, CalibrationCommand::HoldAtPose, &mut outside);
        assert!(outside.is_empty());
        state.calibration.device = Some(DeviceInfo {
            protocol_version: 2,
            firmware: armwright_link::FirmwareVersion::default(),
            channel_count: 7,
            pulse_unit_ns: 1000,
            min_pulse_units: 500,
            max_pulse_units: 2500,
            frame_period_us: 20000,
        });
        apply(&mut state, CalibrationCommand::HoldAtPose, &mut outside);
        assert!(outside.is_empty(), "the caution comes first");
        state.caution_acknowledged = true;
        state.stop = StopState::Latched {
            source: crate::editor::state::StopSource::Key,
            frame: 1,
        };
        apply(&mut state, CalibrationCommand::HoldAtPose, &mut outside);
        assert!(outside.is_empty(), "not while stopped");
        state.stop = StopState::Clear;
        apply(&mut state, CalibrationCommand::HoldAtPose, &mut outside);
        assert_eq!(outside.len(), 1);
        // Stepping far past the servo's range is held at its end, and said.
        apply(&mut state, CalibrationCommand::Step(5000.0), &mut outside);
        let (_, high) = state.calibration.safe_range_us(&state).expect("a range");
        let servo_max = f64::from(state.scene.arm.joints[0].calibration.pulse_max_us);
        assert_eq!(high, servo_max.min(2500.0));
        assert_eq!(state.calibration.held_pulse_us, Some(high));
        assert!(state.calibration.limited.is_some());
    }
}
