//! `armwright check`: every problem with its JSON path, and with `--json` a description of the
//! arm that is enough to recompute its forward kinematics by the product of exponentials.

use std::path::Path;

use armwright_kinematics::{Arm, JointKind, forward};
use nalgebra::{Isometry3, Vector3};
use serde_json::{Value, json};

use super::Outcome;
use super::report::{all_rounded, load_scene, print_json, problems_json, rounded};
use crate::scene::{
    JointKindDoc, Problem, Scene, SceneError, load, position_to_file_unit, sequence_problems,
};

/// Digits kept for mm and degrees in the description (1 nm, 1e-6 °): well below anything a
/// hobby arm can show, so a product-of-exponentials check agrees to 1e-6 mm.
const DECIMALS: i32 = 6;

pub(crate) fn run(file: &Path, json: bool) -> Outcome {
    // The problems are what `check` is asked for: in text they go to standard output, one per
    // line with its JSON path (other subcommands print them to standard error).
    if !json && let Err(SceneError::Problems { problems }) = load(file) {
        println!("{}: {} problem(s)", file.display(), problems.len());
        for problem in &problems {
            println!("  {problem}");
        }
        return Outcome::Refused;
    }
    let (scene, arm) = match load_scene(file, json) {
        Ok(loaded) => loaded,
        Err(outcome) => return outcome,
    };
    let description = describe(&scene, &arm);
    // An arm without a sequence serves pose, reach and envelope; the commands that move it say
    // why they cannot, and check says it first.
    let mut notes = sequence_problems(&scene);
    let channels = arm.joint_count() + usize::from(scene.arm.gripper.is_some());
    if let Some(warning) =
        crate::link_capacity::rate_above_capacity(scene.link.rate_hz, channels, scene.link.baud)
    {
        notes.push(Problem::new("link.rate_hz", warning));
    }
    notes.extend(crate::input_fit::poor_fit_notes(&scene));
    if json {
        print_json(&json!({
            "ok": true,
            "file": file.display().to_string(),
            "problems": problems_json(&[]),
            "notes": problems_json(&notes),
            "arm": description,
        }));
    } else {
        println!(
            "{}: no problems; {} arm, {} joints, {} waypoints",
            file.display(),
            scene.arm.shape.word(),
            arm.joint_count(),
            scene.waypoints.len()
        );
        for (index, joint) in arm.joints().iter().enumerate() {
            let kind = kind_doc(joint.kind);
            let unit = kind.unit();
            println!(
                "  joint {index} {:<12} {:<9} {:>9.2} to {:>8.2} {unit}",
                joint.name,
                joint.kind.word(),
                position_to_file_unit(kind, joint.min),
                position_to_file_unit(kind, joint.max),
            );
        }
        for note in &notes {
            println!("note: {note}");
        }
    }
    Outcome::Done
}

fn kind_doc(kind: JointKind) -> JointKindDoc {
    match kind {
        JointKind::Revolute => JointKindDoc::Revolute,
        JointKind::Prismatic => JointKindDoc::Prismatic,
    }
}

fn mm(vector: &Vector3<f64>) -> Vec<f64> {
    all_rounded(&[vector.x * 1e3, vector.y * 1e3, vector.z * 1e3], DECIMALS)
}

/// The arm with every joint at zero: per joint its kind, limits, axis and a point on it; the
/// tool point and tool frame axes at zero (`tool_at_zero_*`, the product of exponentials' home
/// configuration M), and at the scene's home pose (`tool_at_home_*`, every joint at its
/// `home_*`).
pub(crate) fn describe(scene: &Scene, arm: &Arm) -> Value {
    let zeros = vec![0.0; arm.joint_count()];
    // forward() only fails on a wrong count or a non-finite position; neither pose has one.
    let (Ok(pose), Ok(home)) = (forward(arm, &zeros), forward(arm, &arm.home_pose())) else {
        return Value::Null;
    };
    let joints: Vec<Value> = arm
        .joints()
        .iter()
        .enumerate()
        .map(|(index, joint)| {
            let kind = kind_doc(joint.kind);
            let unit = kind.unit();
            let (axis, point) = pose.joint_axis(arm, index);
            let mut out = json!({
                "name": joint.name,
                "kind": joint.kind.word(),
                "axis": all_rounded(&[axis.x, axis.y, axis.z], 12),
                "origin_mm": mm(&point),
            });
            out[format!("min_{unit}")] =
                json!(rounded(position_to_file_unit(kind, joint.min), DECIMALS));
            out[format!("max_{unit}")] =
                json!(rounded(position_to_file_unit(kind, joint.max), DECIMALS));
            out[format!("home_{unit}")] =
                json!(rounded(position_to_file_unit(kind, joint.home), DECIMALS));
            out
        })
        .collect();
    json!({
        "type": scene.arm.shape.word(),
        "joints": joints,
        "tool_at_zero_mm": mm(&pose.tool().translation.vector),
        "tool_at_zero_rotation": rotation_rows(pose.tool()),
        "tool_at_home_mm": mm(&home.tool().translation.vector),
        "tool_at_home_rotation": rotation_rows(home.tool()),
        "payload_g": scene.arm.payload_g,
    })
}

/// The tool frame's axes as the rows of its rotation matrix in the base frame.
fn rotation_rows(tool: &Isometry3<f64>) -> Vec<Vec<f64>> {
    let rotation = tool.rotation.to_rotation_matrix();
    (0..3)
        .map(|r| all_rounded(&[rotation[(r, 0)], rotation[(r, 1)], rotation[(r, 2)]], 12))
        .collect()
}
