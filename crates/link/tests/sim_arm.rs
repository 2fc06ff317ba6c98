//! The arm as the simulated device moves it: a held setpoint settles within the band the
//! servo's deadband and gravity load predict, an emergency stop keeps the arm where the last
//! pulses put it, and a release lets it go limp and fall.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

use std::time::Duration;

mod common;

use armwright_kinematics::{Arm, MassProperties, gravity_torques, tool_pose};
use armwright_link::{
    AckOutcome, DeviceLine, DeviceMessage, DeviceMode, HostLine, HostMessage, SimArmError,
    SimDevice, SimDeviceConfig, arm_setpoint,
};
use armwright_trajectory::ServoModelOptions;

use armwright_test_support::invented_arm::InventedArm;

/// The invented four-joint arm with a gripper, a tool and a payload.
fn arm() -> Arm {
    InventedArm {
        joints: &["base", "shoulder", "elbow", "wrist"],
        tool_mass: MassProperties::point(0.03, nalgebra::Vector3::new(0.01, 0.0, 0.0)),
        payload_mass: 0.02,
        gripper: true,
    }
    .build()
}

/// A device driving `arm()` from rest at `start`, with a ms clock.
struct Bench {
    device: SimDevice,
    now_ms: u64,
    seq: u8,
    out: Vec<u8>,
}

impl Bench {
    fn new(start: &[f64]) -> Bench {
        let device = SimDevice::new(SimDeviceConfig::default())
            .with_arm(arm(), &ServoModelOptions::default(), start)
            .expect("the arm fits the device");
        Bench {
            device,
            now_ms: 0,
            seq: 0,
            out: Vec::new(),
        }
    }

    fn send(&mut self, message: HostMessage) {
        let line = HostLine {
            seq: self.seq,
            message,
        }
        .encode();
        self.seq = self.seq.wrapping_add(1);
        self.device
            .receive(line.as_bytes(), Duration::from_millis(self.now_ms));
    }

    fn wait_ms(&mut self, ms: u64) {
        for _ in 0..ms {
            self.now_ms += 1;
            self.device.advance(Duration::from_millis(self.now_ms));
            self.device.take_output(&mut self.out);
        }
    }

    fn pose(&self) -> Vec<f64> {
        self.device.arm_positions().expect("an arm").to_vec()
    }

    /// Sends `pose` (rad) with the gripper open as one setpoint.
    fn send_pose(&mut self, pose: &[f64]) {
        let setpoint =
            arm_setpoint(&arm(), pose, Some(0.0), &self.device.info()).expect("the pose fits");
        self.send(HostMessage::Setpoint(setpoint.values));
    }
}

const TARGET: [f64; 4] = [0.5, 0.7, -0.6, 0.3];

#[test]
fn a_held_setpoint_settles_within_the_band_deadband_and_gravity_predict() {
    let mut bench = Bench::new(&[0.0; 4]);
    bench.send_pose(&TARGET);
    bench.wait_ms(3000);
    let settled = bench.pose();
    bench.wait_ms(500);
    let later = bench.pose();
    let arm = arm();
    let gravity = gravity_torques(&arm, &settled, 0.0).expect("a valid pose");
    for (j, joint) in arm.joints().iter().enumerate() {
        // At rest the servo drives only beyond its deadband, and just enough to hold the
        // gravity effort: |error| = deadband/2 + proportional band × |effort| / stall (the
        // model's own statics, crates/trajectory/src/servo_sim.rs; a deadband servo stopping
        // anywhere inside it: common practice). Half a µs of rounding on the command, and
        // the link sits anywhere within half the backlash of the servo output.
        let servo = &joint.servo;
        let band_us = servo.deadband_us / 2.0
            + servo.proportional_band_us * gravity.as_slice()[j].abs() / servo.stall_torque
            + 0.5;
        let band = band_us / joint.calibration.slope_us().abs() + servo.backlash / 2.0;
        let error = settled[j] - TARGET[j];
        assert!(
            error.abs() <= band + 1e-9,
            "joint {j}: {:.3}° off, band {:.3}°",
            error.to_degrees(),
            band.to_degrees()
        );
        assert!(
            band < 3_f64.to_radians(),
            "a band this narrow tests something"
        );
        assert!(
            (later[j] - settled[j]).abs() < 1e-6,
            "joint {j} still moving"
        );
    }
    // The tool point follows the joints through the forward kinematics.
    let expected = tool_pose(&arm, &settled).expect("valid").translation.vector;
    let point = bench.device.arm_tool_point().expect("an arm");
    assert!((point[0] - expected.x).abs() < 1e-12 && (point[2] - expected.z).abs() < 1e-12);
}

#[test]
fn an_emergency_stop_keeps_the_arm_where_the_last_pulses_put_it() {
    let mut bench = Bench::new(&[0.0; 4]);
    bench.send_pose(&TARGET);
    bench.wait_ms(3000);
    let held = bench.pose();
    bench.send(HostMessage::EmergencyStop);
    bench.wait_ms(5);
    bench.out.clear();
    // A setpoint after the stop is refused, and the arm does not move towards it.
    bench.send_pose(&[0.0, 0.0, 0.0, 0.0]);
    bench.wait_ms(1000);
    assert_eq!(bench.device.mode(), DeviceMode::Stopped);
    let refused = bench
        .out
        .split_inclusive(|&b| b == b'\n')
        .filter_map(|line| DeviceLine::parse(line).ok())
        .any(|line| matches!(line.message, DeviceMessage::Ack(ack) if ack.outcome == AckOutcome::Refused));
    assert!(refused, "the setpoint after the stop is refused");
    for (j, (now, before)) in bench.pose().iter().zip(&held).enumerate() {
        assert!(
            (now - before).abs() < 1e-6,
            "joint {j} moved after the stop"
        );
    }
}

#[test]
fn a_release_lets_the_arm_go_limp_and_fall_under_gravity() {
    let mut bench = Bench::new(&[0.0; 4]);
    bench.send_pose(&TARGET);
    bench.wait_ms(3000);
    let held = bench.pose();
    let arm = arm();
    let gravity = gravity_torques(&arm, &held, 0.0).expect("a valid pose");
    let shoulder_effort = gravity.as_slice()[1];
    assert!(shoulder_effort.abs() > 0.05, "the shoulder carries a load");
    bench.send(HostMessage::Release);
    bench.wait_ms(10_000);
    assert_eq!(bench.device.mode(), DeviceMode::Limp);
    assert_eq!(bench.device.pulse_units(), None);
    let fallen = bench.pose();
    // Unheld, the shoulder turns against the effort that held it, until its end stop.
    let moved = fallen[1] - held[1];
    assert!(
        moved * shoulder_effort.signum() < -10_f64.to_radians(),
        "moved {:.1}°",
        moved.to_degrees()
    );
    // Ten seconds on it hangs nearly still (gear damping, no motor to hold it up).
    bench.wait_ms(1000);
    assert!(
        (bench.pose()[1] - fallen[1]).abs() < 1_f64.to_radians(),
        "still falling"
    );
    // The base turns about a vertical axis: gravity does not move it.
    assert!((fallen[0] - held[0]).abs() < 1e-3);
}

#[test]
fn a_device_without_an_arm_has_no_arm_pose() {
    let mut device = SimDevice::new(SimDeviceConfig::default());
    device.advance(Duration::from_millis(100));
    assert_eq!(device.arm_positions(), None);
    assert_eq!(device.arm_tool_point(), None);
}

#[test]
fn an_arm_needs_a_channel_per_joint_and_one_for_the_gripper() {
    let config = SimDeviceConfig {
        channel_count: 4,
        ..SimDeviceConfig::default()
    };
    let result = SimDevice::new(config).with_arm(arm(), &ServoModelOptions::default(), &[0.0; 4]);
    assert!(matches!(
        result.err(),
        Some(SimArmError::TooFewChannels {
            needed: 5,
            available: 4
        })
    ));
    let result = SimDevice::new(SimDeviceConfig::default()).with_arm(
        arm(),
        &ServoModelOptions::default(),
        &[0.0; 3],
    );
    assert!(matches!(result.err(), Some(SimArmError::Model(_))));
}

#[cfg(unix)]
#[test]
fn the_arm_moves_behind_a_pseudo_terminal_too() {
    use armwright_link::{Link, LinkEvent, SerialTransport, SimPty, StreamOptions};

    let device = SimDevice::new(SimDeviceConfig::default())
        .with_arm(arm(), &ServoModelOptions::default(), &[0.0; 4])
        .expect("the arm fits the device");
    let pty = SimPty::spawn_device(device).expect("a pseudo-terminal");
    let transport = SerialTransport::open(pty.path(), 115_200).expect("opens the pty");
    let link = Link::connect(Box::new(transport), StreamOptions::default()).expect("greets");
    let setpoint = arm_setpoint(&arm(), &TARGET, Some(0.0), &link.device()).expect("fits");
    link.start_stream().expect("streams");
    for _ in 0..30 {
        link.push_setpoint(setpoint.values).expect("queued");
    }
    link.finish_stream().expect("alive");
    let finished = (0..300).any(|_| {
        matches!(
            link.next_event(Duration::from_millis(10)),
            Some(LinkEvent::StreamFinished { .. })
        )
    });
    assert!(finished, "{:?}", link.stats());
    // The device keeps its last pulses (heartbeats keep its watchdog fed) while the arm
    // settles: wait, with a generous deadline, for every joint to come within 3°.
    let shared = pty.device();
    let pose = || {
        shared
            .lock()
            .expect("device")
            .arm_positions()
            .expect("an arm")
            .to_vec()
    };
    let settled = |pose: &[f64]| {
        pose.iter()
            .zip(TARGET)
            .all(|(actual, wanted)| (actual - wanted).abs() < 3_f64.to_radians())
    };
    let until = std::time::Instant::now() + Duration::from_secs(10);
    while !settled(&pose()) {
        let pose = pose();
        assert!(
            std::time::Instant::now() < until,
            "not settled: {:?}° for {:?}°",
            pose.iter().map(|a| a.to_degrees()).collect::<Vec<_>>(),
            TARGET.iter().map(|a| a.to_degrees()).collect::<Vec<_>>()
        );
        std::thread::sleep(Duration::from_millis(10));
    }
    // It settled while driving: nothing tripped or stopped it.
    let status = shared.lock().expect("device").status();
    assert_eq!(
        status.mode,
        armwright_link::DeviceMode::Driving,
        "{status:?}"
    );
    assert_eq!(status.watchdog_trips, 0, "{status:?}");
}
