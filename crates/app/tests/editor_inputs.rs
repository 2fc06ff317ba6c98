//! The input arm's form at the foot of the Arm tab: a new input's empty points are listed by row
//! and point and nothing reaches the scene until both are measured; typed numbers then map the
//! input as one undo step, a bad number is named and kept while the scene keeps its inputs, undo
//! takes edits back, and Save writes what the form shows. Connected to the simulated device
//! (its readings held at chosen values), each input shows what it reads and "Take" puts that
//! into a point. And while the device follows the input arm, the jog keys and buttons leave the
//! edited pose alone and say why; following the edited pose, they jog again.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

mod editor_common;

use armwright::editor::{
    ACKNOWLEDGE_LABEL, ADD_INPUT_LABEL, Editor, FOLLOW_INPUT_LABEL, FOLLOW_LABEL, FollowPhase,
    FollowSource, JOG_ON_KEY, JOG_WHILE_FOLLOWING_INPUTS, Level,
};
use armwright::scene::{InputDoc, InputPointDoc, load, save};
use armwright_link::{ReadingsRecording, ReadingsSource};
use egui::{Event, Key, Modifiers};
use egui_kittest::kittest::{NodeT, Queryable};

use editor_common::{
    EditorHarness, click_tab, connect, connected_with_inputs, file_editor, leave_field,
    open_input_arm_section, retype, scene_with_inputs, scratch, step_until, step_until_slow,
};

fn click(harness: &mut EditorHarness, label: &str) {
    harness.get_by_label(label).click_accesskit();
    harness.run_steps(2);
}

fn point(reading: u32, position: f64) -> InputPointDoc {
    InputPointDoc { reading, position }
}

#[test]
fn a_new_input_is_measured_edited_undone_and_saved() {
    let dir = scratch("inputs-form-scene");
    let path = dir.join("inputs-form.armwright.json");
    let scene = armwright::editor::sample_scene();
    assert!(scene.inputs.is_empty());
    save(&scene, &path).expect("saves");
    let mut harness = file_editor("inputs-form", path.clone());
    open_input_arm_section(&mut harness);
    let joint = harness.state().state.scene.arm.joints[0].name.clone();

    // A new row: its joint and input are chosen, its two points wait to be measured, and each
    // empty number is named by row and point. The scene is untouched.
    click(&mut harness, ADD_INPUT_LABEL);
    let state = &harness.state().state;
    assert!(state.scene.inputs.is_empty());
    assert!(!state.is_dirty() && !state.can_undo());
    assert_eq!(state.inputs_form.problems(&state.scene).len(), 4);
    assert!(
        harness
            .query_by_label(
                "row 1, point 1, reading: is empty; type the reading, or take it from the \
                 connected device"
            )
            .is_some()
    );
    assert!(
        harness
            .get_by_label("take the reading for row 1 point 1")
            .accesskit_node()
            .is_disabled(),
        "no device, nothing to take"
    );

    retype(&mut harness, "row 1 point 1 reading", "1200");
    retype(&mut harness, "row 1 point 1 position (°)", "-15");
    retype(&mut harness, "row 1 point 2 reading", "2800");
    assert!(harness.state().state.scene.inputs.is_empty());
    retype(&mut harness, "row 1 point 2 position (°)", "25");
    leave_field(&mut harness);
    let expected = vec![InputDoc {
        input: 0,
        joint: joint.clone(),
        points: vec![point(1200, -15.0), point(2800, 25.0)],
    }];
    let state = &harness.state().state;
    assert_eq!(state.scene.inputs, expected);
    assert!(state.inputs_form.problems(&state.scene).is_empty());
    assert!(state.is_dirty());

    // A bad reading is named and kept; the scene keeps the reading it had. (Typed a character
    // at a time, a valid start of a number would be applied at once, as in the arm settings.)
    retype(&mut harness, "row 1 point 2 reading", "x2800");
    assert!(
        harness
            .query_by_label("row 1, point 2, reading: \"x2800\" is not a number")
            .is_some()
    );
    assert_eq!(
        harness
            .get_by_label("row 1 point 2 reading")
            .value()
            .as_deref(),
        Some("x2800")
    );
    assert_eq!(harness.state().state.scene.inputs, expected);
    // Out of the protocol's scale: the field table's range, by row and point (500 on the way
    // was applied).
    retype(&mut harness, "row 1 point 2 reading", "5000");
    let problems: Vec<String> = {
        let state = &harness.state().state;
        state
            .inputs_form
            .problems(&state.scene)
            .iter()
            .map(|p| p.to_string())
            .collect()
    };
    assert_eq!(problems.len(), 1, "{problems:?}");
    assert!(
        problems[0].starts_with("inputs[0].points[1].reading:") && problems[0].contains("4095"),
        "{problems:?}"
    );
    retype(&mut harness, "row 1 point 2 reading", "3000");
    leave_field(&mut harness);
    assert_eq!(
        harness.state().state.scene.inputs[0].points[1],
        point(3000, 25.0)
    );

    // Undo: the reading typed into that field (one step however it was typed), then the whole
    // input (the step that first made it valid).
    editor_common::undo(&mut harness);
    assert_eq!(harness.state().state.scene.inputs, expected);
    assert_eq!(
        harness
            .get_by_label("row 1 point 2 reading")
            .value()
            .as_deref(),
        Some("2800")
    );
    editor_common::undo(&mut harness);
    assert!(harness.state().state.scene.inputs.is_empty());
    assert!(harness.query_by_label("row 1 point 1 reading").is_none());
    harness.get_by_label("Redo").click();
    harness.run_steps(3);
    assert_eq!(harness.state().state.scene.inputs, expected);

    // A third point, a second row on the next joint and input; then save and read back.
    click(&mut harness, "add a point to row 1");
    retype(&mut harness, "row 1 point 3 reading", "2000");
    retype(&mut harness, "row 1 point 3 position (°)", "5");
    leave_field(&mut harness);
    assert_eq!(harness.state().state.scene.inputs[0].points.len(), 3);
    click(&mut harness, ADD_INPUT_LABEL);
    let second = harness.state().state.scene.arm.joints[1].name.clone();
    for (label, text) in [
        ("row 2 point 1 reading", "900"),
        ("row 2 point 1 position (°)", "10"),
        ("row 2 point 2 reading", "3100"),
        ("row 2 point 2 position (°)", "70"),
    ] {
        retype(&mut harness, label, text);
    }
    leave_field(&mut harness);
    let inputs = harness.state().state.scene.inputs.clone();
    assert_eq!(inputs.len(), 2);
    assert_eq!(
        (inputs[1].input, inputs[1].joint.as_str()),
        (1, second.as_str())
    );
    harness.get_by_label("Save").click();
    editor_common::settle(&mut harness);
    assert!(!harness.state().state.is_dirty());
    assert_eq!(load(&path).expect("the saved scene loads").inputs, inputs);

    // Removing the first row's third point and the second row: two more undo steps.
    click(&mut harness, "remove row 1 point 3");
    click(&mut harness, "remove row 2");
    assert_eq!(harness.state().state.scene.inputs, expected);
    editor_common::undo(&mut harness);
    editor_common::undo(&mut harness);
    assert_eq!(harness.state().state.scene.inputs, inputs);
    assert!(!harness.state().state.is_dirty(), "back to what was saved");
}

/// Holds the simulated device's analog inputs at `readings` (input 0 first).
fn hold_readings(editor: &Editor, readings: &[u16]) {
    let line: Vec<String> = readings.iter().map(u16::to_string).collect();
    let recording = ReadingsRecording::parse(&format!("0 {}", line.join(" "))).expect("parses");
    let device = editor
        .device()
        .simulated_device()
        .expect("simulated device");
    device
        .lock()
        .expect("device")
        .set_readings(Some(ReadingsSource::Recorded(recording)));
}

fn newest_readings(editor: &Editor) -> Option<Vec<u16>> {
    let stats = editor.device().view().stats.as_ref()?;
    Some(stats.readings?.as_slice().to_vec())
}

#[test]
fn take_puts_what_the_input_reads_now_into_a_point() {
    let dir = scratch("inputs-take-scene");
    let path = dir.join("inputs-take.armwright.json");
    let mut scene = scene_with_inputs();
    scene.inputs.clear();
    save(&scene, &path).expect("saves");
    let mut harness = file_editor("inputs-take", path);
    connect(&mut harness);
    hold_readings(harness.state(), &[1500, 2500, 3500]);
    open_input_arm_section(&mut harness);
    // A row asks the device for readings, though the scene maps no input yet.
    click(&mut harness, ADD_INPUT_LABEL);
    step_until(&mut harness, "the held readings", |editor| {
        newest_readings(editor).as_deref() == Some(&[1500, 2500, 3500][..])
    });
    harness.run_steps(2);
    assert!(
        harness.query_by_label("1500").is_some(),
        "what input 0 reads"
    );
    click(&mut harness, "take the reading for row 1 point 1");
    assert_eq!(
        harness
            .get_by_label("row 1 point 1 reading")
            .value()
            .as_deref(),
        Some("1500")
    );
    retype(&mut harness, "row 1 point 1 position (°)", "-20");
    leave_field(&mut harness);

    // The joint turned: the input reads more; take it for the second point.
    hold_readings(harness.state(), &[3100, 2500, 3500]);
    step_until(&mut harness, "the new readings", |editor| {
        newest_readings(editor).is_some_and(|r| r.first() == Some(&3100))
    });
    harness.run_steps(2);
    retype(&mut harness, "row 1 point 2 position (°)", "20");
    leave_field(&mut harness);
    assert!(
        harness.state().state.scene.inputs.is_empty(),
        "no reading yet"
    );
    click(&mut harness, "take the reading for row 1 point 2");
    let state = &harness.state().state;
    let joint = state.scene.arm.joints[0].name.clone();
    assert_eq!(
        state.scene.inputs,
        vec![InputDoc {
            input: 0,
            joint,
            points: vec![point(1500, -20.0), point(3100, 20.0)],
        }]
    );
    // The input arm now shows the joint at the second point, and the row says so.
    step_until(&mut harness, "the input arm", |editor| {
        editor
            .state
            .device
            .input_pose
            .as_ref()
            .is_some_and(|pose| (pose[0].to_degrees() - 20.0).abs() < 1e-9)
    });
    harness.run_steps(2);
    assert!(
        harness
            .query_by_label("3100 (the scene's fit: 20.0°)")
            .is_some()
    );
    // Taking is one undo step.
    editor_common::undo(&mut harness);
    assert!(harness.state().state.scene.inputs.is_empty());
}

fn press(harness: &mut EditorHarness, key: Key) {
    for pressed in [true, false] {
        harness.event(Event::Key {
            key,
            physical_key: None,
            pressed,
            repeat: false,
            modifiers: Modifiers::NONE,
        });
    }
    harness.step();
}

#[test]
fn jog_keys_move_nothing_while_the_device_follows_the_input_arm() {
    let mut harness = connected_with_inputs("inputs-jog-scene", "inputs-jog", "inputs-jog");
    click_tab(&mut harness, "Follow");
    harness.get_by_label(ACKNOWLEDGE_LABEL).click_accesskit();
    harness.run_steps(2);
    click(&mut harness, FOLLOW_INPUT_LABEL);
    assert_eq!(harness.state().state.follow.source, FollowSource::InputArm);
    step_until_slow(&mut harness, "following the input arm", |editor| {
        editor.device().view().follow.phase == FollowPhase::Following
    });

    // Joint jog, tool-point jog and the jog button: the edited pose stays, the window says why
    // (once, however many presses), and the buttons are off.
    let edited = harness.state().state.pose.clone();
    for key in [JOG_ON_KEY, Key::ArrowRight, Key::PageUp, JOG_ON_KEY] {
        press(&mut harness, key);
    }
    harness.run_steps(2);
    let state = &harness.state().state;
    assert_eq!(state.pose, edited, "the edited pose stays");
    let said: Vec<_> = state
        .messages
        .iter()
        .filter(|m| m.text == JOG_WHILE_FOLLOWING_INPUTS)
        .collect();
    assert_eq!(said.len(), 1, "{:?}", state.messages);
    assert_eq!(said[0].level, Level::Warning);
    assert!(state.follow.on, "still following the input arm");
    assert!(
        harness
            .get_by_label("Jog on")
            .accesskit_node()
            .is_disabled()
    );
    assert!(
        harness
            .query_all_by_label(JOG_WHILE_FOLLOWING_INPUTS)
            .count()
            >= 1,
        "the Follow tab says why"
    );

    // Following the edited pose instead, the same key jogs the chosen joint.
    click(&mut harness, FOLLOW_LABEL);
    assert_eq!(
        harness.state().state.follow.source,
        FollowSource::EditedPose
    );
    press(&mut harness, JOG_ON_KEY);
    let state = &harness.state().state;
    assert!(
        (state.pose[0] - edited[0] - 1f64.to_radians()).abs() < 1e-9,
        "{:?} → {:?}",
        edited,
        state.pose
    );
    assert!(
        !harness
            .get_by_label("Jog on")
            .accesskit_node()
            .is_disabled()
    );
}
