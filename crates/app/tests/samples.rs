//! The sample scenes: each loads without problems, every waypoint lies inside the limits and
//! needs less than the derated torque of every servo, and each description carries the safety
//! caution.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

mod common;

use armwright::scene::{build_arm, load, pose_from_file_units, validate};
use armwright_kinematics::{gravity_torques, torque_use};

const SAMPLES: [&str; 3] = [
    "peg-sorter.armwright.json",
    "pen-plotter.armwright.json",
    "spacer-stacker.armwright.json",
];

#[test]
fn every_sample_loads_and_validates() {
    let mut types = Vec::new();
    for name in SAMPLES {
        let scene = load(&common::sample(name)).unwrap_or_else(|e| panic!("{name}: {e:?}"));
        assert_eq!(validate(&scene), Vec::new(), "{name}");
        assert!(scene.waypoints.len() >= 5, "{name} tells a task");
        types.push(scene.arm.shape.word());
    }
    assert_eq!(types, ["scara", "articulated4", "articulated5"]);
}

#[test]
fn every_waypoint_is_within_limits_and_torque() {
    for name in SAMPLES {
        let scene = load(&common::sample(name)).unwrap();
        let arm = build_arm(&scene.arm).unwrap();
        let derating = scene.timing.torque_derating_pct / 100.0;
        for waypoint in &scene.waypoints {
            let positions = pose_from_file_units(&scene.arm, &waypoint.joints_deg_or_mm);
            assert!(arm.within_limits(&positions), "{name}: {}", waypoint.name);
            let holding = gravity_torques(&arm, &positions, arm.payload_mass()).unwrap();
            let shares = torque_use(&arm, &holding, derating);
            for (joint, share) in arm.joints().iter().zip(shares.as_slice()) {
                assert!(
                    *share < 1.0,
                    "{name}: {} needs {:.0} % of {}'s derated torque",
                    waypoint.name,
                    share * 100.0,
                    joint.name
                );
            }
        }
    }
}

#[test]
fn every_sample_carries_the_safety_caution() {
    for name in SAMPLES {
        let scene = load(&common::sample(name)).unwrap();
        for phrase in [
            "pinch and strike",
            "hard power cut-off within reach",
            "a software stop is not a safety device",
            "local codes and licensed practice",
        ] {
            assert!(
                scene.description.contains(phrase),
                "{name} lacks \"{phrase}\""
            );
        }
    }
}
