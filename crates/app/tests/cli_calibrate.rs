//! `armwright calibrate`: a joint's calibration fitted to measured points, the report, writing
//! it into the scene, and the exit codes for bad input; stepped on the simulated device from
//! typed lines, and its deadband found by 1 µs steps while watching the simulated joint.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

mod common;

use common::{armwright, armwright_json, articulated5, scene_file};
use serde_json::Value;

fn number(value: &Value) -> f64 {
    value
        .as_f64()
        .unwrap_or_else(|| panic!("a number: {value}"))
}

/// Least-squares line of y on x by the textbook closed form (common practice statistics:
/// slope = Sxy / Sxx, intercept = ȳ − slope·x̄).
fn closed_form_line(points: &[(f64, f64)]) -> (f64, f64) {
    let n = points.len() as f64;
    let mean_x = points.iter().map(|p| p.0).sum::<f64>() / n;
    let mean_y = points.iter().map(|p| p.1).sum::<f64>() / n;
    let sxy: f64 = points.iter().map(|p| (p.0 - mean_x) * (p.1 - mean_y)).sum();
    let sxx: f64 = points.iter().map(|p| (p.0 - mean_x).powi(2)).sum();
    let slope = sxy / sxx;
    (slope, mean_y - slope * mean_x)
}

const FOUR_POINTS: &str = "1000:-46.5,1300:-19,1700:17.5,2000:44";
/// The base turns ±90° (limits of the test arm) within its accepted 900–2100 µs.
const BASE_POINTS: &str = "1000:-88,1250:-44.5,1750:45.5,2000:89";

#[test]
fn four_points_give_the_least_squares_line() {
    let file = scene_file("calibrate-four", &articulated5());
    let (code, out) = armwright_json(&[
        "calibrate",
        &file,
        "--joint",
        "elbow",
        "--points",
        FOUR_POINTS,
        "--json",
    ]);
    assert_eq!(code, 0, "{out}");
    assert_eq!(out["shape"], "line");
    assert_eq!(out["joint_index"], 2);
    let points = [
        (1000.0, -46.5),
        (1300.0, -19.0),
        (1700.0, 17.5),
        (2000.0, 44.0),
    ];
    let (slope_deg_per_us, offset_deg) = closed_form_line(&points);
    let per_degree = number(&out["pulse_per_deg_us"]);
    assert!(
        (per_degree - 1.0 / slope_deg_per_us).abs() < 1e-3,
        "{per_degree}"
    );
    let at_zero = number(&out["pulse_at_zero_us"]);
    assert!(
        (at_zero + offset_deg / slope_deg_per_us).abs() < 0.01,
        "{at_zero}"
    );
    let residuals: Vec<f64> = out["residuals_deg"]
        .as_array()
        .unwrap()
        .iter()
        .map(number)
        .collect();
    assert_eq!(residuals.len(), 4);
    for (residual, (pulse, angle)) in residuals.iter().zip(points) {
        let fitted = offset_deg + slope_deg_per_us * pulse;
        assert!((residual - (angle - fitted)).abs() < 1e-3, "{residual}");
    }
    assert!(out["written"].is_null());
}

#[test]
fn write_puts_the_fitted_line_in_the_scene_and_leaves_the_input_alone() {
    let file = scene_file("calibrate-write", &articulated5());
    let before = std::fs::read(&file).unwrap();
    let out = std::path::Path::new(&file).with_file_name("calibrated.armwright.json");
    let out = out.to_string_lossy().into_owned();
    let (code, report) = armwright_json(&[
        "calibrate",
        &file,
        "--joint",
        "base",
        "--points",
        BASE_POINTS,
        "--write",
        &out,
        "--json",
    ]);
    assert_eq!(code, 0, "{report}");
    assert_eq!(
        std::fs::read(&file).unwrap(),
        before,
        "the input is untouched"
    );
    let (code, stdout, stderr) = armwright(&["check", &out]);
    assert_eq!(code, 0, "{stdout}{stderr}");
    let written: Value = serde_json::from_slice(&std::fs::read(&out).unwrap()).unwrap();
    let points = &written["arm"]["joints"][0]["calibration"]["points"];
    // The line is written through the ends of the measured pulse range.
    assert_eq!(points[0]["pulse_us"], 1000);
    assert_eq!(points[1]["pulse_us"], 2000);
    let (slope, offset) = closed_form_line(&[
        (1000.0, -88.0),
        (1250.0, -44.5),
        (1750.0, 45.5),
        (2000.0, 89.0),
    ]);
    assert!((number(&points[0]["angle_deg"]) - (offset + slope * 1000.0)).abs() < 0.006);
    assert!((number(&points[1]["angle_deg"]) - (offset + slope * 2000.0)).abs() < 0.006);
    // The pulse range the servo accepts is kept.
    assert_eq!(
        written["arm"]["joints"][0]["calibration"]["pulse_min_us"],
        900
    );
}

#[test]
fn clearly_bowed_points_fit_a_quadratic_and_say_how_far_the_line_is_off() {
    let file = scene_file("calibrate-bow", &articulated5());
    // 0.09°/µs with a 6° bow at the ends of the range.
    let (code, out) = armwright_json(&[
        "calibrate",
        &file,
        "--joint",
        "shoulder",
        "--points",
        "1000:-39,1250:-21,1500:0,1750:24,2000:51",
        "--json",
    ]);
    assert_eq!(code, 0, "{out}");
    assert_eq!(out["shape"], "quadratic");
    assert!(number(&out["max_residual_deg"]) < 1e-6, "{out}");
    assert!(number(&out["quadratic_deg_per_us2"]) > 0.0);
    let line_off = out["line_residuals_deg"].as_array().unwrap();
    assert!(line_off.iter().any(|r| number(r).abs() > 1.0), "{out}");
}

#[test]
fn bad_requests_are_named() {
    let file = scene_file("calibrate-bad", &articulated5());
    let (code, _, stderr) = armwright(&[
        "calibrate",
        &file,
        "--joint",
        "knee",
        "--points",
        FOUR_POINTS,
    ]);
    assert_eq!(code, 2);
    assert!(stderr.contains("no joint is named \"knee\""), "{stderr}");
    assert!(stderr.contains("\"elbow\""), "{stderr}");

    let (code, _, stderr) =
        armwright(&["calibrate", &file, "--joint", "elbow", "--points", "1500:0"]);
    assert_eq!(code, 1);
    assert!(stderr.contains("at least two points, 1 given"), "{stderr}");

    let (code, _, stderr) = armwright(&[
        "calibrate",
        &file,
        "--joint",
        "elbow",
        "--points",
        "1500-0,2000:4",
    ]);
    assert_eq!(code, 2);
    assert!(stderr.contains("PULSE_US:POSITION"), "{stderr}");
}

#[test]
fn a_fit_that_breaks_the_scene_is_not_written() {
    let file = scene_file("calibrate-invalid", &articulated5());
    let out = std::path::Path::new(&file).with_file_name("never.armwright.json");
    let out_text = out.to_string_lossy().into_owned();
    // ±45° over 1000–2000 µs: the elbow's ±140° limits would need pulses far outside 900–2100.
    let (code, _, stderr) = armwright(&[
        "calibrate",
        &file,
        "--joint",
        "elbow",
        "--points",
        FOUR_POINTS,
        "--write",
        &out_text,
    ]);
    assert_eq!(code, 1);
    assert!(stderr.contains("nothing written"), "{stderr}");
    assert!(stderr.contains("arm.joints[2].calibration"), "{stderr}");
    assert!(!out.exists());
}

/// The angle in a line such as "holding ch0 at 1500 µs; the simulated joint reads 0.123°".
fn angle_read(line: &str) -> f64 {
    let (_, after) = line
        .split_once("reads ")
        .unwrap_or_else(|| panic!("no reading in {line:?}"));
    after
        .trim_end_matches('°')
        .parse()
        .unwrap_or_else(|_| panic!("not an angle: {line:?}"))
}

#[test]
fn a_joint_is_stepped_on_the_simulated_device_from_typed_lines() {
    use std::io::Write;
    use std::process::{Command, Stdio};

    let file = scene_file("calibrate-interactive", &articulated5());
    let out = std::path::Path::new(&file).with_file_name("stepped.armwright.json");
    let mut child = Command::new(env!("CARGO_BIN_EXE_armwright"))
        .args([
            "calibrate",
            &file,
            "--joint",
            "base",
            "--simulated",
            "--json",
        ])
        .arg("--write")
        .arg(&out)
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("the armwright binary runs");
    let mut stdin = child.stdin.take().expect("stdin");
    let stdout = child.stdout.take().expect("stdout");
    let lines = common::lines_of(child.stderr.take().expect("stderr"));
    let mut type_line = |text: &str| {
        writeln!(stdin, "{text}").expect("the child reads its input");
        stdin.flush().expect("flushed");
    };
    // The caution comes first; the prompt after it ends its line only once answered.
    common::wait_for_line(&lines, "local codes and licensed practice");
    type_line("yes");
    // The first point where the joint was woken (its home, 1500 µs), then three steps up,
    // within the joint's ±90° (past them the simulated joint sits on its end stop).
    let mut read = angle_read(
        common::wait_for_line(&lines, "simulated joint reads")
            .last()
            .unwrap(),
    );
    type_line("banana");
    common::wait_for_line(&lines, "\"banana\" is not a word this form knows");
    let mut said = Vec::new();
    for step in ["+150", "+150", "+150"] {
        type_line(&format!("{read:.3}"));
        common::wait_for_line(&lines, "point ");
        type_line(step);
        let seen = common::wait_for_line(&lines, "simulated joint reads");
        read = angle_read(seen.last().unwrap());
        said.extend(seen);
    }
    type_line(&format!("{read:.3}"));
    common::wait_for_line(&lines, "point 4");
    // A step past the servo's 2100 µs end is held there, and said.
    type_line("+400");
    said.extend(common::wait_for_line(&lines, "simulated joint reads"));
    type_line("done");
    let mut text = String::new();
    std::io::Read::read_to_string(&mut { stdout }, &mut text).expect("stdout");
    let status = child.wait().expect("the child ends");
    assert!(status.success(), "{text}");
    assert!(
        said.iter()
            .any(|line| line.contains("outside the servo's safe range 900–2100 µs")),
        "{said:?}"
    );
    let report: Value = serde_json::from_str(&text).unwrap_or_else(|e| panic!("{e}: {text}"));
    let pulses: Vec<u64> = report["points"]
        .as_array()
        .unwrap()
        .iter()
        .map(|point| point["pulse_us"].as_u64().unwrap())
        .collect();
    assert_eq!(pulses, [1500, 1650, 1800, 1950]);
    // The test arm's base: 1000 µs over 180° (−90° at 1000 µs, 90° at 2000 µs), 3 µs deadband.
    let true_per_degree = 1000.0 / 180.0;
    let per_degree = number(&report["pulse_per_deg_us"]);
    assert!(
        (per_degree - true_per_degree).abs() < 0.02 * true_per_degree,
        "{per_degree}"
    );
    // The servo rests anywhere within its deadband: ± half of it, 0.27°.
    let worst = number(&report["max_residual_deg"]);
    assert!(worst <= 0.5 * 3.0 / true_per_degree + 0.05, "{worst}°");
    let written: Value = serde_json::from_slice(&std::fs::read(&out).unwrap()).unwrap();
    let points = &written["arm"]["joints"][0]["calibration"]["points"];
    assert_eq!(points[0]["pulse_us"], 1500);
    assert_eq!(points[1]["pulse_us"], 1950);
}

#[test]
fn stepping_is_refused_without_a_typed_yes_and_sends_nothing() {
    let file = scene_file("calibrate-refused", &articulated5());
    let output = std::process::Command::new(env!("CARGO_BIN_EXE_armwright"))
        .args(["calibrate", &file, "--joint", "base", "--simulated"])
        .stdin(std::process::Stdio::null())
        .output()
        .expect("the armwright binary runs");
    let stderr = String::from_utf8_lossy(&output.stderr);
    assert_eq!(output.status.code(), Some(1), "{stderr}");
    assert!(stderr.contains("CAUTION"), "{stderr}");
    assert!(stderr.contains("nothing was sent"), "{stderr}");
    assert!(!stderr.contains("holding ch0"), "{stderr}");
}

#[test]
fn the_deadband_is_found_one_microsecond_at_a_time() {
    use std::io::Write;
    use std::process::{Command, Stdio};

    // No backlash on the base: the simulated joint read is the link, which would add the gears'
    // play to what the servo's own deadband lets through (a person watches the horn instead).
    let mut scene = articulated5();
    scene["arm"]["joints"][0]["servo"]["backlash_deg"] = serde_json::json!(0.0);
    let file = scene_file("calibrate-deadband", &scene);
    let out = std::path::Path::new(&file).with_file_name("deadband.armwright.json");
    let mut child = Command::new(env!("CARGO_BIN_EXE_armwright"))
        .args([
            "calibrate",
            &file,
            "--joint",
            "base",
            "--simulated",
            "--json",
        ])
        .arg("--write")
        .arg(&out)
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("the armwright binary runs");
    let mut stdin = child.stdin.take().expect("stdin");
    let stdout = child.stdout.take().expect("stdout");
    let lines = common::lines_of(child.stderr.take().expect("stderr"));
    let mut type_line = |text: &str| {
        writeln!(stdin, "{text}").expect("the child reads its input");
        stdin.flush().expect("flushed");
    };
    common::wait_for_line(&lines, "local codes and licensed practice");
    type_line("yes");
    // Two points to fit, the second after a step up: the servo comes to rest there at the
    // lower edge of its deadband.
    let mut read = angle_read(
        common::wait_for_line(&lines, "simulated joint reads")
            .last()
            .unwrap(),
    );
    type_line(&format!("{read:.3}"));
    common::wait_for_line(&lines, "point 1");
    type_line("+150");
    read = angle_read(
        common::wait_for_line(&lines, "simulated joint reads")
            .last()
            .unwrap(),
    );
    type_line(&format!("{read:.3}"));
    common::wait_for_line(&lines, "point 2");

    // The search: Enter steps 1 µs; "moved" as soon as the simulated joint moves, as a person
    // watching it would say (the joint reads to a thousandth of a degree; one µs is 0.18°).
    type_line("deadband");
    common::wait_for_line(&lines, "deadband search from");
    let mut moves = 0;
    let mut steps = 0;
    while moves < 3 {
        type_line("");
        let now = angle_read(
            common::wait_for_line(&lines, "simulated joint reads")
                .last()
                .unwrap(),
        );
        steps += 1;
        assert!(steps < 40, "no movement after {steps} steps");
        if (now - read).abs() > 0.05 {
            moves += 1;
            type_line("moved");
            if moves < 3 {
                common::wait_for_line(&lines, "now stepping");
            }
        }
        read = now;
    }
    let said = common::wait_for_line(&lines, "deadband: the joint moved");
    type_line("done");
    let mut text = String::new();
    std::io::Read::read_to_string(&mut { stdout }, &mut text).expect("stdout");
    let status = child.wait().expect("the child ends");
    assert!(status.success(), "{text}");
    let report: Value = serde_json::from_str(&text).unwrap_or_else(|e| panic!("{e}: {text}"));
    // The test arm's base servo has a 3 µs deadband: each reversal crosses it whole, give or
    // take the 1 µs step (with the 0.5° backlash the link showed 7 µs: 3 µs and 2.8 µs of play).
    let proposed = number(&report["deadband_us"]);
    assert!((proposed - 3.0).abs() <= 1.0, "{proposed} µs; {said:?}");
    let widths = report["deadband_widths_us"].as_array().expect("widths");
    assert_eq!(widths.len(), 2);
    let written: Value = serde_json::from_slice(&std::fs::read(&out).unwrap()).unwrap();
    assert_eq!(
        number(&written["arm"]["joints"][0]["servo"]["deadband_us"]),
        proposed
    );
}
