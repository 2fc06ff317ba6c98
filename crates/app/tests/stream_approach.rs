//! The start of every stream, through the whole path from the scene to setpoints
//! (`armwright::approach::stream_plan_waking`, waking a limp arm with all joints together): from random pulses a device reports holding, the
//! first setpoint is those pulses (to one pulse unit) and no step between two setpoints of the
//! approach moves a joint's pulse further than its speed cap allows (property test); from a limp
//! device the first setpoint is the rest pose, held for the wake pause; `--park` ends at the rest
//! pose.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

use armwright::approach::{StartFrom, StreamPlan, WakeMode, rest_pose, stream_plan_waking};
use armwright::scene::{Scene, build_arm, load};
use armwright::task::plan_of;
use armwright_kinematics::Arm;
use armwright_link::{
    ChannelOutput, ChannelValues, DeviceInfo, SimDevice, SimDeviceConfig, arm_setpoint,
};
use armwright_trajectory::TaskPlan;
use proptest::prelude::*;

/// A sample with a gripper, so its channel is covered too.
fn sample() -> (Scene, Arm) {
    let path = armwright_test_support::samples::sample_scene("spacer-stacker");
    let scene = load(&path).expect("the sample loads");
    let arm = build_arm(&scene.arm).expect("the sample's arm builds");
    (scene, arm)
}

/// What the simulated device says about itself: 7 channels, 1 µs units, 500–2500 µs.
/// The stream of `plan` at [`RATE_HZ`], waking a limp arm with all joints together, from what
/// `device` reports holding (`output`), parked at the end when `park`.
fn stream_of(
    scene: &Scene,
    arm: &Arm,
    plan: &TaskPlan,
    output: Option<&ChannelOutput>,
    device: &DeviceInfo,
    park: bool,
) -> Result<StreamPlan, String> {
    stream_plan_waking(
        scene,
        arm,
        plan,
        output,
        device,
        RATE_HZ,
        park,
        WakeMode::Together,
    )
}

fn device() -> DeviceInfo {
    SimDevice::new(SimDeviceConfig::default()).info()
}

const RATE_HZ: f64 = 50.0;

#[test]
fn a_limp_device_wakes_at_the_rest_pose_and_holds_it_for_the_wake_pause() {
    let (scene, arm) = sample();
    let plan = plan_of(&scene, &arm).expect("plannable");
    let device = device();
    let limp = ChannelOutput::limp(device.channel_count);
    for output in [Some(&limp), None] {
        let streamed = stream_of(&scene, &arm, &plan, output, &device, false).expect("planned");
        assert!(streamed.from.wakes());
        let closed = scene.waypoints[0].gripper == armwright::scene::GripperState::Closed;
        let rest = arm_setpoint(
            &arm,
            &rest_pose(&arm),
            Some(if closed { 1.0 } else { 0.0 }),
            &device,
        )
        .expect("rest pose setpoint");
        let held = (scene.timing.wake_pause_ms / 1e3 * RATE_HZ).floor() as usize;
        assert!(held > 0);
        for values in &streamed.setpoints.values[..held] {
            assert_eq!(*values, rest.values);
        }
        assert!(streamed.approach.duration() > scene.timing.wake_pause_ms / 1e3);
    }
    let streamed = stream_of(&scene, &arm, &plan, Some(&limp), &device, false).expect("planned");
    assert_eq!(streamed.from, StartFrom::Limp);
    let streamed = stream_of(&scene, &arm, &plan, None, &device, false).expect("planned");
    assert_eq!(streamed.from, StartFrom::Unknown);
}

#[test]
fn a_parked_stream_ends_at_the_rest_pose() {
    let (scene, arm) = sample();
    let plan = plan_of(&scene, &arm).expect("plannable");
    let device = device();
    let limp = ChannelOutput::limp(device.channel_count);
    let plain = stream_of(&scene, &arm, &plan, Some(&limp), &device, false).expect("planned");
    let parked = stream_of(&scene, &arm, &plan, Some(&limp), &device, true).expect("planned");
    let park = parked.park.as_ref().expect("a park move");
    assert!(parked.setpoints.values.len() > plain.setpoints.values.len());
    assert!((parked.cycle_s() - plain.cycle_s() - park.duration()).abs() < 1e-9);
    let last_waypoint_closed = scene.waypoints.last().expect("waypoints").gripper
        == armwright::scene::GripperState::Closed;
    let rest = arm_setpoint(
        &arm,
        &rest_pose(&arm),
        Some(if last_waypoint_closed { 1.0 } else { 0.0 }),
        &device,
    )
    .expect("rest pose setpoint");
    assert_eq!(parked.setpoints.values.last(), Some(&rest.values));
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(32))]

    /// The device holds random pulses inside each joint's calibrated range (and the gripper
    /// open or closed): the approach starts at them and never steps faster than its cap.
    #[test]
    fn the_approach_starts_at_the_reported_pulses_and_keeps_to_its_cap(
        shares in prop::collection::vec(0.0_f64..=1.0, 8),
    ) {
        let (scene, arm) = sample();
        let plan = plan_of(&scene, &arm).expect("plannable");
        let device = device();
        let channels = usize::from(device.channel_count);
        let mut units: Vec<Option<u16>> = vec![Some(1500); channels];
        for (index, joint) in arm.joints().iter().enumerate() {
            let c = &joint.calibration;
            let pulse_us = c.pulse_min_us + shares[index] * (c.pulse_max_us - c.pulse_min_us);
            units[index] = Some(device.units_from_us(pulse_us));
        }
        let gripper = arm.gripper().expect("the sample has a gripper");
        // Open or closed, as a stream leaves it; between the two it goes to the nearer end.
        let gripper_us = if shares[7] < 0.5 {
            gripper.open_pulse_us
        } else {
            gripper.closed_pulse_us
        };
        units[channels - 1] = Some(device.units_from_us(gripper_us));
        let output = ChannelOutput::from_slice(&units).expect("7 channels");
        let streamed = stream_of(&scene, &arm, &plan, Some(&output), &device, false)
            .expect("planned");
        prop_assert_eq!(streamed.from, StartFrom::Held);
        let reported: ChannelValues = output.pulses().expect("all driven");
        let first = streamed.setpoints.values[0];
        let arm_channels: Vec<usize> =
            (0..arm.joint_count()).chain(std::iter::once(channels - 1)).collect();
        for &channel in &arm_channels {
            let (r, f) = (reported.as_slice()[channel], first.as_slice()[channel]);
            prop_assert!(r.abs_diff(f) <= 1, "channel {}: reported {} sent {}", channel, r, f);
        }
        prop_assert!(streamed.start_jumps(&arm, Some(&output), &device).is_empty());
        // Each joint's cap in pulse units per frame: speed cap × period × µs per rad, plus
        // one unit for rounding both ends.
        let unit_us = device.us_from_units(1);
        let caps: Vec<f64> = streamed
            .approach
            .speed_caps()
            .iter()
            .zip(arm.joints())
            .map(|(cap, joint)| cap / RATE_HZ * joint.calibration.slope_us().abs() / unit_us + 1.0)
            .collect();
        let approach = &streamed.setpoints.values[..=streamed.approach_frames];
        for (frame, pair) in approach.windows(2).enumerate() {
            for (joint, cap) in caps.iter().enumerate() {
                let step = f64::from(pair[0].as_slice()[joint].abs_diff(pair[1].as_slice()[joint]));
                prop_assert!(
                    step <= cap + 1e-9,
                    "frame {}: joint {} stepped {} units, cap {}", frame, joint, step, cap
                );
            }
        }
    }
}
