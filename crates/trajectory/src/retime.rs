//! Retiming: the fastest timing of a sequence whose dry run meets an overshoot and torque target
//! and settles at every stop where the gripper acts before it acts.
//!
//! Each stop's overshoot depends mostly on the move into it, because the arm starts every move
//! from rest when the dwell before it is long enough. So the search runs all moves at once: a
//! bisection on each move's speed share with long dwells — one dry run of the whole sequence at
//! full speed, then every round only the stops still searched, each simulated from the rest
//! state the full run left at the stop before it — then dwells set from the predicted settle
//! times (plus the gripper's time where it acts), then a checking run of the whole result,
//! repaired with longer dwells or slower moves where it misses. The timing the caller starts
//! from is dry-run first: when it already meets the target and the search finds nothing
//! faster, it is returned unchanged.

use armwright_kinematics::Arm;

use crate::dry_run::{
    CommandedMotion, DryRun, DryRunError, DryRunOptions, GRIPPER_TIME, WaypointResult,
    WaypointTiming, dry_run, dry_run_keeping_rests, rerun_stops,
};

/// Share of the target the speed search aims for, so that the checking run passes.
const SEARCH_MARGIN: f64 = 0.95;

/// Rounds of repair after the checking run.
const REPAIRS: usize = 4;

/// The timing choices retiming makes: per waypoint a speed share (0–1] and a dwell (s).
#[derive(Debug, Clone, PartialEq)]
pub struct Timing {
    /// Share of each joint's limits the move into the waypoint may use, (0, 1].
    pub speed_share: Vec<f64>,
    /// Pause at each waypoint, in s (ignored at a pass-through).
    pub dwell: Vec<f64>,
}

/// Something that turns timing choices into a timed motion: the sequence planner.
pub trait Planner {
    /// The motion it plans.
    type Motion: CommandedMotion;
    /// Plans the sequence with these choices, returning the motion and where each waypoint
    /// sits in it.
    ///
    /// # Errors
    /// A reason naming the waypoint, when no plan exists for these choices.
    fn plan(&self, timing: &Timing) -> Result<(Self::Motion, Vec<WaypointTiming>), String>;
}

/// What retiming must meet.
#[derive(Debug, Clone, PartialEq)]
pub struct RetimeTarget {
    /// Largest allowed tool-point overshoot at any stop, in m.
    pub max_overshoot: f64,
    /// Share of each servo's stall torque the dry run may use (0–1].
    pub derating: f64,
    /// Shortest dwell at a stop, in s.
    pub min_dwell: f64,
    /// Longest dwell retiming will give a stop while waiting for it to settle, in s.
    pub max_dwell: f64,
    /// Dwell every stop gets while the speed shares are searched: long enough for a stop to
    /// come to rest before the next move (a few periods of the servo loop), in s.
    pub search_dwell: f64,
    /// Slowest speed share retiming will try before saying the target cannot be met.
    pub min_speed_share: f64,
    /// Bisection rounds on the speed shares; each halves the uncertainty.
    pub rounds: usize,
}

impl Default for RetimeTarget {
    fn default() -> Self {
        RetimeTarget {
            max_overshoot: 1.5e-3,
            derating: 1.0,
            min_dwell: 0.0,
            max_dwell: 1.0,
            search_dwell: 0.4,
            min_speed_share: 0.05,
            rounds: 7,
        }
    }
}

/// The headline figures of one dry run.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RunSummary {
    /// Length of the plan, in s.
    pub cycle_time: f64,
    /// Worst overshoot at any stop, in m.
    pub worst_overshoot: f64,
    /// Worst simulated torque use of any joint (share of derated stall torque; 1.0 = 100 %).
    pub worst_torque_use: f64,
    /// Stops where the gripper acts before the tool point has settled.
    pub unsettled_gripper_stops: usize,
}

impl RunSummary {
    /// The figures of a dry run.
    pub fn of(run: &DryRun) -> RunSummary {
        RunSummary {
            cycle_time: run.cycle_time,
            worst_overshoot: run.worst_overshoot(),
            worst_torque_use: run.worst_torque_use(),
            unsettled_gripper_stops: run.unsettled_gripper_stops().len(),
        }
    }
}

/// What keeps a stop from coming sooner: the limit its move (or dwell) was set by.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum Binding {
    /// The move runs at full speed share: the servos' own speed and acceleration limits.
    SpeedLimit,
    /// The overshoot target.
    Overshoot,
    /// The torque share (simulated torque use at 100 %).
    TorqueUse,
    /// Settling within the settle band before the gripper acts.
    GripperSettling,
}

impl Binding {
    /// A few words naming it, for reports.
    pub fn words(self) -> &'static str {
        match self {
            Binding::SpeedLimit => "the servos' speed limits",
            Binding::Overshoot => "overshoot",
            Binding::TorqueUse => "torque use",
            Binding::GripperSettling => "settling before the gripper acts",
        }
    }
}

/// How a stop stands against the target in one dry run.
#[derive(Debug, Clone, Copy, PartialEq)]
struct Verdict {
    overshoot_ok: bool,
    torque_ok: bool,
    settled_ok: bool,
}

impl Verdict {
    fn met(self) -> bool {
        self.overshoot_ok && self.torque_ok && self.settled_ok
    }

    /// The first constraint missed, overshoot before torque before settling.
    fn missed(self) -> Option<Binding> {
        if !self.overshoot_ok {
            Some(Binding::Overshoot)
        } else if !self.torque_ok {
            Some(Binding::TorqueUse)
        } else if !self.settled_ok {
            Some(Binding::GripperSettling)
        } else {
            None
        }
    }
}

/// The result of retiming: the new timing, the dry runs before and after, and whether the
/// target was met.
#[derive(Debug, Clone, PartialEq)]
pub struct Retimed {
    /// The timing found.
    pub timing: Timing,
    /// The dry run of the timing given.
    pub before: DryRun,
    /// The dry run of the timing found.
    pub after: DryRun,
    /// Whether the timing given already met the target. Then the timing found is never slower
    /// than it: it is the timing given unless the search found a faster one.
    pub already_met: bool,
    /// Per waypoint, what keeps that stop from coming sooner; `None` at a pass-through (it
    /// shares the stop it flows into) and at the first waypoint.
    pub binding: Vec<Option<Binding>>,
}

impl Retimed {
    /// The constraint that binds the most stops (ties to the earlier in [`Binding`]'s order),
    /// with how many it binds; `None` when there is no stop after the first.
    pub fn main_binding(&self) -> Option<(Binding, usize)> {
        let mut counts: Vec<(Binding, usize)> = Vec::new();
        for binding in self.binding.iter().flatten() {
            match counts.iter_mut().find(|(b, _)| b == binding) {
                Some((_, count)) => *count += 1,
                None => counts.push((*binding, 1)),
            }
        }
        counts.sort();
        counts
            .into_iter()
            .fold(None, |best: Option<(Binding, usize)>, (b, c)| match best {
                Some((_, best_count)) if best_count >= c => best,
                _ => Some((b, c)),
            })
    }
}

/// Why retiming gave no result.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum RetimeError {
    /// A waypoint misses the target even at the slowest speed share tried.
    #[error(
        "waypoint {waypoint} misses the target even at {:.0} % speed: overshoot {:.2} mm, torque use {:.0} % of the derated stall torque{}",
        .speed_share * 100.0, .overshoot * 1e3, .torque_use * 100.0,
        if *.unsettled { ", not settled before the gripper acts" } else { "" }
    )]
    Unreachable {
        /// Waypoint index.
        waypoint: usize,
        /// The slowest share tried, (0, 1].
        speed_share: f64,
        /// Its overshoot there, in m.
        overshoot: f64,
        /// Its torque use there (share of the derated stall torque).
        torque_use: f64,
        /// Whether the gripper acts there before the tool point has settled.
        unsettled: bool,
    },
    /// The planner refused a timing.
    #[error("no plan: {0}")]
    Plan(String),
    /// The dry run failed.
    #[error(transparent)]
    DryRun(#[from] DryRunError),
    /// The caller cancelled.
    #[error("retiming was cancelled")]
    Cancelled,
    /// A target value is unusable.
    #[error("{what} must be {expected}, got {value}")]
    Target {
        /// Which value.
        what: &'static str,
        /// What is allowed.
        expected: &'static str,
        /// The bad value.
        value: f64,
    },
}

/// Finds the fastest timing whose dry run meets `target`, starting from `initial`.
///
/// A stop meets the target when its overshoot is within `target.max_overshoot`, the simulated
/// torque use of every move flowing into it is within the derated stall torque, and — where the
/// gripper changes state — the tool point has settled within the settle band before the
/// gripper acts. `initial` is dry-run first; when it already meets the target, the result is
/// never slower than it ([`Retimed::already_met`]).
///
/// `progress(share_done)` is called after every dry run with the share of the work done
/// (0–1); returning `false` cancels.
///
/// # Errors
/// [`RetimeError::Unreachable`] naming the waypoint that cannot meet the target,
/// [`RetimeError::Cancelled`], or a planning or dry-run failure.
pub fn retime<P: Planner>(
    arm: &Arm,
    planner: &P,
    initial: &Timing,
    target: &RetimeTarget,
    options: &DryRunOptions,
    mut progress: impl FnMut(f64) -> bool,
) -> Result<Retimed, RetimeError> {
    check_target(target)?;
    let options = DryRunOptions {
        derating: target.derating,
        ..options.clone()
    };
    let total_runs = (target.rounds + 5 + REPAIRS) as f64;
    let mut runs = 0.0;
    let mut tick = || -> Result<(), RetimeError> {
        runs += 1.0;
        if progress((runs / total_runs).min(1.0)) {
            Ok(())
        } else {
            Err(RetimeError::Cancelled)
        }
    };
    let (motion, timings) = planner.plan(initial).map_err(RetimeError::Plan)?;
    let before = dry_run(arm, &motion, &timings, &options)?;
    tick()?;
    let shape = Shape::of(&timings, initial.speed_share.len());
    let before_meets = shape.all_met(&before, target);
    let found = search(arm, planner, target, &options, &shape, &mut tick);
    let (timing, after) = match found {
        Ok((timing, after)) if !before_meets || after.cycle_time < before.cycle_time => {
            (timing, after)
        }
        Ok(_) | Err(RetimeError::Unreachable { .. }) if before_meets => {
            (initial.clone(), before.clone())
        }
        Ok(found) => found,
        Err(error) => return Err(error),
    };
    let binding = shape.bindings(&after, &timing, target);
    Ok(Retimed {
        timing,
        before,
        after,
        already_met: before_meets,
        binding,
    })
}

/// Which waypoints are stops, where the gripper acts, and the stop each waypoint's move flows
/// into.
struct Shape {
    count: usize,
    is_stop: Vec<bool>,
    gripper: Vec<bool>,
    /// Pass-through waypoints share the speed of the stop they flow into.
    group: Vec<usize>,
}

impl Shape {
    fn of(timings: &[WaypointTiming], count: usize) -> Shape {
        let is_stop: Vec<bool> = (0..count)
            .map(|i| timings.get(i).is_some_and(|w| w.stop))
            .collect();
        let gripper = (0..count)
            .map(|i| timings.get(i).is_some_and(|w| w.gripper_acts.is_some()))
            .collect();
        let mut group = vec![count.saturating_sub(1); count];
        let mut next_stop = count.saturating_sub(1);
        for i in (0..count).rev() {
            if is_stop[i] {
                next_stop = i;
            }
            group[i] = next_stop;
        }
        Shape {
            count,
            is_stop,
            gripper,
            group,
        }
    }

    /// The waypoints whose move flows into `stop` (the stop itself included).
    fn members(&self, stop: usize) -> impl Iterator<Item = usize> + '_ {
        (0..self.count).filter(move |&i| self.group[i] == stop)
    }

    /// How `stop` stands in `run` against the target, overshoot and torque with `margin` in
    /// hand (1 for none).
    fn verdict(
        &self,
        run: &[Option<&WaypointResult>],
        stop: usize,
        target: &RetimeTarget,
        margin: f64,
    ) -> Verdict {
        Verdict {
            overshoot_ok: run[stop].is_some_and(|w| w.overshoot <= target.max_overshoot * margin),
            torque_ok: self
                .members(stop)
                .all(|i| run[i].is_some_and(|w| w.peak_torque_use <= margin)),
            settled_ok: self
                .members(stop)
                .all(|i| run[i].is_some_and(|w| !w.gripper_unsettled())),
        }
    }

    fn all_met(&self, run: &DryRun, target: &RetimeTarget) -> bool {
        let whole = whole(run);
        (0..self.count)
            .filter(|&i| self.is_stop[i])
            .all(|i| self.verdict(&whole, i, target, 1.0).met())
    }

    /// Per stop after the first, the constraint nearest its limit in `run` (overshoot against
    /// the target, torque use against 100 %, settle time against the time before the gripper
    /// acts); the servos' speed limits when none is within 90 % of its limit and the move runs
    /// at full speed share; `None` when nothing is near a limit, and at pass-throughs.
    fn bindings(
        &self,
        run: &DryRun,
        timing: &Timing,
        target: &RetimeTarget,
    ) -> Vec<Option<Binding>> {
        (0..self.count)
            .map(|stop| {
                if stop == 0 || !self.is_stop[stop] {
                    return None;
                }
                let w = &run.waypoints[stop];
                let torque = self
                    .members(stop)
                    .map(|i| run.waypoints[i].peak_torque_use)
                    .fold(0.0, f64::max);
                let settling = self
                    .members(stop)
                    .filter(|&i| self.gripper[i])
                    .map(|i| {
                        let r = &run.waypoints[i];
                        match r.settle_time {
                            Some(settle) if r.settled => {
                                settle / time_before_gripper(timing, i).max(1e-3)
                            }
                            _ => f64::INFINITY,
                        }
                    })
                    .fold(0.0, f64::max);
                let ratios = [
                    (w.overshoot / target.max_overshoot, Binding::Overshoot),
                    (torque, Binding::TorqueUse),
                    (settling, Binding::GripperSettling),
                ];
                let (ratio, nearest) = ratios.into_iter().fold(
                    (f64::NEG_INFINITY, Binding::Overshoot),
                    |best, next| {
                        if next.0 > best.0 { next } else { best }
                    },
                );
                if ratio >= 0.9 {
                    Some(nearest)
                } else if timing.speed_share.get(stop).is_some_and(|&s| s >= 1.0) {
                    Some(Binding::SpeedLimit)
                } else {
                    None
                }
            })
            .collect()
    }
}

/// How long after the arm arrives at waypoint `i` under `timing` the gripper acts there, in s:
/// the dwell less the gripper's time, never below 0 (see `gripper_moment`).
fn time_before_gripper(timing: &Timing, i: usize) -> f64 {
    (timing.dwell.get(i).copied().unwrap_or(0.0) - GRIPPER_TIME).max(0.0)
}

fn whole(run: &DryRun) -> Vec<Option<&WaypointResult>> {
    run.waypoints.iter().map(Some).collect()
}

/// The search itself: speed shares, then dwells, then a checked and repaired result.
fn search<P: Planner>(
    arm: &Arm,
    planner: &P,
    target: &RetimeTarget,
    options: &DryRunOptions,
    shape: &Shape,
    tick: &mut impl FnMut() -> Result<(), RetimeError>,
) -> Result<(Timing, DryRun), RetimeError> {
    let count = shape.count;
    let is_stop = &shape.is_stop;
    let group = &shape.group;
    let plan = |timing: &Timing| planner.plan(timing).map_err(RetimeError::Plan);
    // The search keeps a little margin (`SEARCH_MARGIN`) on overshoot and torque so that the
    // checking run, with shorter dwells, still passes; settling is left to the dwells.
    let meets = |run: &[Option<&WaypointResult>], stop: usize| {
        let verdict = shape.verdict(run, stop, target, SEARCH_MARGIN);
        verdict.overshoot_ok && verdict.torque_ok
    };

    // 1. Speed shares, with long dwells so that every move starts from rest (where the gripper
    // acts, long enough before it acts): one dry run of the whole sequence at full speed, which
    // also keeps the rest state at every stop; after it, each round of the bisection reruns only
    // the stops still searched, each from the stop before it.
    let mut low = vec![target.min_speed_share; count];
    let mut high = vec![1.0; count];
    let long_dwell: Vec<f64> = (0..count)
        .map(|i| target.search_dwell + if shape.gripper[i] { GRIPPER_TIME } else { 0.0 })
        .collect();
    let long = |speed_share: Vec<f64>| Timing {
        speed_share,
        dwell: long_dwell.clone(),
    };
    let (motion, timings) = plan(&long(vec![1.0; count]))?;
    let (fastest, rests) = dry_run_keeping_rests(arm, &motion, &timings, options, true)?;
    tick()?;
    let mut open = vec![false; count];
    for i in (0..count).filter(|&i| is_stop[i]) {
        if meets(&whole(&fastest), i) {
            low[i] = 1.0;
        } else if i == 0 {
            // No move leads into the start: no speed share changes it.
            let w = &fastest.waypoints[0];
            return Err(RetimeError::Unreachable {
                waypoint: 0,
                speed_share: 1.0,
                overshoot: w.overshoot,
                torque_use: w.peak_torque_use,
                unsettled: w.gripper_unsettled(),
            });
        } else {
            open[i] = true;
        }
    }
    let rerun = |speed_share: Vec<f64>, wanted: &[bool]| {
        let (motion, timings) = plan(&long(speed_share))?;
        Ok::<_, RetimeError>(rerun_stops(
            arm, &motion, &timings, options, &rests, wanted,
        )?)
    };
    for _ in 0..target.rounds {
        if !open.contains(&true) {
            break;
        }
        let trial: Vec<f64> = (0..count)
            .map(|i| 0.5 * (low[group[i]] + high[group[i]]))
            .collect();
        let result = rerun(trial.clone(), &open)?;
        tick()?;
        let result: Vec<Option<&WaypointResult>> = result.iter().map(Option::as_ref).collect();
        for i in (0..count).filter(|&i| open[i]) {
            if meets(&result, i) {
                low[i] = trial[i];
            } else {
                high[i] = trial[i];
            }
        }
    }
    // A stop that met no trial must meet the target at the slowest share, or it cannot be met.
    let never_met: Vec<bool> = (0..count)
        .map(|i| open[i] && low[i] <= target.min_speed_share)
        .collect();
    if never_met.contains(&true) {
        let slowest = (0..count).map(|i| low[group[i]]).collect();
        let result = rerun(slowest, &never_met)?;
        let result: Vec<Option<&WaypointResult>> = result.iter().map(Option::as_ref).collect();
        if let Some(i) = (0..count).find(|&i| never_met[i] && !meets(&result, i)) {
            let (overshoot, torque_use) =
                result[i].map_or((f64::NAN, f64::NAN), |w| (w.overshoot, w.peak_torque_use));
            return Err(RetimeError::Unreachable {
                waypoint: i,
                speed_share: target.min_speed_share,
                overshoot,
                torque_use,
                unsettled: false,
            });
        }
    }
    tick()?;
    let shares: Vec<f64> = (0..count).map(|i| low[group[i]]).collect();

    // 2. Dwells from the settle times predicted with those shares, over the whole sequence:
    // where a stop's rest lies inside the deadband depends on every move before it, and with
    // it whether the tool point starts inside the settle band. Where the gripper acts, the
    // dwell is the settle time and then the gripper's own time.
    let every_stop: Vec<bool> = (0..count).map(|i| i > 0 && is_stop[i]).collect();
    let settling = rerun(shares.clone(), &every_stop)?;
    tick()?;
    let dwell: Vec<f64> = (0..count)
        .map(|i| {
            let measured = settling[i].as_ref().unwrap_or(&fastest.waypoints[i]);
            let settle = measured.settle_time.unwrap_or(target.max_dwell);
            let rounded = (settle * 100.0).ceil() / 100.0; // to the next 10 ms
            if !is_stop[i] {
                0.0
            } else if shape.gripper[i] {
                (rounded + GRIPPER_TIME).clamp(target.min_dwell, target.max_dwell + GRIPPER_TIME)
            } else {
                rounded.clamp(target.min_dwell, target.max_dwell)
            }
        })
        .collect();
    let mut timing = Timing {
        speed_share: shares,
        dwell,
    };

    // 3. Check with the strict target, on the whole sequence. A stop that has not settled
    // before its gripper acts waits longer there, doubling the extra wait each round; any
    // other miss first gets the longest dwell before it (the arm left the stop before without
    // having settled), then slower moves.
    let mut check = |timing: &Timing| -> Result<DryRun, RetimeError> {
        let (motion, timings) = plan(timing)?;
        let run = dry_run(arm, &motion, &timings, options)?;
        tick()?;
        Ok(run)
    };
    let mut after = check(&timing)?;
    for round in 0..REPAIRS {
        let verdicts: Vec<(usize, Verdict)> = (0..count)
            .filter(|&i| is_stop[i])
            .map(|i| (i, shape.verdict(&whole(&after), i, target, 1.0)))
            .filter(|(_, verdict)| !verdict.met())
            .collect();
        if verdicts.is_empty() {
            break;
        }
        for &(stop, verdict) in &verdicts {
            let longest = target.max_dwell + GRIPPER_TIME;
            if verdict.missed() == Some(Binding::GripperSettling)
                && shape.gripper[stop]
                && timing.dwell[stop] < longest
            {
                let extra = 0.1 * f64::from(1u32 << round);
                timing.dwell[stop] = (timing.dwell[stop] + extra).min(longest);
                continue;
            }
            let before = (0..stop).rev().find(|&i| is_stop[i]);
            match before {
                Some(previous) if timing.dwell[previous] < target.max_dwell => {
                    timing.dwell[previous] = target.max_dwell;
                }
                _ => {
                    for i in shape.members(stop) {
                        timing.speed_share[i] =
                            (timing.speed_share[i] * 0.9).max(target.min_speed_share);
                    }
                }
            }
        }
        after = check(&timing)?;
    }
    if let Some(i) =
        (0..count).find(|&i| is_stop[i] && !shape.verdict(&whole(&after), i, target, 1.0).met())
    {
        let w = &after.waypoints[i];
        return Err(RetimeError::Unreachable {
            waypoint: i,
            speed_share: timing.speed_share[i],
            overshoot: w.overshoot,
            torque_use: w.peak_torque_use,
            unsettled: shape
                .members(i)
                .any(|m| after.waypoints[m].gripper_unsettled()),
        });
    }
    Ok((timing, after))
}

fn check_target(target: &RetimeTarget) -> Result<(), RetimeError> {
    let checks = [
        (
            "max_overshoot",
            target.max_overshoot,
            target.max_overshoot > 0.0,
            "positive",
        ),
        (
            "derating",
            target.derating,
            target.derating > 0.0 && target.derating <= 1.0,
            "within (0, 1]",
        ),
        (
            "min_dwell",
            target.min_dwell,
            target.min_dwell >= 0.0,
            "0 or more",
        ),
        (
            "max_dwell",
            target.max_dwell,
            target.max_dwell >= target.min_dwell,
            "at least min_dwell",
        ),
        (
            "search_dwell",
            target.search_dwell,
            target.search_dwell > 0.0,
            "positive",
        ),
        (
            "min_speed_share",
            target.min_speed_share,
            target.min_speed_share > 0.0 && target.min_speed_share <= 1.0,
            "within (0, 1]",
        ),
    ];
    for (what, value, ok, expected) in checks {
        if !(ok && value.is_finite()) {
            return Err(RetimeError::Target {
                what,
                expected,
                value,
            });
        }
    }
    Ok(())
}
