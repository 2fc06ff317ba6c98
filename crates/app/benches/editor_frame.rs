//! One editor frame, CPU side: the egui pass (every panel, both views with their reach maps and
//! the dry run's arm over the commanded one, 500 waypoints in the sequence, the timeline's plot
//! of every joint, commanded and simulated) and tessellation, without the GPU. Target: at most
//! 4 ms median. Also what the timeline does on the UI thread when the device's output changes:
//! plan and dry-run the approach the next stream would start with.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

use armwright::approach::{approach_of, rest_pose};
use armwright::editor::{
    ChannelStopLink, Command, Editor, EditorOptions, EditorState, PlaybackCommand, Traces,
    ViewKind, sample_scene,
};
use armwright::scene::Waypoint;
use armwright::task::{dry_run_of, dry_run_options_of};
use armwright_test_support::seeded::Seeded;
use armwright_trajectory::ApproachStart;
use criterion::{Criterion, criterion_group, criterion_main};
use egui::{RawInput, Rect, pos2, vec2};

/// The sample scene with 500 waypoints spread over the joints' ranges by a fixed sequence
/// (seeded: the same inputs every run).
fn long_sequence_editor() -> Editor {
    let mut scene = sample_scene();
    let template = scene.waypoints[0].clone();
    let joints = scene.arm.joints.clone();
    let mut rng = Seeded::new(0x00A2_4D5E_ED00_0500);
    scene.waypoints = (0..500)
        .map(|index| Waypoint {
            name: format!("point {}", index + 1),
            joints_deg_or_mm: joints
                .iter()
                .map(|joint| rng.uniform(joint.min, joint.max))
                .collect(),
            ..template.clone()
        })
        .collect();
    let (link, _requests) = ChannelStopLink::new();
    Editor::new(
        EditorState::new(scene, None),
        Box::new(link),
        EditorOptions {
            recovery: None,
            ..EditorOptions::default()
        },
    )
}

fn input(time: f64) -> RawInput {
    RawInput {
        screen_rect: Some(Rect::from_min_size(pos2(0.0, 0.0), vec2(1560.0, 960.0))),
        time: Some(time),
        ..RawInput::default()
    }
}

fn editor_frame(c: &mut Criterion) {
    let ctx = egui::Context::default();
    let mut editor = long_sequence_editor();
    let mut time = 0.0;
    for _ in 0..3 {
        time += 1.0 / 60.0;
        let _ = ctx.run_ui(input(time), |ui| {
            editor.logic(ui.ctx());
            editor.ui(ui);
        });
    }
    let mut frame_until = |editor: &mut Editor, done: &dyn Fn(&Editor) -> bool| {
        let start = std::time::Instant::now();
        while !done(editor) && start.elapsed() < std::time::Duration::from_secs(120) {
            std::thread::sleep(std::time::Duration::from_millis(20));
            time += 1.0 / 60.0;
            let _ = ctx.run_ui(input(time), |ui| {
                editor.logic(ui.ctx());
                editor.ui(ui);
            });
        }
    };
    // The plan and dry run (a worker thread) first, not inside the measured frame.
    frame_until(&mut editor, &|editor| {
        !editor.is_dry_running() && editor.state.playback.timeline.is_some()
    });
    let Some(timeline) = editor.state.playback.timeline.clone() else {
        panic!("no dry run after 120 s: {:?}", editor.state.playback.status);
    };
    // The cursor a third of the way in: the arm at the plan's pose, the dry run's arm over it.
    editor.apply(
        &ctx,
        Command::Playback(PlaybackCommand::SetCursor(timeline.span() / 3.0)),
        0,
    );
    // Then both views' reach maps (made on worker threads) at that pose, so the frame draws
    // them too.
    frame_until(&mut editor, &|editor| {
        !editor.is_mapping()
            && editor.reach_layer(ViewKind::Top).is_some()
            && editor.reach_layer(ViewKind::Side).is_some()
    });
    assert!(
        editor.reach_layer(ViewKind::Top).is_some(),
        "no reach map after 120 s"
    );
    assert!(
        editor.timeline_column_count() > 0,
        "the timeline drew nothing"
    );
    c.bench_function("editor_frame_500_waypoints_both_views", |b| {
        b.iter(|| {
            time += 1.0 / 60.0;
            let output = ctx.run_ui(input(time), |ui| {
                editor.logic(ui.ctx());
                editor.ui(ui);
            });
            ctx.tessellate(output.shapes, output.pixels_per_point)
        })
    });
}

/// The timeline's approach refresh (`panels/timeline.rs`), run on the UI thread whenever the
/// device's output or the timeline changes: the sample scene's approach from the rest pose
/// after the wake pause, planned, dry-run and made into traces.
fn approach_refresh(c: &mut Criterion) {
    let state = EditorState::new(sample_scene(), None);
    let scene = &state.scene;
    let arm = state.arm().expect("the sample arm is valid");
    let start = ApproachStart {
        positions: rest_pose(arm),
        gripper_closed: false,
        hold: scene.timing.wake_pause_ms / 1e3,
    };
    c.bench_function("editor_approach_plan_and_dry_run", |b| {
        b.iter(|| {
            let approach = approach_of(scene, arm, &start).expect("the approach plans");
            let run = dry_run_of(scene, arm, approach.plan()).expect("and dry-runs");
            let options = dry_run_options_of(scene);
            Traces::of(
                arm,
                approach.plan(),
                &run,
                options.derating,
                options.servo.frame_period,
            )
        })
    });
}

criterion_group!(benches, approach_refresh, editor_frame);
criterion_main!(benches);
