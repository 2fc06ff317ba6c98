//! A plan's samples as device setpoints: one per sample, each joint through the pulse rule, the
//! gripper channel following each sample's gripper state, clamps counted, a bad sample named.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

mod common;

use armwright_kinematics::MassProperties;
use armwright_link::{
    PulseError, SetpointError, SimDevice, SimDeviceConfig, device_setpoints, joint_pulse,
};
use armwright_trajectory::{
    LimitSettings, ProfileShape, Sample, ServoModelOptions, Task, TaskWaypoint, plan_task,
};

use armwright_test_support::invented_arm::{InventedArm, calibration};

fn arm() -> armwright_kinematics::Arm {
    InventedArm {
        joints: &["base", "shoulder", "elbow", "wrist"],
        tool_mass: MassProperties::point(0.03, nalgebra::Vector3::zeros()),
        payload_mass: 0.02,
        gripper: true,
    }
    .build()
}

fn waypoint(positions: [f64; 4], gripper_closed: bool) -> TaskWaypoint {
    TaskWaypoint {
        positions: positions.to_vec(),
        stop: true,
        dwell: 0.1,
        speed_share: 1.0,
        gripper_closed,
        straight: false,
        shape: ProfileShape::Trapezoid,
    }
}

#[test]
fn every_sample_becomes_one_setpoint_with_its_gripper_state() {
    let arm = arm();
    let task = Task {
        waypoints: vec![
            waypoint([0.0, 0.2, -0.4, 0.0], false),
            waypoint([0.5, 0.6, -0.9, 0.2], true),
            waypoint([-0.3, 0.3, -0.5, 0.1], false),
        ],
        limits: LimitSettings::default(),
        model: ServoModelOptions::default(),
        shaping: None,
    };
    let plan = plan_task(&arm, &task).expect("plannable");
    let device = SimDevice::new(SimDeviceConfig::default()).info();
    let samples: Vec<Sample> = plan.sampler(100.0).expect("in range").collect();
    let converted = device_setpoints(&arm, samples.clone(), &device).expect("fits");
    assert_eq!(converted.values.len(), samples.len());
    assert_eq!(converted.clamped, 0);
    // Whole µs on a 0.18°/µs line: at most half a µs, 0.09°, of rounding.
    assert!(converted.worst_rounding_deg <= 0.09 + 1e-9);
    let last = usize::from(device.channel_count) - 1;
    let mut closed_seen = 0;
    for (sample, values) in samples.iter().zip(&converted.values) {
        let channels = values.as_slice();
        for (joint, &position) in sample.positions.iter().enumerate() {
            let expected = joint_pulse(&calibration(), position, &device).expect("finite");
            assert_eq!(
                channels[joint], expected.units,
                "joint {joint} at {} s",
                sample.time
            );
        }
        let gripper_us = if sample.gripper_closed { 1800 } else { 1200 };
        assert_eq!(channels[last], gripper_us, "at {} s", sample.time);
        closed_seen += usize::from(sample.gripper_closed);
    }
    assert!(closed_seen > 0 && closed_seen < samples.len());
}

fn sample(index: usize, positions: [f64; 4]) -> Sample {
    Sample {
        time: index as f64 * 0.01,
        positions: positions.to_vec(),
        gripper_closed: false,
    }
}

#[test]
fn a_pulse_beyond_the_servo_range_is_clamped_and_counted() {
    let arm = arm();
    let device = SimDevice::new(SimDeviceConfig::default()).info();
    // 2.0 rad (114.6°) asks for 1500 + 114.59 × 1000/180 = 2136.6 µs, beyond the 2100 µs end;
    // −2.0 rad asks for 863.4 µs, below the 900 µs end.
    let samples = vec![
        sample(0, [0.0; 4]),
        sample(1, [2.0, 0.0, 0.0, 0.0]),
        sample(2, [0.0, -2.0, 0.0, 0.0]),
    ];
    let converted = device_setpoints(&arm, samples, &device).expect("fits");
    assert_eq!(converted.clamped, 2);
    assert_eq!(converted.values[1].as_slice()[0], 2100);
    assert_eq!(converted.values[2].as_slice()[1], 900);
}

#[test]
fn a_sample_that_does_not_fit_is_named_by_index_and_time() {
    let arm = arm();
    let device = SimDevice::new(SimDeviceConfig::default()).info();
    let samples = vec![
        sample(0, [0.0; 4]),
        sample(1, [0.0; 4]),
        sample(2, [0.0, f64::NAN, 0.0, 0.0]),
    ];
    let error = device_setpoints(&arm, samples, &device).expect_err("a NaN");
    assert_eq!(error.index, 2);
    assert!(matches!(
        error.problem,
        PulseError::NotFinite { joint: 1, .. }
    ));
    assert!(
        error
            .to_string()
            .starts_with("setpoint 2 (at 0.020 s): joint 1 position"),
        "{error}"
    );
    let short: SetpointError = device_setpoints(
        &arm,
        vec![Sample {
            time: 0.0,
            positions: vec![0.0; 3],
            gripper_closed: true,
        }],
        &device,
    )
    .expect_err("three positions for four joints");
    assert_eq!(
        short.problem,
        PulseError::WrongJointCount {
            expected: 4,
            got: 3
        }
    );
}
