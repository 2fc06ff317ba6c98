//! The scene's sequence and timing settings as a trajectory task: waypoints in SI, the limits
//! and servo model the planner and the dry run use. The one place that turns the timing part of
//! the file's units (%, ms, mm) into SI.

use armwright_kinematics::Arm;
use armwright_trajectory::{
    DryRun, DryRunError, DryRunOptions, LimitSettings, PlanError, ProfileShape, RetimeTarget,
    ServoModelOptions, ShaperKind, Task, TaskPlan, TaskWaypoint, Timing as TaskTiming, dry_run,
    plan_task,
};

use super::document::{Arrival, GripperState, MoveKind, ProfileKind, Scene, Shaping};
use super::units::pose_from_file_units;

/// The scene's waypoints as a task for `plan_task` (positions in rad or m, dwells in s, shares
/// 0–1), with the scene's torque derating and damping ratio.
pub fn task_of(scene: &Scene, arm: &Arm) -> Task {
    debug_assert_eq!(scene.arm.joints.len(), arm.joint_count());
    let model = servo_model_of(scene);
    Task {
        waypoints: scene
            .waypoints
            .iter()
            .map(|w| TaskWaypoint {
                positions: pose_from_file_units(&scene.arm, &w.joints_deg_or_mm),
                stop: w.arrival == Arrival::Stop,
                dwell: w.dwell_ms / 1e3,
                speed_share: w.speed_share_pct / 100.0,
                gripper_closed: w.gripper == GripperState::Closed,
                straight: w.move_kind == MoveKind::Straight,
                shape: match w.profile {
                    ProfileKind::Trapezoid => ProfileShape::Trapezoid,
                    ProfileKind::DoubleS => ProfileShape::DoubleS,
                },
            })
            .collect(),
        limits: LimitSettings {
            derating: scene.timing.torque_derating_pct / 100.0,
            ..LimitSettings::default()
        },
        model,
        shaping: match scene.timing.shaping {
            Shaping::None => None,
            Shaping::Zv => Some(ShaperKind::Zv),
            Shaping::Zvd => Some(ShaperKind::Zvd),
        },
    }
}

/// The servo model's settings from the scene: its damping ratio; the rest default.
pub fn servo_model_of(scene: &Scene) -> ServoModelOptions {
    ServoModelOptions {
        damping_ratio: scene.timing.damping_ratio,
        ..ServoModelOptions::default()
    }
}

/// Dry-run settings from the scene: settle band (mm → m), torque derating (% → share).
pub fn dry_run_options_of(scene: &Scene) -> DryRunOptions {
    DryRunOptions {
        servo: servo_model_of(scene),
        settle_band: scene.timing.settle_band_mm / 1e3,
        derating: scene.timing.torque_derating_pct / 100.0,
        ..DryRunOptions::default()
    }
}

/// The scene's sequence planned on `arm`: what `plan`, `simulate`, `stream` and the editor's
/// timeline all start from.
///
/// # Errors
/// [`PlanError`] naming the waypoint (and joint) that cannot be planned.
pub fn plan_of(scene: &Scene, arm: &Arm) -> Result<TaskPlan, PlanError> {
    plan_task(arm, &task_of(scene, arm))
}

/// The dry run of `plan` (made from `scene` on `arm` by [`plan_of`]) with the scene's settle
/// band, derating and servo model.
///
/// # Errors
/// [`DryRunError`] when the servo simulation cannot start.
pub fn dry_run_of(scene: &Scene, arm: &Arm, plan: &TaskPlan) -> Result<DryRun, DryRunError> {
    dry_run(arm, plan, plan.timings(), &dry_run_options_of(scene))
}

/// A retiming target: overshoot in mm, torque share (0–1], shortest dwell in ms.
pub fn retime_target(max_overshoot_mm: f64, torque_share: f64, min_dwell_ms: f64) -> RetimeTarget {
    RetimeTarget {
        max_overshoot: max_overshoot_mm / 1e3,
        derating: torque_share,
        min_dwell: min_dwell_ms / 1e3,
        ..RetimeTarget::default()
    }
}

/// The scene with a task timing written back: speed shares in %, dwells in ms.
pub fn with_timing(scene: &Scene, timing: &TaskTiming) -> Scene {
    let mut out = scene.clone();
    for (index, waypoint) in out.waypoints.iter_mut().enumerate() {
        if let Some(&share) = timing.speed_share.get(index) {
            waypoint.speed_share_pct = share * 100.0;
        }
        if let Some(&dwell) = timing.dwell.get(index) {
            waypoint.dwell_ms = dwell * 1e3;
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::scene::{build_arm, load};

    fn sample(name: &str) -> Scene {
        let path = std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
            .join("../../sample-scenes")
            .join(name);
        load(&path).expect("sample loads")
    }

    #[test]
    fn units_become_si() {
        let scene = sample("pen-plotter.armwright.json");
        let arm = build_arm(&scene.arm).expect("sample arm");
        let task = task_of(&scene, &arm);
        let first = &scene.waypoints[1];
        let converted = &task.waypoints[1];
        assert_eq!(converted.dwell, first.dwell_ms / 1e3);
        assert_eq!(converted.speed_share, first.speed_share_pct / 100.0);
        assert!((converted.positions[1] - first.joints_deg_or_mm[1].to_radians()).abs() < 1e-15);
        assert_eq!(converted.straight, first.move_kind == MoveKind::Straight);
    }

    #[test]
    fn timing_written_back_reads_the_same() {
        let scene = sample("cube-stacker.armwright.json");
        let arm = build_arm(&scene.arm).expect("sample arm");
        let task = task_of(&scene, &arm);
        let mut timing = task.timing();
        timing.speed_share[2] = 0.375;
        timing.dwell[2] = 0.12;
        let written = with_timing(&scene, &timing);
        let again = task_of(&written, &arm).timing();
        assert!((again.speed_share[2] - 0.375).abs() < 1e-15);
        assert!((again.dwell[2] - 0.12).abs() < 1e-15);
    }
}
