//! Retiming off the UI thread. [`RetimeState`] is the retime tab's plain data in the editor's
//! state (the target, how the run goes, the before/after report); [`RetimeWorker`] runs
//! [`retime_scene`] on a worker thread, the same call the command line makes, and the editor
//! polls it every frame for progress and the outcome. Cancelling sets a flag the retime's
//! progress callback reads after each dry run.
//!
//! A result belongs to the scene it was computed from: once the scene differs from that one, the
//! result is stale and cannot be applied.

use std::sync::Arc;
use std::sync::atomic::{AtomicBool, AtomicU64, Ordering};
use std::sync::mpsc::{Receiver, TryRecvError, channel};

use armwright_kinematics::{Arm, gravity_torques, torque_use};
use armwright_trajectory::{Binding, DryRun, RetimeError};

use super::message::Level;
use crate::placement::placements_of;
use crate::scene::{Arrival, GripperState, Scene, Shaping, pose_from_file_units};
use crate::task::{RetimeSettings, SceneRetime, retime_scene};

/// The retime tab's data: the target and the run.
#[derive(Debug, Clone, PartialEq)]
pub struct RetimeState {
    /// Largest allowed tool-point overshoot at any stop, in mm.
    pub max_overshoot_mm: f64,
    /// Share of each servo's stall torque the retimed plan may use, in %.
    pub torque_share_pct: f64,
    /// How the last retime went.
    pub run: RetimeRun,
}

impl RetimeState {
    /// The target a scene asks for (its `timing.max_overshoot_mm` and torque derating), no run.
    pub fn for_scene(scene: &Scene) -> RetimeState {
        RetimeState {
            max_overshoot_mm: scene.timing.max_overshoot_mm,
            torque_share_pct: scene.timing.torque_derating_pct,
            run: RetimeRun::Idle,
        }
    }

    /// Whether the running or finished retime was started on a scene other than `scene`: its
    /// result does not belong to the scene any more.
    pub fn is_stale(&self, scene: &Scene) -> bool {
        match &self.run {
            RetimeRun::Running { base, .. } => **base != *scene,
            RetimeRun::Finished(report) => report.base != *scene,
            _ => false,
        }
    }

    /// The settings a run starts with (no shortest dwell, as the command line's default).
    pub(crate) fn settings(&self) -> RetimeSettings {
        RetimeSettings {
            max_overshoot_mm: self.max_overshoot_mm,
            torque_share: self.torque_share_pct / 100.0,
            min_dwell_ms: 0.0,
        }
    }
}

/// How the last retime went.
#[derive(Debug, Clone, PartialEq)]
pub enum RetimeRun {
    /// None started (or its result was applied or discarded).
    Idle,
    /// Running on a worker thread.
    Running {
        /// Share of the work done, 0–1.
        progress: f64,
        /// The scene it started from.
        base: Box<Scene>,
        /// Cancel was asked; the worker stops after its current dry run.
        cancelling: bool,
    },
    /// The user cancelled it.
    Cancelled,
    /// It gave no timing: why, naming the waypoint where one is at fault.
    Failed {
        /// What went wrong, in words.
        reason: String,
    },
    /// It found a timing that meets the target.
    Finished(Box<RetimeReport>),
}

impl RetimeRun {
    /// Whether a retime is running.
    pub fn is_running(&self) -> bool {
        matches!(self, RetimeRun::Running { .. })
    }
}

/// The headline figures of one dry run.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RunFigures {
    /// Length of the plan, in s.
    pub cycle_time_s: f64,
    /// Worst tool-point overshoot at any stop, in mm.
    pub worst_overshoot_mm: f64,
    /// Worst simulated torque use of any joint, in % of the derated stall torque (stall torque ×
    /// the torque share the run was made with).
    pub worst_torque_use_pct: f64,
    /// Stops where the gripper acts before the tool point has settled.
    pub unsettled_gripper_stops: usize,
}

impl RunFigures {
    /// The figures of a dry run made with the torque share it is reported against.
    pub fn of(run: &DryRun) -> RunFigures {
        RunFigures {
            cycle_time_s: run.cycle_time,
            worst_overshoot_mm: run.worst_overshoot() * 1e3,
            worst_torque_use_pct: run.worst_torque_use() * 100.0,
            unsettled_gripper_stops: run.unsettled_gripper_stops().len(),
        }
    }

    /// Whether these figures meet a target of `max_overshoot_mm`, 100 % torque use and every
    /// gripper stop settled.
    pub fn meets(&self, max_overshoot_mm: f64) -> bool {
        self.worst_overshoot_mm <= max_overshoot_mm
            && self.worst_torque_use_pct <= 100.0
            && self.unsettled_gripper_stops == 0
    }
}

/// The worst placement success (0–1) over the waypoints of `scene` where the gripper acts in
/// `run`, with its waypoint index and that waypoint's tolerance (mm), as `armwright simulate`
/// estimates it ([`placements_of`]); `None` when the gripper
/// acts nowhere.
pub fn worst_placement(scene: &Scene, arm: &Arm, run: &DryRun) -> Option<(usize, f64, f64)> {
    placements_of(scene, arm, run)
        .ok()?
        .into_iter()
        .enumerate()
        .filter_map(|(index, placement)| {
            placement.map(|p| (index, p.estimate.success, p.tolerance_mm))
        })
        .min_by(|a, b| a.1.total_cmp(&b.1))
}

/// One waypoint before and after retiming; each pair is `[before, after]`.
#[derive(Debug, Clone, PartialEq)]
pub struct WaypointFigures {
    /// The waypoint's name.
    pub name: String,
    /// Whether the arm stops there (overshoot is measured at stops only).
    pub stop: bool,
    /// Speed share of the move into it, in %.
    pub speed_share_pct: [f64; 2],
    /// Dwell, in ms.
    pub dwell_ms: [f64; 2],
    /// Tool-point overshoot, in mm.
    pub overshoot_mm: [f64; 2],
    /// Peak simulated torque use on the move into it, in % of the derated stall torque.
    pub torque_use_pct: [f64; 2],
    /// Whether the tool point settled before the arm left or, where the gripper acts, before it
    /// acts (stops only).
    pub settled: [bool; 2],
    /// Whether the gripper acts here.
    pub gripper_acts: bool,
    /// What keeps this stop from coming sooner after retiming; `None` at a pass-through or
    /// where nothing is near its limit.
    pub binding: Option<Binding>,
}

/// A retime that met its target.
#[derive(Debug, Clone, PartialEq)]
pub struct RetimeReport {
    /// The scene it was computed from.
    pub base: Scene,
    /// That scene with the new timing (and the target) written in: what Apply puts in place.
    pub retimed: Scene,
    /// The target overshoot, in mm.
    pub max_overshoot_mm: f64,
    /// The torque share, in % of stall torque.
    pub torque_share_pct: f64,
    /// The dry run of the scene's own timing.
    pub before: RunFigures,
    /// The dry run of the retimed timing.
    pub after: RunFigures,
    /// Per waypoint, in order.
    pub waypoints: Vec<WaypointFigures>,
    /// The scene's shaping setting.
    pub shaping: Shaping,
    /// How many runs from stop to stop the retimed plan shapes.
    pub shaped_runs: usize,
    /// Whether the scene's own timing already met the target (the result is then never
    /// slower than it).
    pub already_met: bool,
    /// The constraint that binds the most stops, with how many it binds.
    pub binding: Option<(Binding, usize)>,
    /// Worst placement success (0–1) after retiming, its waypoint and that waypoint's
    /// tolerance (mm); `None` when the gripper acts nowhere.
    pub worst_placement: Option<(usize, f64, f64)>,
}

impl RetimeReport {
    fn of(base: Scene, arm: &Arm, settings: &RetimeSettings, result: SceneRetime) -> RetimeReport {
        let SceneRetime {
            retimed,
            before,
            scene,
            shaped_runs,
        } = result;
        let pair = |a: Option<&f64>, b: Option<&f64>, scale: f64| {
            [
                a.copied().unwrap_or(f64::NAN) * scale,
                b.copied().unwrap_or(f64::NAN) * scale,
            ]
        };
        let waypoints = base
            .waypoints
            .iter()
            .enumerate()
            .map(|(i, waypoint)| {
                let (was, now) = (
                    retimed.before.waypoints.get(i),
                    retimed.after.waypoints.get(i),
                );
                WaypointFigures {
                    name: waypoint.name.clone(),
                    stop: waypoint.arrival == Arrival::Stop,
                    speed_share_pct: pair(
                        before.speed_share.get(i),
                        retimed.timing.speed_share.get(i),
                        100.0,
                    ),
                    dwell_ms: pair(before.dwell.get(i), retimed.timing.dwell.get(i), 1e3),
                    overshoot_mm: pair(was.map(|w| &w.overshoot), now.map(|w| &w.overshoot), 1e3),
                    torque_use_pct: pair(
                        was.map(|w| &w.peak_torque_use),
                        now.map(|w| &w.peak_torque_use),
                        100.0,
                    ),
                    settled: [
                        was.is_some_and(|w| w.settled),
                        now.is_some_and(|w| w.settled),
                    ],
                    gripper_acts: now.is_some_and(|w| w.gripper_acts.is_some()),
                    binding: retimed.binding.get(i).copied().flatten(),
                }
            })
            .collect();
        let worst_placement = worst_placement(&scene, arm, &retimed.after);
        RetimeReport {
            shaping: base.timing.shaping,
            base,
            retimed: scene,
            max_overshoot_mm: settings.max_overshoot_mm,
            torque_share_pct: settings.torque_share * 100.0,
            worst_placement,
            already_met: retimed.already_met,
            binding: retimed.main_binding(),
            before: RunFigures::of(&retimed.before),
            after: RunFigures::of(&retimed.after),
            waypoints,
            shaped_runs,
        }
    }
}

/// Why a retime gave no timing, in words, naming the waypoint (1-based, as the sequence shows
/// it) where one is at fault. A plan refused for the torque share is traced to the first
/// waypoint where a servo cannot hold the arm against gravity within that share.
fn failure(scene: &Scene, arm: &Arm, torque_share: f64, error: &RetimeError) -> String {
    if let RetimeError::Plan(reason) = error
        && let Some(holding) = cannot_hold(scene, arm, torque_share)
    {
        return format!("target not met: {holding} ({reason})");
    }
    match error {
        RetimeError::Unreachable {
            waypoint,
            speed_share,
            overshoot,
            torque_use,
            unsettled,
        } => format!(
            "target not met: waypoint {} \"{}\" misses it even at {:.0} % speed (overshoot {:.2} mm, simulated torque use {:.0} % of the derated stall torque{})",
            waypoint + 1,
            scene
                .waypoints
                .get(*waypoint)
                .map_or("", |w| w.name.as_str()),
            speed_share * 100.0,
            overshoot * 1e3,
            torque_use * 100.0,
            if *unsettled {
                ", not settled before the gripper acts"
            } else {
                ""
            }
        ),
        other => format!("cannot retime: {other}"),
    }
}

/// The first waypoint where a servo needs more than `torque_share` of its stall torque to hold
/// the arm (and the payload, with the gripper closed) against gravity, in words.
fn cannot_hold(scene: &Scene, arm: &Arm, torque_share: f64) -> Option<String> {
    scene.waypoints.iter().enumerate().find_map(|(index, waypoint)| {
        let pose = pose_from_file_units(&scene.arm, &waypoint.joints_deg_or_mm);
        let payload = match waypoint.gripper {
            GripperState::Closed => arm.payload_mass(),
            GripperState::Open => 0.0,
        };
        let efforts = gravity_torques(arm, &pose, payload).ok()?;
        let shares = torque_use(arm, &efforts, torque_share);
        let (joint, share) = shares
            .as_slice()
            .iter()
            .copied()
            .enumerate()
            .filter(|(_, share)| *share > 1.0)
            .max_by(|a, b| a.1.total_cmp(&b.1))?;
        Some(format!(
            "at waypoint {} \"{}\", joint {} \"{}\" needs {:.0} % of its {:.0} % torque share just to hold against gravity",
            index + 1,
            waypoint.name,
            joint + 1,
            scene.arm.joints.get(joint).map_or("", |j| j.name.as_str()),
            share * 100.0,
            torque_share * 100.0
        ))
    })
}

/// How a worker's retime ended.
enum JobEnd {
    Finished(Box<RetimeReport>),
    Failed(String),
    Cancelled,
}

struct Job {
    cancel: Arc<AtomicBool>,
    /// Share of the work done (0–1), as `f64` bits.
    progress: Arc<AtomicU64>,
    receiver: Receiver<JobEnd>,
}

/// Runs one retime at a time on a worker thread.
#[derive(Default)]
pub(crate) struct RetimeWorker {
    job: Option<Job>,
}

impl RetimeWorker {
    /// Starts retiming `scene` on `arm` (built from it); a retime still running is cancelled.
    pub fn start(&mut self, ctx: &egui::Context, scene: Scene, arm: Arm, settings: RetimeSettings) {
        self.cancel();
        let cancel = Arc::new(AtomicBool::new(false));
        let progress = Arc::new(AtomicU64::new(0f64.to_bits()));
        let (sender, receiver) = channel();
        let (worker_cancel, worker_progress, ctx) = (cancel.clone(), progress.clone(), ctx.clone());
        let spawned = std::thread::Builder::new()
            .name("armwright retime".into())
            .spawn(move || {
                let result = retime_scene(&scene, &arm, &settings, |done| {
                    worker_progress.store(done.to_bits(), Ordering::Relaxed);
                    ctx.request_repaint();
                    !worker_cancel.load(Ordering::Relaxed)
                });
                let end = match result {
                    Ok(result) => {
                        JobEnd::Finished(Box::new(RetimeReport::of(scene, &arm, &settings, result)))
                    }
                    Err(RetimeError::Cancelled) => JobEnd::Cancelled,
                    Err(error) => {
                        JobEnd::Failed(failure(&scene, &arm, settings.torque_share, &error))
                    }
                };
                let _ = sender.send(end);
                ctx.request_repaint();
            });
        if spawned.is_ok() {
            self.job = Some(Job {
                cancel,
                progress,
                receiver,
            });
        }
    }

    /// Asks the running retime to stop after its current dry run.
    pub fn cancel(&mut self) {
        if let Some(job) = &self.job {
            job.cancel.store(true, Ordering::Relaxed);
        }
    }

    /// Whether a retime is running.
    pub fn busy(&self) -> bool {
        self.job.is_some()
    }

    /// Copies the running retime's progress into `retime`, and its outcome once it ends;
    /// returns the status-bar line that outcome calls for. An outcome arriving when `retime`
    /// no longer waits for one (a new scene was opened) is dropped.
    pub fn poll(&mut self, retime: &mut RetimeState) -> Option<(Level, String)> {
        let job = self.job.as_ref()?;
        let end = match job.receiver.try_recv() {
            Ok(end) => end,
            Err(TryRecvError::Empty) => {
                if let RetimeRun::Running { progress, .. } = &mut retime.run {
                    *progress = f64::from_bits(job.progress.load(Ordering::Relaxed));
                }
                return None;
            }
            Err(TryRecvError::Disconnected) => {
                JobEnd::Failed("cannot retime: the retime worker stopped unexpectedly".into())
            }
        };
        self.job = None;
        if !retime.run.is_running() {
            return None;
        }
        let (run, said) = match end {
            JobEnd::Finished(report) => {
                let said = format!(
                    "retimed: cycle {:.2} s, {:.2} s before; apply or discard it in the Retime tab",
                    report.after.cycle_time_s, report.before.cycle_time_s
                );
                (RetimeRun::Finished(report), (Level::Info, said))
            }
            JobEnd::Failed(reason) => (
                RetimeRun::Failed {
                    reason: reason.clone(),
                },
                (Level::Warning, reason),
            ),
            JobEnd::Cancelled => (
                RetimeRun::Cancelled,
                (Level::Info, "retiming cancelled".to_owned()),
            ),
        };
        retime.run = run;
        Some(said)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::editor::sample::sample_scene;

    #[test]
    fn an_unreachable_waypoint_is_named_one_based_with_its_name() {
        let scene = sample_scene();
        let error = RetimeError::Unreachable {
            waypoint: 1,
            speed_share: 0.05,
            overshoot: 2.5e-3,
            torque_use: 0.4,
            unsettled: true,
        };
        let arm = crate::scene::build_arm(&scene.arm).expect("sample arm");
        let text = failure(&scene, &arm, 0.5, &error);
        assert!(
            text.contains("not settled before the gripper acts"),
            "{text}"
        );
        assert!(text.contains("40 % of the derated stall torque"), "{text}");
        assert!(
            text.starts_with(&format!(
                "target not met: waypoint 2 \"{}\"",
                scene.waypoints[1].name
            )),
            "{text}"
        );
        assert!(text.contains("5 % speed"), "{text}");
        assert!(text.contains("overshoot 2.50 mm"), "{text}");
    }

    #[test]
    fn a_torque_share_too_small_to_hold_names_the_waypoint_and_joint() {
        let scene = sample_scene();
        let arm = crate::scene::build_arm(&scene.arm).expect("sample arm");
        let settings = RetimeSettings {
            max_overshoot_mm: 0.5,
            torque_share: 0.05,
            min_dwell_ms: 0.0,
        };
        let error = retime_scene(&scene, &arm, &settings, |_| true).expect_err("cannot hold");
        assert!(matches!(error, RetimeError::Plan(_)), "{error:?}");
        let text = failure(&scene, &arm, settings.torque_share, &error);
        // The shoulder carries the most at the first waypoint (the command line says the same,
        // 0-based: "joint 1 cannot hold waypoint 0").
        let expected = format!(
            "target not met: at waypoint 1 \"{}\", joint 2 \"{}\" needs ",
            scene.waypoints[0].name, scene.arm.joints[1].name
        );
        assert!(text.starts_with(&expected), "{text}");
        assert!(text.contains("of its 5 % torque share"), "{text}");
    }

    #[test]
    fn a_result_for_another_scene_is_stale() {
        let scene = sample_scene();
        let mut state = RetimeState::for_scene(&scene);
        state.run = RetimeRun::Running {
            progress: 0.0,
            base: Box::new(scene.clone()),
            cancelling: false,
        };
        assert!(!state.is_stale(&scene));
        let mut changed = scene.clone();
        changed.waypoints[0].dwell_ms += 10.0;
        assert!(state.is_stale(&changed));
    }

    /// A worker whose job has already ended with `end`, and the progress it reports.
    fn ended_worker(end: Option<JobEnd>, progress: f64) -> RetimeWorker {
        let (sender, receiver) = channel();
        if let Some(end) = end {
            sender.send(end).expect("the receiver is here");
        } else {
            // Kept open: the job is still running.
            std::mem::forget(sender);
        }
        RetimeWorker {
            job: Some(Job {
                cancel: Arc::new(AtomicBool::new(false)),
                progress: Arc::new(AtomicU64::new(progress.to_bits())),
                receiver,
            }),
        }
    }

    fn running(scene: &Scene) -> RetimeState {
        let mut retime = RetimeState::for_scene(scene);
        retime.run = RetimeRun::Running {
            progress: 0.0,
            base: Box::new(scene.clone()),
            cancelling: false,
        };
        retime
    }

    #[test]
    fn polling_copies_progress_then_the_outcome_and_its_message() {
        let scene = sample_scene();
        let mut retime = running(&scene);
        let mut worker = ended_worker(None, 0.25);
        assert_eq!(worker.poll(&mut retime), None);
        assert!(matches!(retime.run, RetimeRun::Running { progress, .. } if progress == 0.25));
        assert!(worker.busy());

        let mut worker = ended_worker(Some(JobEnd::Failed("target not met".into())), 1.0);
        let said = worker.poll(&mut retime);
        assert_eq!(said, Some((Level::Warning, "target not met".to_owned())));
        assert_eq!(
            retime.run,
            RetimeRun::Failed {
                reason: "target not met".into()
            }
        );
        assert!(!worker.busy());

        let mut retime = running(&scene);
        let mut worker = ended_worker(Some(JobEnd::Cancelled), 0.5);
        assert_eq!(
            worker.poll(&mut retime),
            Some((Level::Info, "retiming cancelled".to_owned()))
        );
        assert_eq!(retime.run, RetimeRun::Cancelled);
    }

    #[test]
    fn an_outcome_nobody_waits_for_is_dropped() {
        let scene = sample_scene();
        // A new scene was opened while the worker ran: its state waits for no retime.
        let mut retime = RetimeState::for_scene(&scene);
        let mut worker = ended_worker(Some(JobEnd::Cancelled), 1.0);
        assert_eq!(worker.poll(&mut retime), None);
        assert_eq!(retime.run, RetimeRun::Idle);
        assert!(!worker.busy());
    }
}
