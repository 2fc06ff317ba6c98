//! The scene's planned sequence as device setpoints: the plan (shaped, where the scene asks)
//! sampled at a fixed rate, the gripper following the last waypoint reached, every sample
//! turned into pulse widths through the joints' calibration for one device. Shared by
//! `armwright stream` and the editor's link panel.

use armwright_kinematics::Arm;
use armwright_link::{ChannelValues, DeviceInfo, arm_setpoint};
use armwright_trajectory::TaskPlan;

use super::document::{GripperState, Scene};

/// One planned sample in the arm's units: joint positions (rad or m) and the gripper's share
/// closed (0 open, 1 closed).
#[derive(Debug, Clone, PartialEq)]
pub struct SampledPose {
    /// One position per joint, rad (revolute) or m (prismatic).
    pub positions: Vec<f64>,
    /// The gripper's share closed: 0 open, 1 closed.
    pub gripper_closed: f64,
}

/// The plan sampled at `rate_hz`; the gripper takes the state of the last waypoint reached, a
/// change of state coming when the plan says the gripper acts (`WaypointTiming::gripper_acts`).
///
/// # Errors
/// A message naming `--rate` when the plan cannot be sampled at that rate.
pub fn sampled_poses(
    scene: &Scene,
    arm: &Arm,
    plan: &TaskPlan,
    rate_hz: f64,
) -> Result<Vec<SampledPose>, String> {
    let setpoints = plan
        .setpoints(rate_hz)
        .map_err(|error| format!("--rate: {error}"))?;
    // A waypoint's gripper state holds from its arrival or, where the gripper changes state,
    // from when it acts (late in the dwell, as the dry run has it).
    let arrivals: Vec<f64> = plan
        .timings()
        .iter()
        .map(|t| t.gripper_acts.unwrap_or(t.arrival))
        .collect();
    let joints = arm.joint_count();
    Ok(setpoints
        .into_iter()
        .map(|(time, positions)| {
            let reached = arrivals
                .partition_point(|&arrival| arrival <= time)
                .saturating_sub(1);
            let closed = scene
                .waypoints
                .get(reached)
                .is_some_and(|w| w.gripper == GripperState::Closed);
            SampledPose {
                positions: positions[..joints].to_vec(),
                gripper_closed: if closed { 1.0 } else { 0.0 },
            }
        })
        .collect())
}

/// Every sample as device setpoints, with how many were clamped and the worst rounding error.
#[derive(Debug, Clone, PartialEq)]
pub struct DeviceSetpoints {
    /// One setpoint per sample, in the device's pulse units.
    pub values: Vec<ChannelValues>,
    /// Setpoints with a pulse width limited to its servo's or the device's range.
    pub clamped: usize,
    /// Largest rounding error over the revolute joints, in degrees.
    pub worst_rounding_deg: f64,
}

/// `poses` as setpoints for `device`.
///
/// # Errors
/// A message naming the setpoint's index when a pose does not fit the arm or the device.
pub fn device_setpoints(
    arm: &Arm,
    poses: &[SampledPose],
    device: &DeviceInfo,
) -> Result<DeviceSetpoints, String> {
    let mut converted = DeviceSetpoints {
        values: Vec::with_capacity(poses.len()),
        clamped: 0,
        worst_rounding_deg: 0.0,
    };
    for (index, pose) in poses.iter().enumerate() {
        let setpoint = arm_setpoint(arm, &pose.positions, Some(pose.gripper_closed), device)
            .map_err(|error| format!("setpoint {index}: {error}"))?;
        converted.clamped += usize::from(setpoint.any_clamped());
        converted.worst_rounding_deg = converted
            .worst_rounding_deg
            .max(setpoint.worst_error_deg(arm));
        converted.values.push(setpoint.values);
    }
    Ok(converted)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::scene::{build_arm, load, task_of};
    use armwright_link::{SimDevice, SimDeviceConfig};
    use armwright_trajectory::plan_task;

    #[test]
    fn the_gripper_channel_follows_the_state_of_the_last_waypoint_reached_once_it_acts() {
        let path = std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
            .join("../../sample-scenes/peg-sorter.armwright.json");
        let scene = load(&path).unwrap();
        let arm = build_arm(&scene.arm).unwrap();
        let plan = plan_task(&arm, &task_of(&scene, &arm)).unwrap();
        let rate_hz = 50.0;
        let poses = sampled_poses(&scene, &arm, &plan, rate_hz).unwrap();
        let device = SimDevice::new(SimDeviceConfig::default()).info();
        let converted = device_setpoints(&arm, &poses, &device).unwrap();
        assert_eq!(converted.values.len(), poses.len());
        let gripper = scene.arm.gripper.as_ref().unwrap();
        let last = usize::from(device.channel_count) - 1;
        let timings = plan.timings();
        let mut changes = 0;
        let mut acted_late = 0;
        for (index, (waypoint, timing)) in scene.waypoints.iter().zip(timings).enumerate() {
            // A sample just after the arrival, or after the gripper acts where it changes state
            // (clear of rounding at the instant itself), if it comes before the next arrival.
            let from = timing.gripper_acts.unwrap_or(timing.arrival);
            let sample = (from * rate_hz).ceil() as usize + 1;
            let next = timings.get(index + 1).map_or(f64::INFINITY, |t| t.arrival);
            if sample >= poses.len() || sample as f64 / rate_hz >= next {
                continue;
            }
            let expected_us = match waypoint.gripper {
                GripperState::Open => gripper.open_pulse_us,
                GripperState::Closed => gripper.closed_pulse_us,
            };
            assert_eq!(
                u32::from(converted.values[sample].as_slice()[last]),
                expected_us,
                "{}",
                waypoint.name
            );
            changes += 1;
            // Until the gripper acts it keeps the state it had.
            if let Some(moment) = timing.gripper_acts
                && index > 0
                && (moment - timing.arrival) * rate_hz > 2.0
            {
                let before = (moment * rate_hz).floor() as usize - 1;
                let kept_us = match scene.waypoints[index - 1].gripper {
                    GripperState::Open => gripper.open_pulse_us,
                    GripperState::Closed => gripper.closed_pulse_us,
                };
                assert_eq!(
                    u32::from(converted.values[before].as_slice()[last]),
                    kept_us,
                    "before the gripper acts at {}",
                    waypoint.name
                );
                acted_late += 1;
            }
        }
        assert!(acted_late > 0, "no gripper acts late in a dwell");
        assert!(
            changes >= scene.waypoints.len() / 2,
            "{changes} waypoints checked"
        );
    }
}
