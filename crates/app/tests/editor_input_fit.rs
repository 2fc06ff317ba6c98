//! The input arm form's fits and the arm type switch that would strand an input. Under each row
//! the form shows the fit its points give (its shape, degrees per reading count, the worst and
//! RMS residual); a point far off the fit is named at the top of the form by its input and joint
//! until it is measured again. And switching a 5-joint arm to 4 joints while an input moves the
//! wrist roll is refused, naming the input and the joint, and leaves the scene as it was.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

mod editor_common;

use armwright::scene::{InputDoc, InputPointDoc, load, save};
use egui_kittest::kittest::Queryable;

use editor_common::{click_tab, file_editor, leave_field, open_input_arm_section, retype, scratch};

fn point(reading: u32, position: f64) -> InputPointDoc {
    InputPointDoc { reading, position }
}

#[test]
fn a_point_off_the_fit_is_named_by_input_and_joint_until_measured_again() {
    let dir = scratch("input-fit-scene");
    let path = dir.join("input-fit.armwright.json");
    let mut scene = armwright::editor::sample_scene();
    let base = scene.arm.joints[0].name.clone();
    // 0.05° a count, the middle point read 4° high: the least-squares line (slope 0.05, offset
    // +2°) leaves −2°, +4°, −2° (worked by hand), RMS √8 = 2.83°.
    scene.inputs = vec![InputDoc {
        input: 2,
        joint: base.clone(),
        points: vec![point(1000, -50.0), point(2000, 6.0), point(3000, 50.0)],
    }];
    save(&scene, &path).expect("saves");
    let mut harness = file_editor("input-fit", path.clone());
    open_input_arm_section(&mut harness);

    assert!(
        harness
            .query_by_label("1 poor fit, applied all the same:")
            .is_some()
    );
    let concern = format!(
        "input 2 (joint \"{base}\"): point 2 is 4.0° off the fit (2° or more is poor): a misread \
         position, an input slipping on its shaft, or a reading of another input; measure it \
         again"
    );
    assert!(harness.query_by_label(&concern).is_some(), "{concern}");
    assert!(
        harness
            .query_by_label(
                "fit: least-squares line through 3 points: 0.0500° per count; residuals worst \
                 4.00° (point 2), RMS 2.83°"
            )
            .is_some()
    );
    // A poor fit is still the scene's fit: nothing is held back.
    assert_eq!(harness.state().state.scene.inputs, scene.inputs);

    retype(&mut harness, "row 1 point 2 position (°)", "0");
    leave_field(&mut harness);
    let state = &harness.state().state;
    assert_eq!(state.scene.inputs[0].points[1], point(2000, 0.0));
    assert!(harness.query_by_label(&concern).is_none());
    assert!(harness.query_by_label_contains("1 poor fit").is_none());
    assert!(
        harness
            .query_by_label_contains("fit: least-squares line through 3 points: 0.0500° per count")
            .is_some()
    );

    // Two readings alike: no fit, in the fit's own words, under the row.
    retype(&mut harness, "row 1 point 3 reading", "2000");
    leave_field(&mut harness);
    assert!(
        harness.query_by_label_contains("no fit: ").is_none(),
        "three points, two readings: still a line"
    );
    retype(&mut harness, "row 1 point 1 reading", "2000");
    leave_field(&mut harness);
    assert!(
        harness
            .query_by_label(
                "no fit: every point has the same reading (2000): turn the joint between points"
            )
            .is_some()
    );
}

#[test]
fn four_joints_are_refused_while_an_input_moves_the_wrist_roll() {
    let dir = scratch("input-arm-type-scene");
    let path = dir.join("input-arm-type.armwright.json");
    let sample = armwright_test_support::samples::sample_scene("spacer-stacker");
    let mut scene = load(&sample).expect("the sample loads");
    assert_eq!(scene.arm.joints[4].name, "wrist roll");
    scene.inputs = vec![InputDoc {
        input: 5,
        joint: "wrist roll".into(),
        points: vec![point(1000, -60.0), point(3000, 60.0)],
    }];
    save(&scene, &path).expect("saves");
    let mut harness = file_editor("input-arm-type", path);
    click_tab(&mut harness, "Arm");
    harness.get_by_label("articulated, 4 joints").click();
    harness.run_steps(3);
    let state = &harness.state().state;
    assert_eq!(state.joint_count(), 5, "not switched");
    assert_eq!(state.scene, scene);
    assert!(!state.can_undo());
    let said = state
        .messages
        .last()
        .map(|m| m.text.clone())
        .unwrap_or_default();
    assert_eq!(
        said,
        "not switched: the input arm's input 5 (joint \"wrist roll\") holds measured positions \
         of a joint a 4-joint articulated arm does not have, and they would be lost; remove that \
         row in the input arm form at the foot of this tab first"
    );
}
