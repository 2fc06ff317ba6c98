//! `armwright envelope`: reach and torque-use shares, farthest reach against the arm's
//! lengths, the SVG picture, and exit codes.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

mod common;

use common::{armwright, armwright_json, articulated5, sample_path, scene_file, scratch_dir, set};
use serde_json::json;

fn number(value: &serde_json::Value) -> f64 {
    value.as_f64().unwrap()
}

#[test]
fn the_horizontal_arm_reaches_its_two_links_out() {
    // Peg sorter: upper arm 140 mm + forearm 110 mm; the tool point's height runs over
    // 140 + (−40..30) − 60 = 40..110 mm.
    let file = sample_path("peg-sorter.armwright.json");
    let (code, out) = armwright_json(&[
        "envelope", &file, "--view", "top", "--at", "80", "--cells", "80", "--json",
    ]);
    assert_eq!(code, 0, "{out}");
    assert_eq!(out["view"], json!("top"));
    assert_eq!(out["at_mm"], json!(80.0));
    assert_eq!(out["cells"], json!(80));
    let cell = number(&out["cell_mm"]);
    assert!(
        (number(&out["farthest_reach_mm"]) - 250.0).abs() < cell,
        "{out}"
    );
    let reachable = number(&out["reachable_pct"]);
    assert!(reachable > 10.0 && reachable < 100.0, "{out}");
    assert_eq!(out["over_torque_pct"], json!(0.0));
    assert!(number(&out["time_ms"]) >= 0.0);
    for key in ["u_min", "u_max", "v_min", "v_max"] {
        assert!(out["extent_mm"][key].is_number(), "{key}");
    }
    // Above the lift's travel nothing is reachable; that is a map, not an error.
    let (code, out) = armwright_json(&[
        "envelope", &file, "--view", "top", "--at", "150", "--cells", "20", "--json",
    ]);
    assert_eq!(code, 0);
    assert_eq!(out["reachable_pct"], json!(0.0));
    assert_eq!(out["farthest_reach_mm"], json!(0.0));
}

#[test]
fn the_side_view_reaches_the_stretched_arm() {
    // Pen plotter stretched level at shoulder height: 105 + 100 + 55 = 260 mm.
    let file = sample_path("pen-plotter.armwright.json");
    let (code, out) = armwright_json(&[
        "envelope", &file, "--view", "side", "--cells", "100", "--json",
    ]);
    assert_eq!(code, 0, "{out}");
    assert_eq!(out["at_deg"], json!(0.0));
    let cell = number(&out["cell_mm"]);
    assert!(
        (number(&out["farthest_reach_mm"]) - 260.0).abs() < 1.5 * cell,
        "{out}"
    );
}

#[test]
fn a_weak_shoulder_shows_cells_over_torque_in_the_map_and_the_picture() {
    let mut document = articulated5();
    set(
        &mut document,
        "/arm/joints/1/servo/stall_torque_ncm",
        json!(30.0),
    );
    let file = scene_file("envelope-weak", &document);
    let picture = scratch_dir("envelope-weak-svg").join("map.svg");
    let (code, out) = armwright_json(&[
        "envelope",
        &file,
        "--view",
        "side",
        "--cells",
        "60",
        "--json",
        "--svg",
        picture.to_str().unwrap(),
    ]);
    assert_eq!(code, 0, "{out}");
    let over = number(&out["over_torque_pct"]);
    assert!(over > 0.0 && over < 100.0, "{out}");
    let svg = std::fs::read_to_string(&picture).unwrap();
    assert!(svg.starts_with("<svg"));
    assert!(svg.contains("url(#over)"), "over-torque cells are hatched");
    assert!(svg.contains("% of rated torque"));
    assert!(svg.contains("100 % = stall torque × 80 %"));
    assert!(svg.contains(" mm</text>"), "a scale in mm");
    assert!(svg.contains("<polyline"), "the envelope's edge");
}

#[test]
fn text_output_says_what_was_mapped() {
    let file = sample_path("spacer-stacker.armwright.json");
    let (code, stdout, _) = armwright(&["envelope", &file, "--view", "top", "--cells", "30"]);
    assert_eq!(code, 0);
    assert!(
        stdout.contains("top view, horizontal plane at z ="),
        "{stdout}"
    );
    assert!(stdout.contains("reachable"));
    assert!(stdout.contains("over torque"));
    assert!(stdout.contains("farthest"));
}

#[test]
fn bad_requests_exit_2_and_bad_scenes_exit_1() {
    let file = sample_path("peg-sorter.armwright.json");
    let (code, out) =
        armwright_json(&["envelope", &file, "--view", "top", "--cells", "1", "--json"]);
    assert_eq!(code, 2);
    assert!(out["error"].as_str().unwrap().contains("--cells"));
    let (code, _, _) = armwright(&["envelope", &file, "--view", "front"]);
    assert_eq!(code, 2);
    let dir = scratch_dir("envelope-unwritable");
    let (code, _, stderr) = armwright(&[
        "envelope",
        &file,
        "--view",
        "top",
        "--cells",
        "10",
        "--svg",
        dir.to_str().unwrap(),
    ]);
    assert_eq!(code, 2, "a directory is no picture file");
    assert!(stderr.contains("cannot write"), "{stderr}");
    let mut broken = articulated5();
    set(&mut broken, "/arm/payload_g", json!(-5.0));
    let (code, out) = armwright_json(&[
        "envelope",
        &scene_file("envelope-broken", &broken),
        "--view",
        "top",
        "--json",
    ]);
    assert_eq!(code, 1);
    assert_eq!(out["problems"][0]["path"], json!("arm.payload_g"));
}
