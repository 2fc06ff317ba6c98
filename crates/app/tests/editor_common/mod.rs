//! Shared set-up for the editor's flow tests: an editor on the sample scene in a kittest
//! harness the size of a real window, a stop channel, a scratch folder.
#![allow(dead_code)]

use std::path::PathBuf;
use std::sync::mpsc::Receiver;
use std::time::{Duration, Instant};

use armwright::editor::{ChannelStopLink, Editor, EditorOptions, StopRequest};
use egui::{Event, Modifiers, PointerButton, Pos2};
use egui_kittest::Harness;

/// A fresh scratch folder under the system's temporary folder, named for the test.
pub fn scratch(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!(
        "armwright-editor-test-{}-{name}",
        std::process::id()
    ));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).expect("scratch folder");
    dir
}

/// Options with the recovery copy in `dir`, autosave after `seconds`, and no device connected
/// as the editor opens.
pub fn options(dir: &std::path::Path, seconds: u64) -> EditorOptions {
    EditorOptions {
        recovery: Some(armwright::editor::Recovery::in_dir(dir.join("recovery"))),
        autosave_interval: Duration::from_secs(seconds),
        connect_on_start: None,
    }
}

/// An editor harness on `editor`, 1560 × 960 points like the real window.
pub fn harness(editor: Editor) -> Harness<'static, Editor> {
    Harness::builder()
        .with_size([1560.0, 960.0])
        .with_step_dt(1.0 / 60.0)
        .build_eframe(move |_creation| editor)
}

/// An editor harness on the built-in sample, with the receiving end of its stop link.
pub fn sample_editor(name: &str) -> (Harness<'static, Editor>, Receiver<StopRequest>, PathBuf) {
    let dir = scratch(name);
    let (link, requests) = ChannelStopLink::new();
    let editor = Editor::open(None, Box::new(link), options(&dir, 3600));
    let mut harness = harness(editor);
    harness.run_steps(3);
    (harness, requests, dir)
}

/// Steps until file work has finished (at most 10 s).
pub fn settle(harness: &mut Harness<'static, Editor>) {
    let start = Instant::now();
    harness.step();
    while harness.state().is_busy() && start.elapsed() < Duration::from_secs(10) {
        std::thread::sleep(Duration::from_millis(10));
        harness.step();
    }
    harness.run_steps(2);
}

/// Presses on `from`, moves in small steps to `to` and releases, one frame per event.
pub fn drag(
    harness: &mut egui_kittest::Harness<'static, armwright::editor::Editor>,
    from: Pos2,
    to: Pos2,
) {
    harness.hover_at(from);
    harness.step();
    harness.event(Event::PointerButton {
        pos: from,
        button: PointerButton::Primary,
        pressed: true,
        modifiers: Modifiers::NONE,
    });
    harness.step();
    for i in 1..=10 {
        let at = from + (to - from) * (i as f32 / 10.0);
        harness.hover_at(at);
        harness.step();
    }
    harness.event(Event::PointerButton {
        pos: to,
        button: PointerButton::Primary,
        pressed: false,
        modifiers: Modifiers::NONE,
    });
    harness.step();
}
