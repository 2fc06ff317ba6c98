//! Plans the sequence and runs the dry run off the UI thread whenever the scene's arm, sequence
//! or timing changes, with the same calls as `armwright plan` and `armwright simulate`.
//!
//! Each change gets a generation number. At most one job runs at a time (a dry run cannot be
//! interrupted, and two at once would starve the window on a small machine); a change while it
//! runs is picked up when it ends, and a result for an older generation than the newest is
//! dropped rather than shown.

use std::sync::Arc;
use std::sync::mpsc::{Receiver, Sender, channel};

use armwright_kinematics::Arm;

use super::dry_run_marks::DryRunMarks;
use super::playback::{DryRunStatus, Timeline};
use super::state::EditorState;
use super::traces::Traces;
use crate::scene::{ArmDoc, Scene, Timing, Waypoint};
use crate::task::{dry_run_of, dry_run_options_of, plan_of};

/// What a plan depends on; a new job is needed when this changes.
#[derive(Debug, Clone, PartialEq)]
struct JobKey {
    arm: ArmDoc,
    waypoints: Vec<Waypoint>,
    timing: Timing,
}

impl JobKey {
    fn of(scene: &Scene) -> JobKey {
        JobKey {
            arm: scene.arm.clone(),
            waypoints: scene.waypoints.clone(),
            timing: scene.timing.clone(),
        }
    }

    fn matches(&self, scene: &Scene) -> bool {
        self.arm == scene.arm && self.waypoints == scene.waypoints && self.timing == scene.timing
    }
}

/// A finished job.
struct Finished {
    generation: u64,
    result: Result<Timeline, String>,
}

/// The worker that keeps the timeline's plan and dry run up to date.
pub struct DryRunJob {
    /// What the newest generation was made for.
    wanted: Option<JobKey>,
    /// The newest generation (0 before the first).
    generation: u64,
    /// The generation being computed, if any.
    running: Option<u64>,
    /// The newest generation whose outcome (timeline or failure) was taken.
    done: Option<u64>,
    /// Results that arrived for generations older than the newest, dropped.
    dropped: u64,
    sender: Sender<Finished>,
    receiver: Receiver<Finished>,
}

impl Default for DryRunJob {
    fn default() -> DryRunJob {
        let (sender, receiver) = channel();
        DryRunJob {
            wanted: None,
            generation: 0,
            running: None,
            done: None,
            dropped: 0,
            sender,
            receiver,
        }
    }
}

impl DryRunJob {
    /// Notes a change of the scene (a new generation), takes a finished result (dropping it
    /// when it is for an older generation), and starts a job when the newest change has no
    /// outcome yet and none runs. Cheap: no planning happens here.
    pub fn update(&mut self, ctx: &egui::Context, state: &mut EditorState) {
        // The scene is compared first, so that a result that arrives in the frame after a change
        // is judged against that change: whether the worker finished before or after the
        // change was made, an older result is dropped, never shown for a frame.
        // A fresh state (a scene just opened) has no outcome yet, even for an equal scene.
        let fresh = matches!(state.playback.status, DryRunStatus::None);
        if fresh
            || !self
                .wanted
                .as_ref()
                .is_some_and(|key| key.matches(&state.scene))
        {
            self.wanted = Some(JobKey::of(&state.scene));
            self.generation += 1;
            state.playback.status = DryRunStatus::Running;
        }
        for finished in self.receiver.try_iter().collect::<Vec<_>>() {
            self.running = None;
            if finished.generation != self.generation {
                self.dropped += 1;
                continue;
            }
            self.done = Some(finished.generation);
            match finished.result {
                Ok(timeline) => state.accept_timeline(Arc::new(timeline)),
                Err(reason) => state.playback.fail(reason),
            }
        }
        if self.running.is_none() && self.done != Some(self.generation) {
            self.start(ctx, state);
        }
        if self.running.is_some() {
            ctx.request_repaint_after(std::time::Duration::from_millis(30));
        }
    }

    fn start(&mut self, ctx: &egui::Context, state: &mut EditorState) {
        let generation = self.generation;
        let Some(arm) = state.arm().cloned() else {
            self.done = Some(generation);
            state
                .playback
                .fail("the arm cannot be built (see the messages)".into());
            return;
        };
        let scene = state.scene.clone();
        let sender = self.sender.clone();
        let ctx = ctx.clone();
        let spawned = std::thread::Builder::new()
            .name("armwright dry run".into())
            .spawn(move || {
                let result = plan_and_run(&scene, &arm, generation);
                let _ = sender.send(Finished { generation, result });
                ctx.request_repaint();
            });
        match spawned {
            Ok(_) => {
                self.running = Some(generation);
                state.playback.status = DryRunStatus::Running;
            }
            Err(error) => {
                self.done = Some(generation);
                state
                    .playback
                    .fail(format!("cannot start the dry run: {error}"));
            }
        }
    }

    /// The newest generation: how many times the arm, sequence or timing changed (from 1).
    pub fn generation(&self) -> u64 {
        self.generation
    }

    /// How many results arrived after a newer change and were dropped.
    pub fn dropped(&self) -> u64 {
        self.dropped
    }

    /// Whether a job is running.
    pub fn busy(&self) -> bool {
        self.running.is_some()
    }
}

/// Plans `scene` on `arm`, runs the dry run, builds the traces and finds the contacts and
/// unsettled stops and estimates placement success at each pick or place, or says why not.
fn plan_and_run(scene: &Scene, arm: &Arm, generation: u64) -> Result<Timeline, String> {
    let plan = plan_of(scene, arm).map_err(|error| format!("cannot plan: {error}"))?;
    let run = dry_run_of(scene, arm, &plan).map_err(|error| format!("cannot simulate: {error}"))?;
    let options = dry_run_options_of(scene);
    let traces = Traces::of(
        arm,
        &plan,
        &run,
        options.derating,
        options.servo.frame_period,
    );
    let marks = scene
        .waypoints
        .iter()
        .zip(plan.timings())
        .map(|(waypoint, timing)| (waypoint.name.clone(), timing.arrival))
        .collect();
    let found = DryRunMarks::of(scene, arm, &plan, &run)?;
    Ok(Timeline {
        found,
        generation,
        plan,
        run,
        traces,
        marks,
        grippers: scene.waypoints.iter().map(|w| w.gripper).collect(),
    })
}
