//! The scene's sequence and timing settings as a trajectory task: waypoints in SI, the limits
//! and servo model the planner and the dry run use. The one place that turns the timing part of
//! the file's units (%, ms, mm) into SI.

use armwright_kinematics::{Arm, MAX_JOINTS};
use armwright_trajectory::{
    DryRun, DryRunError, DryRunOptions, LimitSettings, PlanError, Planner, ProfileShape,
    RetimeError, RetimeTarget, Retimed, ServoModelOptions, ShaperKind, Task, TaskPlan, TaskPlanner,
    TaskWaypoint, Timing as TaskTiming, dry_run, plan_task, retime,
};

use crate::scene::{
    Arrival, GripperState, JointKindDoc, MoveKind, ProfileKind, Scene, Shaping,
    pose_from_file_units, rate_from_file_unit,
};

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
        limits: limit_settings_of(scene),
        model,
        shaping: match scene.timing.shaping {
            Shaping::None => None,
            Shaping::Zv => Some(ShaperKind::Zv),
            Shaping::Zvd => Some(ShaperKind::Zvd),
        },
    }
}

/// How the planner takes limits from the arm: the scene's torque derating (% → share) and the
/// joints' own limits from `timing.joint_limits` (deg/s, deg/s², deg/s³ or mm/s, mm/s², mm/s³
/// → SI). An entry
/// naming no joint, or several, is left out (validation reports it).
pub fn limit_settings_of(scene: &Scene) -> LimitSettings {
    let mut settings = LimitSettings {
        derating: scene.timing.torque_derating_pct / 100.0,
        ..LimitSettings::default()
    };
    let kinds = scene.arm.shape.joint_kinds();
    for limit in &scene.timing.joint_limits {
        let mut named =
            (0..scene.arm.joints.len()).filter(|&j| scene.arm.joints[j].name == limit.joint);
        let (Some(joint), None) = (named.next(), named.next()) else {
            continue;
        };
        if joint >= MAX_JOINTS {
            continue;
        }
        let kind = kinds.get(joint).copied().unwrap_or(JointKindDoc::Revolute);
        let si = |value: Option<f64>| value.map(|v| rate_from_file_unit(kind, v));
        settings.velocity_override[joint] = si(limit.max_velocity_deg_or_mm_per_s);
        settings.acceleration_override[joint] = si(limit.max_acceleration_deg_or_mm_per_s2);
        settings.jerk_override[joint] = si(limit.max_jerk_deg_or_mm_per_s3);
    }
    settings
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

/// What a retiming of a scene's sequence must meet, in the scene's units.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RetimeSettings {
    /// Largest allowed tool-point overshoot at any stop, in mm (above 0).
    pub max_overshoot_mm: f64,
    /// Share of each servo's stall torque the plan and the dry run may use, (0, 1].
    pub torque_share: f64,
    /// Shortest dwell at a stop, in ms (0 or more).
    pub min_dwell_ms: f64,
}

/// What retiming a scene gave.
#[derive(Debug, Clone)]
pub struct SceneRetime {
    /// The timing found and the dry runs before and after.
    pub retimed: Retimed,
    /// The timing the scene had (speed shares 0–1, dwells in s), one entry per waypoint.
    pub before: TaskTiming,
    /// The scene with the timing found and the target it was retimed for written into it.
    pub scene: Scene,
    /// How many runs from stop to stop the retimed plan shapes (the scene's `timing.shaping`).
    pub shaped_runs: usize,
}

/// Retimes a scene's sequence on `arm` (built from `scene.arm`): the fastest speed shares and
/// dwells whose dry run keeps every stop's overshoot and every servo's torque use within
/// `settings`. The command line and the editor both retime through here.
///
/// `progress(share_done)` is called after every dry run with the share of the work done (0–1);
/// returning `false` cancels.
///
/// # Errors
/// [`RetimeError::Unreachable`] naming the waypoint (0-based) that cannot meet the target,
/// [`RetimeError::Cancelled`], [`RetimeError::Target`] for unusable settings, or a planning or
/// dry-run failure.
pub fn retime_scene(
    scene: &Scene,
    arm: &Arm,
    settings: &RetimeSettings,
    progress: impl FnMut(f64) -> bool,
) -> Result<SceneRetime, RetimeError> {
    // The torque share bounds the plan's limits as well as the dry run.
    let mut task = task_of(scene, arm);
    task.limits.derating = settings.torque_share;
    let planner = TaskPlanner { arm, task: &task };
    let target = retime_target(
        settings.max_overshoot_mm,
        settings.torque_share,
        settings.min_dwell_ms,
    );
    let options = dry_run_options_of(scene);
    let before = task.timing();
    let retimed = retime(arm, &planner, &before, &target, &options, progress)?;
    let shaped_runs = planner
        .plan(&retimed.timing)
        .map_or(0, |(plan, _)| plan.shaped_runs());
    let mut out = with_timing(scene, &retimed.timing);
    out.timing.torque_derating_pct = settings.torque_share * 100.0;
    out.timing.max_overshoot_mm = settings.max_overshoot_mm;
    Ok(SceneRetime {
        retimed,
        before,
        scene: out,
        shaped_runs,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::scene::{JointLimitDoc, build_arm, load};

    fn sample(name: &str) -> Scene {
        let path = armwright_test_support::samples::samples_dir().join(name);
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
    fn joint_limits_become_si_overrides_the_plan_uses() {
        let mut scene = sample("peg-sorter.armwright.json");
        let limit = |joint: &str, velocity, acceleration, jerk| JointLimitDoc {
            joint: joint.into(),
            max_velocity_deg_or_mm_per_s: velocity,
            max_acceleration_deg_or_mm_per_s2: acceleration,
            max_jerk_deg_or_mm_per_s3: jerk,
        };
        scene.timing.joint_limits = vec![
            limit("elbow", Some(45.0), None, Some(9000.0)),
            limit("lift", Some(20.0), Some(150.0), None),
        ];
        let settings = limit_settings_of(&scene);
        assert_eq!(settings.velocity_override[1], Some(45f64.to_radians()));
        assert_eq!(settings.acceleration_override[1], None);
        assert_eq!(settings.velocity_override[2], Some(0.02));
        assert_eq!(settings.acceleration_override[2], Some(0.15));
        assert_eq!(settings.velocity_override[0], None);
        assert_eq!(settings.jerk_override[1], Some(9000f64.to_radians()));
        assert_eq!(settings.jerk_override[2], None);
        let arm = build_arm(&scene.arm).expect("sample arm");
        let plan = armwright_trajectory::plan_task(&arm, &task_of(&scene, &arm)).expect("plans");
        assert_eq!(plan.limits()[1].velocity, 45f64.to_radians());
        assert_eq!(plan.limits()[2].velocity, 0.02);
        assert_eq!(plan.limits()[2].acceleration, 0.15);
        assert_eq!(plan.limits()[1].jerk, 9000f64.to_radians());
        // Without a jerk of its own, a joint's jerk is its acceleration ÷ 0.05 s.
        assert!((plan.limits()[2].jerk - 0.15 / 0.05).abs() < 1e-12);
    }

    #[test]
    fn timing_written_back_reads_the_same() {
        let scene = sample("spacer-stacker.armwright.json");
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

    #[test]
    fn a_retimed_scene_carries_the_timing_and_the_target() {
        let scene = sample("pen-plotter.armwright.json");
        let arm = build_arm(&scene.arm).expect("sample arm");
        let settings = RetimeSettings {
            max_overshoot_mm: 0.4,
            torque_share: 0.45,
            min_dwell_ms: 0.0,
        };
        let result = retime_scene(&scene, &arm, &settings, |_| true).expect("retimes");
        let again = task_of(&result.scene, &arm).timing();
        for (a, b) in again
            .speed_share
            .iter()
            .zip(&result.retimed.timing.speed_share)
        {
            assert!((a - b).abs() < 1e-12);
        }
        assert_eq!(result.before, task_of(&scene, &arm).timing());
        assert_eq!(result.scene.timing.max_overshoot_mm, 0.4);
        assert!((result.scene.timing.torque_derating_pct - 45.0).abs() < 1e-12);
        assert!(result.retimed.after.worst_overshoot() <= 0.4e-3);
    }

    #[test]
    fn a_refused_progress_cancels_the_retime() {
        let scene = sample("pen-plotter.armwright.json");
        let arm = build_arm(&scene.arm).expect("sample arm");
        let settings = RetimeSettings {
            max_overshoot_mm: 0.5,
            torque_share: 0.5,
            min_dwell_ms: 0.0,
        };
        let mut calls = 0;
        let result = retime_scene(&scene, &arm, &settings, |_| {
            calls += 1;
            calls < 3
        });
        assert!(matches!(result, Err(RetimeError::Cancelled)), "{result:?}");
        assert_eq!(calls, 3);
    }
}
