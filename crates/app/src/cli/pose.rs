//! `armwright pose`: the tool point for given joint positions, the torque gravity and the
//! payload need at each joint and its share of the servo's rating, the accuracy budget, and
//! the pulse widths.

use std::path::Path;

use armwright_kinematics::{
    Arm, ArmType, DEFAULT_PULSE_UNIT_US, IkTarget, JointKind, SentPulse, ToolAngles,
    accuracy_budget, gravity_torques, tool_pose, torque_use,
};
use nalgebra::Isometry3;
use serde_json::{Value, json};

use super::Outcome;
use super::report::{all_rounded, fail, listed, load_scene, print_json, rounded};
use crate::scene::{JointKindDoc, Scene, pose_from_file_units, position_to_file_unit};

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

/// A sentence for each joint whose position lies outside its limits.
pub(crate) fn outside_limits(scene: &Scene, arm: &Arm, positions: &[f64]) -> Vec<String> {
    let kinds = scene.arm.shape.joint_kinds();
    arm.joints()
        .iter()
        .zip(positions)
        .enumerate()
        .filter(|(_, (joint, q))| **q < joint.min - 1e-9 || **q > joint.max + 1e-9)
        .map(|(index, (joint, &q))| {
            let kind = kinds.get(index).copied().unwrap_or(JointKindDoc::Revolute);
            let unit = kind.unit();
            format!(
                "joint {index} ({}) at {} {unit} lies outside its limits {} to {} {unit}",
                joint.name,
                position_to_file_unit(kind, q),
                position_to_file_unit(kind, joint.min),
                position_to_file_unit(kind, joint.max),
            )
        })
        .collect()
}

pub(crate) fn run(file: &Path, joints: &[f64], json: bool) -> Outcome {
    let (scene, arm) = match load_scene(file, json) {
        Ok(loaded) => loaded,
        Err(outcome) => return outcome,
    };
    if joints.len() != arm.joint_count() {
        let message = format!(
            "--joints needs {} positions (one per joint, base first), got {}",
            arm.joint_count(),
            joints.len()
        );
        return fail(json, &message, json!({}), Outcome::Unreadable);
    }
    if let Some(bad) = joints.iter().find(|v| !v.is_finite()) {
        let message = format!("--joints: {bad} is not a finite number");
        return fail(json, &message, json!({}), Outcome::Unreadable);
    }
    let positions = pose_from_file_units(&scene.arm, joints);
    let outside = outside_limits(&scene, &arm, &positions);
    if !outside.is_empty() {
        return fail(
            json,
            &outside.join("; "),
            json!({ "outside_limits": outside }),
            Outcome::Refused,
        );
    }
    let report = match evaluate(&scene, &arm, &positions) {
        Ok(report) => report,
        Err(message) => return fail(json, &message, json!({}), Outcome::Unreadable),
    };
    if json {
        print_json(&pose_json(&scene, &arm, &report));
    } else {
        print_text(&arm, &report);
    }
    Outcome::Done
}

fn pose_json(scene: &Scene, arm: &Arm, report: &PoseReport) -> Value {
    json!({
        "ok": true,
        "joint_names": arm.joints().iter().map(|j| j.name.clone()).collect::<Vec<_>>(),
        "tool_mm": all_rounded(&report.tool_mm, 4),
        "tool_pitch_deg": rounded(report.pitch_deg, 4),
        "tool_yaw_deg": rounded(report.yaw_deg, 4),
        "tool_roll_deg": rounded(report.roll_deg, 4),
        "joint_torque_ncm": all_rounded(&report.torque_ncm, 4),
        "torque_use": all_rounded(&report.torque_use, 6),
        "torque_derating_pct": scene.timing.torque_derating_pct,
        "accuracy_mm": {
            "worst": rounded(report.accuracy_worst_mm, 4),
            "rss": rounded(report.accuracy_rss_mm, 4),
        },
        "pulse_us": report.pulse.iter().map(|p| p.pulse_us).collect::<Vec<_>>(),
        "pulse_clamped": report.pulse.iter().map(|p| p.clamped).collect::<Vec<_>>(),
    })
}

fn print_text(arm: &Arm, report: &PoseReport) {
    println!("tool point   {} mm", listed(&report.tool_mm, 2));
    println!(
        "tool angles  pitch {:.2}°, yaw {:.2}°, roll {:.2}°",
        report.pitch_deg, report.yaw_deg, report.roll_deg
    );
    println!(
        "accuracy     {:.3} mm worst case, {:.3} mm root-sum-square",
        report.accuracy_worst_mm, report.accuracy_rss_mm
    );
    println!("joint         torque N·cm   torque use   pulse µs");
    for (index, joint) in arm.joints().iter().enumerate() {
        println!(
            "{:<12} {:>12.2} {:>11.1} % {:>10}{}",
            joint.name,
            report.torque_ncm[index],
            report.torque_use[index] * 100.0,
            report.pulse[index].pulse_us,
            if report.pulse[index].clamped {
                " (limited to the servo's range)"
            } else {
                ""
            }
        );
    }
}
