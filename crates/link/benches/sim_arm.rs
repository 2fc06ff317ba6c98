//! One pulse frame of the simulated device moving an arm's servo model (gravity and inertia at
//! the actual pose, then 20 Runge–Kutta steps per joint): the cost the device adds to the
//! link's thread 50 times a second. Fixed inputs.

use std::f64::consts::FRAC_PI_2;
use std::hint::black_box;
use std::time::Duration;

use armwright_kinematics::{
    Arm, ArmDescription, ArmType, ArticulatedDims, Calibration, Gripper, JointSpec, MassProperties,
    ServoSpec,
};
use armwright_link::{HostLine, HostMessage, SimDevice, SimDeviceConfig, arm_setpoint};
use armwright_trajectory::ServoModelOptions;
use criterion::{Criterion, criterion_group, criterion_main};

/// An invented five-joint articulated arm with a gripper: ±90° per joint on 1000–2000 µs.
fn arm() -> Arm {
    let servo = ServoSpec {
        stall_torque: 1.96,
        no_load_speed: 6.16,
        deadband_us: 4.0,
        proportional_band_us: 40.0,
        backlash: 0.5_f64.to_radians(),
        mass: 0.055,
        mount_offset: nalgebra::Vector3::zeros(),
        drive_ratio: 1.0,
    };
    let joint = |name: &str| JointSpec {
        name: name.to_owned(),
        min: -FRAC_PI_2,
        max: FRAC_PI_2,
        home: 0.0,
        servo: servo.clone(),
        calibration: Calibration {
            position_a: -FRAC_PI_2,
            pulse_a_us: 1000.0,
            position_b: FRAC_PI_2,
            pulse_b_us: 2000.0,
            pulse_min_us: 900.0,
            pulse_max_us: 2100.0,
        },
        link_mass: MassProperties::rod_along_x(0.05, 0.1),
    };
    Arm::new(ArmDescription {
        arm_type: ArmType::Articulated5(ArticulatedDims {
            base_height: 0.08,
            upper_arm: 0.12,
            forearm: 0.12,
            wrist_to_tool: 0.06,
        }),
        joints: ["base", "shoulder", "elbow", "wrist", "roll"]
            .into_iter()
            .map(joint)
            .collect(),
        tool_mass: MassProperties::zero(),
        payload_mass: 0.02,
        gripper: Some(Gripper {
            open_pulse_us: 1200.0,
            closed_pulse_us: 1800.0,
        }),
    })
    .expect("a valid invented arm")
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
