//! Straight moves: the planned tool point stays on the line; a line through the unreachable
//! core says where it fails.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

use armwright_test_support::arms as common;

use armwright_kinematics::{Arm, IkOptions, IkTarget, solve_ik, tool_pose};
use armwright_trajectory::{
    CommandedMotion, LINE_TOLERANCE, LimitSettings, PlanError, ProfileShape, ServoModelOptions,
    Task, TaskWaypoint, plan_task,
};
use nalgebra::Vector3;

fn pose_at(arm: &Arm, x: f64, y: f64, z: f64, angle: f64) -> Vec<f64> {
    let target = IkTarget::at(Vector3::new(x, y, z)).with_angle(angle);
    let home = arm.home_pose();
    let solutions = solve_ik(arm, &target, &home, &IkOptions::default()).expect("reachable end");
    solutions.nearest(&home).positions().to_vec()
}

fn task(from: Vec<f64>, to: Vec<f64>) -> Task {
    let stop = |positions: Vec<f64>, straight: bool| TaskWaypoint {
        positions,
        stop: true,
        dwell: 0.1,
        speed_share: 0.6,
        gripper_closed: false,
        straight,
        shape: ProfileShape::DoubleS,
    };
    Task {
        waypoints: vec![stop(from, false), stop(to, true)],
        limits: LimitSettings::default(),
        model: ServoModelOptions::default(),
        shaping: None,
    }
}

/// Distance from `p` to the segment `a`–`b`, in m.
fn off_line(p: Vector3<f64>, a: Vector3<f64>, b: Vector3<f64>) -> f64 {
    let d = b - a;
    let s = ((p - a).dot(&d) / d.dot(&d)).clamp(0.0, 1.0);
    (p - (a + d * s)).norm()
}

#[test]
fn the_tool_point_stays_on_the_line() {
    for arm in [
        common::articulated(false),
        common::articulated(true),
        common::scara(),
    ] {
        let angle = if matches!(arm.arm_type(), armwright_kinematics::ArmType::Scara(_)) {
            0.3
        } else {
            -0.4
        };
        let from = pose_at(&arm, 0.20, -0.06, 0.07, angle);
        let to = pose_at(&arm, 0.14, 0.12, 0.10, angle);
        let plan = plan_task(&arm, &task(from.clone(), to.clone())).expect("a straight path");
        let a = tool_pose(&arm, &from).unwrap().translation.vector;
        let b = tool_pose(&arm, &to).unwrap().translation.vector;
        let mut positions = vec![0.0; arm.joint_count()];
        let mut worst: f64 = 0.0;
        let steps = (plan.duration() / 1e-3) as usize;
        for k in 0..=steps {
            plan.positions_at(k as f64 * 1e-3, &mut positions);
            let p = tool_pose(&arm, &positions).unwrap().translation.vector;
            worst = worst.max(off_line(p, a, b));
        }
        // The cut points lie on the line; between them the joint-space blend may bow out by
        // about the chord tolerance.
        assert!(
            worst <= 2.0 * LINE_TOLERANCE,
            "{}: {} mm off",
            arm.arm_type().word(),
            worst * 1e3
        );
        let end = plan.timings()[1];
        plan.positions_at(end.arrival, &mut positions);
        assert!(positions.iter().zip(&to).all(|(p, q)| (p - q).abs() < 1e-9));
    }
}

#[test]
fn a_line_through_the_unreachable_core_names_where_it_fails() {
    // The horizontal arm cannot fold its elbow past its limit, so a ring around the shoulder
    // axis (radius about 78 mm for this arm) is out of reach; a chord between points at ±70°
    // and 200 mm passes 68 mm from the axis.
    let arm = common::scara();
    let r = 0.2;
    let (c, s) = (70f64.to_radians().cos(), 70f64.to_radians().sin());
    let from = pose_at(&arm, r * c, -r * s, 0.1, 0.0);
    let to = pose_at(&arm, r * c, r * s, 0.1, 0.0);
    match plan_task(&arm, &task(from, to)) {
        Err(PlanError::Straight(error)) => {
            assert_eq!(error.waypoint, 1);
            assert!(error.share > 0.0 && error.share < 1.0, "{error}");
            assert!(error.to_string().contains("waypoint 1"));
        }
        other => panic!("expected a straight-move error, got {other:?}"),
    }
}
