//! Files in the editor: a bad scene shows its error naming the field and leaves the file as it
//! was; save as and reopen; the question before closing with unsaved changes; autosave and the
//! offer to recover.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

mod editor_common;

use armwright::editor::{ChannelStopLink, Command, Dialog, Editor, sample_scene};
use egui::{ViewportEvent, ViewportId};
use egui_kittest::kittest::Queryable;

use editor_common::{harness, open_through_dialog, options, sample_editor, scratch, settle};

/// The sample scene as JSON with one joint's stall torque made negative.
fn bad_scene_text() -> String {
    let text = armwright::scene::to_json(&sample_scene());
    let mut value: serde_json::Value = serde_json::from_str(&text).expect("our own JSON");
    value["arm"]["joints"][1]["servo"]["stall_torque_ncm"] = serde_json::json!(-5.0);
    serde_json::to_string_pretty(&value).expect("JSON")
}

#[test]
fn a_bad_scene_shows_its_error_and_the_file_is_unchanged() {
    let (mut harness, _requests, dir) = sample_editor("bad-scene");
    let path = dir.join("bad.armwright.json");
    std::fs::write(&path, bad_scene_text()).expect("write");
    let bytes_before = std::fs::read(&path).expect("read");
    let scene_before = harness.state().state.scene.clone();

    open_through_dialog(&mut harness, &path);

    let state = &harness.state().state;
    let Some(Dialog::LoadError { problems, .. }) = &state.view.dialog else {
        panic!("no load error shown: {:?}", state.view.dialog);
    };
    assert!(
        problems
            .iter()
            .any(|line| line.contains("arm.joints[1].servo.stall_torque_ncm")),
        "{problems:?}"
    );
    assert!(
        harness
            .query_by_label_contains("arm.joints[1].servo.stall_torque_ncm")
            .is_some()
    );
    assert_eq!(state.scene, scene_before, "the open scene is kept");
    assert_eq!(
        std::fs::read(&path).expect("read"),
        bytes_before,
        "the file is unchanged"
    );
    harness.get_by_label("OK").click();
    harness.run_steps(3);
    assert_eq!(harness.state().state.view.dialog, None);
}

#[test]
fn opening_a_bad_file_from_the_command_line_shows_the_error() {
    let dir = scratch("bad-cli");
    let path = dir.join("not-json.armwright.json");
    std::fs::write(&path, "{ \"format\": ").expect("write");
    let (link, _requests) = ChannelStopLink::new();
    let editor = Editor::open(Some(path.clone()), Box::new(link), options(&dir, 3600));
    let mut harness = harness(editor);
    harness.run_steps(3);
    assert!(
        harness
            .query_by_label_contains("could not be opened")
            .is_some()
    );
    assert!(harness.query_by_label_contains("line 1").is_some());
    assert_eq!(
        std::fs::read_to_string(&path).expect("read"),
        "{ \"format\": "
    );
}

#[test]
fn save_as_writes_a_file_that_opens_to_the_same_scene() {
    let (mut harness, _requests, dir) = sample_editor("save-as");
    harness.get_by_label("Store pose").click();
    harness.run_steps(3);
    assert!(harness.state().state.is_dirty());
    let path = dir.join("saved.armwright.json");
    harness.get_by_label("Save as…").click();
    harness.run_steps(3);
    harness
        .get_by_label("scene path")
        .type_text(&path.display().to_string());
    harness.run_steps(2);
    harness.get_by_label("Save to this file").click();
    settle(&mut harness);
    let state = &harness.state().state;
    assert!(!state.is_dirty(), "{:?}", state.messages.last());
    assert_eq!(state.document.file_path.as_deref(), Some(path.as_path()));
    let reloaded = armwright::scene::load(&path).expect("the saved file loads");
    assert_eq!(reloaded, state.scene);
    assert!(!harness.state().window_title().starts_with("* "));
}

#[test]
fn closing_with_unsaved_changes_asks_first() {
    let (mut harness, _requests, _dir) = sample_editor("close");
    harness.get_by_label("Store pose").click();
    harness.run_steps(3);
    harness
        .input_mut()
        .viewports
        .entry(ViewportId::ROOT)
        .or_default()
        .events
        .push(ViewportEvent::Close);
    harness.run_steps(3);
    assert_eq!(
        harness.state().state.view.dialog,
        Some(Dialog::UnsavedChanges)
    );
    assert!(!harness.state().is_closing());
    harness.get_by_label("Keep editing").click();
    harness.run_steps(3);
    assert_eq!(harness.state().state.view.dialog, None);
    assert!(!harness.state().is_closing());
}

#[test]
fn autosave_writes_a_copy_that_a_new_session_offers_to_recover() {
    let dir = scratch("autosave");
    let (link, _requests) = ChannelStopLink::new();
    let editor = Editor::open(None, Box::new(link), options(&dir, 1));
    let mut harness = harness(editor);
    harness.run_steps(3);
    harness.get_by_label("Store pose").click();
    harness.run_steps(3);
    let edited = harness.state().state.scene.clone();
    // 1/60 s per frame: 90 frames pass the 1 s autosave interval.
    harness.run_steps(90);
    settle(&mut harness);
    let copy = harness
        .state()
        .recovery_copy()
        .expect("autosave is on")
        .scene_path();
    assert!(copy.starts_with(dir.join("recovery")));
    assert!(copy.is_file(), "no recovery copy at {}", copy.display());

    // A second window open at the same time is not offered the first one's copy.
    let (link, _requests) = ChannelStopLink::new();
    let beside = Editor::open(None, Box::new(link), options(&dir, 3600));
    let mut beside = editor_common::harness(beside);
    beside.run_steps(3);
    assert_eq!(beside.state().state.view.dialog, None);
    drop(beside);
    drop(harness);

    let (link, _requests) = ChannelStopLink::new();
    let editor = Editor::open(None, Box::new(link), options(&dir, 3600));
    let mut harness = editor_common::harness(editor);
    harness.run_steps(3);
    assert!(matches!(
        harness.state().state.view.dialog,
        Some(Dialog::Recovery { .. })
    ));
    harness.get_by_label("Recover").click();
    harness.run_steps(3);
    let state = &harness.state().state;
    assert_eq!(state.scene, edited);
    assert!(state.is_dirty(), "recovered work is unsaved until saved");
}

#[test]
fn commands_for_the_file_dialogs_leave_their_work_outside_the_state() {
    let mut state = armwright::editor::EditorState::new(sample_scene(), None);
    let (mut link, _requests) = ChannelStopLink::new();
    let mut outside = Vec::new();
    armwright::editor::apply(&mut state, Command::Save, &mut link, 0, &mut outside);
    // No file yet: Save asks for one instead of writing anywhere.
    assert!(outside.is_empty());
    assert!(matches!(state.view.dialog, Some(Dialog::SaveAs { .. })));
}

#[test]
fn a_scene_files_copy_is_offered_only_when_that_file_is_opened() {
    let dir = scratch("per-file-recovery");
    let first = dir.join("first.armwright.json");
    let second = dir.join("second.armwright.json");
    for path in [&first, &second] {
        armwright::scene::save(&sample_scene(), path).expect("scratch scene");
    }
    // Edit the first file and let autosave write its copy; the window then goes without
    // closing cleanly.
    let (link, _requests) = ChannelStopLink::new();
    let editor = Editor::open(Some(first.clone()), Box::new(link), options(&dir, 1));
    let mut harness = harness(editor);
    harness.run_steps(3);
    harness.get_by_label("Store pose").click();
    harness.run_steps(90);
    settle(&mut harness);
    let edited = harness.state().state.scene.clone();
    drop(harness);

    let open = |path: &std::path::Path| {
        let (link, _requests) = ChannelStopLink::new();
        let editor = Editor::open(
            Some(path.to_path_buf()),
            Box::new(link),
            options(&dir, 3600),
        );
        let mut harness = editor_common::harness(editor);
        harness.run_steps(3);
        harness
    };
    let other = open(&second);
    assert_eq!(
        other.state().state.view.dialog,
        None,
        "not the first file's copy"
    );
    drop(other);
    let untitled = sample_editor_in(&dir);
    assert_eq!(
        untitled.state().state.view.dialog,
        None,
        "not offered untitled"
    );
    drop(untitled);
    let mut same = open(&first);
    assert!(matches!(
        same.state().state.view.dialog,
        Some(Dialog::Recovery { .. })
    ));
    same.get_by_label("Recover").click();
    same.run_steps(3);
    assert_eq!(same.state().state.scene, edited);
    assert_eq!(
        same.state().state.document.file_path.as_deref(),
        Some(first.as_path())
    );
}

/// An untitled editor with its recovery folder in `dir`.
fn sample_editor_in(dir: &std::path::Path) -> editor_common::EditorHarness {
    let (link, _requests) = ChannelStopLink::new();
    let editor = Editor::open(None, Box::new(link), options(dir, 3600));
    let mut harness = editor_common::harness(editor);
    harness.run_steps(3);
    harness
}
