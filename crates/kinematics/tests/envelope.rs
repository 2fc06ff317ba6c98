//! Reach envelope and torque-utilisation maps (`src/envelope.rs`).
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

use armwright_test_support::arms as common;

use armwright_kinematics::{
    Arm, ArmDescription, ArmType, ChainDims, DhRow, IkOptions, IkTarget, JointKind, MapOptions,
    MapView, MassProperties, ReachMap, ScaraDims, gravity_torques, reach_map, solve_ik, tool_pose,
    torque_use,
};
use common::{Seeded, articulated, joint, scara};
use nalgebra::{Isometry3, Vector3};
use std::f64::consts::{FRAC_PI_2, PI, TAU};

/// A horizontal arm whose shoulder and elbow turn a whole turn each: seen from above it reaches
/// exactly the ring between |a1 − a2| and a1 + a2.
fn free_horizontal_arm(a1: f64, a2: f64) -> Arm {
    let mass = MassProperties::point(0.02, Vector3::zeros());
    let mut spec = scara_joints();
    spec[0] = joint("shoulder", -PI, PI, mass);
    spec[1] = joint("elbow", -PI, PI, mass);
    Arm::new(ArmDescription {
        arm_type: ArmType::Scara(ScaraDims {
            base_height: 0.12,
            upper_arm: a1,
            forearm: a2,
            tool_drop: 0.04,
        }),
        joints: spec,
        tool_mass: MassProperties::zero(),
        payload_mass: 0.0,
        gripper: None,
    })
    .unwrap()
}

fn scara_joints() -> Vec<armwright_kinematics::JointSpec> {
    let mass = MassProperties::point(0.02, Vector3::zeros());
    let mut lift = joint("lift", -0.05, 0.05, mass);
    lift.servo.drive_ratio = 0.01;
    vec![
        joint("shoulder", -2.4, 2.4, mass),
        joint("elbow", -2.6, 2.6, mass),
        lift,
        joint("roll", -PI, PI, mass),
    ]
}

fn grid_area(map: &ReachMap) -> f64 {
    let extent = map.extent();
    (extent.u_max - extent.u_min) * (extent.v_max - extent.v_min)
}

#[test]
fn reachable_share_matches_the_annulus_area() {
    // Area of the ring between radii r and R: π(R² − r²) (elementary geometry, common
    // practice). A cell counts when any point of it is reachable, so the cells cover the ring
    // and reach past each rim by at most a cell diagonal (√2 cells): the excess is at most the
    // rims' length 2π(R + r) times √2 cells.
    for (a1, a2) in [(0.15, 0.12), (0.2, 0.2), (0.1, 0.16)] {
        let arm = free_horizontal_arm(a1, a2);
        let map = reach_map(&arm, &MapView::Top { height: 0.1 }, &MapOptions::default());
        let (outer, inner) = (a1 + a2, f64::abs(a1 - a2));
        let expected = PI * (outer * outer - inner * inner);
        let measured = map.reachable_share() * grid_area(&map);
        let cell = map.cell_size();
        let allowance = 2.0 * PI * (outer + inner) * cell * 2f64.sqrt();
        assert!(
            measured >= expected && measured - expected <= allowance,
            "{a1}, {a2}: {measured} m² against {expected} m² (+ {allowance})"
        );
        // Tighter in practice: a curve at a random slope adds on average (4/π)/2 ≈ 0.64 of a
        // cell's width along its length, and the marking radius (an eighth of a cell) about
        // 0.16 more.
        let rims = 2.0 * PI * (outer + inner) * cell;
        assert!(
            measured - expected <= 0.85 * rims,
            "{measured} against {expected}"
        );
    }
}

#[test]
fn boundary_points_lie_at_the_reach_radius() {
    // The ring's edges are circles of radius a1 + a2 and |a1 − a2| (planar two-link reach,
    // Spong, Hutchinson & Vidyasagar, Robot Modeling and Control, 2006, ch. 1).
    let arm = free_horizontal_arm(0.15, 0.12);
    let map = reach_map(&arm, &MapView::Top { height: 0.1 }, &MapOptions::default());
    assert_eq!(map.boundary().len(), 2, "one loop outside, one inside");
    let mut points = 0;
    for line in map.boundary() {
        assert!(line.len() > 20);
        assert_eq!(line.first(), line.last(), "a closed loop");
        for [x, y] in line {
            let radius = x.hypot(*y);
            let off = (radius - 0.27).abs().min((radius - 0.03).abs());
            assert!(off <= 1e-5, "boundary point at {radius} m");
            points += 1;
        }
    }
    assert!(points > 200);
    assert!((map.farthest_reach() - 0.27).abs() <= map.cell_size());
}

/// The lowest torque use over the map's pitches at a point, straight from `solve_ik`,
/// `gravity_torques` and `torque_use`: `samples` even pitches from straight down, and the tool
/// pointing straight away from the shoulder axis (0.09 m up) and straight at it.
fn lowest_use_by_ik(arm: &Arm, point: Vector3<f64>, samples: usize) -> Option<f64> {
    let mut best: Option<f64> = None;
    let away = (point.z - 0.09).atan2(point.x.hypot(point.y));
    let even = (0..samples).map(|index| -FRAC_PI_2 + TAU * index as f64 / samples as f64);
    for pitch in even.chain([away, away + PI]) {
        // The map holds a 5-joint wrist roll at home, which turned over is a tool roll of π.
        for roll in [0.0, PI] {
            let target = IkTarget::at(point).with_angle(pitch).with_roll(roll);
            let Ok(solutions) = solve_ik(arm, &target, &arm.home_pose(), &IkOptions::default())
            else {
                continue;
            };
            for branch in solutions.as_slice() {
                let efforts = gravity_torques(arm, branch.positions(), arm.payload_mass()).unwrap();
                let value = torque_use(arm, &efforts, 1.0).max_abs();
                best = Some(best.map_or(value, |known: f64| known.min(value)));
            }
        }
    }
    best
}

#[test]
fn side_view_cells_agree_with_inverse_kinematics_and_gravity() {
    let arm = articulated(false);
    let options = MapOptions {
        cells: 60,
        ..MapOptions::default()
    };
    let map = reach_map(&arm, &MapView::Side { yaw: 0.4 }, &options);
    assert!(map.reachable_share() > 0.2);
    let mut rng = Seeded::new(31);
    let mut reachable = 0;
    for _ in 0..400 {
        let column = (rng.uniform(0.0, 60.0) as usize).min(59);
        let row = (rng.uniform(0.0, 60.0) as usize).min(59);
        let [u, v] = map.cell_centre(column, row);
        let expected = lowest_use_by_ik(&arm, map.point_in_base(u, v), options.angle_samples);
        match (map.torque_use(column, row), expected) {
            (Some(got), Some(want)) => {
                assert!(
                    (got - want).abs() <= 1e-9,
                    "cell {column},{row}: {got} vs {want}"
                );
                reachable += 1;
            }
            (None, None) => {}
            // A cell counts when any point of it is reachable at any pitch, its centre need not
            // be at the sampled ones.
            (Some(_), None) => {}
            (got, want) => panic!("cell {column},{row}: map {got:?}, inverse kinematics {want:?}"),
        }
    }
    assert!(reachable > 50);
}

#[test]
fn top_view_cells_agree_with_inverse_kinematics_away_from_the_edge() {
    // The top view reads a radial profile sampled at a quarter cell, so cells right at the
    // envelope's edge may differ; the rest must agree on reachability, and on torque use to
    // within what a quarter cell of radius changes.
    let arm = articulated(true);
    let options = MapOptions {
        cells: 50,
        ..MapOptions::default()
    };
    let map = reach_map(&arm, &MapView::Top { height: 0.12 }, &options);
    assert!(map.reachable_share() > 0.1);
    let near_edge = |column: usize, row: usize| {
        let here = map.reachable(column, row);
        (column.saturating_sub(1)..=(column + 1).min(49)).any(|c| {
            (row.saturating_sub(1)..=(row + 1).min(49)).any(|r| map.reachable(c, r) != here)
        })
    };
    let mut compared = 0;
    for row in (0..50).step_by(3) {
        for column in (0..50).step_by(3) {
            if near_edge(column, row) {
                continue;
            }
            let [x, y] = map.cell_centre(column, row);
            let expected = lowest_use_by_ik(&arm, Vector3::new(x, y, 0.12), options.angle_samples);
            // A reachable centre makes a reachable cell; a cell may also be reachable away from
            // its centre or at a pitch between the samples.
            assert!(
                map.reachable(column, row) || expected.is_none(),
                "{column},{row}"
            );
            if let (Some(got), Some(want)) = (map.torque_use(column, row), expected) {
                assert!(
                    (got - want).abs() <= 0.05 * want.max(0.01),
                    "{got} vs {want}"
                );
            }
            compared += 1;
        }
    }
    assert!(compared > 100);
}

#[test]
fn derating_scales_every_cell() {
    let arm = articulated(true);
    let full = MapOptions {
        cells: 40,
        ..MapOptions::default()
    };
    let half = MapOptions {
        derating: 0.5,
        ..full
    };
    let view = MapView::Side { yaw: 0.0 };
    let (a, b) = (reach_map(&arm, &view, &full), reach_map(&arm, &view, &half));
    for row in 0..40 {
        for column in 0..40 {
            match (a.torque_use(column, row), b.torque_use(column, row)) {
                (Some(x), Some(y)) => assert!((2.0 * x - y).abs() <= 1e-12 * y.max(1.0)),
                (None, None) => {}
                other => panic!("{other:?}"),
            }
        }
    }
    assert!(b.over_torque_share() >= a.over_torque_share());
}

#[test]
fn behind_the_base_needs_the_turned_over_base() {
    // Base limited to ±90°: from the side at yaw 0 the points behind the base axis (u < 0) are
    // reached only with the base facing forward and the arm leaning back over it.
    let arm = articulated(false);
    let map = reach_map(&arm, &MapView::Side { yaw: 0.0 }, &MapOptions::default());
    let behind = (0..map.cells())
        .flat_map(|row| (0..map.cells() / 2).map(move |column| (column, row)))
        .filter(|&(column, row)| map.reachable(column, row))
        .count();
    let ahead = (0..map.cells())
        .flat_map(|row| (map.cells() / 2..map.cells()).map(move |column| (column, row)))
        .filter(|&(column, row)| map.reachable(column, row))
        .count();
    assert!(behind > 0 && ahead > behind);
}

#[test]
fn nonsense_inputs_give_an_empty_map_not_a_panic() {
    let arm = scara();
    for view in [
        MapView::Top { height: f64::NAN },
        MapView::Side { yaw: f64::INFINITY },
    ] {
        let map = reach_map(&arm, &view, &MapOptions::default());
        assert_eq!(map.reachable_share(), 0.0);
        assert!(map.boundary().is_empty());
    }
    let tiny = MapOptions {
        cells: 0,
        angle_samples: 0,
        payload_mass: Some(-1.0),
        ..MapOptions::default()
    };
    let map = reach_map(&arm, &MapView::Top { height: 0.1 }, &tiny);
    assert_eq!(map.cells(), 2);
    assert_eq!(map.reachable_share(), 0.0);
    assert_eq!(map.torque_use(5, 5), None);
}

#[test]
fn a_planar_chain_maps_close_to_its_ring() {
    // Two revolute joints about Z in standard Denavit–Hartenberg rows: the same ring as the
    // horizontal arm, found cell by cell with damped least squares.
    let mass = MassProperties::point(0.02, Vector3::zeros());
    let row = |a: f64| DhRow {
        kind: JointKind::Revolute,
        a,
        alpha: 0.0,
        d: 0.0,
        theta: 0.0,
    };
    let arm = Arm::new(ArmDescription {
        arm_type: ArmType::Chain(ChainDims::DenavitHartenberg {
            rows: vec![row(0.15), row(0.1)],
            tool: Isometry3::identity(),
        }),
        joints: vec![joint("one", -PI, PI, mass), joint("two", -PI, PI, mass)],
        tool_mass: MassProperties::zero(),
        payload_mass: 0.0,
        gripper: None,
    })
    .unwrap();
    let options = MapOptions {
        cells: 40,
        ..MapOptions::default()
    };
    let map = reach_map(&arm, &MapView::Top { height: 0.0 }, &options);
    let expected = PI * (0.25f64.powi(2) - 0.05f64.powi(2));
    let measured = map.reachable_share() * grid_area(&map);
    assert!(
        (measured - expected).abs() <= 0.05 * expected,
        "{measured} vs {expected}"
    );
}

proptest::proptest! {
    #![proptest_config(proptest::prelude::ProptestConfig::with_cases(48))]
    #[test]
    fn any_view_and_options_give_a_map(
        which in 0usize..3,
        top in proptest::bool::ANY,
        plane in proptest::num::f64::ANY,
        cells in 0usize..24,
        derating in proptest::num::f64::ANY,
        payload in proptest::option::of(proptest::num::f64::ANY),
        samples in 0usize..40,
        angle in proptest::option::of(proptest::num::f64::ANY),
    ) {
        let arm = match which {
            0 => scara(),
            1 => articulated(false),
            _ => articulated(true),
        };
        let view = if top { MapView::Top { height: plane } } else { MapView::Side { yaw: plane } };
        let options = MapOptions {
            cells,
            derating,
            payload_mass: payload,
            angle_samples: samples,
            tool_angle: angle,
        };
        let map = reach_map(&arm, &view, &options);
        proptest::prop_assert_eq!(map.cells(), cells.clamp(2, 2000));
        let share = map.reachable_share();
        proptest::prop_assert!((0.0..=1.0).contains(&share));
        for line in map.boundary() {
            for point in line {
                proptest::prop_assert!(point[0].is_finite() && point[1].is_finite());
            }
        }
    }
}

/// The cell (column, row) a point (u, v) of the view plane falls in, if on the grid.
fn cell_of(map: &ReachMap, u: f64, v: f64) -> Option<(usize, usize)> {
    let extent = map.extent();
    let size = map.cell_size();
    let column = ((u - extent.u_min) / size).floor();
    let row = ((v - extent.v_min) / size).floor();
    let inside = |k: f64| k >= 0.0 && k < map.cells() as f64;
    (inside(column) && inside(row)).then_some((column as usize, row as usize))
}

/// A random in-limit pose of `arm` whose tool point lies in `view`'s plane: every joint uniform
/// in its limits except the one that puts the tool point on the plane (the base yaw, the lift,
/// the wrist pitch or the shoulder), which is solved for; `None` when that one falls outside
/// its limits.
fn pose_on_slice(arm: &Arm, view: &MapView, rng: &mut Seeded) -> Option<Vec<f64>> {
    let mut pose = rng.pose(arm);
    let joints = arm.joints();
    let within = |index: usize, angle: f64| {
        [-TAU, 0.0, TAU]
            .into_iter()
            .map(|turn| angle + turn)
            .find(|a| *a >= joints[index].min && *a <= joints[index].max)
    };
    match (arm.arm_type(), view) {
        (ArmType::Articulated4(_) | ArmType::Articulated5(_), MapView::Side { yaw }) => {
            let side = if rng.uniform(0.0, 1.0) < 0.5 { 0.0 } else { PI };
            pose[0] = within(0, yaw + side).or_else(|| within(0, yaw + PI - side))?;
        }
        (ArmType::Articulated4(d) | ArmType::Articulated5(d), MapView::Top { height }) => {
            // The tool point is wrist_to_tool along the pitch from the wrist pivot.
            let wrist = tool_pose(arm, &pose).ok()?.translation.vector
                - (tool_pose(arm, &pose).ok()?.rotation * Vector3::x()) * d.wrist_to_tool;
            let sine = (height - wrist.z) / d.wrist_to_tool;
            if sine.abs() > 1.0 {
                return None;
            }
            let pitch = if rng.uniform(0.0, 1.0) < 0.5 {
                sine.asin()
            } else {
                PI - sine.asin()
            };
            pose[3] = within(3, pitch - pose[1] - pose[2])?;
        }
        (ArmType::Scara(d), MapView::Top { height }) => {
            pose[2] = height - d.base_height + d.tool_drop;
            if pose[2] < joints[2].min || pose[2] > joints[2].max {
                return None;
            }
        }
        (ArmType::Scara(d), MapView::Side { yaw }) => {
            let e = pose[1];
            let offset = (d.forearm * e.sin()).atan2(d.upper_arm + d.forearm * e.cos());
            let side = if rng.uniform(0.0, 1.0) < 0.5 { 0.0 } else { PI };
            pose[0] =
                within(0, yaw + side - offset).or_else(|| within(0, yaw + PI - side - offset))?;
        }
        _ => return None,
    }
    arm.within_limits(&pose).then_some(pose)
}

#[test]
fn every_reachable_tool_point_falls_in_a_reachable_cell_of_its_slice() {
    // 10 000 random in-limit poses per built-in arm type, 1 250 on each of eight slices; the
    // map must mark the cell of every one of their tool points reachable.
    let mut rng = Seeded::new(1313);
    let mut failures = Vec::new();
    for (name, arm) in [
        ("articulated5", articulated(true)),
        ("articulated4", articulated(false)),
        ("scara", scara()),
    ] {
        let (heights, yaws): ([f64; 4], [f64; 4]) = match arm.arm_type() {
            ArmType::Scara(_) => ([0.035, 0.07, 0.1, 0.125], [0.0, 0.7, 2.0, -2.9]),
            _ => ([-0.05, 0.05, 0.12, 0.3], [0.0, 0.5, -1.2, 2.8]),
        };
        let views = heights
            .map(|height| MapView::Top { height })
            .into_iter()
            .chain(yaws.map(|yaw| MapView::Side { yaw }));
        let mut holes = Vec::new();
        let mut checked = 0;
        for view in views {
            let map = reach_map(&arm, &view, &MapOptions::default());
            let mut on_slice = 0;
            while on_slice < 1250 {
                let Some(pose) = pose_on_slice(&arm, &view, &mut rng) else {
                    continue;
                };
                on_slice += 1;
                let point = tool_pose(&arm, &pose).unwrap().translation.vector;
                let (u, v) = match view {
                    MapView::Top { height } => {
                        assert!((point.z - height).abs() < 1e-9, "{name}: off the slice");
                        (point.x, point.y)
                    }
                    MapView::Side { yaw } => {
                        let across = -point.x * yaw.sin() + point.y * yaw.cos();
                        assert!(across.abs() < 1e-9, "{name}: off the slice by {across}");
                        (point.x * yaw.cos() + point.y * yaw.sin(), point.z)
                    }
                };
                let cell = cell_of(&map, u, v).expect("the grid covers the stretched arm");
                if !map.reachable(cell.0, cell.1) {
                    holes.push((view, pose, [u, v]));
                }
                checked += 1;
            }
        }
        assert_eq!(checked, 10_000);
        if !holes.is_empty() {
            failures.push(format!(
                "{name}: {} of {checked} tool points fall in cells marked out of reach, first {:?}",
                holes.len(),
                holes.first()
            ));
        }
    }
    assert!(failures.is_empty(), "{failures:#?}");
}
