//! `armwright simulate`: the dry run — the plan run through the servo model — with each stop's
//! overshoot, settle time and resting error, whether the arm has settled where the gripper acts,
//! the following error, the torque use (commanded and simulated, on one basis) and, where the
//! gripper acts, the placement success.
//!
//! A simulated torque use over 100 % of the derated stall torque, a gripper acting before the
//! arm has settled, or a contact with a workspace object or another link (along the commanded
//! plan or the dry run), is a problem: the report names the joint and waypoint, and the exit code
//! is 1.

use std::path::Path;

use armwright_kinematics::Arm;
use armwright_trajectory::{DryRun, TaskPlan};
use serde_json::{Value, json};

use super::Outcome;
use super::clearance::{Motion, add_clearance_json, any_contact, clearance_lines};
use super::plan::{TORQUE_INTERVAL, approach_json, load_and_plan};
use super::report::{TORQUE_BASIS, all_rounded, fail, print_json, rounded};
use crate::approach::approach_note;
use crate::placement::{Placement, placements_of};
use crate::scene::{Arrival, Scene, position_to_file_unit};
use crate::task::dry_run_of;
use crate::workcell::SceneCell;

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
    let report = match SimulateReport::of(&scene, &arm, &plan, &run) {
        Ok(report) => report,
        Err(message) => return fail(json, &message, json!({}), Outcome::Refused),
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
        let mut out = dry_run_json(&scene, &run, &report);
        add_clearance_json(&cell, &scene, &mut out, &looked);
        if touched {
            out["ok"] = json!(false);
            out["error"] = json!("the arm hits something in the dry run (see collisions)");
        }
        print_json(&out);
    } else {
        print_dry_run(&scene, &run, &report);
        for line in clearance_lines(&cell, &scene, &looked) {
            println!("{line}");
        }
        if touched {
            eprintln!("error: the arm hits something in the dry run");
        }
    }
    if report.problems.is_empty() && !touched {
        Outcome::Done
    } else {
        Outcome::Refused
    }
}

/// What `simulate` adds to the dry run: the plan's own torque use, the placement estimates and
/// the problems found.
pub(crate) struct SimulateReport {
    /// Commanded torque use per waypoint (inverse dynamics of the plan), share of the derated
    /// stall torque.
    pub(crate) commanded_torque_use: Vec<f64>,
    /// Per waypoint where the gripper acts, its placement estimate and tolerance.
    pub(crate) placement: Vec<Option<Placement>>,
    /// Problems: (waypoint index, sentence).
    pub(crate) problems: Vec<(usize, String)>,
}

impl SimulateReport {
    pub(crate) fn of(
        scene: &Scene,
        arm: &Arm,
        plan: &TaskPlan,
        run: &DryRun,
    ) -> Result<SimulateReport, String> {
        let derating = scene.timing.torque_derating_pct / 100.0;
        let commanded_torque_use = plan.peak_torque_use(arm, derating, TORQUE_INTERVAL);
        let placement = placements_of(scene, arm, run)?;
        let mut problems = Vec::new();
        for (index, (waypoint, result)) in scene.waypoints.iter().zip(&run.waypoints).enumerate() {
            if result.peak_torque_use > 1.0 {
                let joint = scene
                    .arm
                    .joints
                    .get(result.peak_torque_joint)
                    .map_or("", |j| j.name.as_str());
                problems.push((
                    index,
                    format!(
                        "waypoint {index} \"{}\": joint {} \"{joint}\" uses {:.0} % of its derated stall torque (simulated) on the move into it; at most 100 %",
                        waypoint.name,
                        result.peak_torque_joint,
                        result.peak_torque_use * 100.0
                    ),
                ));
            }
            if result.gripper_unsettled() {
                problems.push((
                    index,
                    format!(
                        "waypoint {index} \"{}\": the gripper acts before the tool point has settled within {} mm; give the stop a longer dwell (the gripper acts {:.0} ms before the arm leaves)",
                        waypoint.name,
                        scene.timing.settle_band_mm,
                        armwright_trajectory::GRIPPER_TIME * 1e3
                    ),
                ));
            }
        }
        Ok(SimulateReport {
            commanded_torque_use,
            placement,
            problems,
        })
    }
}

/// The headline figures of a dry run, in report units.
pub(crate) fn summary_json(run: &DryRun) -> Value {
    json!({
        "cycle_time_s": rounded(run.cycle_time, 4),
        "worst_overshoot_mm": rounded(run.worst_overshoot() * 1e3, 4),
        "worst_simulated_torque_use_pct": rounded(run.worst_torque_use() * 100.0, 2),
        "worst_following_error_mm": rounded(run.worst_following_error() * 1e3, 3),
        "unsettled_gripper_stops": run.unsettled_gripper_stops().len(),
    })
}

fn placement_json(placement: &Placement) -> Value {
    let estimate = &placement.estimate;
    json!({
        "placement_success": rounded(estimate.success, 4),
        "placement_success_closed_form": rounded(estimate.closed_form, 4),
        "placement_error_mm": {
            "mean": rounded(estimate.mean_error * 1e3, 3),
            "p95": rounded(estimate.p95_error * 1e3, 3),
        },
        "placement_tolerance_mm": placement.tolerance_mm,
        "placement_draws": estimate.draws,
    })
}

/// A dry run as JSON: the summary plus one entry per waypoint.
pub(crate) fn dry_run_json(scene: &Scene, run: &DryRun, report: &SimulateReport) -> Value {
    let kinds = scene.arm.shape.joint_kinds();
    let count = scene.arm.joints.len();
    let waypoints: Vec<Value> = scene
        .waypoints
        .iter()
        .zip(&run.waypoints)
        .enumerate()
        .map(|(index, (waypoint, result))| {
            let joint_overshoot: Vec<f64> = result.joint_overshoot[..count]
                .iter()
                .zip(&kinds)
                .map(|(value, kind)| position_to_file_unit(*kind, *value))
                .collect();
            let stop = waypoint.arrival == Arrival::Stop;
            let mut entry = json!({
                "name": waypoint.name,
                "overshoot_mm": rounded(result.overshoot * 1e3, 4),
                "joint_overshoot_deg_or_mm": all_rounded(&joint_overshoot, 4),
                "settle_ms": result.settle_time.map(|t| rounded(t * 1e3, 1)),
                "settled": stop.then_some(result.settled),
                "gripper_acts_s": result.gripper_acts.map(|t| rounded(t, 4)),
                "resting_error_mm": rounded(result.resting_error * 1e3, 3),
                "following_error_mm": rounded(result.following_error * 1e3, 3),
                "simulated_torque_use_pct": rounded(result.peak_torque_use * 100.0, 2),
                "simulated_torque_joint": result.peak_torque_joint,
                "commanded_torque_use_pct": report
                    .commanded_torque_use
                    .get(index)
                    .map(|t| rounded(t * 100.0, 2)),
            });
            if let (Some(Some(estimate)), Value::Object(map)) =
                (report.placement.get(index), &mut entry)
                && let Value::Object(extra) = placement_json(estimate)
            {
                map.extend(extra);
            }
            entry
        })
        .collect();
    let peak_commanded = report
        .commanded_torque_use
        .iter()
        .copied()
        .fold(0.0, f64::max);
    let worst_placement = report
        .placement
        .iter()
        .flatten()
        .map(|p| p.estimate.success)
        .fold(None, |worst: Option<f64>, s| {
            Some(worst.map_or(s, |w| w.min(s)))
        });
    let mut out = summary_json(run);
    out["ok"] = json!(report.problems.is_empty());
    out["torque_use_basis"] = json!(TORQUE_BASIS);
    out["torque_derating_pct"] = json!(scene.timing.torque_derating_pct);
    out["peak_commanded_torque_use_pct"] = json!(rounded(peak_commanded * 100.0, 2));
    out["worst_placement_success"] = json!(worst_placement.map(|s| rounded(s, 4)));
    out["problems"] = Value::Array(
        report
            .problems
            .iter()
            .map(|(index, message)| json!({ "waypoint": index, "message": message }))
            .collect(),
    );
    out["waypoints"] = Value::Array(waypoints);
    out["approach"] = approach_json(scene);
    out
}

fn print_dry_run(scene: &Scene, run: &DryRun, report: &SimulateReport) {
    println!(
        "cycle time {:.3} s, worst overshoot {:.2} mm, worst torque use {:.0} % simulated (servo model) / {:.0} % commanded (inverse dynamics of the plan), worst following error {:.1} mm",
        run.cycle_time,
        run.worst_overshoot() * 1e3,
        run.worst_torque_use() * 100.0,
        report
            .commanded_torque_use
            .iter()
            .copied()
            .fold(0.0, f64::max)
            * 100.0,
        run.worst_following_error() * 1e3
    );
    println!("torque use is in {TORQUE_BASIS}");
    println!("{}", approach_note(scene));
    println!(
        "{:<24} {:>10} {:>10} {:>10} {:>10} {:>9} {:>9}",
        "waypoint", "overshoot", "settle", "rest err", "following", "torque %", "placed"
    );
    println!(
        "{:<24} {:>10} {:>10} {:>10} {:>10} {:>9} {:>9}",
        "", "", "", "", "", "sim/cmd", ""
    );
    for (index, (waypoint, result)) in scene.waypoints.iter().zip(&run.waypoints).enumerate() {
        let settle = match (waypoint.arrival, result.settle_time) {
            (Arrival::PassThrough, _) if result.gripper_acts.is_some() => "UNSETTLED".to_string(),
            (Arrival::PassThrough, _) => "passes".to_string(),
            (Arrival::Stop, Some(t)) => format!("{:.0} ms", t * 1e3),
            (Arrival::Stop, None) if result.gripper_acts.is_some() => "UNSETTLED".to_string(),
            (Arrival::Stop, None) => "moving".to_string(),
        };
        let placed = match report.placement.get(index) {
            Some(Some(placement)) => format!(
                "{:.0} % ±{} mm",
                placement.estimate.success * 100.0,
                placement.tolerance_mm
            ),
            _ => String::new(),
        };
        let commanded = report
            .commanded_torque_use
            .get(index)
            .copied()
            .unwrap_or(0.0);
        println!(
            "{:<24} {:>7.2} mm {:>10} {:>7.2} mm {:>7.1} mm {:>4.0}/{:<4.0} {:>9}",
            waypoint.name,
            result.overshoot * 1e3,
            settle,
            result.resting_error * 1e3,
            result.following_error * 1e3,
            result.peak_torque_use * 100.0,
            commanded * 100.0,
            placed
        );
    }
    println!(
        "overshoot and settling are measured against where the arm comes to rest; the rest error is how far that lies from the target (deadband and sag); where the gripper acts, up to when it acts"
    );
    if report.placement.iter().any(Option::is_some) {
        println!(
            "placed: share of placements within the waypoint's tolerance (mm) of the target (horizontal), from deadband, backlash, calibration and the rest error ({} seeded draws)",
            report
                .placement
                .iter()
                .flatten()
                .map(|p| p.estimate.draws)
                .next()
                .unwrap_or(0)
        );
    }
    for (_, problem) in &report.problems {
        eprintln!("problem: {problem}");
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::scene::{build_arm, load};
    use crate::task::plan_of;

    #[test]
    fn a_simulated_torque_use_over_100_pct_is_a_problem_naming_joint_and_waypoint() {
        let path = armwright_test_support::samples::sample_scene("peg-sorter");
        let scene = load(&path).expect("sample loads");
        let arm = build_arm(&scene.arm).expect("sample arm");
        let plan = plan_of(&scene, &arm).expect("plans");
        let mut run = dry_run_of(&scene, &arm, &plan).expect("runs");
        let clean = SimulateReport::of(&scene, &arm, &plan, &run).expect("reports");
        assert!(clean.problems.is_empty(), "{:?}", clean.problems);
        // The dry run's figure for the move into waypoint 3, pushed past the share.
        run.waypoints[3].peak_torque_use = 1.25;
        run.waypoints[3].peak_torque_joint = 1;
        let report = SimulateReport::of(&scene, &arm, &plan, &run).expect("reports");
        assert_eq!(report.problems.len(), 1);
        let (waypoint, message) = &report.problems[0];
        assert_eq!(*waypoint, 3);
        assert!(message.contains(&scene.waypoints[3].name), "{message}");
        assert!(message.contains(&format!("joint 1 \"{}\"", scene.arm.joints[1].name)));
        assert!(
            message.contains("125 % of its derated stall torque"),
            "{message}"
        );
        let json = dry_run_json(&scene, &run, &report);
        assert_eq!(json["ok"], json!(false));
    }
}
