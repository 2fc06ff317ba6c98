//! The generated reference and JSON Schema: the copies committed under `docs/` are what the field
//! table prints, every sample scene validates against the schema with an outside validator (the
//! Python `jsonschema` package, draft 2020-12), and broken scenes do not.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

mod common;

use armwright_test_support::reference;

use std::path::PathBuf;
use std::process::Command;

use armwright::scene::{load_bytes, reference_markdown, schema_json};
use common::{articulated5, bytes, remove, sample, scara, scratch_dir, set};
use serde_json::{Value, json};

fn docs(name: &str) -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("../../docs")
        .join(name)
}

/// The committed copy of a generated document, compared line by line so a failure shows where.
fn assert_committed(name: &str, generated: &str, flag: &str) {
    let committed = std::fs::read_to_string(docs(name))
        .unwrap_or_else(|error| panic!("docs/{name} is missing: {error}"));
    let differs = committed
        .lines()
        .zip(generated.lines())
        .position(|(a, b)| a != b);
    assert!(
        committed == generated,
        "docs/{name} differs from what the field table prints (first at line {}); regenerate \
         with `cargo run -p armwright -- format {flag} > docs/{name}`",
        differs.map_or_else(
            || committed.lines().count().min(generated.lines().count()) + 1,
            |line| line + 1
        )
    );
}

#[test]
fn the_committed_reference_and_schema_are_what_the_table_prints() {
    assert_committed("scene-format.md", &reference_markdown(), "--reference");
    assert_committed("scene.schema.json", &schema_json(), "--schema");
}

#[test]
fn the_reference_lists_every_key_with_its_range() {
    let text = reference_markdown();
    // A row from each kind of key: fixed, following the joint's kind, a list, a word.
    for line in [
        "| `stall_torque_ncm` | N·cm | above 0 N·cm and at most 5000 N·cm | required |",
        "| `min_deg` / `min_mm` | ° / mm | from -360 ° to 360 ° / from -1000 mm to 1000 mm | required |",
        "| `rate_hz` | Hz | from 50 Hz to 1000 Hz | `50` |",
        "| `profile` | | `trapezoid`, `double_s` | `trapezoid` |",
    ] {
        assert!(text.contains(line), "missing {line}");
    }
}

#[test]
fn a_scene_may_name_its_schema() {
    let mut document = articulated5();
    document["$schema"] = json!("../docs/scene.schema.json");
    assert!(load_bytes(&bytes(&document)).is_ok());
    document["$schema"] = json!(3);
    assert!(load_bytes(&bytes(&document)).is_err(), "it is text");
}

/// Sets the value at `pointer`, adding the key when the object lacks it.
fn put(document: &mut Value, pointer: &str, value: Value) {
    let (parent, key) = pointer.rsplit_once('/').expect("a JSON pointer");
    match document.pointer_mut(parent) {
        Some(Value::Object(map)) => {
            map.insert(key.to_string(), value);
        }
        _ => set(document, pointer, value),
    }
}

/// Broken scenes, each with what is wrong; `armwright check` refuses each of them too.
fn broken_scenes() -> Vec<(&'static str, Value)> {
    let mut cases = Vec::new();
    let mut edit = |name: &'static str, from: Value, pointer: &str, value: Option<Value>| {
        let mut document = from;
        match value {
            Some(value) => put(&mut document, pointer, value),
            None => remove(&mut document, pointer),
        }
        cases.push((name, document));
    };
    edit(
        "forearm in metres typed as mm",
        articulated5(),
        "/arm/dimensions/forearm_mm",
        Some(json!(5000.0)),
    );
    edit(
        "huge length",
        articulated5(),
        "/arm/dimensions/upper_arm_mm",
        Some(json!(1e308)),
    );
    edit(
        "negative mass",
        articulated5(),
        "/arm/joints/0/servo/mass_g",
        Some(json!(-1.0)),
    );
    edit(
        "text for a number",
        articulated5(),
        "/arm/joints/2/servo/stall_torque_ncm",
        Some(json!("strong")),
    );
    edit(
        "missing key",
        articulated5(),
        "/arm/joints/1/servo/deadband_us",
        None,
    );
    edit(
        "unknown arm type",
        articulated5(),
        "/arm/type",
        Some(json!("articulated6")),
    );
    edit(
        "scara sizes on an articulated arm",
        articulated5(),
        "/arm/dimensions",
        Some(scara()["arm"]["dimensions"].clone()),
    );
    edit(
        "band in both units",
        articulated5(),
        "/arm/joints/0/servo/proportional_band",
        Some(json!({ "us": 40.0, "deg": 4.0 })),
    );
    edit(
        "fraction of a microsecond",
        articulated5(),
        "/arm/joints/3/calibration/pulse_max_us",
        Some(json!(2100.5)),
    );
    edit(
        "pulse outside the hobby range",
        articulated5(),
        "/arm/gripper/open_pulse_us",
        Some(json!(3000)),
    );
    edit(
        "unknown move word",
        articulated5(),
        "/waypoints/1/move",
        Some(json!("straigth")),
    );
    edit(
        "speed share over 100 %",
        articulated5(),
        "/waypoints/0/speed_share_pct",
        Some(json!(150.0)),
    );
    edit(
        "a link rate the link cannot stream",
        scara(),
        "/link/rate_hz",
        Some(json!(20.0)),
    );
    edit(
        "another format",
        articulated5(),
        "/format",
        Some(json!("shopping-list")),
    );
    let mut unknown = articulated5();
    unknown["arm"]["joints"][1]["servo"]["stall_torque_ncmm"] = json!(5.0);
    cases.push(("unknown key", unknown));
    let mut three = articulated5();
    three["arm"]["joints"][0]["calibration"]["points"]
        .as_array_mut()
        .unwrap()
        .push(json!({ "angle_deg": 0.0, "pulse_us": 1500 }));
    cases.push(("three calibration points", three));
    // A limit in mm beside one in degrees on the same joint.
    let mut mixed = articulated5();
    let joint = mixed
        .pointer_mut("/arm/joints/1")
        .unwrap()
        .as_object_mut()
        .unwrap();
    let max = joint.remove("max_deg").unwrap();
    joint.insert("max_mm".into(), max);
    cases.push(("degrees and mm mixed on one joint", mixed));
    cases
}

#[test]
fn every_sample_validates_against_the_schema_and_broken_scenes_do_not() {
    let python = reference::python();
    let importable = Command::new(&python)
        .args(["-c", "import jsonschema"])
        .output()
        .is_ok_and(|out| out.status.success());
    if !importable {
        let why = format!(
            "{} cannot import jsonschema; set up with `python3 -m venv .venv && \
             .venv/bin/pip install -r tests/reference/requirements.txt`",
            python.display()
        );
        armwright_test_support::outside_tool::cannot_run(
            "the JSON Schema check of the samples",
            &why,
        );
        return;
    }
    let dir = scratch_dir("schema");
    let mut files: Vec<(String, PathBuf, bool)> = Vec::new();
    for name in [
        "pen-plotter.armwright.json",
        "spacer-stacker.armwright.json",
        "peg-sorter.armwright.json",
    ] {
        files.push((name.to_string(), sample(name), true));
    }
    for (index, document) in [articulated5(), scara()].into_iter().enumerate() {
        let path = dir.join(format!("valid-{index}.json"));
        std::fs::write(&path, bytes(&document)).unwrap();
        files.push((format!("test scene {index}"), path, true));
    }
    for (index, (name, document)) in broken_scenes().into_iter().enumerate() {
        assert!(
            load_bytes(&bytes(&document)).is_err(),
            "{name}: the loader accepts it"
        );
        let path = dir.join(format!("broken-{index}.json"));
        std::fs::write(&path, bytes(&document)).unwrap();
        files.push((name.to_string(), path, false));
    }
    let out = Command::new(&python)
        .arg(reference::reference_dir().join("check_scene_schema.py"))
        .arg(docs("scene.schema.json"))
        .args(files.iter().map(|(_, path, _)| path))
        .output()
        .expect("the checker runs");
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let results: Value = serde_json::from_slice(&out.stdout).expect("JSON from the checker");
    let results = results.as_array().expect("a list");
    assert_eq!(results.len(), files.len());
    for ((name, _, valid), result) in files.iter().zip(results) {
        assert_eq!(
            result["valid"].as_bool(),
            Some(*valid),
            "{name}: {}",
            result["error"]
        );
    }
    std::fs::remove_dir_all(dir).unwrap();
}
