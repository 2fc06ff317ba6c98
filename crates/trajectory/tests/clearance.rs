//! Clearance along a plan and along the dry run: contacts named with link, object and time, the
//! smallest clearance checked by hand and against looking at every instant; a carried object
//! against obstacles and against the arm's own links.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

use armwright_test_support::arms;

use armwright_kinematics::{ArmShape, Obstacle, Other, forward, pair_distance, pose_proximities};
use armwright_trajectory::{
    ClearanceOptions, CommandedMotion, LimitSettings, ProfileShape, ServoModelOptions, ServoTrace,
    Task, TaskWaypoint, Workcell, carried_objects, dry_run_clearance, grip_exemptions,
    plan_clearance, plan_task,
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
        carried: &[],
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
        carried: &[],
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
        carried: &[],
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
        carried: &[],
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
        carried: &[],
    };
    let options = ClearanceOptions::default();
    let clear = plan_clearance(&exempted, &plan, plan.timings(), &options);
    assert!(clear.contacts().next().is_none());
    let strict = Workcell {
        exemptions: &[],
        carried: &[],
        ..exempted
    };
    let refused = plan_clearance(&strict, &plan, plan.timings(), &options);
    assert_eq!(refused.contacts().next().unwrap().waypoint, 1);
}

/// The sample articulated arm of four joints, with a gripper.
fn articulated_with_gripper() -> armwright_kinematics::Arm {
    use armwright_kinematics::{
        Arm, ArmDescription, ArmType, ArticulatedDims, Gripper, MassProperties,
    };
    use std::f64::consts::PI;
    Arm::new(ArmDescription {
        arm_type: ArmType::Articulated4(ArticulatedDims {
            base_height: 0.09,
            upper_arm: 0.12,
            forearm: 0.11,
            wrist_to_tool: 0.07,
        }),
        joints: vec![
            arms::joint(
                "base",
                -PI / 2.0,
                PI / 2.0,
                MassProperties::point(0.03, Vector3::zeros()),
            ),
            arms::joint(
                "shoulder",
                -0.2,
                PI - 0.2,
                MassProperties::rod_along_x(0.05, 0.12),
            ),
            arms::joint("elbow", -2.5, 2.5, MassProperties::rod_along_x(0.04, 0.11)),
            arms::joint(
                "wrist",
                -PI / 2.0,
                PI / 2.0,
                MassProperties::rod_along_x(0.02, 0.05),
            ),
        ],
        tool_mass: MassProperties::point(0.03, Vector3::zeros()),
        payload_mass: 0.025,
        gripper: Some(Gripper {
            open_pulse_us: 1200.0,
            closed_pulse_us: 1800.0,
        }),
    })
    .expect("arm is valid")
}

#[test]
fn a_carried_box_dragged_through_another_obstacle_is_a_contact_of_the_box() {
    // Pick a 30 mm cube, lift it, swing the base with it and put it down. A low wall stands on
    // the swing's path, its top below the carried cube's bottom but above every link: the cube
    // hits it; the arm alone passes over.
    let arm = articulated_with_gripper();
    let shape = ArmShape::of(&arm);
    let (low, high) = ([0.0, 0.35, -1.35, -0.55], [0.0, 0.55, -1.35, -0.75]);
    let turned = |pose: [f64; 4], yaw: f64| [yaw, pose[1], pose[2], pose[3]];
    let swing = 0.8;
    let tool_at = |pose: &[f64]| armwright_kinematics::tool_pose(&arm, pose).unwrap();
    let pick = tool_at(&low).translation.vector;
    let cube = Obstacle::standing_box(
        "cube",
        Vector3::new(pick.x, pick.y, pick.z - 0.015),
        Vector3::repeat(0.03),
    );
    // How low the cube and the links come on the swing (its middle, where the wall stands).
    let middle = turned(high, swing / 2.0);
    let held = armwright_kinematics::CarriedBox::picked(0, &cube, &tool_at(&low)).unwrap();
    let placed = held.placed(&tool_at(&middle));
    let cube_bottom = (0..8)
        .map(|corner| {
            let sign = |bit: usize| if corner & bit == 0 { -1.0 } else { 1.0 };
            let local = Vector3::new(
                sign(1) * held.half_size.x,
                sign(2) * held.half_size.y,
                sign(4) * held.half_size.z,
            );
            (placed * nalgebra::Point3::from(local)).z
        })
        .fold(f64::INFINITY, f64::min);
    let links = shape.place(&forward(&arm, &middle).unwrap());
    // The base column stands at the base, far from the wall.
    let links_bottom = links
        .segments()
        .iter()
        .zip(shape.links())
        .skip(1)
        .map(|((a, b), link)| a.z.min(b.z) - link.radius)
        .fold(f64::INFINITY, f64::min);
    assert!(
        links_bottom - cube_bottom > 0.006,
        "the cube must hang below the links: cube {cube_bottom}, links {links_bottom}"
    );
    let wall_top = (cube_bottom + links_bottom) / 2.0;
    let centre = tool_at(&middle).translation.vector;
    let wall = Obstacle::standing_box(
        "wall",
        Vector3::new(centre.x, centre.y, wall_top - 0.05),
        Vector3::new(0.03, 0.03, 0.05),
    );
    // The cube stands on the table, and is put down on it again.
    let obstacles = [cube, wall, Obstacle::table(pick.z - 0.015)];
    let waypoints = vec![
        stop(high, false),
        stop(low, true),
        stop(high, true),
        stop(turned(high, swing), true),
        stop(turned(low, swing), false),
        stop(turned(high, swing), false),
    ];
    let exemptions = grip_exemptions(&arm, &shape, &obstacles, &waypoints).unwrap();
    let carried = carried_objects(&arm, &shape, &obstacles, &waypoints).unwrap();
    assert_eq!(carried.len(), 1);
    assert_eq!((carried[0].first, carried[0].last), (2, 4));
    assert_eq!(carried[0].object.obstacle, 0);
    let plan = plan_task(&arm, &task(waypoints)).unwrap();
    let cell = Workcell {
        arm: &arm,
        shape: &shape,
        obstacles: &obstacles,
        exemptions: &exemptions,
        carried: &carried,
    };
    let options = ClearanceOptions::default();
    let clearance = plan_clearance(&cell, &plan, plan.timings(), &options);
    let contacts: Vec<_> = clearance.contacts().collect();
    assert_eq!(contacts.len(), 1, "{contacts:?}");
    let contact = contacts[0];
    assert_eq!(contact.waypoint, 3);
    assert_eq!(contact.carried, Some(0));
    assert_eq!(contact.pair.other, Other::Obstacle(1));
    let timing = plan.timings()[3];
    assert!(contact.time > plan.timings()[2].departure && contact.time < timing.arrival);
    // About as deep as the wall's top stands above the cube's bottom at the middle.
    let depth = wall_top - cube_bottom;
    assert!(
        contact.depth > 0.5 * depth && contact.depth < depth + 1e-3,
        "{} vs {depth}",
        contact.depth
    );
    // The arm alone clears the wall.
    let bare = Workcell {
        carried: &[],
        ..cell
    };
    assert!(
        plan_clearance(&bare, &plan, plan.timings(), &options)
            .contacts()
            .next()
            .is_none()
    );
    // Against looking at every 0.25 ms: the same smallest clearance on the swing, within the
    // resolution.
    let fine = ClearanceOptions {
        interval: 2.5e-4,
        max_step: 1e-4,
        resolution: 0.0,
        relative_resolution: 0.0,
        ..options
    };
    let exact = plan_clearance(&cell, &plan, plan.timings(), &fine);
    assert!(
        (exact.moves[3].min_clearance - clearance.moves[3].min_clearance).abs() < 2e-4,
        "{} vs {}",
        exact.moves[3].min_clearance,
        clearance.moves[3].min_clearance
    );
}

#[test]
fn a_fixture_a_part_is_taken_from_is_not_carried() {
    // The same pick, out of a 65 mm feeder whose top stands 5 mm above the tool point; the part
    // is put down 30 mm or more lower, where the feeder would stand as deep in the table, so the
    // feeder stays.
    let arm = articulated_with_gripper();
    let shape = ArmShape::of(&arm);
    let (low, high) = ([0.0, 0.35, -1.35, -0.55], [0.0, 0.55, -1.35, -0.75]);
    let turned = |pose: [f64; 4], yaw: f64| [yaw, pose[1], pose[2], pose[3]];
    let pick = armwright_kinematics::tool_pose(&arm, &low)
        .unwrap()
        .translation
        .vector;
    let table = pick.z - 0.06;
    let obstacles = [
        Obstacle::standing_box(
            "feeder",
            Vector3::new(pick.x, pick.y, table),
            Vector3::new(0.03, 0.03, 0.065),
        ),
        Obstacle::table(table),
    ];
    let lower = (0..8)
        .map(|step| [0.8, 0.35 - 0.05 * f64::from(step), -1.35, -0.55])
        .find(|pose| {
            let z = armwright_kinematics::tool_pose(&arm, pose)
                .unwrap()
                .translation
                .vector
                .z;
            z < pick.z - 0.03
        })
        .expect("a place 30 mm below the pick");
    let waypoints = vec![
        stop(high, false),
        stop(low, true),
        stop(high, true),
        stop(lower, false),
    ];
    let carried = carried_objects(&arm, &shape, &obstacles, &waypoints).unwrap();
    assert!(carried.is_empty(), "{carried:?}");
    // Put down where it was, it would be carried.
    let back = vec![
        stop(high, false),
        stop(low, true),
        stop(high, true),
        stop(turned(low, 0.8), false),
    ];
    assert_eq!(
        carried_objects(&arm, &shape, &obstacles, &back)
            .unwrap()
            .len(),
        1
    );
}

#[test]
fn a_carried_object_swung_into_the_arms_own_forearm_is_a_contact_with_that_link() {
    // An object held off to one side of the gripper, reaching back past the wrist (a handle
    // alongside the forearm): 20 mm past the wrist along the gripper's axis and 40 mm beside it,
    // a 20 mm cube. Straight, it clears the forearm by about 20 mm; bending the wrist toward
    // that side swings it into the forearm. The gripper link that holds it is never checked
    // against it; the arm alone is clear.
    let arm = articulated_with_gripper();
    let shape = ArmShape::of(&arm);
    let tool_link = shape.tool_link();
    let straight = [0.0, 0.55, -1.35, 0.0];
    let tool = armwright_kinematics::tool_pose(&arm, &straight).unwrap();
    let placed = shape.place(&forward(&arm, &straight).unwrap());
    let wrist = placed.segments()[tool_link].0;
    let along = (wrist - tool.translation.vector).normalize();
    let beside = Vector3::y().cross(&along).normalize();
    let nearest_link = |held: &armwright_kinematics::CarriedBox, pose: &[f64]| {
        let chain = forward(&arm, pose).unwrap();
        let placed = shape.place(&chain);
        placed
            .segments()
            .iter()
            .zip(shape.links())
            .enumerate()
            .filter(|(link, _)| *link != tool_link)
            .map(|(link, ((a, b), s))| (held.distance_to_link(chain.tool(), a, b, s.radius), link))
            .fold((f64::INFINITY, 0), |best, next| {
                if next.0 < best.0 { next } else { best }
            })
    };
    // The side the wrist bends toward with a positive turn.
    let bent = [0.0, 0.55, -1.35, 1.0];
    let (held, obstacle) = [1.0, -1.0]
        .into_iter()
        .map(|side| {
            let centre = wrist + along * 0.02 + beside * (0.04 * side);
            let obstacle = Obstacle {
                name: "handle".into(),
                shape: armwright_kinematics::ObstacleShape::Box {
                    centre,
                    half_size: Vector3::repeat(0.01),
                },
            };
            let held = armwright_kinematics::CarriedBox::picked(0, &obstacle, &tool).unwrap();
            (held, obstacle)
        })
        .min_by(|a, b| {
            nearest_link(&a.0, &bent)
                .0
                .total_cmp(&nearest_link(&b.0, &bent).0)
        })
        .unwrap();
    let (at_start, _) = nearest_link(&held, &straight);
    let (deepest_end, link) = nearest_link(&held, &bent);
    assert!(at_start > 0.01, "clear when straight: {at_start}");
    assert!(deepest_end < -0.003, "into a link when bent: {deepest_end}");
    assert_eq!(shape.links()[link].name, "forearm");
    let obstacles = [obstacle];
    let waypoints = vec![stop(straight, true), stop(bent, true)];
    let plan = plan_task(&arm, &task(waypoints)).unwrap();
    // The object's own box where it stood is not an obstacle here.
    let exemptions: Vec<_> = (0..2)
        .map(|waypoint| armwright_trajectory::Exemption {
            waypoint,
            link: None,
            obstacle: 0,
        })
        .collect();
    let carried = [armwright_trajectory::Carry {
        first: 1,
        last: 1,
        object: held.clone(),
        lifted_from: Vec::new(),
        put_on: Vec::new(),
    }];
    let cell = Workcell {
        arm: &arm,
        shape: &shape,
        obstacles: &obstacles,
        exemptions: &exemptions,
        carried: &carried,
    };
    let options = ClearanceOptions::default();
    let clearance = plan_clearance(&cell, &plan, plan.timings(), &options);
    let contacts: Vec<_> = clearance.contacts().collect();
    assert_eq!(contacts.len(), 1, "{contacts:?}");
    let contact = contacts[0];
    assert_eq!(contact.waypoint, 1);
    assert_eq!(contact.carried, Some(0));
    assert_eq!(contact.pair.other, Other::Link(link));
    // Against looking at every 0.25 ms: the first instant in contact and the depth.
    let timings = plan.timings();
    let (start, end) = (timings[0].departure, plan.duration());
    let steps = ((end - start) / 2.5e-4).ceil() as usize;
    let mut first = None;
    let mut deepest = 0.0_f64;
    for k in 0..=steps {
        let t = start + (end - start) * k as f64 / steps as f64;
        let mut q = [0.0; 4];
        plan.positions_at(t, &mut q);
        let (distance, _) = nearest_link(&held, &q);
        if distance < -options.touch_tolerance && first.is_none() {
            first = Some(t);
        }
        deepest = deepest.max(-distance);
    }
    let first = first.expect("a contact at some instant");
    assert!(
        (contact.time - first).abs() < 2e-3,
        "{} vs {first}",
        contact.time
    );
    assert!(
        (contact.depth - deepest).abs() < 5e-4,
        "{} vs {deepest}",
        contact.depth
    );
    // Without the object the arm is clear.
    let bare = Workcell {
        carried: &[],
        ..cell
    };
    assert!(
        plan_clearance(&bare, &plan, plan.timings(), &options)
            .contacts()
            .next()
            .is_none()
    );
}
