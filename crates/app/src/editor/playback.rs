//! The timeline's state: the newest plan and dry run of the sequence, the time cursor, play and
//! pause, the playback speed, what the plot shows. No egui types: tests read it directly.
//!
//! The cursor is a preview, not an edit: moving it puts the arm at the commanded pose of that
//! time (as "jump to" puts it at a waypoint) without an undo step or an unsaved-changes mark,
//! and pausing or reaching the end leaves the arm where the cursor is, so the user can store
//! that pose or drag on from it. The dry run's arm is drawn over the commanded one while the
//! arm stays at the cursor; moving the arm any other way ends the preview.

use std::sync::Arc;

use armwright_kinematics::MAX_JOINTS;
use armwright_trajectory::{CommandedMotion, DryRun, TaskPlan};

use super::dry_run_marks::DryRunMarks;
use super::state::{EditorState, ReachStatus};
use super::traces::{Quantity, Traces};
use crate::scene::GripperState;

/// The playback speeds offered, as multiples of real time.
pub const SPEEDS: [f64; 5] = [0.25, 0.5, 1.0, 1.5, 2.0];

/// Longest frame interval playback advances by, in s: after a stall the cursor does not leap.
const MAX_FRAME_STEP: f64 = 0.1;

/// A plan of the scene's sequence and its dry run, as the timeline shows them.
#[derive(Debug)]
pub struct Timeline {
    /// Which scene change it was made for (counts up from 1).
    pub generation: u64,
    /// The plan (shaped where the scene asks).
    pub plan: TaskPlan,
    /// The plan run through the servo model.
    pub run: DryRun,
    /// What the plots show.
    pub traces: Traces,
    /// Each waypoint's name and arrival time (s).
    pub marks: Vec<(String, f64)>,
    /// Each waypoint's gripper state, in order.
    pub grippers: Vec<GripperState>,
    /// The contacts and unsettled stops of the plan and the dry run.
    pub found: DryRunMarks,
}

impl Timeline {
    /// Time the timeline spans, in s: the plan and the settling watched after it.
    pub fn span(&self) -> f64 {
        self.traces.span.max(CommandedMotion::duration(&self.plan))
    }

    /// The commanded joint positions at time `t` (s), rad or m.
    pub fn commanded_at(&self, t: f64) -> Vec<f64> {
        let n = self.run.trace.joint_count.min(MAX_JOINTS);
        let mut positions = vec![0.0; n];
        let t = t.clamp(0.0, CommandedMotion::duration(&self.plan));
        self.plan.positions_at(t, &mut positions);
        positions
    }

    /// The joint positions the dry run predicts at time `t` (s), rad or m.
    pub fn simulated_at(&self, t: f64) -> Vec<f64> {
        let trace = &self.run.trace;
        if trace.is_empty() {
            return self.commanded_at(t);
        }
        let step = trace.step.max(1e-9);
        let index = ((t / step).round().max(0.0) as usize).min(trace.len() - 1);
        trace.actual_at(index).to_vec()
    }

    /// The gripper as commanded at time `t` (s): that of the last waypoint reached.
    pub fn gripper_at(&self, t: f64) -> GripperState {
        let reached = self
            .marks
            .partition_point(|(_, arrival)| *arrival <= t)
            .saturating_sub(1);
        self.grippers
            .get(reached)
            .copied()
            .unwrap_or(GripperState::Open)
    }
}

/// The outcome of the newest plan and dry run.
#[derive(Debug, Clone, Default)]
pub enum DryRunStatus {
    /// Not started yet (or the arm cannot be built).
    #[default]
    None,
    /// Running on a worker thread.
    Running,
    /// Done: the timeline shows it.
    Ready,
    /// The sequence cannot be planned or run, and why, in words.
    Failed(String),
}

/// What to do when playback reaches the end.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum AtEnd {
    /// Start again from 0.
    Loop,
    /// Stop at the end.
    Stop,
}

/// One thing the timeline's controls ask for.
#[derive(Debug, Clone, PartialEq)]
pub enum PlaybackCommand {
    /// Put the cursor at this time (s) and the arm at the commanded pose of that time.
    SetCursor(f64),
    /// Start playing from the cursor (from 0 when it is at the end).
    Play,
    /// Stop playing; the arm stays at the cursor.
    Pause,
    /// Play at this multiple of real time (one of [`SPEEDS`]).
    SetSpeed(f64),
    /// What happens at the end.
    SetAtEnd(AtEnd),
    /// Plot this quantity.
    Show(Quantity),
    /// Plot one joint, or every joint with `None`.
    ShowJoint(Option<usize>),
}

/// The timeline's state.
#[derive(Debug, Clone)]
pub struct Playback {
    /// The newest finished plan and dry run of the current scene; `None` while there is none
    /// or the last attempt failed.
    pub timeline: Option<Arc<Timeline>>,
    /// What became of the newest attempt.
    pub status: DryRunStatus,
    /// The time cursor, in s from the start of the plan.
    pub cursor: f64,
    /// Whether playback runs.
    pub playing: bool,
    /// Multiple of real time.
    pub speed: f64,
    /// What happens at the end.
    pub at_end: AtEnd,
    /// The quantity plotted.
    pub quantity: Quantity,
    /// The joint plotted, or every joint.
    pub joint: Option<usize>,
    /// The pose the cursor last put the arm in (rad or m); while the arm is still there, the
    /// views draw the dry run's arm over it.
    cursor_pose: Option<Vec<f64>>,
    /// egui time (s) of the last frame that advanced playback.
    last_frame: Option<f64>,
}

impl Default for Playback {
    fn default() -> Playback {
        Playback {
            timeline: None,
            status: DryRunStatus::None,
            cursor: 0.0,
            playing: false,
            speed: 1.0,
            at_end: AtEnd::Loop,
            quantity: Quantity::Angle,
            joint: None,
            cursor_pose: None,
            last_frame: None,
        }
    }
}

impl Playback {
    /// Whether the arm is where the cursor put it (playing or paused).
    pub fn arm_at_cursor(&self, pose: &[f64]) -> bool {
        self.cursor_pose.as_deref() == Some(pose)
    }

    /// The dry run's pose at the cursor while the arm is at the cursor: what the views draw
    /// over the commanded arm.
    pub fn simulated_pose(&self, pose: &[f64]) -> Option<Vec<f64>> {
        let timeline = self.timeline.as_ref()?;
        self.arm_at_cursor(pose)
            .then(|| timeline.simulated_at(self.cursor))
    }
}

/// Applies one timeline command. Changes no scene, records no undo step.
pub(crate) fn apply(state: &mut EditorState, command: PlaybackCommand) {
    let joints = state.joint_count();
    let playback = &mut state.playback;
    match command {
        PlaybackCommand::SetCursor(t) => {
            if t.is_finite() {
                move_cursor(state, t);
            }
        }
        PlaybackCommand::Play => {
            if let Some(timeline) = playback.timeline.clone() {
                if playback.cursor >= timeline.span() - 1e-9 {
                    playback.cursor = 0.0;
                }
                playback.playing = true;
                playback.last_frame = None;
                let cursor = playback.cursor;
                move_cursor(state, cursor);
            }
        }
        PlaybackCommand::Pause => playback.playing = false,
        PlaybackCommand::SetSpeed(speed) => {
            if SPEEDS.contains(&speed) {
                playback.speed = speed;
            }
        }
        PlaybackCommand::SetAtEnd(at_end) => playback.at_end = at_end,
        PlaybackCommand::Show(quantity) => playback.quantity = quantity,
        PlaybackCommand::ShowJoint(joint) => {
            if joint.is_none_or(|joint| joint < joints) {
                playback.joint = joint;
            }
        }
    }
}

/// Advances playback to egui time `now` (s), moving the arm. Returns whether it is still
/// playing (the window should keep repainting).
pub(crate) fn advance(state: &mut EditorState, now: f64) -> bool {
    let playback = &mut state.playback;
    let Some(timeline) = playback.timeline.clone() else {
        playback.playing = false;
        return false;
    };
    if !playback.playing {
        playback.last_frame = None;
        return false;
    }
    let last = playback.last_frame.replace(now).unwrap_or(now);
    let step = (now - last).clamp(0.0, MAX_FRAME_STEP) * playback.speed;
    let span = timeline.span();
    let mut t = playback.cursor + step;
    if t >= span {
        match playback.at_end {
            AtEnd::Loop if span > 0.0 => t %= span,
            _ => {
                t = span;
                playback.playing = false;
            }
        }
    }
    move_cursor(state, t);
    state.playback.playing
}

/// Takes a new timeline. An arm left at the cursor follows the new plan there.
pub(crate) fn accept(state: &mut EditorState, timeline: Arc<Timeline>) {
    let following = state.playback.arm_at_cursor(&state.pose);
    let span = timeline.span();
    state.playback.timeline = Some(timeline);
    state.playback.status = DryRunStatus::Ready;
    if state.playback.cursor > span {
        state.playback.cursor = span;
    }
    if following {
        let cursor = state.playback.cursor;
        move_cursor(state, cursor);
    }
}

/// Records that the sequence cannot be planned or run; playback stops and the old timeline is
/// dropped (it no longer matches the scene).
pub(crate) fn fail(state: &mut EditorState, reason: String) {
    let playback = &mut state.playback;
    playback.timeline = None;
    playback.playing = false;
    playback.cursor_pose = None;
    playback.status = DryRunStatus::Failed(reason);
}

fn move_cursor(state: &mut EditorState, t: f64) {
    let Some(timeline) = state.playback.timeline.clone() else {
        return;
    };
    let t = t.clamp(0.0, timeline.span());
    state.playback.cursor = t;
    let pose = timeline.commanded_at(t);
    if pose.len() != state.pose.len() {
        return;
    }
    state.pose = pose.clone();
    state.gripper = timeline.gripper_at(t);
    state.branch = None;
    state.branch_choices.clear();
    state.reach = ReachStatus::Idle;
    state.pose_changed();
    state.playback.cursor_pose = Some(pose);
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::editor::sample::sample_scene;
    use crate::editor::traces::Traces;
    use crate::task::{dry_run_of, plan_of};

    fn state_with_timeline() -> EditorState {
        let mut state = EditorState::new(sample_scene(), None);
        let arm = state.arm().cloned().expect("sample arm");
        let plan = plan_of(&state.scene, &arm).expect("sample plans");
        let run = dry_run_of(&state.scene, &arm, &plan).expect("sample runs");
        let traces = Traces::of(&arm, &plan, &run, 1.0, 0.02);
        let timeline = Timeline {
            generation: 1,
            marks: state
                .scene
                .waypoints
                .iter()
                .zip(plan.timings())
                .map(|(waypoint, timing)| (waypoint.name.clone(), timing.arrival))
                .collect(),
            grippers: state.scene.waypoints.iter().map(|w| w.gripper).collect(),
            found: DryRunMarks::default(),
            plan,
            run,
            traces,
        };
        accept(&mut state, Arc::new(timeline));
        state
    }

    #[test]
    fn playing_past_the_end_loops_to_the_start() {
        let mut state = state_with_timeline();
        let span = state.playback.timeline.as_ref().map_or(0.0, |t| t.span());
        apply(&mut state, PlaybackCommand::SetCursor(span - 0.03));
        apply(&mut state, PlaybackCommand::Play);
        assert!(advance(&mut state, 10.0));
        assert!(advance(&mut state, 10.05));
        assert!(
            (state.playback.cursor - 0.02).abs() < 1e-9,
            "{}",
            state.playback.cursor
        );
        assert!(state.playback.arm_at_cursor(&state.pose));
    }

    #[test]
    fn a_long_stall_advances_by_one_tenth_of_a_second_at_most() {
        let mut state = state_with_timeline();
        apply(&mut state, PlaybackCommand::SetSpeed(0.5));
        apply(&mut state, PlaybackCommand::Play);
        advance(&mut state, 1.0);
        advance(&mut state, 6.0);
        assert!((state.playback.cursor - MAX_FRAME_STEP * 0.5).abs() < 1e-12);
        // Speeds outside the offered steps are refused.
        apply(&mut state, PlaybackCommand::SetSpeed(3.0));
        assert_eq!(state.playback.speed, 0.5);
    }

    #[test]
    fn the_gripper_follows_the_waypoint_last_reached() {
        let state = state_with_timeline();
        let timeline = state.playback.timeline.clone().expect("timeline");
        for (index, (_, arrival)) in timeline.marks.iter().enumerate() {
            assert_eq!(
                timeline.gripper_at(*arrival + 1e-6),
                timeline.grippers[index]
            );
        }
    }
}
