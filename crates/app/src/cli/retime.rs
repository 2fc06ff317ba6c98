//! `armwright retime`: the fastest timing whose dry run keeps every stop's overshoot and the
//! servos' simulated torque use within a target and settles every stop where the gripper acts
//! before it acts, with a before/after report and what binds; a start that already meets the
//! target is never made slower. Optionally the retimed scene written to a new file.

use std::path::Path;

use armwright_trajectory::{Binding, RetimeError};
use serde_json::{Value, json};

use super::Outcome;
use super::report::{TORQUE_BASIS, fail, load_scene, print_json, rounded};
use super::simulate::summary_json;
use crate::scene::{Shaping, save};
use crate::task::{RetimeSettings, retime_scene};

/// What `retime` is asked for, in the command line's units.
pub(crate) struct RetimeRequest<'a> {
    pub(crate) max_overshoot_mm: f64,
    pub(crate) torque_share: Option<f64>,
    pub(crate) min_dwell_ms: f64,
    pub(crate) write: Option<&'a Path>,
}

pub(crate) fn run(file: &Path, request: &RetimeRequest<'_>, json: bool) -> Outcome {
    let (scene, arm) = match load_scene(file, json) {
        Ok(loaded) => loaded,
        Err(outcome) => return outcome,
    };
    let torque_share = request
        .torque_share
        .unwrap_or(scene.timing.torque_derating_pct / 100.0);
    let checks = [
        (
            "--max-overshoot",
            request.max_overshoot_mm,
            request.max_overshoot_mm > 0.0,
            "above 0 mm",
        ),
        (
            "--torque-share",
            torque_share,
            torque_share > 0.0 && torque_share <= 1.0,
            "above 0 and at most 1",
        ),
        (
            "--min-dwell",
            request.min_dwell_ms,
            request.min_dwell_ms >= 0.0,
            "0 ms or more",
        ),
    ];
    for (option, value, ok, allowed) in checks {
        if !(ok && value.is_finite()) {
            let message = format!("{option}: {value} is out of range; it must be {allowed}");
            return fail(json, &message, json!({}), Outcome::Unreadable);
        }
    }
    if let Some(out) = request.write
        && same_file(out, file)
    {
        // Writing over the input is allowed only when asked by name; say so plainly.
        eprintln!("note: --write names the input file; it is replaced only if retiming succeeds");
    }
    let settings = RetimeSettings {
        max_overshoot_mm: request.max_overshoot_mm,
        torque_share,
        min_dwell_ms: request.min_dwell_ms,
    };
    let result = retime_scene(&scene, &arm, &settings, |_| true);
    let retimed = match result {
        Ok(retimed) => retimed,
        Err(error) => {
            let extra = match &error {
                RetimeError::Unreachable { waypoint, .. } => json!({
                    "met": false,
                    "waypoint": waypoint,
                    "waypoint_name": scene.waypoints.get(*waypoint).map(|w| w.name.clone()),
                }),
                _ => json!({ "met": false }),
            };
            let message = match &error {
                RetimeError::Unreachable { waypoint, .. } => format!(
                    "cannot meet the target: {error} (\"{}\")",
                    scene
                        .waypoints
                        .get(*waypoint)
                        .map_or("", |w| w.name.as_str())
                ),
                _ => format!("cannot retime: {error}"),
            };
            return fail(json, &message, extra, Outcome::Refused);
        }
    };
    if let Some(out) = request.write
        && let Err(error) = save(&retimed.scene, out)
    {
        return fail(
            json,
            &error.to_string(),
            json!({ "met": true }),
            Outcome::Unreadable,
        );
    }
    let before_timing = &retimed.before;
    let shaped_runs = retimed.shaped_runs;
    let retimed = &retimed.retimed;
    if json {
        let waypoints: Vec<Value> = scene
            .waypoints
            .iter()
            .enumerate()
            .map(|(i, waypoint)| {
                json!({
                    "name": waypoint.name,
                    "speed_share_pct_before": rounded(before_timing.speed_share[i] * 100.0, 2),
                    "speed_share_pct_after": rounded(retimed.timing.speed_share[i] * 100.0, 2),
                    "dwell_ms_before": rounded(before_timing.dwell[i] * 1e3, 1),
                    "dwell_ms_after": rounded(retimed.timing.dwell[i] * 1e3, 1),
                    "overshoot_mm_before": rounded(retimed.before.waypoints[i].overshoot * 1e3, 4),
                    "overshoot_mm_after": rounded(retimed.after.waypoints[i].overshoot * 1e3, 4),
                    "settled_after": retimed.after.waypoints[i].settled,
                    "binding": retimed.binding.get(i).copied().flatten().map(binding_key),
                })
            })
            .collect();
        print_json(&json!({
            "ok": true,
            "met": true,
            "shaping": shaping_word(scene.timing.shaping),
            "shaped_runs": shaped_runs,
            "already_met": retimed.already_met,
            "binding": retimed.main_binding().map(|(b, _)| binding_key(b)),
            "max_overshoot_mm": request.max_overshoot_mm,
            "torque_derating_pct": rounded(torque_share * 100.0, 4),
            "torque_use_basis": TORQUE_BASIS,
            "before": summary_json(&retimed.before),
            "after": summary_json(&retimed.after),
            "waypoints": waypoints,
            "written": request.write.map(|p| p.display().to_string()),
        }));
    } else {
        println!(
            "target: overshoot ≤ {} mm, simulated torque use ≤ 100 % of the derated stall torque ({:.0} % of stall), every gripper stop settled before the gripper acts",
            request.max_overshoot_mm,
            torque_share * 100.0
        );
        let line = |label: &str, run: &armwright_trajectory::DryRun| {
            println!(
                "{label:<7} cycle {:.3} s, worst overshoot {:.2} mm, worst torque use {:.0} % of the derated stall torque, {} gripper stops unsettled",
                run.cycle_time,
                run.worst_overshoot() * 1e3,
                run.worst_torque_use() * 100.0,
                run.unsettled_gripper_stops().len()
            );
        };
        line("before", &retimed.before);
        line("after", &retimed.after);
        if retimed.already_met {
            if retimed.after.cycle_time < retimed.before.cycle_time {
                println!("the current timing already meets the target; a faster one does too");
            } else {
                println!("the current timing already meets the target; kept unchanged");
            }
        }
        match retimed.main_binding() {
            Some((binding, stops)) => println!(
                "binding: {} ({stops} of {} stops)",
                binding.words(),
                retimed.binding.iter().flatten().count()
            ),
            None => println!("binding: no constraint is near its limit"),
        }
        println!(
            "shaping: {} ({shaped_runs} runs from stop to stop shaped)",
            shaping_word(scene.timing.shaping)
        );
        println!(
            "{:<24} {:>14} {:>16}",
            "waypoint", "speed share %", "dwell ms"
        );
        for (i, waypoint) in scene.waypoints.iter().enumerate() {
            println!(
                "{:<24} {:>6.1} → {:>5.1} {:>7.0} → {:>6.0}",
                waypoint.name,
                before_timing.speed_share[i] * 100.0,
                retimed.timing.speed_share[i] * 100.0,
                before_timing.dwell[i] * 1e3,
                retimed.timing.dwell[i] * 1e3
            );
        }
        if let Some(out) = request.write {
            println!("retimed scene written to {}", out.display());
        }
    }
    Outcome::Done
}

/// A binding constraint as a JSON word.
pub(crate) fn binding_key(binding: Binding) -> &'static str {
    match binding {
        Binding::SpeedLimit => "speed_limit",
        Binding::Overshoot => "overshoot",
        Binding::TorqueUse => "torque_use",
        Binding::GripperSettling => "gripper_settling",
    }
}

fn shaping_word(shaping: Shaping) -> &'static str {
    match shaping {
        Shaping::None => "none",
        Shaping::Zv => "zv",
        Shaping::Zvd => "zvd",
    }
}

fn same_file(a: &Path, b: &Path) -> bool {
    match (a.canonicalize(), b.canonicalize()) {
        (Ok(a), Ok(b)) => a == b,
        _ => false,
    }
}
