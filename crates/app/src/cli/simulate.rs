//! `armwright simulate`: the dry run — the plan run through the servo model — with each stop's
//! overshoot, settle time and resting error, the following error and the torque use.

use std::path::Path;

use armwright_trajectory::DryRun;
use serde_json::{Value, json};

use super::Outcome;
use super::clearance::{Motion, SceneCell, any_contact};
use super::plan::load_and_plan;
use super::report::{all_rounded, fail, print_json, rounded};
use crate::scene::{Arrival, Scene, dry_run_of, position_to_file_unit};

pub(crate) fn run(file: &Path, json: bool) -> Outcome {
    let (scene, arm, plan) = match load_and_plan(file, json) {
        Ok(planned) => planned,
        Err(outcome) => return outcome,
    };
    let run = match dry_run_of(&scene, &arm, &plan) {
        Ok(run) => run,
        Err(error) => {
            let message = format!("cannot simulate: {error}");
            return fail(json, &message, json!({}), Outcome::Refused);
        }
    };
    let cell = SceneCell::of(&scene, &arm);
    let commanded = cell.along_plan(&arm, &plan);
    let simulated = cell.along_dry_run(&arm, &plan, &run.trace);
    let looked = [
        (Motion::Commanded, &commanded),
        (Motion::Simulated, &simulated),
    ];
    let touched = any_contact(&looked);
    if json {
        let mut out = dry_run_json(&scene, &run);
        cell.add_json(&scene, &mut out, &looked);
        if touched {
            out["ok"] = json!(false);
            out["error"] = json!("the arm hits something in the dry run (see collisions)");
        }
        print_json(&out);
    } else {
        print_dry_run(&scene, &run);
        for line in cell.lines(&scene, &looked) {
            println!("{line}");
        }
        if touched {
            eprintln!("error: the arm hits something in the dry run");
        }
    }
    if touched {
        Outcome::Refused
    } else {
        Outcome::Done
    }
}

/// The headline figures of a dry run, in report units.
pub(crate) fn summary_json(run: &DryRun) -> Value {
    json!({
        "cycle_time_s": rounded(run.cycle_time, 4),
        "worst_overshoot_mm": rounded(run.worst_overshoot() * 1e3, 4),
        "worst_torque_use": rounded(run.worst_torque_use(), 4),
        "worst_following_error_mm": rounded(run.worst_following_error() * 1e3, 3),
    })
}

/// A dry run as JSON: the summary plus one entry per waypoint.
pub(crate) fn dry_run_json(scene: &Scene, run: &DryRun) -> Value {
    let kinds = scene.arm.shape.joint_kinds();
    let count = scene.arm.joints.len();
    let waypoints: Vec<Value> = scene
        .waypoints
        .iter()
        .zip(&run.waypoints)
        .map(|(waypoint, result)| {
            let joint_overshoot: Vec<f64> = result.joint_overshoot[..count]
                .iter()
                .zip(&kinds)
                .map(|(value, kind)| position_to_file_unit(*kind, *value))
                .collect();
            json!({
                "name": waypoint.name,
                "overshoot_mm": rounded(result.overshoot * 1e3, 4),
                "joint_overshoot_deg_or_mm": all_rounded(&joint_overshoot, 4),
                "settle_ms": result.settle_time.map(|t| rounded(t * 1e3, 1)),
                "resting_error_mm": rounded(result.resting_error * 1e3, 3),
                "following_error_mm": rounded(result.following_error * 1e3, 3),
                "peak_torque_use": rounded(result.peak_torque_use, 4),
            })
        })
        .collect();
    let mut out = summary_json(run);
    out["ok"] = json!(true);
    out["waypoints"] = Value::Array(waypoints);
    out
}

fn print_dry_run(scene: &Scene, run: &DryRun) {
    println!(
        "cycle time {:.3} s, worst overshoot {:.2} mm, worst torque use {:.0} %, worst following error {:.1} mm",
        run.cycle_time,
        run.worst_overshoot() * 1e3,
        run.worst_torque_use() * 100.0,
        run.worst_following_error() * 1e3
    );
    println!(
        "{:<24} {:>10} {:>10} {:>10} {:>10} {:>7}",
        "waypoint", "overshoot", "settle", "rest err", "following", "torque"
    );
    for (waypoint, result) in scene.waypoints.iter().zip(&run.waypoints) {
        let settle = match (waypoint.arrival, result.settle_time) {
            (Arrival::PassThrough, _) => "passes".to_string(),
            (Arrival::Stop, Some(t)) => format!("{:.0} ms", t * 1e3),
            (Arrival::Stop, None) => "moving".to_string(),
        };
        println!(
            "{:<24} {:>7.2} mm {:>10} {:>7.2} mm {:>7.1} mm {:>6.0}%",
            waypoint.name,
            result.overshoot * 1e3,
            settle,
            result.resting_error * 1e3,
            result.following_error * 1e3,
            result.peak_torque_use * 100.0
        );
    }
    println!(
        "overshoot and settling are measured against where the arm comes to rest; the rest error is how far that lies from the target (deadband and sag)"
    );
}
