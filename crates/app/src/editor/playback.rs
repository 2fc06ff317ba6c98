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

/// Where the cursor put the arm: the commanded pose and gripper at the cursor's time. The
/// editor's state puts its arm there (`EditorState::arm_to_cursor`), ending any drag's branch
/// choice; playback itself holds no part of the edited arm.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct CursorPose {
    /// Joint positions, rad or m.
    pub positions: Vec<f64>,
    /// The gripper as commanded: that of the last waypoint reached.
    pub gripper: GripperState,
}

impl Playback {
    /// The contacts and unsettled stops of the newest dry run, when it is of the scene as it
    /// is now (none while a new one runs, so that no mark points at a waypoint that moved).
    pub fn found(&self) -> Option<&DryRunMarks> {
        match self.status {
            DryRunStatus::Ready => self.timeline.as_deref().map(|t| &t.found),
            _ => None,
        }
    }

    /// Applies one timeline command; `joints` is the arm's joint count (the plot shows one of
    /// them or all) and `posed` the length of the arm's current pose (a timeline of another
    /// length does not move the arm). Returns where the arm goes, when the cursor moved it.
    pub(crate) fn apply(
        &mut self,
        command: PlaybackCommand,
        joints: usize,
        posed: usize,
    ) -> Option<CursorPose> {
        match command {
            PlaybackCommand::SetCursor(t) => {
                if t.is_finite() {
                    return self.move_cursor(t, posed);
                }
            }
            PlaybackCommand::Play => {
                if let Some(timeline) = self.timeline.clone() {
                    if self.cursor >= timeline.span() - 1e-9 {
                        self.cursor = 0.0;
                    }
                    self.playing = true;
                    self.last_frame = None;
                    return self.move_cursor(self.cursor, posed);
                }
            }
            PlaybackCommand::Pause => self.playing = false,
            PlaybackCommand::SetSpeed(speed) => {
                if SPEEDS.contains(&speed) {
                    self.speed = speed;
                }
            }
            PlaybackCommand::SetAtEnd(at_end) => self.at_end = at_end,
            PlaybackCommand::Show(quantity) => self.quantity = quantity,
            PlaybackCommand::ShowJoint(joint) => {
                if joint.is_none_or(|joint| joint < joints) {
                    self.joint = joint;
                }
            }
        }
        None
    }

    /// Advances playback to egui time `now` (s); `posed` as for [`Playback::apply`]. Returns
    /// where the arm goes; [`Playback::playing`] then says whether the window should keep
    /// repainting.
    pub(crate) fn advance(&mut self, now: f64, posed: usize) -> Option<CursorPose> {
        let Some(timeline) = self.timeline.clone() else {
            self.playing = false;
            return None;
        };
        if !self.playing {
            self.last_frame = None;
            return None;
        }
        let last = self.last_frame.replace(now).unwrap_or(now);
        let step = (now - last).clamp(0.0, MAX_FRAME_STEP) * self.speed;
        let span = timeline.span();
        let mut t = self.cursor + step;
        if t >= span {
            match self.at_end {
                AtEnd::Loop if span > 0.0 => t %= span,
                _ => {
                    t = span;
                    self.playing = false;
                }
            }
        }
        self.move_cursor(t, posed)
    }

    /// Takes a new timeline. An arm left at the cursor (at `pose`, rad or m) follows the new
    /// plan there: returns where it goes.
    pub(crate) fn accept(&mut self, timeline: Arc<Timeline>, pose: &[f64]) -> Option<CursorPose> {
        let following = self.arm_at_cursor(pose);
        let span = timeline.span();
        self.timeline = Some(timeline);
        self.status = DryRunStatus::Ready;
        if self.cursor > span {
            self.cursor = span;
        }
        if following {
            return self.move_cursor(self.cursor, pose.len());
        }
        None
    }

    /// Records that the sequence cannot be planned or run; playback stops and the old timeline
    /// is dropped (it no longer matches the scene).
    pub(crate) fn fail(&mut self, reason: String) {
        self.timeline = None;
        self.playing = false;
        self.cursor_pose = None;
        self.status = DryRunStatus::Failed(reason);
    }

    fn move_cursor(&mut self, t: f64, posed: usize) -> Option<CursorPose> {
        let timeline = self.timeline.clone()?;
        let t = t.clamp(0.0, timeline.span());
        self.cursor = t;
        let positions = timeline.commanded_at(t);
        if positions.len() != posed {
            return None;
        }
        self.cursor_pose = Some(positions.clone());
        Some(CursorPose {
            positions,
            gripper: timeline.gripper_at(t),
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::editor::sample::sample_scene;
    use crate::scene::{build_arm, pose_from_file_units};
    use crate::task::{dry_run_of, plan_of};

    /// Playback with the built-in sample's plan and dry run, and the arm's pose as the editor
    /// opens the sample (its first waypoint's), rad or m.
    fn playback_with_timeline() -> (Playback, Vec<f64>) {
        let scene = sample_scene();
        let arm = build_arm(&scene.arm).expect("sample arm");
        let plan = plan_of(&scene, &arm).expect("sample plans");
        let run = dry_run_of(&scene, &arm, &plan).expect("sample runs");
        let traces = Traces::of(&arm, &plan, &run, 1.0, 0.02);
        let timeline = Timeline {
            generation: 1,
            marks: scene
                .waypoints
                .iter()
                .zip(plan.timings())
                .map(|(waypoint, timing)| (waypoint.name.clone(), timing.arrival))
                .collect(),
            grippers: scene.waypoints.iter().map(|w| w.gripper).collect(),
            found: DryRunMarks::default(),
            plan,
            run,
            traces,
        };
        let pose = pose_from_file_units(&scene.arm, &scene.waypoints[0].joints_deg_or_mm);
        let mut playback = Playback::default();
        assert_eq!(playback.accept(Arc::new(timeline), &pose), None);
        (playback, pose)
    }

    #[test]
    fn playing_past_the_end_loops_to_the_start() {
        let (mut playback, pose) = playback_with_timeline();
        let joints = pose.len();
        let span = playback.timeline.as_ref().map_or(0.0, |t| t.span());
        let _ = playback.apply(PlaybackCommand::SetCursor(span - 0.03), joints, joints);
        let _ = playback.apply(PlaybackCommand::Play, joints, joints);
        let _ = playback.advance(10.0, joints);
        assert!(playback.playing);
        let moved = playback
            .advance(10.05, joints)
            .expect("the cursor moves the arm");
        assert!(playback.playing);
        assert!((playback.cursor - 0.02).abs() < 1e-9, "{}", playback.cursor);
        assert!(playback.arm_at_cursor(&moved.positions));
    }

    #[test]
    fn a_long_stall_advances_by_one_tenth_of_a_second_at_most() {
        let (mut playback, pose) = playback_with_timeline();
        let joints = pose.len();
        let _ = playback.apply(PlaybackCommand::SetSpeed(0.5), joints, joints);
        let _ = playback.apply(PlaybackCommand::Play, joints, joints);
        let _ = playback.advance(1.0, joints);
        let _ = playback.advance(6.0, joints);
        assert!((playback.cursor - MAX_FRAME_STEP * 0.5).abs() < 1e-12);
        // Speeds outside the offered steps are refused.
        let _ = playback.apply(PlaybackCommand::SetSpeed(3.0), joints, joints);
        assert_eq!(playback.speed, 0.5);
    }

    #[test]
    fn the_gripper_follows_the_waypoint_last_reached() {
        let (playback, _) = playback_with_timeline();
        let timeline = playback.timeline.clone().expect("timeline");
        for (index, (_, arrival)) in timeline.marks.iter().enumerate() {
            assert_eq!(
                timeline.gripper_at(*arrival + 1e-6),
                timeline.grippers[index]
            );
        }
    }
}
