//! Clearance along a plan and along the dry run: contacts named with link, object and time, the
//! smallest clearance checked by hand and against looking at every instant.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

#[path = "../../kinematics/tests/common/mod.rs"]
mod arms;

use armwright_kinematics::{ArmShape, Obstacle, Other, forward, pair_distance, pose_proximities};
use armwright_trajectory::{
    ClearanceOptions, CommandedMotion, LimitSettings, ProfileShape, ServoModelOptions, ServoTrace,
    Task, TaskWaypoint, Workcell, dry_run_clearance, grip_exemptions, plan_clearance, plan_task,
};
use nalgebra::Vector3;

fn stop(positions: [f64; 4], gripper_closed: bool) -> TaskWaypoint {
    TaskWaypoint {
        positions: positions.to_vec(),
        stop: true,
        dwell: 0.1,
        speed_share: 1.0,
        gripper_closed,
        straight: false,
        shape: ProfileShape::DoubleS,
    }
}

fn task(waypoints: Vec<TaskWaypoint>) -> Task {
    Task {
        waypoints,
        limits: LimitSettings::default(),
        model: ServoModelOptions::default(),
        shaping: None,
    }
}

#[test]
fn a_move_through_the_table_is_a_contact_with_link_object_and_time() {
    // From level to the elbow 60° down and back: the forearm's far end reaches
    // 0.09 − 0.11·sin 60° = −0.00526 m, through a table at 0.02 m (the tool beyond it deeper).
    let arm = arms::articulated(false);
    let shape = ArmShape::of(&arm);
    let obstacles = [Obstacle::table(0.02)];
    let down = -60_f64.to_radians();
    let plan = plan_task(
        &arm,
        &task(vec![
            stop([0.0; 4], false),
            stop([0.0, 0.0, down, 0.0], false),
            stop([0.0; 4], false),
        ]),
    )
    .unwrap();
    let cell = Workcell {
        arm: &arm,
        shape: &shape,
        obstacles: &obstacles,
        exemptions: &[],
    };
    let options = ClearanceOptions::default();
    let clearance = plan_clearance(&cell, &plan, plan.timings(), &options);
    assert!(clearance.moves[0].first_contact.is_none());
    let contact = clearance.moves[1].first_contact.unwrap();
    assert_eq!(contact.waypoint, 1);
    assert_eq!(contact.pair.other, Other::Obstacle(0));
    let timings = plan.timings();
    assert!(contact.time > timings[0].departure && contact.time < timings[1].arrival);
    // The first look that finds it: an overlap there, none 1 ms (the longest step) before.
    let depth_at = |t: f64| {
        let mut q = [0.0; 4];
        plan.positions_at(t, &mut q);
        let placed = shape.place(&forward(&arm, &q).unwrap());
        -pair_distance(&shape, &placed, &obstacles, contact.pair)
    };
    assert!(depth_at(contact.time) > options.touch_tolerance);
    assert!(depth_at(contact.time - options.interval) <= options.touch_tolerance + 2e-3);
    // Deepest at the stop: the pose-level depth there.
    let at_stop = pose_proximities(&arm, &shape, &obstacles, &[0.0, 0.0, down, 0.0], |p| {
        p != contact.pair
    })
    .unwrap();
    assert!((contact.depth + at_stop[0].distance).abs() < 1e-9);
    assert!((clearance.min_clearance() - at_stop[0].distance).abs() < 1e-9);
    // The way back starts in the table.
    let back = clearance.moves[2].first_contact.unwrap();
    assert!((back.time - timings[1].departure).abs() < 1e-9);
}

#[test]
fn a_clear_plan_reports_the_clearance_worked_by_hand() {
    // Start level (every link at 0.09 m, radius 10 mm) over a block whose top is at 0.05 m
    // under the tool point (0.30, 0, 0.09), then lift. By hand the smallest clearance is at the
    // start: 0.09 − 0.01 − 0.05 = 0.03 m, tool against block.
    let arm = arms::articulated(false);
    let shape = ArmShape::of(&arm);
    let obstacles = [
        Obstacle::table(0.0),
        Obstacle::standing_box(
            "block",
            Vector3::new(0.30, 0.0, 0.0),
            Vector3::new(0.04, 0.04, 0.05),
        ),
    ];
    let plan = plan_task(
        &arm,
        &task(vec![
            stop([0.0; 4], false),
            stop([0.3, 0.5, -0.4, 0.2], false),
        ]),
    )
    .unwrap();
    let cell = Workcell {
        arm: &arm,
        shape: &shape,
        obstacles: &obstacles,
        exemptions: &[],
    };
    let clearance = plan_clearance(&cell, &plan, plan.timings(), &ClearanceOptions::default());
    assert!(clearance.contacts().next().is_none());
    assert!((clearance.min_clearance() - 0.03).abs() < 1e-7);
    let first = clearance.moves[0];
    assert_eq!(first.closest.unwrap().other, Other::Obstacle(1));
    assert_eq!(shape.links()[first.closest.unwrap().link].name, "tool");
    assert!(clearance.moves[1].min_clearance >= 0.03 - 1e-7);
}

#[test]
fn skipping_far_pairs_finds_what_looking_at_every_pair_every_quarter_millisecond_finds() {
    let arm = arms::articulated(false);
    let shape = ArmShape::of(&arm);
    let obstacles = [
        Obstacle::table(0.0),
        Obstacle::standing_box(
            "feeder",
            Vector3::new(0.18, 0.08, 0.0),
            Vector3::new(0.04, 0.04, 0.08),
        ),
        Obstacle::standing_box(
            "tray",
            Vector3::new(0.16, -0.1, 0.0),
            Vector3::new(0.08, 0.06, 0.03),
        ),
    ];
    let mut rng = arms::Seeded::new(5);
    let waypoints = (0..20)
        .map(|_| {
            stop(
                [
                    rng.uniform(-0.8, 0.8),
                    rng.uniform(0.2, 1.2),
                    rng.uniform(-1.8, -0.4),
                    rng.uniform(-1.2, 0.4),
                ],
                false,
            )
        })
        .collect();
    let plan = plan_task(&arm, &task(waypoints)).unwrap();
    let cell = Workcell {
        arm: &arm,
        shape: &shape,
        obstacles: &obstacles,
        exemptions: &[],
    };
    let options = ClearanceOptions::default();
    let clearance = plan_clearance(&cell, &plan, plan.timings(), &options);
    let timings = plan.timings();
    let mut start = 0.0;
    let mut contacts = 0;
    for (index, timing) in timings.iter().enumerate() {
        let end = if index + 1 == timings.len() {
            plan.duration()
        } else {
            timing.departure
        };
        let steps = ((end - start) / 2.5e-4).ceil() as usize;
        let mut smallest = f64::INFINITY;
        for k in 0..=steps {
            let mut q = [0.0; 4];
            plan.positions_at(start + (end - start) * k as f64 / steps as f64, &mut q);
            let found = pose_proximities(&arm, &shape, &obstacles, &q, |_| false).unwrap();
            smallest = found.iter().map(|p| p.distance).fold(smallest, f64::min);
        }
        let walked = clearance.moves[index].min_clearance;
        // Both look at instants only; 0.5 mm covers the 2 mm steps' sampling of a minimum.
        assert!(
            (walked - smallest).abs() < 5e-4,
            "move {index}: walked {walked} m, every instant {smallest} m"
        );
        let found = clearance.moves[index].first_contact.is_some();
        if smallest < -options.touch_tolerance - 5e-4 {
            assert!(found, "move {index}: {smallest} m deep but no contact");
        } else if smallest > -options.touch_tolerance + 5e-4 {
            assert!(
                !found,
                "move {index}: a contact where every instant is clear"
            );
        }
        contacts += usize::from(smallest < 0.0);
        start = end;
    }
    assert!(
        contacts > 0,
        "the random moves must also reach into something"
    );
}

#[test]
fn the_dry_run_motion_is_checked_where_the_plan_is_clear() {
    // A hand-made trace, 1 ms apart: the command stays level, the simulated elbow sags to 60°
    // down between 0.2 s and 0.4 s (as a limp or overshooting servo would), through a table at
    // 0.02 m.
    let arm = arms::articulated(false);
    let shape = ArmShape::of(&arm);
    let obstacles = [Obstacle::table(0.02)];
    let samples = 601;
    let mut actual = Vec::new();
    let mut commanded = Vec::new();
    for k in 0..samples {
        let t = k as f64 * 1e-3;
        let sag = if (0.2..=0.4).contains(&t) {
            -60_f64.to_radians() * ((t - 0.2) / 0.1).min((0.4 - t) / 0.1).min(1.0)
        } else {
            0.0
        };
        actual.extend([0.0, 0.0, sag, 0.0]);
        commanded.extend([0.0; 4]);
    }
    let trace = ServoTrace {
        step: 1e-3,
        joint_count: 4,
        commanded,
        actual,
        velocity: vec![0.0; samples * 4],
        drive_share: vec![0.0; samples * 4],
        effort_share: vec![0.0; samples * 4],
    };
    let timings = [
        armwright_trajectory::WaypointTiming {
            arrival: 0.0,
            departure: 0.1,
            stop: true,
            gripper_acts: None,
        },
        armwright_trajectory::WaypointTiming {
            arrival: 0.5,
            departure: 0.5,
            stop: true,
            gripper_acts: None,
        },
    ];
    let cell = Workcell {
        arm: &arm,
        shape: &shape,
        obstacles: &obstacles,
        exemptions: &[],
    };
    let clearance = dry_run_clearance(&cell, &trace, &timings, &ClearanceOptions::default());
    assert!(clearance.moves[0].first_contact.is_none());
    let contact = clearance.moves[1].first_contact.unwrap();
    assert!(contact.time > 0.2 && contact.time < 0.3, "{}", contact.time);
    assert_eq!(contact.pair.other, Other::Obstacle(0));
    assert!((clearance.moves[1].closest_time - 0.3).abs() < 1e-3);
}

#[test]
fn a_picked_object_is_left_out_for_the_gripper_then_for_every_link() {
    // The tool point of the pick stop lies inside a block: the tool is exempt against it on the
    // moves into and out of the pick, every link after it; the table never is.
    let arm = arms::articulated(false);
    let shape = ArmShape::of(&arm);
    let pick = [0.0, 0.0, -0.3, -0.6];
    let point = armwright_kinematics::tool_pose(&arm, &pick)
        .unwrap()
        .translation
        .vector;
    let obstacles = [
        Obstacle::table(0.0),
        Obstacle::standing_box(
            "cube",
            Vector3::new(point.x, point.y, point.z - 0.01),
            Vector3::new(0.025, 0.025, 0.025),
        ),
    ];
    let waypoints = vec![
        stop([0.0; 4], false),
        stop(pick, true),
        stop([0.0; 4], true),
        stop([0.3, 0.2, -0.2, 0.0], true),
    ];
    let exemptions = grip_exemptions(&arm, &shape, &obstacles, &waypoints).unwrap();
    let tool = shape.tool_link();
    let has = |waypoint: usize, link: Option<usize>| {
        exemptions
            .iter()
            .any(|e| e.waypoint == waypoint && e.link == link && e.obstacle == 1)
    };
    assert!(has(1, Some(tool)) && has(2, Some(tool)));
    assert!(has(2, None) && has(3, None));
    assert!(!has(0, Some(tool)) && !has(1, None));
    assert!(exemptions.iter().all(|e| e.obstacle != 0));
    let plan = plan_task(&arm, &task(waypoints)).unwrap();
    let exempted = Workcell {
        arm: &arm,
        shape: &shape,
        obstacles: &obstacles,
        exemptions: &exemptions,
    };
    let options = ClearanceOptions::default();
    let clear = plan_clearance(&exempted, &plan, plan.timings(), &options);
    assert!(clear.contacts().next().is_none());
    let strict = Workcell {
        exemptions: &[],
        ..exempted
    };
    let refused = plan_clearance(&strict, &plan, plan.timings(), &options);
    assert_eq!(refused.contacts().next().unwrap().waypoint, 1);
}
