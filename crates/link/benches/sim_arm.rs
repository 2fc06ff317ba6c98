//! One pulse frame of the simulated device moving an arm's servo model (gravity and inertia at
//! the actual pose, then 20 Runge–Kutta steps per joint): the cost the device adds to the
//! link's thread 50 times a second. Fixed inputs.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

use std::hint::black_box;
use std::time::Duration;

use armwright_test_support::invented_arm;

use armwright_kinematics::{Arm, MassProperties};
use armwright_link::{HostLine, HostMessage, SimDevice, SimDeviceConfig, arm_setpoint};
use armwright_trajectory::ServoModelOptions;
use criterion::{Criterion, criterion_group, criterion_main};

use invented_arm::InventedArm;

/// The invented five-joint arm with a gripper and a payload.
fn arm() -> Arm {
    InventedArm {
        joints: &["base", "shoulder", "elbow", "wrist", "roll"],
        tool_mass: MassProperties::zero(),
        payload_mass: 0.02,
        gripper: true,
    }
    .build()
}

fn sim_arm(c: &mut Criterion) {
    let arm = arm();
    let mut device = SimDevice::new(SimDeviceConfig::default())
        .with_arm(arm.clone(), &ServoModelOptions::default(), &[0.0; 5])
        .expect("the arm fits");
    let setpoint =
        arm_setpoint(&arm, &[0.4, 0.6, -0.5, 0.3, 0.2], Some(1.0), &device.info()).expect("fits");
    let line = HostLine {
        seq: 0,
        message: HostMessage::Setpoint(setpoint.values),
    }
    .encode();
    device.receive(line.as_bytes(), Duration::ZERO);
    let frame = Duration::from_millis(20);
    let mut now = Duration::ZERO;
    let mut out = Vec::new();
    c.bench_function("sim_device_frame_5_joint_arm", |b| {
        b.iter(|| {
            now += frame;
            device.advance(black_box(now));
            device.take_output(&mut out);
            out.clear();
        })
    });
    black_box(device.arm_positions());
}

criterion_group!(benches, sim_arm);
criterion_main!(benches);
