//! The readout of one pose that `armwright pose` prints, in report units: the tool point and its
//! angles, the holding torque per joint and its share of the derated stall torque, the heaviest
//! payload, the accuracy budget and the pulse widths by the one pulse rule. The editor's tests
//! hold its joint controls to the same figures.

use armwright_kinematics::{
    Arm, ArmType, DEFAULT_PULSE_UNIT_US, IkTarget, JointKind, SentPulse, ToolAngles,
    accuracy_budget, gravity_torques, max_payload, tool_pose, torque_use,
};
use nalgebra::Isometry3;

use crate::scene::Scene;

/// Everything `pose` reports, in report units (mm, degrees, N·cm, µs).
pub(crate) struct PoseReport {
    pub(crate) tool_mm: [f64; 3],
    pub(crate) pitch_deg: f64,
    pub(crate) yaw_deg: f64,
    pub(crate) roll_deg: f64,
    /// Holding torque per joint at the servo output, N·cm (a prismatic joint's force times its
    /// pinion radius).
    pub(crate) torque_ncm: Vec<f64>,
    /// |torque| / (stall torque × derating), per joint; 1.0 is 100 %.
    pub(crate) torque_use: Vec<f64>,
    /// Heaviest payload the pose can hold within the derated stall torque, in kg (infinite when
    /// no joint's torque depends on it), and the joint that sets it.
    pub(crate) max_payload_kg: f64,
    pub(crate) payload_joint: Option<usize>,
    pub(crate) accuracy_worst_mm: f64,
    pub(crate) accuracy_rss_mm: f64,
    /// The pulse width each joint's servo is sent, by the pulse rule with a 1 µs unit.
    pub(crate) pulse: Vec<SentPulse>,
}

/// Computes the report for a pose in SI (rad or m per joint).
pub(crate) fn evaluate(scene: &Scene, arm: &Arm, positions: &[f64]) -> Result<PoseReport, String> {
    let tool = tool_pose(arm, positions).map_err(|e| e.to_string())?;
    let angles = tool_angles(arm, positions, &tool)?;
    let efforts = gravity_torques(arm, positions, arm.payload_mass()).map_err(|e| e.to_string())?;
    let derating = scene.timing.torque_derating_pct / 100.0;
    let shares = torque_use(arm, &efforts, derating);
    let budget = accuracy_budget(arm, positions).map_err(|e| e.to_string())?;
    let payload = max_payload(arm, positions, derating).map_err(|e| e.to_string())?;
    let torque_ncm = arm
        .joints()
        .iter()
        .zip(efforts.as_slice())
        .map(|(joint, &effort)| match joint.kind {
            JointKind::Revolute => effort * 100.0,
            // Force (N) × pinion radius (m/rad) is the torque at the servo output.
            JointKind::Prismatic => effort * joint.servo.drive_ratio * 100.0,
        })
        .collect();
    let position = tool.translation.vector * 1e3;
    Ok(PoseReport {
        tool_mm: [position.x, position.y, position.z],
        pitch_deg: angles.pitch.to_degrees(),
        yaw_deg: angles.yaw.to_degrees(),
        roll_deg: angles.roll.to_degrees(),
        torque_ncm,
        torque_use: shares.as_slice().to_vec(),
        max_payload_kg: payload.mass,
        payload_joint: payload.joint,
        accuracy_worst_mm: budget.worst * 1e3,
        accuracy_rss_mm: budget.rss * 1e3,
        pulse: arm
            .joints()
            .iter()
            .zip(positions)
            .map(|(joint, &q)| joint.calibration.sent_pulse(q, DEFAULT_PULSE_UNIT_US))
            .collect(),
    })
}

/// The tool's yaw, pitch and roll (rad) as `reach --to` takes them back.
///
/// Articulated arms: pitch (and roll) as the inverse kinematics measures them, in the vertical
/// plane from the base axis through the tool point, and yaw the direction of that plane, so a
/// tool pointing straight down keeps a meaningful yaw. Horizontal arm: yaw as the inverse
/// kinematics takes it. Otherwise, and for the remaining angles, the tool frame read as
/// Rz(yaw)·Ry(−pitch)·Rx(roll).
fn tool_angles(arm: &Arm, positions: &[f64], tool: &Isometry3<f64>) -> Result<ToolAngles, String> {
    let mut angles = ToolAngles::of(tool);
    let target = IkTarget::of_pose(arm, positions).map_err(|e| e.to_string())?;
    match arm.arm_type() {
        ArmType::Scara(_) => angles.yaw = target.angle.unwrap_or(angles.yaw),
        ArmType::Articulated4(_) | ArmType::Articulated5(_) => {
            let p = tool.translation.vector;
            // On the base axis the plane is the base joint's.
            angles.yaw = if p.x.hypot(p.y) > 1e-9 {
                p.y.atan2(p.x)
            } else {
                positions[0]
            };
            angles.pitch = target.angle.unwrap_or(angles.pitch);
            angles.roll = target.roll.unwrap_or(0.0);
        }
        ArmType::Chain(_) => {}
    }
    Ok(angles)
}
