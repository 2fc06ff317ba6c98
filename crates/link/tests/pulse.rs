//! Joint position → pulse width: rounding to the device's unit, the error it leaves in
//! degrees, clamping to the servo's and the device's range, and whole-arm setpoints.
//!
//! Reference values are worked by hand from the calibration line
//! pulse = pulse_a + (position − position_a) × slope; the 1000–2000 µs over −90°..+90°
//! calibration is common practice for hobby servos (0.18° per µs).
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

mod common;

use armwright_kinematics::{Arm, Gripper, MassProperties};
use armwright_link::{
    DeviceInfo, FirmwareVersion, PulseError, arm_setpoint, gripper_pulse, joint_pulse,
};
use proptest::prelude::*;

use armwright_test_support::invented_arm::{InventedArm, calibration};

fn device(unit_ns: u16, min_us: f64, max_us: f64, channels: u8) -> DeviceInfo {
    let per_us = 1000.0 / f64::from(unit_ns);
    DeviceInfo {
        protocol_version: 1,
        firmware: FirmwareVersion::default(),
        channel_count: channels,
        pulse_unit_ns: unit_ns,
        min_pulse_units: (min_us * per_us) as u16,
        max_pulse_units: (max_us * per_us) as u16,
        frame_period_us: 20_000,
    }
}

#[test]
fn rounding_to_1_us_leaves_a_known_error_in_degrees() {
    // 0.3° → 1500 + 0.3 / 0.18 = 1501.667 µs → 1502 µs; 0.333 µs × 0.18°/µs = +0.06°.
    let pulse = joint_pulse(
        &calibration(),
        0.3_f64.to_radians(),
        &device(1000, 500.0, 2500.0, 7),
    )
    .expect("finite");
    assert_eq!(pulse.units, 1502);
    assert_eq!(pulse.pulse_us, 1502.0);
    assert!(
        (pulse.position_error_deg() - 0.06).abs() < 1e-9,
        "{pulse:?}"
    );
    assert!(!pulse.clamped);
}

#[test]
fn half_microsecond_units_halve_the_step() {
    // 1501.667 µs → 3003 units of 0.5 µs = 1501.5 µs; −0.1667 µs × 0.18°/µs = −0.03°.
    let pulse = joint_pulse(
        &calibration(),
        0.3_f64.to_radians(),
        &device(500, 500.0, 2500.0, 7),
    )
    .expect("finite");
    assert_eq!(pulse.units, 3003);
    assert!(
        (pulse.position_error_deg() + 0.03).abs() < 1e-9,
        "{pulse:?}"
    );
}

#[test]
fn beyond_the_servo_range_is_clamped_and_the_error_says_how_far() {
    // 110° → 2111.1 µs, past the servo's 2100 µs; 2100 µs stands for 108°: error −2°.
    let pulse = joint_pulse(
        &calibration(),
        110_f64.to_radians(),
        &device(1000, 500.0, 2500.0, 7),
    )
    .expect("finite");
    assert!(pulse.clamped);
    assert_eq!(pulse.units, 2100);
    assert!((pulse.position_error_deg() + 2.0).abs() < 1e-9, "{pulse:?}");
}

#[test]
fn a_narrower_device_range_wins() {
    // 95° → 2027.8 µs; this device stops at 2000 µs = 90°: error −5°.
    let pulse = joint_pulse(
        &calibration(),
        95_f64.to_radians(),
        &device(1000, 1000.0, 2000.0, 7),
    )
    .expect("finite");
    assert!(pulse.clamped);
    assert_eq!(pulse.units, 2000);
    assert!((pulse.position_error_deg() + 5.0).abs() < 1e-9);
}

#[test]
fn a_falling_calibration_maps_the_other_way() {
    let mut falling = calibration();
    falling.pulse_a_us = 2000.0;
    falling.pulse_b_us = 1000.0;
    // 45° → 2000 − (45 + 90) / 0.18 = 1250 µs.
    let pulse = joint_pulse(
        &falling,
        45_f64.to_radians(),
        &device(1000, 500.0, 2500.0, 7),
    )
    .expect("finite");
    assert_eq!(pulse.units, 1250);
    assert!(pulse.position_error.abs() < 1e-12);
}

#[test]
fn non_finite_positions_are_refused() {
    let result = joint_pulse(&calibration(), f64::NAN, &device(1000, 500.0, 2500.0, 7));
    assert!(matches!(result, Err(PulseError::NotFinite { .. })));
}

#[test]
fn gripper_share_maps_between_open_and_closed() {
    let gripper = Gripper {
        open_pulse_us: 1200.0,
        closed_pulse_us: 1800.0,
    };
    // A quarter closed: 1200 + 0.25 × 600 = 1350 µs.
    let pulse = gripper_pulse(&gripper, 0.25, &device(500, 500.0, 2500.0, 7)).expect("finite");
    assert_eq!(pulse.units, 2700);
    assert!(!pulse.clamped);
    // Past closed is clamped to closed.
    let pulse = gripper_pulse(&gripper, 1.5, &device(500, 500.0, 2500.0, 7)).expect("finite");
    assert!(pulse.clamped);
    assert_eq!(pulse.pulse_us, 1800.0);
}

proptest! {
    #[test]
    fn unclamped_rounding_error_is_at_most_half_a_unit(
        degrees in -100.0f64..100.0,
        unit_ns in prop_oneof![Just(1000u16), Just(500u16), Just(250u16)],
    ) {
        let device = device(unit_ns, 500.0, 2500.0, 7);
        let calibration = calibration();
        let pulse = joint_pulse(&calibration, degrees.to_radians(), &device).expect("finite");
        let half_unit_us = f64::from(unit_ns) / 2000.0;
        let error_us = pulse.pulse_us - calibration.pulse_us(degrees.to_radians());
        prop_assert!(pulse.pulse_us >= 900.0 && pulse.pulse_us <= 2100.0);
        if !pulse.clamped {
            prop_assert!(error_us.abs() <= half_unit_us + 1e-9);
            // In degrees: 0.18° per µs on this calibration.
            prop_assert!((pulse.position_error_deg() - error_us * 0.18).abs() < 1e-9);
        }
    }
}

fn arm(gripper: bool) -> Arm {
    InventedArm {
        joints: &["base", "shoulder", "elbow", "wrist"],
        tool_mass: MassProperties::zero(),
        payload_mass: 0.0,
        gripper,
    }
    .build()
}

#[test]
fn arm_setpoint_puts_joints_first_and_the_gripper_last() {
    let arm = arm(true);
    let device = device(500, 500.0, 2500.0, 7);
    let pose = [
        0.0,
        0.3_f64.to_radians(),
        -45_f64.to_radians(),
        110_f64.to_radians(),
    ];
    let setpoint = arm_setpoint(&arm, &pose, Some(1.0), &device).expect("fits");
    // 0° → 1500 µs; 0.3° → 1501.667 → 1501.5 µs; −45° → 1250 µs; 110° → 2111.1 µs, clamped
    // to the servo's 2100 µs; unused channels 4 and 5 at the middle of 500–2500 µs; the
    // gripper closed → 1800 µs. All in 0.5 µs units.
    assert_eq!(
        setpoint.values.as_slice(),
        [3000, 3003, 2500, 4200, 3000, 3000, 3600]
    );
    assert!(setpoint.any_clamped());
    // 2100 µs stands for 108°, 2° short of the 110° asked for.
    let wrist = setpoint.joints[3].expect("wrist");
    assert!((wrist.position_error_deg() + 2.0).abs() < 1e-9, "{wrist:?}");
    assert!((setpoint.worst_error_deg(&arm) - 2.0).abs() < 1e-9);
    assert_eq!(setpoint.gripper.map(|g| g.pulse_us), Some(1800.0));
}

#[test]
fn arm_setpoint_checks_counts() {
    let arm = arm(true);
    assert_eq!(
        arm_setpoint(&arm, &[0.0; 3], None, &device(1000, 500.0, 2500.0, 7)),
        Err(PulseError::WrongJointCount {
            expected: 4,
            got: 3
        })
    );
    assert_eq!(
        arm_setpoint(&arm, &[0.0; 4], None, &device(1000, 500.0, 2500.0, 4)),
        Err(PulseError::TooFewChannels {
            needed: 5,
            available: 4
        })
    );
    assert!(matches!(
        arm_setpoint(
            &arm,
            &[0.0, f64::INFINITY, 0.0, 0.0],
            None,
            &device(1000, 500.0, 2500.0, 7)
        ),
        Err(PulseError::NotFinite { joint: 1, .. })
    ));
}
