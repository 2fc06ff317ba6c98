//! Collision geometry of one pose: the arm's capsules against the table, boxes and each other.
//!
//! Distances are checked against closed forms (common practice geometry): a capsule's signed
//! distance to a plane is its segment's lower end height minus the plane's height minus the
//! radius; two capsules' signed distance is the distance between their segments minus both
//! radii, the segment distance from the clamped closest-point solution in Ericson, *Real-Time
//! Collision Detection* (2005), §5.1.9, written out below.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

use armwright_test_support::arms as common;

use armwright_kinematics::{
    ArmShape, Obstacle, Other, Pair, forward, pair_distance, pair_distance_bound, pose_proximities,
};
use common::{Seeded, articulated, scara};
use nalgebra::Vector3;
use std::f64::consts::FRAC_PI_2;

/// Distance between segments p1–q1 and p2–q2 (Ericson 2005, §5.1.9).
fn segment_distance(p1: Vector3<f64>, q1: Vector3<f64>, p2: Vector3<f64>, q2: Vector3<f64>) -> f64 {
    let (d1, d2, r) = (q1 - p1, q2 - p2, p1 - p2);
    let (a, e, f) = (d1.dot(&d1), d2.dot(&d2), d2.dot(&r));
    let eps = 1e-18;
    let (s, t) = if a <= eps && e <= eps {
        (0.0, 0.0)
    } else if a <= eps {
        (0.0, (f / e).clamp(0.0, 1.0))
    } else {
        let c = d1.dot(&r);
        if e <= eps {
            ((-c / a).clamp(0.0, 1.0), 0.0)
        } else {
            let b = d1.dot(&d2);
            let denom = a * e - b * b;
            let mut s = if denom > eps {
                ((b * f - c * e) / denom).clamp(0.0, 1.0)
            } else {
                0.0
            };
            let mut t = (b * s + f) / e;
            if t < 0.0 {
                t = 0.0;
                s = (-c / a).clamp(0.0, 1.0);
            } else if t > 1.0 {
                t = 1.0;
                s = ((b - c) / a).clamp(0.0, 1.0);
            }
            (s, t)
        }
    };
    ((p1 + d1 * s) - (p2 + d2 * t)).norm()
}

#[test]
fn capsule_against_table_matches_the_plane_closed_form() {
    let mut rng = Seeded::new(12);
    for arm in [articulated(false), articulated(true), scara()] {
        let shape = ArmShape::of(&arm);
        let table = [Obstacle::table(0.08)];
        let mut overlaps = 0;
        for _ in 0..300 {
            let positions = rng.pose(&arm);
            let placed = shape.place(&forward(&arm, &positions).unwrap());
            for (link, (start, end)) in placed.segments().iter().enumerate().skip(1) {
                let radius = shape.links()[link].radius;
                let expected = start.z.min(end.z) - 0.08 - radius;
                let pair = Pair {
                    link,
                    other: Other::Obstacle(0),
                };
                let got = pair_distance(&shape, &placed, &table, pair);
                assert!(
                    (got - expected).abs() < 1e-9,
                    "link {link} at {positions:?}: {got} m, closed form {expected} m"
                );
                overlaps += usize::from(expected < 0.0);
            }
        }
        assert!(
            overlaps > 10,
            "the poses must also test overlaps, got {overlaps}"
        );
    }
}

#[test]
fn capsule_against_capsule_matches_the_segment_closed_form() {
    let mut rng = Seeded::new(7);
    let arm = articulated(false);
    let shape = ArmShape::of(&arm);
    let pairs: Vec<Pair> = shape
        .pairs(&[])
        .into_iter()
        .filter(|p| matches!(p.other, Other::Link(_)))
        .collect();
    assert_eq!(
        pairs.len(),
        3,
        "column–forearm, column–gripper, upper arm–gripper"
    );
    let (mut separated, mut overlapping) = (0, 0);
    for _ in 0..2000 {
        let positions = rng.pose(&arm);
        let placed = shape.place(&forward(&arm, &positions).unwrap());
        for &pair in &pairs {
            let Other::Link(other) = pair.other else {
                unreachable!()
            };
            let (a, b) = (placed.segments()[pair.link], placed.segments()[other]);
            let radii = shape.links()[pair.link].radius + shape.links()[other].radius;
            let expected = segment_distance(a.0, a.1, b.0, b.1) - radii;
            let got = pair_distance(&shape, &placed, &[], pair);
            assert!(
                (got - expected).abs() < 1e-9,
                "{pair:?} at {positions:?}: {got} m, closed form {expected} m"
            );
            if expected < 0.0 {
                overlapping += 1;
            } else {
                separated += 1;
            }
        }
    }
    assert!(
        separated > 100 && overlapping > 10,
        "{separated} separated, {overlapping} overlapping"
    );
}

#[test]
fn a_forearm_through_the_table_is_a_contact_naming_link_object_and_depth() {
    // Shoulder level, elbow 60° down: the forearm runs from (0.12, 0, 0.09) down to
    // (0.12 + 0.11·cos 60°, 0, 0.09 − 0.11·sin 60°) = (0.175, 0, −0.00526), through a table at
    // 0.02 m. Its lowest point is that end: depth 0.02 − (−0.00526 − 0.01) = 0.03526 m.
    let arm = articulated(false);
    let shape = ArmShape::of(&arm);
    let obstacles = [Obstacle::table(0.02)];
    let elbow = -60_f64.to_radians();
    let positions = [0.0, 0.0, elbow, 0.0];
    let found = pose_proximities(&arm, &shape, &obstacles, &positions, |_| false).unwrap();
    let deepest = found
        .iter()
        .min_by(|a, b| a.distance.total_cmp(&b.distance))
        .unwrap();
    assert_eq!(shape.links()[deepest.pair.link].name, "tool");
    let forearm = found
        .iter()
        .find(|p| shape.links()[p.pair.link].name == "forearm")
        .unwrap();
    let Other::Obstacle(object) = forearm.pair.other else {
        panic!("expected the table, got {:?}", forearm.pair.other);
    };
    assert_eq!(obstacles[object].name, "table");
    let lowest = 0.09 - 0.11 * elbow.abs().sin();
    let depth = 0.02 - (lowest - 0.01);
    assert!((depth - 0.03526).abs() < 1e-5);
    assert!(
        (-forearm.distance - depth).abs() < 1e-9,
        "{}",
        forearm.distance
    );
}

#[test]
fn a_gripper_folded_into_the_base_column_is_a_self_contact() {
    // Upper arm straight up, elbow folded down and forward, wrist folded back: the tool link
    // comes within the two radii (20 mm) of the base column's axis.
    let arm = articulated(false);
    let shape = ArmShape::of(&arm);
    let positions = [0.0, FRAC_PI_2, -2.5, -FRAC_PI_2];
    let found = pose_proximities(&arm, &shape, &[], &positions, |_| false).unwrap();
    let names = |p: &Pair| {
        let Other::Link(other) = p.other else {
            unreachable!()
        };
        (
            shape.links()[p.link].name.as_str(),
            shape.links()[other].name.as_str(),
        )
    };
    let column_tool = found
        .iter()
        .find(|p| names(&p.pair) == ("base column", "tool"))
        .unwrap();
    let placed = shape.place(&forward(&arm, &positions).unwrap());
    let (a, b) = (placed.segments()[0], placed.segments()[3]);
    let expected = segment_distance(a.0, a.1, b.0, b.1) - 0.02;
    assert!(
        expected < -0.001,
        "the pose must overlap, closed form {expected} m"
    );
    assert!((column_tool.distance - expected).abs() < 1e-6);
    // Neighbours meet at a joint and are never checked against each other.
    assert!(found.iter().all(|p| {
        let (first, second) = names(&p.pair);
        (first, second) != ("upper arm", "forearm") && (first, second) != ("forearm", "tool")
    }));
}

#[test]
fn a_clear_pose_has_the_clearance_worked_by_hand() {
    // Zero pose: every link along +X at 0.09 m, radius 10 mm (a 55 g servo is about 20 mm
    // wide). The tool point is at (0.30, 0, 0.09); a box whose top is at 0.05 m stands under
    // it. By hand: links to table 0.09 − 0.01 = 0.08 m; tool tip to the box top
    // 0.09 − 0.01 − 0.05 = 0.03 m; column to forearm 0.12 − 0.02 = 0.10 m. Smallest 0.03 m.
    let arm = articulated(false);
    let shape = ArmShape::of(&arm);
    assert!(
        shape
            .links()
            .iter()
            .all(|l| (l.radius - 0.01).abs() < 1e-12)
    );
    let obstacles = [
        Obstacle::table(0.0),
        Obstacle::standing_box(
            "block",
            Vector3::new(0.30, 0.0, 0.0),
            Vector3::new(0.04, 0.04, 0.05),
        ),
    ];
    let found = pose_proximities(&arm, &shape, &obstacles, &[0.0; 4], |_| false).unwrap();
    let smallest = found
        .iter()
        .min_by(|a, b| a.distance.total_cmp(&b.distance))
        .unwrap();
    assert!(
        (smallest.distance - 0.03).abs() < 1e-7,
        "{}",
        smallest.distance
    );
    assert_eq!(smallest.pair.other, Other::Obstacle(1));
    assert_eq!(shape.links()[smallest.pair.link].name, "tool");
    // Leaving the pair out (a gripped object) leaves the table at 0.08 m as the closest.
    let without = pose_proximities(&arm, &shape, &obstacles, &[0.0; 4], |p| {
        p.other == Other::Obstacle(1)
    })
    .unwrap();
    let next = without
        .iter()
        .map(|p| p.distance)
        .fold(f64::INFINITY, f64::min);
    assert!((next - 0.08).abs() < 1e-7, "{next}");
}

#[test]
fn the_sweep_bound_holds_every_link_point_along_a_straight_joint_path() {
    let mut rng = Seeded::new(3);
    for arm in [articulated(true), scara()] {
        let shape = ArmShape::of(&arm);
        let mut bound = [0.0; 9];
        for _ in 0..200 {
            let from = rng.pose(&arm);
            let to: Vec<f64> = from
                .iter()
                .zip(arm.joints())
                .map(|(&q, j)| (q + rng.uniform(-0.2, 0.2)).clamp(j.min, j.max))
                .collect();
            shape.sweep(&from, &to, &mut bound);
            let start = shape.place(&forward(&arm, &from).unwrap());
            for step in 1..=10 {
                let s = step as f64 / 10.0;
                let between: Vec<f64> =
                    from.iter().zip(&to).map(|(a, b)| a + (b - a) * s).collect();
                let placed = shape.place(&forward(&arm, &between).unwrap());
                for (link, (a, b)) in placed.segments().iter().enumerate() {
                    let (a0, b0) = start.segments()[link];
                    let moved = (a - a0).norm().max((b - b0).norm());
                    assert!(
                        moved <= bound[link] + 1e-12,
                        "link {link}: {moved} > {}",
                        bound[link]
                    );
                }
            }
        }
    }
}

#[test]
fn default_radii_follow_the_servo_size_and_can_be_changed() {
    let arm = scara();
    let shape = ArmShape::of(&arm);
    let names: Vec<&str> = shape.links().iter().map(|l| l.name.as_str()).collect();
    assert_eq!(names, ["base column", "upper arm", "forearm", "tool"]);
    let wider = shape.clone().with_radius(&arm, 3, 0.015).unwrap();
    assert_eq!(wider.links()[3].radius, 0.015);
    assert_eq!(wider.links()[2].radius, shape.links()[2].radius);
    assert!(shape.clone().with_radius(&arm, 3, -0.01).is_err());
    assert!(shape.with_radius(&arm, 9, 0.01).is_err());
}

#[test]
fn the_cheap_bound_never_exceeds_the_distance() {
    let mut rng = Seeded::new(11);
    let arm = articulated(true);
    let shape = ArmShape::of(&arm);
    let obstacles = [
        Obstacle::table(0.0),
        Obstacle::standing_box(
            "block",
            Vector3::new(0.15, 0.05, 0.0),
            Vector3::new(0.05, 0.04, 0.06),
        ),
    ];
    let mut gaps = 0;
    for _ in 0..500 {
        let placed = shape.place(&forward(&arm, &rng.pose(&arm)).unwrap());
        for pair in shape.pairs(&obstacles) {
            let exact = pair_distance(&shape, &placed, &obstacles, pair);
            let bound = pair_distance_bound(&shape, &placed, &obstacles, pair);
            assert!(
                bound <= exact + 1e-9,
                "{pair:?}: bound {bound} m above {exact} m"
            );
            gaps += usize::from(bound < exact - 1e-3);
        }
    }
    assert!(
        gaps > 0,
        "the bound must differ from the distance somewhere to be tested"
    );
}
