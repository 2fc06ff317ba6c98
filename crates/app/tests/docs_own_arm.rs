//! `docs/own-arm.md` stays true: its minimal scene passes `check`, is the 3-joint-plus-gripper
//! chain it says it is, puts the tool point where the text says, and its Denavit–Hartenberg
//! form describes the same arm; the README links the guide and gives the install line.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

mod common;

use armwright_test_support::reference::numbers;
use common::{armwright, armwright_json, scene_file};
use serde_json::{Value, json};

fn repository_file(path: &str) -> String {
    let full = std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("../..")
        .join(path);
    std::fs::read_to_string(&full).unwrap_or_else(|e| panic!("{}: {e}", full.display()))
}

/// Every fenced `json` block of the guide, parsed.
fn json_blocks(markdown: &str) -> Vec<Value> {
    markdown
        .split("```json\n")
        .skip(1)
        .map(|rest| {
            let block = rest.split("```").next().expect("a closing fence");
            serde_json::from_str(block).unwrap_or_else(|e| panic!("{e} in:\n{block}"))
        })
        .collect()
}

fn guide_scene_and_dh_chain() -> (Value, Value) {
    let blocks = json_blocks(&repository_file("docs/own-arm.md"));
    let scene = blocks
        .iter()
        .find(|block| block["format"] == json!("armwright-scene"))
        .expect("the guide's minimal scene")
        .clone();
    let dh = blocks
        .iter()
        .find(|block| block["convention"] == json!("standard_dh"))
        .expect("the guide's Denavit–Hartenberg chain")
        .clone();
    (scene, dh)
}

#[test]
fn the_guides_minimal_scene_passes_check_as_a_three_joint_arm_with_a_gripper() {
    let (scene, _) = guide_scene_and_dh_chain();
    assert_eq!(scene["arm"]["type"], json!("chain"));
    assert_eq!(scene["arm"]["chain"]["convention"], json!("origin_axis"));
    assert_eq!(scene["arm"]["joints"].as_array().map(Vec::len), Some(3));
    assert!(scene["arm"]["gripper"].is_object());
    let file = scene_file("docs-own-arm", &scene);
    let (code, out, err) = armwright(&["check", &file]);
    assert_eq!(code, 0, "{out}{err}");
    assert!(
        out.contains("no problems; chain arm, 3 joints, 5 waypoints"),
        "the guide quotes this line: {out}"
    );
    // The guide: "--joints 0,90,-90 gives the tool point (145, 0, 170 mm)".
    let (code, pose) = armwright_json(&["pose", &file, "--joints=0,90,-90", "--json"]);
    assert_eq!(code, 0, "{pose}");
    assert_eq!(numbers(&pose["tool_mm"]), [145.0, 0.0, 170.0]);
    let (code, plan) = armwright_json(&["plan", &file, "--json"]);
    assert_eq!(code, 0, "{plan}");
}

#[test]
fn the_guides_denavit_hartenberg_form_is_the_same_arm() {
    let (origin_axis, dh_chain) = guide_scene_and_dh_chain();
    let mut dh = origin_axis.clone();
    dh["arm"]["chain"] = dh_chain;
    // As the guide says: the base joint's frame sits 70 mm up, so its link centre moves.
    dh["arm"]["joints"][0]["link"]["centre_mm"] = json!([0.0, 0.0, -35.0]);
    let files = [
        scene_file("docs-own-arm-origin-axis", &origin_axis),
        scene_file("docs-own-arm-dh", &dh),
    ];
    let described: Vec<Value> = files
        .iter()
        .map(|file| {
            let (code, out) = armwright_json(&["check", file, "--json"]);
            assert_eq!(code, 0, "{out}");
            out
        })
        .collect();
    for key in ["tool_at_zero_mm", "tool_at_home_mm"] {
        assert_eq!(
            numbers(&described[0]["arm"][key]),
            numbers(&described[1]["arm"][key]),
            "{key}"
        );
    }
    for joints in [
        "--joints=0,90,-90",
        "--joints=30,25,-65",
        "--joints=-70,130,-10",
    ] {
        let poses: Vec<Value> = files
            .iter()
            .map(|file| armwright_json(&["pose", file, joints, "--json"]).1)
            .collect();
        for key in ["tool_mm", "joint_torque_ncm", "pulse_us"] {
            let (a, b) = (numbers(&poses[0][key]), numbers(&poses[1][key]));
            assert!(
                a.iter().zip(&b).all(|(x, y)| (x - y).abs() < 1e-3),
                "{joints} {key}: {a:?} vs {b:?}"
            );
        }
    }
}

#[test]
fn the_readme_links_the_guide_and_gives_the_install_line() {
    let readme = repository_file("README.md");
    assert!(readme.contains("(docs/own-arm.md)"), "a link to the guide");
    let install = "cargo install --path crates/app --locked";
    assert!(readme.contains(install));
    assert!(repository_file("docs/own-arm.md").contains(install));
}
