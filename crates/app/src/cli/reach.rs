//! `armwright reach`: every branch of joint positions that puts the tool point on a target, and
//! the one nearest a given pose.

use std::path::Path;

use armwright_kinematics::{
    Arm, ArmType, IkError, IkOptions, IkSolutions, IkTarget, IkTask, solve_ik_free_angles,
};
use nalgebra::Vector3;
use serde_json::{Value, json};

use super::Outcome;
use super::report::{all_rounded, fail, listed, load_scene, print_json, rounded};
use crate::scene::{
    JointKindDoc, Scene, pose_from_file_units, pose_to_file_units, position_to_file_unit,
};

/// A target read from `--to`: position in m, angle and roll in rad.
pub(crate) fn parse_target(arm: &Arm, to: &[f64]) -> Result<IkTarget, String> {
    if !(3..=5).contains(&to.len()) {
        return Err(format!(
            "--to needs X,Y,Z in mm and optionally ANGLE and ROLL in degrees (3 to 5 numbers), got {}",
            to.len()
        ));
    }
    if let Some(bad) = to.iter().find(|v| !v.is_finite()) {
        return Err(format!("--to: {bad} is not a finite number"));
    }
    let mut target = IkTarget::at(Vector3::new(to[0], to[1], to[2]) * 1e-3);
    if let Some(angle) = to.get(3) {
        target = target.with_angle(angle.to_radians());
    }
    if let Some(roll) = to.get(4) {
        let takes_roll = matches!(arm.arm_type(), ArmType::Articulated5(_) | ArmType::Chain(_));
        if !takes_roll {
            return Err(format!(
                "a {} arm has no wrist roll to set; give X,Y,Z[,ANGLE]",
                arm.arm_type().word()
            ));
        }
        target = target.with_roll(roll.to_radians());
    }
    Ok(target)
}

/// Options for the solver: for a chain, the task follows the angles given.
pub(crate) fn options_for(target: &IkTarget) -> IkOptions {
    let task = match (target.angle, target.roll) {
        (_, Some(_)) => IkTask::FullPose,
        (Some(_), None) => IkTask::PositionPitch,
        (None, None) => IkTask::Position,
    };
    IkOptions {
        task,
        ..IkOptions::default()
    }
}

/// The solver's reason in the user's units, and its JSON details.
fn explain(scene: &Scene, arm: &Arm, error: &IkError) -> (String, Value) {
    match error {
        IkError::OutOfReach { short_by } => (
            format!("the target is {:.1} mm out of reach", short_by * 1e3),
            json!({ "reason": "out_of_reach", "short_by_mm": rounded(short_by * 1e3, 4) }),
        ),
        IkError::BeyondLimit {
            joint,
            position,
            by,
        } => {
            let kind = scene
                .arm
                .shape
                .joint_kinds()
                .get(*joint)
                .copied()
                .unwrap_or(JointKindDoc::Revolute);
            let unit = kind.unit();
            let name = arm.joints().get(*joint).map_or("?", |j| j.name.as_str());
            let needed = position_to_file_unit(kind, *position);
            let past = position_to_file_unit(kind, *by);
            (
                format!(
                    "joint {joint} ({name}) would need {needed:.2} {unit}, {past:.2} {unit} past its limits"
                ),
                json!({
                    "reason": "beyond_limit",
                    "joint": joint,
                    format!("needed_{unit}"): rounded(needed, 4),
                    format!("past_limit_{unit}"): rounded(past, 4),
                }),
            )
        }
        IkError::NotConverged {
            residual,
            iterations,
        } => (
            format!(
                "no solution found: {:.3} mm left after {iterations} iterations",
                residual * 1e3
            ),
            json!({
                "reason": "not_converged",
                "residual_mm": rounded(residual * 1e3, 6),
                "iterations": iterations,
            }),
        ),
        other => (other.to_string(), json!({ "reason": "bad_input" })),
    }
}

pub(crate) fn run(file: &Path, to: &[f64], near: Option<&[f64]>, json: bool) -> Outcome {
    let (scene, arm) = match load_scene(file, json) {
        Ok(loaded) => loaded,
        Err(outcome) => return outcome,
    };
    let target = match parse_target(&arm, to) {
        Ok(target) => target,
        Err(message) => return fail(json, &message, json!({}), Outcome::Unreadable),
    };
    let near = match near {
        None => arm.home_pose(),
        Some(values)
            if values.len() == arm.joint_count() && values.iter().all(|v| v.is_finite()) =>
        {
            pose_from_file_units(&scene.arm, values)
        }
        Some(values) => {
            let message = format!(
                "--near needs {} finite positions (one per joint, base first), got {}",
                arm.joint_count(),
                values.len()
            );
            return fail(json, &message, json!({}), Outcome::Unreadable);
        }
    };
    let solutions = match solve_ik_free_angles(&arm, &target, &near, &options_for(&target)) {
        Ok(solutions) if !solutions.is_empty() => solutions,
        Ok(_) => {
            let message = "no branch reaches the target";
            return fail(
                json,
                message,
                json!({ "reason": "no_branch" }),
                Outcome::Refused,
            );
        }
        Err(error) => {
            let (message, details) = explain(&scene, &arm, &error);
            return fail(json, &message, details, Outcome::Refused);
        }
    };
    report(&scene, &solutions, &near, json);
    Outcome::Done
}

fn report(scene: &Scene, solutions: &IkSolutions, near: &[f64], json: bool) {
    let in_file_units =
        |positions: &[f64]| all_rounded(&pose_to_file_units(&scene.arm, positions), 6);
    let all: Vec<Vec<f64>> = solutions
        .as_slice()
        .iter()
        .map(|branch| in_file_units(branch.positions()))
        .collect();
    let labels: Vec<&str> = solutions.as_slice().iter().map(|b| b.label()).collect();
    let chosen = solutions.nearest(near);
    let chosen_index = solutions
        .as_slice()
        .iter()
        .position(|b| std::ptr::eq(b, chosen))
        .unwrap_or(0);
    if json {
        print_json(&json!({
            "ok": true,
            "solutions_deg": all,
            "solution_labels": labels,
            "chosen_deg": in_file_units(chosen.positions()),
            "chosen_index": chosen_index,
            "near_deg": in_file_units(near),
        }));
    } else {
        println!(
            "{} branch(es) reach the target (degrees, mm for a prismatic joint):",
            all.len()
        );
        for (index, (positions, label)) in all.iter().zip(&labels).enumerate() {
            let mark = if index == chosen_index { "*" } else { " " };
            println!("{mark} {:<28} {}", label, listed(positions, 3));
        }
        println!("* nearest the starting pose");
    }
}
