//! The window sleeps while nothing it shows changes: the editor as it opens (connected to the
//! in-process simulated device), left alone, asks for no frame that would look the same as the
//! one before it. The CPU this saves is measured by `tools/idle-cpu` (not a timed test).
//!
//! The harness stands in for the window's event loop: it runs a frame when one is due — when a
//! repaint was asked for (by the editor's frame itself, its link worker or any other thread,
//! each seen through egui's repaint observer) and its delay has passed — and compares each
//! frame's shapes with the frame before.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

mod editor_common;

use std::sync::{Arc, Mutex};
use std::time::{Duration, Instant};

use armwright::editor::{ChannelStopLink, Editor, EditorOptions};
use armwright::scene::Device;
use armwright_link::LinkState;
use egui::{Event, ViewportId};

use editor_common::{
    EditorHarness, harness, link_state, scratch, step_until, wait_for_dry_run, wait_for_reach_maps,
};

/// How long the editor is left alone, wall time.
const QUIET: Duration = Duration::from_secs(4);

/// The editor as the window opens it: on the sample, connected to the simulated device.
fn connected_editor(name: &str) -> EditorHarness {
    let dir = scratch(name);
    let (link, _requests) = ChannelStopLink::new();
    let options = EditorOptions {
        recovery: Some(armwright::editor::Recovery::in_dir(dir.join("recovery"))),
        autosave_interval: Duration::from_secs(3600),
        connect_on_start: Some(Device::Simulated),
    };
    let mut harness = harness(Editor::open(None, Box::new(link), options));
    harness.run_steps(3);
    step_until(&mut harness, "the connection", |editor| {
        link_state(editor) == Some(LinkState::Idle)
    });
    wait_for_dry_run(&mut harness);
    wait_for_reach_maps(&mut harness);
    // No pointer over the window: no hover, no tooltip.
    harness.event(Event::PointerGone);
    harness.run_steps(4);
    harness
}

/// What the event loop did while the editor was left alone.
#[derive(Debug, Default)]
struct Quiet {
    /// Frames run because one was asked for.
    frames: usize,
    /// Of those, frames whose shapes were the same as the frame before.
    unchanged: usize,
    /// Where the repaints that led to unchanged frames were asked for.
    causes: Vec<String>,
}

/// Leaves the editor alone for `quiet`, running a frame whenever one is due.
fn leave_alone(harness: &mut EditorHarness, quiet: Duration) -> Quiet {
    // The earliest moment a frame was asked for, by anyone, since the last frame.
    let due: Arc<Mutex<Option<Instant>>> = Arc::default();
    let seen = Arc::clone(&due);
    harness.ctx.set_repaint_observer(move |info| {
        if info.viewport_id != ViewportId::ROOT {
            return;
        }
        // "Never" comes as the longest duration there is.
        let Some(at) = Instant::now().checked_add(info.delay) else {
            return;
        };
        let mut due = seen
            .lock()
            .unwrap_or_else(std::sync::PoisonError::into_inner);
        *due = Some(due.map_or(at, |earlier| earlier.min(at)));
    });
    // What the last frame asked for itself (egui runs a second frame after an immediate
    // request, and a frame may ask for another after a delay).
    let own_delay = |harness: &EditorHarness| {
        harness
            .output()
            .viewport_output
            .get(&ViewportId::ROOT)
            .map(|output| output.repaint_delay)
    };
    let mut own = own_delay(harness).and_then(|delay| Instant::now().checked_add(delay));
    *due.lock().unwrap() = None;
    let mut previous = harness.output().shapes.clone();
    let mut quiet_report = Quiet::default();
    let end = Instant::now() + quiet;
    loop {
        let now = Instant::now();
        if now >= end {
            break;
        }
        let next = [*due.lock().unwrap(), own].into_iter().flatten().min();
        match next {
            Some(at) if at <= now => {
                *due.lock().unwrap() = None;
                harness.step();
                own = own_delay(harness).and_then(|delay| Instant::now().checked_add(delay));
                quiet_report.frames += 1;
                let shapes = harness.output().shapes.clone();
                if shapes == previous {
                    quiet_report.unchanged += 1;
                    quiet_report.causes.extend(
                        harness
                            .ctx
                            .repaint_causes()
                            .iter()
                            .map(|c| format!("{c:?}")),
                    );
                }
                previous = shapes;
            }
            Some(at) => std::thread::sleep((at - now).min(end - now)),
            None => std::thread::sleep(Duration::from_millis(5).min(end - now)),
        }
    }
    harness.ctx.set_repaint_observer(|_| {});
    quiet_report
}

#[test]
fn left_alone_and_connected_the_editor_draws_no_frame_that_looks_like_the_last() {
    let mut harness = connected_editor("idle-connected");
    let quiet = leave_alone(&mut harness, QUIET);
    eprintln!(
        "left alone {QUIET:?}: {} frames, {} unchanged",
        quiet.frames, quiet.unchanged
    );
    // A wake the link worker asks for just as a frame already running draws its change gives
    // one frame that looks like the last (a race of threads, seen once in 25 frames on a busy
    // machine); a window that wakes for what it does not draw repeats nearly every frame.
    let allowed = quiet.frames / 10;
    assert!(
        quiet.unchanged <= allowed,
        "{} of {} frames looked the same as the one before (at most {allowed} allowed); \
         repaints asked at {:?}",
        quiet.unchanged,
        quiet.frames,
        quiet.causes
    );
}
