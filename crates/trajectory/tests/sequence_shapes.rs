//! A profile shape per move.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

use armwright_trajectory::{
    JointLimits, ProfileShape, SegmentKind, SequenceError, SequenceWaypoint, WaypointKind,
    plan_sequence_shaped,
};

fn waypoints() -> Vec<SequenceWaypoint> {
    [0.0, 0.8, 0.2]
        .iter()
        .map(|&p| SequenceWaypoint {
            positions: vec![p, -p],
            kind: WaypointKind::Stop { dwell: 0.1 },
            speed_share: 1.0,
        })
        .collect()
}

#[test]
fn each_move_takes_the_shape_of_its_arrival() {
    let limits = [JointLimits::new(2.0, 8.0, 60.0); 2];
    let shapes = [
        ProfileShape::DoubleS,
        ProfileShape::Trapezoid,
        ProfileShape::DoubleS,
    ];
    let plan = plan_sequence_shaped(&shapes, &waypoints(), &limits).expect("plannable");
    for segment in plan.segments() {
        if let SegmentKind::Move { to_waypoint, .. } = segment.kind {
            for profile in segment.motion.profiles() {
                assert_eq!(profile.shape(), shapes[to_waypoint]);
            }
        }
    }
}

#[test]
fn a_shape_per_waypoint_is_required() {
    let limits = [JointLimits::new(2.0, 8.0, 60.0); 2];
    let result = plan_sequence_shaped(&[ProfileShape::DoubleS], &waypoints(), &limits);
    assert_eq!(
        result.unwrap_err(),
        SequenceError::WrongShapeCount {
            expected: 3,
            found: 1
        }
    );
}
