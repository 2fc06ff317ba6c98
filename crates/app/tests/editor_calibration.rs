//! The calibration panel against the in-process simulated device: a joint whose calibration
//! and deadband the scene states wrongly is calibrated from four entered points (each the
//! angle the simulated arm really turned to, as a person would read it off the protractor),
//! its deadband is found by the 1 µs search, and Apply writes both into the scene as one undo
//! step.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

mod editor_common;

use std::time::{Duration, Instant};

use armwright::editor::{
    ACKNOWLEDGE_LABEL, ArmField, Command, DeadbandSearch, Editor, JointField, MOVED_LABEL,
};
use armwright_kinematics::FitShape;
use egui::Key;
use egui_kittest::kittest::Queryable;

use editor_common::{EditorHarness, click_tab, connect, device_pulses, sample_editor, step_until};

/// The joint calibrated: the base turns about a vertical axis, so gravity does not bend its
/// readings.
const JOINT: usize = 0;

/// The simulated arm's joint position now, in degrees.
fn true_angle(editor: &Editor) -> f64 {
    let device = editor
        .device()
        .simulated_device()
        .expect("a simulated device");
    let device = device.lock().expect("the device");
    device.arm_positions().expect("an arm")[JOINT].to_degrees()
}

/// Pulse frames the simulated device has run.
fn frames(editor: &Editor) -> u64 {
    let device = editor
        .device()
        .simulated_device()
        .expect("a simulated device");
    device.lock().expect("the device").frames_started()
}

/// Waits (wall clock, at most 10 s, without stepping the window) until the simulated device has
/// run `count` more pulse frames.
fn wait_frames(harness: &EditorHarness, count: u64) {
    let start = frames(harness.state());
    let began = Instant::now();
    while frames(harness.state()) < start + count {
        assert!(
            began.elapsed() < Duration::from_secs(10),
            "the device ran no frames"
        );
        std::thread::sleep(Duration::from_millis(5));
    }
}

/// Steps until the device sends `pulse_us` on the joint's channel, then waits until the joint
/// has stopped (no change over 10 frames); returns where it stopped, in degrees.
fn settle_at(harness: &mut EditorHarness, pulse_us: f64) -> f64 {
    step_until(harness, "the device sending the held pulse", |editor| {
        device_pulses(editor).is_some_and(|pulses| f64::from(pulses[JOINT]) == pulse_us)
    });
    let began = Instant::now();
    let mut last = true_angle(harness.state());
    loop {
        wait_frames(harness, 10);
        let now = true_angle(harness.state());
        if (now - last).abs() < 1e-3 {
            return now;
        }
        assert!(
            began.elapsed() < Duration::from_secs(20),
            "the joint never came to rest"
        );
        last = now;
    }
}

fn held(harness: &EditorHarness) -> f64 {
    harness
        .state()
        .state
        .calibration
        .held_pulse_us
        .expect("a pulse held")
}

fn edit_joint(harness: &mut EditorHarness, field: JointField, text: &str) {
    let ctx = harness.ctx.clone();
    let frame = ctx.cumulative_frame_nr();
    harness.state_mut().apply(
        &ctx,
        Command::EditArmField {
            field: ArmField::Joint {
                joint: JOINT,
                field,
            },
            text: text.into(),
        },
        frame,
    );
    harness
        .state_mut()
        .apply(&ctx, Command::FinishArmField, frame);
    harness.run_steps(2);
}

/// Reads the joint where it rests and records that angle at the held pulse.
fn record_true_angle(harness: &mut EditorHarness) -> (f64, f64) {
    let pulse = held(harness);
    let angle = settle_at(harness, pulse);
    harness.get_by_label("position read").focus();
    harness.run_steps(2);
    harness
        .get_by_label("position read")
        .type_text(&format!("{angle:.3}"));
    harness.run_steps(2);
    harness
        .get_by_label(&format!("Record at {pulse:.1} µs"))
        .click_accesskit();
    harness.run_steps(2);
    (pulse, angle)
}

fn click(harness: &mut EditorHarness, label: &str) {
    harness.get_by_label(label).click_accesskit();
    harness.run_steps(2);
}

#[test]
fn a_joint_is_calibrated_from_four_entered_points_and_applied_as_one_undo_step() {
    let (mut harness, _requests, _dir) = sample_editor("calibration-flow");
    // The real base: no gear play, so what moves is the servo; its true map and deadband are
    // the ones the simulated device is connected with.
    edit_joint(&mut harness, JointField::Backlash, "0");
    let truth = harness.state().state.scene.arm.joints[JOINT].clone();
    let true_deadband_us = truth.servo.deadband_us;
    let [a, b] = truth.calibration.points;
    let true_us_per_degree = f64::from(b.pulse_us) - f64::from(a.pulse_us);
    let true_us_per_degree = true_us_per_degree / (b.position - a.position);
    connect(&mut harness);

    // The scene then states the base wrongly: 11 % too few µs per degree and a deadband of
    // 12 µs.
    let middle = 0.5 * (f64::from(a.pulse_us) + f64::from(b.pulse_us));
    let span = 0.5 * (f64::from(b.pulse_us) - f64::from(a.pulse_us)) * 0.89;
    edit_joint(
        &mut harness,
        JointField::CalibrationPulse(0),
        &format!("{:.0}", middle - span),
    );
    edit_joint(
        &mut harness,
        JointField::CalibrationPulse(1),
        &format!("{:.0}", middle + span),
    );
    edit_joint(&mut harness, JointField::Deadband, "12");
    let stated = harness.state().state.scene.clone();
    assert_ne!(stated.arm.joints[JOINT].calibration, truth.calibration);

    click_tab(&mut harness, "Calibrate");
    // Nothing moves before the caution is acknowledged.
    assert!(harness.state().state.calibration.held_pulse_us.is_none());
    harness.get_by_label(ACKNOWLEDGE_LABEL).click_accesskit();
    harness.run_steps(2);
    harness
        .get_by_label_contains("Hold at the editor's pose")
        .click_accesskit();
    harness.run_steps(2);
    let start = held(&harness);
    settle_at(&mut harness, start);
    // A key steps it too (no field has the keyboard).
    harness.key_press(Key::Equals);
    harness.run_steps(2);
    assert_eq!(held(&harness), start + 1.0);

    // Four points across 650 µs, stepped with the panel's buttons.
    let mut measured = vec![record_true_angle(&mut harness)];
    for steps in [
        ["+50 µs"; 4].as_slice(),
        &["+50 µs"; 4],
        &[
            "+10 µs", "+50 µs", "+50 µs", "+50 µs", "+50 µs", "-10 µs", "+1 µs",
        ],
    ] {
        for label in steps {
            click(&mut harness, label);
        }
        measured.push(record_true_angle(&mut harness));
    }
    let session = &harness.state().state.calibration;
    assert_eq!(session.points.len(), 4);
    let Some(Ok(fit)) = session.fit.clone() else {
        panic!("no fit: {:?}", session.fit);
    };
    assert_eq!(fit.shape, FitShape::Linear);
    // The fit finds the device's true map from the angles read, within the deadband's worth.
    let us_per_degree = fit.pulse_per_position_us() * 1f64.to_radians();
    assert!(
        (us_per_degree - true_us_per_degree).abs() < 0.02 * true_us_per_degree,
        "{us_per_degree} µs per degree, truly {true_us_per_degree}"
    );
    // Residuals in degrees: the servo rests anywhere within its deadband, ± half of it.
    let worst_deg = fit.max_residual().to_degrees();
    let half_band_deg = 0.5 * true_deadband_us / true_us_per_degree;
    assert!(worst_deg <= half_band_deg + 0.05, "{worst_deg}°");
    // The panel shows the residual of each point.
    harness.get_by_label_contains("residuals: rms");

    // The deadband: 1 µs steps until the joint is seen to move (more than 0.05°), three times.
    click(&mut harness, "Find the deadband");
    let mut rest = true_angle(harness.state());
    let mut seen = held(&harness);
    let began = Instant::now();
    while harness.state().state.calibration.searching() {
        assert!(
            began.elapsed() < Duration::from_secs(240),
            "the search never ended: {:?}",
            harness.state().state.calibration.deadband
        );
        harness.step();
        let now = held(&harness);
        if now == seen {
            continue;
        }
        seen = now;
        step_until(&mut harness, "the device sending the step", |editor| {
            device_pulses(editor).is_some_and(|pulses| f64::from(pulses[JOINT]) == now)
        });
        wait_frames(&harness, 15);
        if (true_angle(harness.state()) - rest).abs() > 0.05 {
            harness.get_by_label(MOVED_LABEL).click_accesskit();
            harness.step();
            rest = settle_at(&mut harness, now);
        }
    }
    let DeadbandSearch::Found { proposed_us, .. } = harness.state().state.calibration.deadband
    else {
        panic!("{:?}", harness.state().state.calibration.deadband);
    };
    assert!(
        proposed_us >= true_deadband_us - 1.0 && proposed_us <= true_deadband_us + 3.0,
        "proposed {proposed_us} µs, truly {true_deadband_us} µs"
    );

    eprintln!(
        "fit {us_per_degree:.3} µs/° (truly {true_us_per_degree}), worst residual \
         {worst_deg:.3}°; deadband proposed {proposed_us} µs (truly {true_deadband_us})"
    );
    // Apply: the joint's calibration and deadband change, as one undo step.
    click(&mut harness, "Apply to the scene");
    let applied = harness.state().state.scene.arm.joints[JOINT].clone();
    assert_ne!(applied.calibration, stated.arm.joints[JOINT].calibration);
    let [a, b] = applied.calibration.points;
    let applied_per_degree =
        (f64::from(b.pulse_us) - f64::from(a.pulse_us)) / (b.position - a.position);
    assert!(
        (applied_per_degree - us_per_degree).abs() < 0.01 * us_per_degree,
        "{applied_per_degree}"
    );
    let lowest = measured.iter().map(|m| m.0).fold(f64::INFINITY, f64::min);
    assert_eq!(f64::from(a.pulse_us), lowest);
    assert_eq!(applied.servo.deadband_us, proposed_us);
    assert!(harness.state().state.is_dirty());
    editor_common::undo(&mut harness);
    assert_eq!(harness.state().state.scene, stated);
}
