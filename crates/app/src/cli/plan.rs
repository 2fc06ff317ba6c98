//! `armwright plan`: the timed sequence — cycle time, every move and dwell, the commanded torque
//! use of each servo along the way (inverse dynamics of the plan, in % of the derated stall
//! torque), the heaviest payload each move could carry — and optionally its setpoints as CSV.

use std::fmt::Write as _;
use std::path::Path;

use armwright_kinematics::{Arm, MAX_JOINTS, max_payload_in_motion};
use armwright_trajectory::{
    CommandedMotion, JointState, MAX_SAMPLE_RATE_HZ, MIN_SAMPLE_RATE_HZ, SegmentKind, TaskPlan,
};
use serde_json::{Value, json};

use super::Outcome;
use super::clearance::{Motion, add_clearance_json, any_contact, clearance_lines};
use super::report::{TORQUE_BASIS, fail, load_scene, print_json, rounded};
use crate::approach::approach_note;
use crate::scene::{
    JointLimitDoc, Scene, field_table, position_to_file_unit, rate_to_file_unit, save_text,
};
use crate::task::plan_of;
use crate::workcell::SceneCell;

/// Interval at which torque use is looked at along the plan, in s.
pub(crate) const TORQUE_INTERVAL: f64 = 0.01;

/// The velocity, acceleration and jerk limits the plan used for each joint, in the scene's units
/// and under the keys of its `timing.joint_limits` (deg/s, deg/s² and deg/s³, or mm/s, mm/s²
/// and mm/s³).
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
            let jerk_key = field_table::joint_limit::JERK.key(kind);
            let jerk = rate_to_file_unit(kind, limits.jerk);
            entry.insert(jerk_key.into(), json!(rounded(jerk, 4)));
            serde_json::Value::Object(entry)
        })
        .collect()
}

/// The heaviest payload (kg) each waypoint's move and dwell could carry with every joint within
/// `derating` of its stall torque, by inverse dynamics of the plan every `interval` s; waypoint
/// 0 gets the pose it starts in, held.
pub(crate) fn max_payload_per_move(
    arm: &Arm,
    plan: &TaskPlan,
    derating: f64,
    interval: f64,
) -> Vec<f64> {
    let n = arm.joint_count();
    let mut states = [JointState::default(); MAX_JOINTS];
    let (mut positions, mut rates, mut accelerations) =
        ([0.0; MAX_JOINTS], [0.0; MAX_JOINTS], [0.0; MAX_JOINTS]);
    let mut start = 0.0;
    plan.timings()
        .iter()
        .map(|timing| {
            let steps = (((timing.departure - start) / interval).ceil() as usize).max(1);
            let mut lightest = f64::INFINITY;
            for k in 0..=steps {
                let t = start + (timing.departure - start) * k as f64 / steps as f64;
                plan.states_at(t, &mut states[..n]);
                for j in 0..n {
                    positions[j] = states[j].position;
                    rates[j] = states[j].velocity;
                    accelerations[j] = states[j].acceleration;
                }
                if let Ok(limit) = max_payload_in_motion(
                    arm,
                    &positions[..n],
                    &rates[..n],
                    &accelerations[..n],
                    derating,
                ) {
                    lightest = lightest.min(limit.mass);
                }
            }
            start = timing.departure;
            lightest
        })
        .collect()
}

/// A payload in kg as grams for a report, `None` when unlimited.
pub(crate) fn payload_g(mass: f64) -> Option<f64> {
    mass.is_finite().then(|| rounded(mass * 1e3, 1))
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
    // Checked whether or not --csv is given: a rate the plan cannot be sampled at is a mistake
    // in the command, not something to pass over silently.
    if !(MIN_SAMPLE_RATE_HZ..=MAX_SAMPLE_RATE_HZ).contains(&rate_hz) {
        let message = format!(
            "--rate: {rate_hz} Hz is out of range; setpoints are sampled at \
             {MIN_SAMPLE_RATE_HZ} to {MAX_SAMPLE_RATE_HZ} Hz"
        );
        return fail(json, &message, json!({}), Outcome::Unreadable);
    }
    let (scene, arm, plan) = match load_and_plan(file, json) {
        Ok(planned) => planned,
        Err(outcome) => return outcome,
    };
    let derating = scene.timing.torque_derating_pct / 100.0;
    let torque = plan.peak_torque_use(&arm, derating, TORQUE_INTERVAL);
    let payload = max_payload_per_move(&arm, &plan, derating, TORQUE_INTERVAL);
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
            .zip(torque.iter().zip(&payload))
            .map(|((waypoint, timing), (torque, payload))| {
                json!({
                    "name": waypoint.name,
                    "arrival_s": rounded(timing.arrival, 4),
                    "departure_s": rounded(timing.departure, 4),
                    "commanded_torque_use_pct": rounded(*torque * 100.0, 2),
                    "max_payload_g": payload_g(*payload),
                })
            })
            .collect();
        let mut out = json!({
            "ok": true,
            "cycle_time_s": rounded(cycle_time, 4),
            "shaped_runs": plan.shaped_runs(),
            "torque_use_basis": TORQUE_BASIS,
            "torque_derating_pct": scene.timing.torque_derating_pct,
            "peak_commanded_torque_use_pct": rounded(peak * 100.0, 2),
            "payload_g": rounded(arm.payload_mass() * 1e3, 1),
            "joint_limits": joint_limits(&scene, &plan),
            "segments": segments,
            "waypoints": waypoints,
            "approach": approach_json(&scene),
        });
        add_clearance_json(&cell, &scene, &mut out, &looked);
        if touched {
            out["ok"] = json!(false);
            out["error"] = json!("the arm hits something along the plan (see collisions)");
        }
        print_json(&out);
    } else {
        println!(
            "cycle time {:.3} s, peak commanded torque use {:.0} % (inverse dynamics of the plan)",
            cycle_time,
            peak * 100.0
        );
        println!(
            "torque use is in {TORQUE_BASIS}; max payload is the heaviest the move could carry within it"
        );
        println!(
            "{:<24} {:>9} {:>9} {:>9} {:>14}",
            "waypoint", "arrive s", "leave s", "torque %", "max payload g"
        );
        for (((waypoint, timing), torque), payload) in scene
            .waypoints
            .iter()
            .zip(plan.timings())
            .zip(&torque)
            .zip(&payload)
        {
            let payload = payload_g(*payload).map_or("no limit".to_string(), |g| format!("{g:.0}"));
            println!(
                "{:<24} {:>9.3} {:>9.3} {:>9.0} {:>14}",
                waypoint.name,
                timing.arrival,
                timing.departure,
                torque * 100.0,
                payload
            );
        }
        println!(
            "{} segments (straight moves are cut into pass-through points)",
            segments.len()
        );
        if let Some(path) = csv {
            println!("setpoints written to {}", path.display());
        }
        println!("{}", approach_note(&scene));
        for line in clearance_lines(&cell, &scene, &looked) {
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

/// The approach as `plan --json` and `simulate --json` report it with no device connected:
/// planned at stream time, from what the device reports then.
pub(super) fn approach_json(scene: &Scene) -> Value {
    json!({
        "planned_at_stream_time": true,
        "speed_share_pct": scene.timing.approach_speed_share_pct,
        "wake_pause_ms": scene.timing.wake_pause_ms,
    })
}
