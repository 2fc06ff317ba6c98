//! `plan` and `simulate` check the arm against the table, boxes, trays and itself: a move
//! through the table is refused with link, object and time named; a clear scene reports the
//! clearance worked out by hand.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

mod common;

use common::{armwright, armwright_json, sample, scene_file};
use serde_json::{Value, json};

fn read_sample(name: &str) -> Value {
    serde_json::from_str(&std::fs::read_to_string(sample(name)).unwrap()).unwrap()
}

/// The spacer stacker with "above plate (1)" moved down into the table: shoulder level, elbow 60°
/// down, wrist 60° up. The forearm (from the elbow at 90 mm height, 110 mm long) ends
/// 110·sin 60° − 90 = 5.26 mm below the table top; with its 10 mm radius (a 55 g elbow servo is
/// about 20 mm wide) it is 15.26 mm deep there.
fn through_the_table() -> String {
    let mut scene = read_sample("spacer-stacker.armwright.json");
    assert_eq!(scene["waypoints"][3]["name"], "above plate (1)");
    scene["waypoints"][3]["joints_deg_or_mm"] = json!([-24.44, 0.0, -60.0, 60.0, 0.0]);
    scene_file("clearance-through-table", &scene)
}

fn contact<'a>(report: &'a Value, motion: &str, link: &str, waypoint: &str) -> &'a Value {
    report["collisions"]
        .as_array()
        .unwrap()
        .iter()
        .find(|c| c["motion"] == motion && c["link"] == link && c["waypoint"] == waypoint)
        .unwrap_or_else(|| panic!("no {motion} contact of the {link} into {waypoint}: {report}"))
}

#[test]
fn a_move_through_the_table_is_refused_by_plan_and_simulate_naming_link_object_and_time() {
    let file = through_the_table();
    let (code, plan) = armwright_json(&["plan", &file, "--json"]);
    assert_eq!(code, 1, "{plan}");
    assert_eq!(plan["ok"], false);
    let waypoints = plan["waypoints"].as_array().unwrap();
    let left_lift = waypoints[2]["departure_s"].as_f64().unwrap();
    let reached = waypoints[3]["arrival_s"].as_f64().unwrap();
    // On the way down the spacer carried in the gripper (since "grip spacer 1") swings into the
    // table first.
    let down = contact(
        &plan,
        "commanded",
        "spacer 1 (carried by the gripper)",
        "above plate (1)",
    );
    assert_eq!(down["object"], "table");
    assert_eq!(down["carried_object"], "spacer 1");
    let time = down["time_s"].as_f64().unwrap();
    assert!(time > left_lift && time < reached, "{time} s");
    // The move out starts in the table: the forearm, as deep as worked out by hand.
    let out = contact(&plan, "commanded", "forearm", "place spacer 1");
    assert_eq!(out["object"], "table");
    assert!((out["time_s"].as_f64().unwrap() - reached).abs() < 2e-3);
    let by_hand = 110.0 * 60_f64.to_radians().sin() - 90.0 + 10.0;
    assert!((out["depth_mm"].as_f64().unwrap() - by_hand).abs() < 0.01);
    assert!(plan["min_clearance_mm"].as_f64().unwrap() <= -by_hand);
    assert!(waypoints[3]["min_clearance_mm"].as_f64().unwrap() < 0.0);
    assert!(waypoints[1]["min_clearance_mm"].as_f64().unwrap() > 0.0);

    let (code, run) = armwright_json(&["simulate", &file, "--json"]);
    assert_eq!(code, 1, "{run}");
    assert_eq!(run["ok"], false);
    let sagged = contact(&run, "simulated", "forearm", "place spacer 1");
    assert_eq!(sagged["object"], "table");
    assert!(sagged["depth_mm"].as_f64().unwrap() > 0.0);
    contact(
        &run,
        "commanded",
        "spacer 1 (carried by the gripper)",
        "above plate (1)",
    );

    for command in ["plan", "simulate"] {
        let (code, stdout, stderr) = armwright(&[command, &file]);
        assert_eq!(code, 1);
        assert!(
            stdout.contains("spacer 1 (carried by the gripper) hits table at")
                && stdout.contains("\"above plate (1)\""),
            "{stdout}"
        );
        assert!(stderr.contains("hits something"), "{stderr}");
    }
}

#[test]
fn a_clear_scene_reports_the_clearance_worked_out_by_hand() {
    // The pen plotter parked twice over a 150 mm block under its pen: upper arm up to
    // 75 + 105 = 180 mm, forearm and pen level at 180 mm, the pen from x = 100 to 155 mm over
    // the block (x 120–140 mm). The pen's radius is half a 9 g servo's width,
    // 20·(9/55)^(1/3)/2 = 5.47 mm, so the gap is 180 − 150 − 5.47 = 24.53 mm.
    let mut scene = read_sample("pen-plotter.armwright.json");
    let park = scene["waypoints"]
        .as_array()
        .unwrap()
        .iter()
        .find(|waypoint| waypoint["name"] == "park")
        .expect("the pen plotter parks")
        .clone();
    let mut again = park.clone();
    again["name"] = json!("park again");
    scene["waypoints"] = json!([park, again]);
    scene["workspace"]["boxes"]
        .as_array_mut()
        .unwrap()
        .push(json!({ "name": "block", "position_mm": [130.0, 0.0, 0.0], "size_mm": [20.0, 20.0, 150.0] }));
    let file = scene_file("clearance-clear", &scene);
    let by_hand = 180.0 - 150.0 - 20.0 * (9.0_f64 / 55.0).cbrt() / 2.0;

    let (code, plan) = armwright_json(&["plan", &file, "--json"]);
    assert_eq!(code, 0, "{plan}");
    assert_eq!(plan["collisions"], json!([]));
    assert!((plan["min_clearance_mm"].as_f64().unwrap() - by_hand).abs() < 0.01);
    for waypoint in plan["waypoints"].as_array().unwrap() {
        assert!((waypoint["min_clearance_mm"].as_f64().unwrap() - by_hand).abs() < 0.01);
    }
    let (_, stdout, _) = armwright(&["plan", &file]);
    assert!(
        stdout.contains("smallest clearance 24.5 mm (commanded): tool to block"),
        "{stdout}"
    );

    // A radius given in the scene (the pen's link is the last joint's) replaces the default:
    // 180 − 150 − 10 = 20 mm.
    scene["arm"]["joints"][3]["link"]["radius_mm"] = json!(10.0);
    let wider = scene_file("clearance-radius", &scene);
    let (code, plan_wider) = armwright_json(&["plan", &wider, "--json"]);
    assert_eq!(code, 0, "{plan_wider}");
    assert!((plan_wider["min_clearance_mm"].as_f64().unwrap() - 20.0).abs() < 0.01);
    scene["arm"]["joints"][3]["link"]["radius_mm"] = json!(0.0);
    let (code, stdout, stderr) =
        armwright(&["check", &scene_file("clearance-zero-radius", &scene)]);
    assert_eq!(code, 1);
    assert!(
        format!("{stdout}{stderr}").contains("arm.joints[3].link.radius_mm"),
        "{stdout}{stderr}"
    );

    // The dry run's arm sags a little under gravity: a little less, still clear.
    let (code, run) = armwright_json(&["simulate", &file, "--json"]);
    assert_eq!(code, 0, "{run}");
    let simulated = run["min_clearance_mm"].as_f64().unwrap();
    assert!(simulated > 0.0 && simulated <= by_hand + 0.01 && simulated > by_hand - 1.0);
}

#[test]
fn the_three_samples_are_clear() {
    for name in [
        "pen-plotter.armwright.json",
        "peg-sorter.armwright.json",
        "spacer-stacker.armwright.json",
    ] {
        let file = sample(name).to_string_lossy().into_owned();
        for command in ["plan", "simulate"] {
            let (_, report) = armwright_json(&[command, &file, "--json"]);
            assert_eq!(report["collisions"], json!([]), "{name} {command}");
            assert!(
                report["min_clearance_mm"].as_f64().unwrap() > 0.0,
                "{name} {command}"
            );
        }
    }
}
