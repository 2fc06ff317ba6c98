//! The window sleeps while nothing it shows changes. Connected to the in-process simulated
//! device as it opens and left alone, the editor runs no frame for the device's heartbeats:
//! the device answers heartbeat after heartbeat with the same status while its limp arm, its
//! fall over, only creeps under gravity, and the window stays asleep through them; while the
//! arm falls, the window redraws only for a move it draws, at most [`ARM_REDRAWS_PER_S`] times
//! a second. The CPU this saves is measured by
//! `tools/idle-cpu` (not a timed test).
//!
//! The harness stands in for the window's event loop: it runs a frame when one is due — when a
//! repaint was asked for (by the editor's frame itself, its link worker or any other thread,
//! each seen through egui's repaint observer) and its delay has passed — and counts them. The
//! quiet spans are counted in the device's own status lines, not in wall time, so a busy
//! machine that delays the heartbeats only makes the test wait longer.
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

/// Status lines the device sends (one a heartbeat, 10 a second) while the editor is left alone.
const STATUSES: u64 = 30;

/// How often the limp device arm alone may redraw the window, at most.
const ARM_REDRAWS_PER_S: f64 = 8.0;

/// The longest one wait of the test runs the event loop: far more than [`STATUSES`] heartbeats
/// (3 s) or the limp arm's fall (about 2 s) take on an idle machine.
const STATUS_WAIT: Duration = Duration::from_secs(60);

/// An editor on the sample, connected to the simulated device as the window opens it, with its
/// dry run and reach maps done and no pointer over the window.
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

/// Status lines the simulated device has sent since it was connected.
fn statuses(editor: &Editor) -> u64 {
    let device = editor
        .device()
        .simulated_device()
        .expect("simulated device");
    device.lock().expect("device").statuses_sent()
}

/// What the event loop did while the editor was left alone.
#[derive(Debug, Default)]
struct Quiet {
    /// Frames run because one was asked for.
    frames: usize,
    /// Of those, frames whose shapes were the same as the frame before.
    unchanged: usize,
    /// Status lines the device sent meanwhile.
    statuses: u64,
    /// How long it took, wall time.
    took: Duration,
    /// What asked for the frames run (egui's record of each request).
    causes: Vec<String>,
}

/// Runs the event loop as the window's would — a frame whenever one is due, never otherwise —
/// until `done` holds for the editor (looked at without running a frame) or [`STATUS_WAIT`]
/// passes.
fn run_event_loop(harness: &mut EditorHarness, done: impl Fn(&Editor) -> bool) -> Quiet {
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
    let mut quiet = Quiet::default();
    let start = Instant::now();
    let statuses_before = statuses(harness.state());
    while !done(harness.state()) {
        let now = Instant::now();
        assert!(
            now - start < STATUS_WAIT,
            "waited {STATUS_WAIT:?}: {} status lines, {} frames",
            statuses(harness.state()) - statuses_before,
            quiet.frames
        );
        let next = [*due.lock().unwrap(), own].into_iter().flatten().min();
        match next {
            Some(at) if at <= now => {
                *due.lock().unwrap() = None;
                harness.step();
                own = own_delay(harness).and_then(|delay| Instant::now().checked_add(delay));
                quiet.frames += 1;
                quiet.causes.extend(
                    harness
                        .ctx
                        .repaint_causes()
                        .iter()
                        .map(|cause| format!("{cause:?}")),
                );
                let shapes = harness.output().shapes.clone();
                if shapes == previous {
                    quiet.unchanged += 1;
                }
                previous = shapes;
            }
            // Short sleeps: `done` watches the device, which no frame reports.
            Some(at) => std::thread::sleep((at - now).min(Duration::from_millis(5))),
            None => std::thread::sleep(Duration::from_millis(5)),
        }
    }
    harness.ctx.set_repaint_observer(|_| {});
    quiet.statuses = statuses(harness.state()) - statuses_before;
    quiet.took = start.elapsed();
    quiet
}

/// Runs the event loop over the next [`STATUSES`] status lines of the device.
fn leave_alone(harness: &mut EditorHarness) -> Quiet {
    let until = statuses(harness.state()) + STATUSES;
    run_event_loop(harness, |editor| statuses(editor) >= until)
}

/// Runs the event loop until the simulated device's limp arm has ended its fall and only creeps
/// (its tool point moving less than 1 mm over 25 of the device's pulse frames, half a second)
/// and the editor's workers are done.
fn wait_for_creep(harness: &mut EditorHarness) {
    let tool = |editor: &Editor| {
        let device = editor
            .device()
            .simulated_device()
            .expect("simulated device");
        let device = device.lock().expect("device");
        let point = device.arm_tool_point().expect("the device moves the arm");
        (point, device.frames_started())
    };
    let since = Mutex::new(tool(harness.state()));
    run_event_loop(harness, |editor| {
        let (point, frame) = tool(editor);
        let mut since = since.lock().unwrap();
        if frame < since.1 + 25 {
            return false;
        }
        let moved_m = point
            .iter()
            .zip(since.0)
            .map(|(now, then)| (now - then).powi(2))
            .sum::<f64>()
            .sqrt();
        *since = (point, frame);
        moved_m < 1e-3 && !editor.is_dry_running() && !editor.is_mapping()
    });
}

#[test]
fn left_alone_and_connected_the_devices_unchanged_heartbeats_wake_no_frame() {
    let mut harness = connected_editor("idle-quiet");
    wait_for_creep(&mut harness);
    let quiet = leave_alone(&mut harness);
    eprintln!(
        "quiet: {} status lines in {:?}, {} frames, asked by {:?}",
        quiet.statuses, quiet.took, quiet.frames, quiet.causes
    );
    // The device says the same thing heartbeat after heartbeat and its arm only creeps: at
    // most one frame, for a creep caught up with (every 10 s) or a change drawn just before the
    // count began whose wake the link's worker asked for just after.
    assert!(
        quiet.frames <= 1,
        "{} frames over {} unchanged status lines of the device; repaints asked by {:?}",
        quiet.frames,
        quiet.statuses,
        quiet.causes
    );
}

#[test]
fn with_the_arm_falling_the_window_redraws_only_for_a_visible_sag_and_not_often() {
    let mut harness = connected_editor("idle-limp");
    let quiet = leave_alone(&mut harness);
    eprintln!(
        "limp: {} status lines in {:?}, {} frames ({} unchanged)",
        quiet.statuses, quiet.took, quiet.frames, quiet.unchanged
    );
    // Each frame draws the sagging arm somewhere new, except for a wake the link's worker asks
    // just as a frame already running draws the change (a race of threads, seen once in 25
    // frames on a busy machine).
    let allowed = quiet.frames / 10;
    assert!(
        quiet.unchanged <= allowed,
        "{} of {} frames looked the same as the one before (at most {allowed} allowed); \
         repaints asked by {:?}",
        quiet.unchanged,
        quiet.frames,
        quiet.causes
    );
    // The arm alone redraws at most so often, however fast it sags; the first redraw may come
    // at once.
    let most = (quiet.took.as_secs_f64() * ARM_REDRAWS_PER_S).floor() as usize + 1;
    assert!(
        quiet.frames <= most,
        "{} frames in {:?} (at most {most}); repaints asked by {:?}",
        quiet.frames,
        quiet.took,
        quiet.causes
    );
}
