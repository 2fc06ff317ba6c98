//! `armwright pose`: the tool point for given joint positions, the torque gravity and the
//! payload need at each joint and its share of the servo's rating (in % of the derated stall
//! torque), the heaviest payload the pose can hold, the accuracy budget, and the pulse widths.
//! The figures themselves are `pose_report.rs`'s, which the editor's tests compare with.

use std::path::Path;

use armwright_kinematics::Arm;
use serde_json::{Value, json};

use super::Outcome;
use super::plan::payload_g;
use super::report::{TORQUE_BASIS, all_rounded, fail, listed, load_scene, print_json, rounded};
use crate::pose_report::{PoseReport, evaluate};
use crate::scene::{JointKindDoc, Scene, pose_from_file_units, position_to_file_unit};

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
        "holding_torque_use_pct": all_rounded(
            &report.torque_use.iter().map(|s| s * 100.0).collect::<Vec<_>>(),
            4
        ),
        "torque_use_basis": TORQUE_BASIS,
        "torque_derating_pct": scene.timing.torque_derating_pct,
        "max_payload_g": payload_g(report.max_payload_kg),
        "max_payload_joint": report.payload_joint,
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
    match (payload_g(report.max_payload_kg), report.payload_joint) {
        (Some(grams), Some(joint)) => println!(
            "max payload  {grams:.0} g at the tool point (set by {})",
            arm.joints()[joint].name
        ),
        _ => println!("max payload  no joint's torque depends on it"),
    }
    println!("torque use is in {TORQUE_BASIS}, holding this pose");
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
