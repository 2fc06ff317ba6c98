//! Loading: syntax errors with line and column, format and version messages, unknown fields
//! with suggestions, every problem reported, and a failed load leaves the file alone.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

mod common;

use armwright::scene::{SceneError, load, load_bytes};
use common::{articulated5, bytes, remove, scara, scratch_dir, set};
use serde_json::json;

fn problems(document: &serde_json::Value) -> Vec<(String, String)> {
    match load_bytes(&bytes(document)) {
        Err(SceneError::Problems { problems }) => problems
            .into_iter()
            .map(|problem| (problem.path, problem.message))
            .collect(),
        other => panic!("expected problems, got {other:?}"),
    }
}

#[test]
fn the_test_scenes_load() {
    let scene = load_bytes(&bytes(&articulated5())).unwrap();
    assert_eq!(scene.arm.joints.len(), 5);
    assert_eq!(scene.waypoints.len(), 2);
    let scene = load_bytes(&bytes(&scara())).unwrap();
    assert_eq!(scene.arm.joints[2].name, "lift");
    assert_eq!(scene.arm.joints[2].max, 40.0);
}

#[test]
fn a_syntax_error_gives_line_and_column() {
    let text = b"{\n  \"format\": \"armwright-scene\",\n  \"version\": 1,\n  \"arm\": {,\n}";
    match load_bytes(text) {
        Err(SceneError::Syntax { line, column, .. }) => {
            assert_eq!(line, 4);
            assert_eq!(column, 11);
        }
        other => panic!("expected a syntax error, got {other:?}"),
    }
}

#[test]
fn a_newer_version_is_refused_with_a_clear_message() {
    let mut document = articulated5();
    set(&mut document, "/version", json!(7));
    let error = load_bytes(&bytes(&document)).unwrap_err();
    assert!(matches!(error, SceneError::NewerVersion { found: 7, .. }));
    assert!(error.to_string().contains("newer armwright"), "{error}");
}

#[test]
fn a_missing_version_is_named() {
    let mut document = articulated5();
    remove(&mut document, "/version");
    let error = load_bytes(&bytes(&document)).unwrap_err();
    assert!(matches!(error, SceneError::MissingVersion), "{error:?}");
}

#[test]
fn another_format_is_not_a_scene() {
    let mut document = articulated5();
    set(&mut document, "/format", json!("shopping-list"));
    assert!(matches!(
        load_bytes(&bytes(&document)),
        Err(SceneError::NotAScene { .. })
    ));
}

#[test]
fn an_unknown_field_suggests_the_nearest_known_name() {
    let mut document = articulated5();
    let servo = document
        .pointer_mut("/arm/joints/2/servo")
        .unwrap()
        .as_object_mut()
        .unwrap();
    let value = servo.remove("stall_torque_ncm").unwrap();
    servo.insert("stall_torqe_ncm".into(), value);
    let found = problems(&document);
    assert!(found.contains(&(
        "arm.joints[2].servo.stall_torqe_ncm".into(),
        "unknown field \"stall_torqe_ncm\"; did you mean \"stall_torque_ncm\"?".into()
    )));
    // The required field is then also missing, at its own path.
    assert!(
        found
            .iter()
            .any(|(path, _)| path == "arm.joints[2].servo.stall_torque_ncm")
    );
}

#[test]
fn a_degree_key_on_a_prismatic_joint_suggests_mm() {
    let mut document = scara();
    let lift = document
        .pointer_mut("/arm/joints/2")
        .unwrap()
        .as_object_mut()
        .unwrap();
    let value = lift.remove("max_mm").unwrap();
    lift.insert("max_deg".into(), value);
    let found = problems(&document);
    assert!(
        found.iter().any(
            |(path, message)| path == "arm.joints[2].max_deg" && message.contains("\"max_mm\"")
        ),
        "{found:?}"
    );
}

#[test]
fn every_type_problem_is_listed_not_only_the_first() {
    let mut document = articulated5();
    set(&mut document, "/arm/joints/0/servo/mass_g", json!("heavy"));
    set(
        &mut document,
        "/arm/joints/3/calibration/pulse_max_us",
        json!(1500.5),
    );
    set(&mut document, "/arm/tool/centre_mm", json!([1.0, 2.0]));
    set(&mut document, "/waypoints/1/move", json!("straigth"));
    let found = problems(&document);
    let paths: Vec<&str> = found.iter().map(|(path, _)| path.as_str()).collect();
    assert_eq!(
        paths,
        [
            "arm.joints[0].servo.mass_g",
            "arm.joints[3].calibration.pulse_max_us",
            "arm.tool.centre_mm",
            "waypoints[1].move"
        ]
    );
    assert!(found[3].1.contains("did you mean \"straight\""));
}

#[test]
fn an_unknown_arm_type_suggests_the_nearest() {
    let mut document = articulated5();
    set(&mut document, "/arm/type", json!("articulated6"));
    let found = problems(&document);
    assert_eq!(found[0].0, "arm.type");
    assert!(found[0].1.contains("did you mean"), "{found:?}");
}

#[test]
fn a_failed_load_never_changes_the_file() {
    let dir = scratch_dir("failed-load");
    let path = dir.join("broken.armwright.json");
    let mut document = articulated5();
    set(&mut document, "/arm/joints/1/max_deg", json!(-50.0));
    let text = bytes(&document);
    std::fs::write(&path, &text).unwrap();
    assert!(load(&path).is_err());
    assert_eq!(std::fs::read(&path).unwrap(), text);
    let garbage = b"{ not json at all";
    std::fs::write(&path, garbage).unwrap();
    assert!(matches!(load(&path), Err(SceneError::Syntax { .. })));
    assert_eq!(std::fs::read(&path).unwrap(), garbage);
    std::fs::remove_dir_all(dir).unwrap();
}

#[test]
fn a_missing_file_is_a_read_error() {
    let error = load(std::path::Path::new("/no/such/dir/x.armwright.json")).unwrap_err();
    assert!(matches!(error, SceneError::Read { .. }));
}

#[test]
fn a_key_given_twice_is_a_problem_at_its_path_with_the_others() {
    let text = String::from_utf8(bytes(&articulated5())).unwrap();
    // Inside the third joint's servo, and an unknown key elsewhere: both are listed.
    let servo = text.find("\"servo\"").unwrap();
    let servo = text[servo + 1..].find("\"servo\"").unwrap() + servo + 1;
    let servo = text[servo + 1..].find("\"servo\"").unwrap() + servo + 1;
    let at = text[servo..].find("\"mass_g\"").unwrap() + servo;
    let doubled = format!("{}\"mass_g\": 1.0, {}", &text[..at], &text[at..]).replacen(
        "\"payload_g\"",
        "\"payload_gram\"",
        1,
    );
    match load_bytes(doubled.as_bytes()) {
        Err(SceneError::Problems { problems }) => {
            let paths: Vec<&str> = problems.iter().map(|p| p.path.as_str()).collect();
            assert!(
                paths.contains(&"arm.joints[2].servo.mass_g"),
                "{problems:?}"
            );
            assert!(paths.contains(&"arm.payload_gram"), "{problems:?}");
        }
        other => panic!("expected problems, got {other:?}"),
    }
}

#[test]
fn a_comment_is_named_where_it_is() {
    let text = String::from_utf8(bytes(&articulated5())).unwrap();
    let commented = text.replacen("\"arm\"", "/* the arm */ \"arm\"", 1);
    match load_bytes(commented.as_bytes()) {
        Err(SceneError::Syntax { message, line, .. }) => {
            assert!(message.contains("comment (\"/*\")"), "{message}");
            assert!(line >= 1);
        }
        other => panic!("expected a syntax error, got {other:?}"),
    }
}
