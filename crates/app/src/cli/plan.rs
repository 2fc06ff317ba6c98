//! `armwright plan`: the timed sequence — cycle time, every move and dwell, the torque use of
//! each servo along the way — and optionally its setpoints as CSV.

use std::fmt::Write as _;
use std::path::Path;

use armwright_kinematics::Arm;
use armwright_trajectory::{CommandedMotion, SegmentKind, TaskPlan};
use serde_json::json;

use super::Outcome;
use super::clearance::{Motion, SceneCell, any_contact};
use super::report::{fail, load_scene, print_json, rounded};
use crate::scene::{
    JointLimitDoc, Scene, plan_of, position_to_file_unit, rate_to_file_unit, save_text,
};

/// Interval at which torque use is looked at along the plan, in s.
pub(crate) const TORQUE_INTERVAL: f64 = 0.01;

/// The velocity and acceleration limits the plan used for each joint, in the scene's units and
/// under the keys of its `timing.joint_limits` (deg/s and deg/s², or mm/s and mm/s²).
fn joint_limits(scene: &Scene, plan: &TaskPlan) -> Vec<serde_json::Value> {
    let kinds = scene.arm.shape.joint_kinds();
    scene
        .arm
        .joints
        .iter()
        .zip(&kinds)
        .zip(plan.limits())
        .map(|((joint, &kind), limits)| {
            let (velocity_key, acceleration_key) = JointLimitDoc::keys(kind);
            let mut entry = serde_json::Map::new();
            entry.insert("joint".into(), json!(joint.name));
            let velocity = rate_to_file_unit(kind, limits.velocity);
            let acceleration = rate_to_file_unit(kind, limits.acceleration);
            entry.insert(velocity_key.into(), json!(rounded(velocity, 4)));
            entry.insert(acceleration_key.into(), json!(rounded(acceleration, 4)));
            serde_json::Value::Object(entry)
        })
        .collect()
}

/// Plans the scene's sequence, or says why not (exit 1 with the reason naming the waypoint).
pub(crate) fn plan_scene(scene: &Scene, arm: &Arm, json: bool) -> Result<TaskPlan, Outcome> {
    plan_of(scene, arm).map_err(|error| {
        fail(
            json,
            &format!("cannot plan: {error}"),
            json!({}),
            Outcome::Refused,
        )
    })
}

/// Loads the scene at `file` and plans its sequence, or says why not (the outcome to exit with).
pub(crate) fn load_and_plan(file: &Path, json: bool) -> Result<(Scene, Arm, TaskPlan), Outcome> {
    let (scene, arm) = load_scene(file, json)?;
    let plan = plan_scene(&scene, &arm, json)?;
    Ok((scene, arm, plan))
}

pub(crate) fn run(file: &Path, rate_hz: f64, csv: Option<&Path>, json: bool) -> Outcome {
    let (scene, arm, plan) = match load_and_plan(file, json) {
        Ok(planned) => planned,
        Err(outcome) => return outcome,
    };
    let derating = scene.timing.torque_derating_pct / 100.0;
    let torque = plan.peak_torque_use(&arm, derating, TORQUE_INTERVAL);
    let cell = SceneCell::of(&scene, &arm);
    let clearance = cell.along_plan(&arm, &plan);
    let looked = [(Motion::Commanded, &clearance)];
    let touched = any_contact(&looked);
    if let Some(path) = csv {
        let text = match setpoints_csv(&scene, &plan, rate_hz) {
            Ok(text) => text,
            Err(message) => return fail(json, &message, json!({}), Outcome::Unreadable),
        };
        if let Err(error) = save_text(&text, path) {
            let message = format!("cannot write {}: {error}", path.display());
            return fail(json, &message, json!({}), Outcome::Unreadable);
        }
    }
    let sequence = plan.sequence();
    let cycle_time = CommandedMotion::duration(&plan);
    let segments: Vec<_> = sequence
        .segments()
        .iter()
        .map(|segment| {
            let (kind, from, to) = match segment.kind {
                SegmentKind::Move {
                    from_waypoint,
                    to_waypoint,
                } => ("move", from_waypoint, to_waypoint),
                SegmentKind::Dwell { waypoint } => ("dwell", waypoint, waypoint),
            };
            json!({
                "kind": kind,
                "start_s": rounded(segment.start, 4),
                "duration_s": rounded(segment.motion.duration(), 4),
                "from_point": from,
                "to_point": to,
            })
        })
        .collect();
    let peak = torque.iter().copied().fold(0.0, f64::max);
    if json {
        let waypoints: Vec<_> = scene
            .waypoints
            .iter()
            .zip(plan.timings())
            .zip(&torque)
            .map(|((waypoint, timing), torque)| {
                json!({
                    "name": waypoint.name,
                    "arrival_s": rounded(timing.arrival, 4),
                    "departure_s": rounded(timing.departure, 4),
                    "peak_torque_use": rounded(*torque, 4),
                })
            })
            .collect();
        let mut out = json!({
            "ok": true,
            "cycle_time_s": rounded(cycle_time, 4),
            "shaped_runs": plan.shaped_runs(),
            "peak_torque_use": rounded(peak, 4),
            "joint_limits": joint_limits(&scene, &plan),
            "segments": segments,
            "waypoints": waypoints,
        });
        cell.add_json(&scene, &mut out, &looked);
        if touched {
            out["ok"] = json!(false);
            out["error"] = json!("the arm hits something along the plan (see collisions)");
        }
        print_json(&out);
    } else {
        println!(
            "cycle time {:.3} s, peak torque use {:.0} %",
            cycle_time,
            peak * 100.0
        );
        println!(
            "{:<24} {:>9} {:>9} {:>8}",
            "waypoint", "arrive s", "leave s", "torque"
        );
        for ((waypoint, timing), torque) in scene.waypoints.iter().zip(plan.timings()).zip(&torque)
        {
            println!(
                "{:<24} {:>9.3} {:>9.3} {:>7.0}%",
                waypoint.name,
                timing.arrival,
                timing.departure,
                torque * 100.0
            );
        }
        println!(
            "{} segments (straight moves are cut into pass-through points)",
            segments.len()
        );
        if let Some(path) = csv {
            println!("setpoints written to {}", path.display());
        }
        for line in cell.lines(&scene, &looked) {
            println!("{line}");
        }
        if touched {
            eprintln!("error: the arm hits something along the plan");
        }
    }
    if touched {
        Outcome::Refused
    } else {
        Outcome::Done
    }
}

/// The plan (shaped, where the scene asks) through its sampler at `rate_hz`: a header, then one
/// row per sample with the time in s, each joint in degrees (mm for a prismatic joint) and
/// whether the gripper is closed (1) or open (0).
fn setpoints_csv(scene: &Scene, plan: &TaskPlan, rate_hz: f64) -> Result<String, String> {
    let samples = plan.sampler(rate_hz).map_err(|e| format!("--rate: {e}"))?;
    let kinds = scene.arm.shape.joint_kinds();
    let mut text = String::from("time_s");
    for (joint, kind) in scene.arm.joints.iter().zip(&kinds) {
        let _ = write!(
            text,
            ",{}_{}",
            joint.name.replace([',', '"', '\n'], " "),
            kind.unit()
        );
    }
    text.push_str(",gripper_closed\n");
    for sample in samples {
        let _ = write!(text, "{:.6}", sample.time);
        for (value, kind) in sample.positions.iter().zip(&kinds) {
            let _ = write!(text, ",{:.6}", position_to_file_unit(*kind, *value));
        }
        let _ = writeln!(text, ",{}", u8::from(sample.gripper_closed));
    }
    Ok(text)
}
