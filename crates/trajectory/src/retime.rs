//! Retiming: the fastest timing of a sequence whose dry run meets an overshoot and torque target.
//!
//! Each stop's overshoot depends mostly on the move into it, because the arm starts every move
//! from rest when the dwell before it is long enough. So the search runs all moves at once: a
//! bisection on each move's speed share with long dwells — one dry run of the whole sequence at
//! full speed, then every round only the stops still searched, each simulated from the rest
//! state the full run left at the stop before it — then dwells set from the predicted settle
//! times, then a checking run of the whole result.

use armwright_kinematics::Arm;

use crate::dry_run::{
    CommandedMotion, DryRun, DryRunError, DryRunOptions, WaypointResult, WaypointTiming, dry_run,
    dry_run_keeping_rests, rerun_stops,
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
    /// Worst torque use of any joint (share of derated stall torque; 1.0 = 100 %).
    pub worst_torque_use: f64,
}

impl RunSummary {
    /// The figures of a dry run.
    pub fn of(run: &DryRun) -> RunSummary {
        RunSummary {
            cycle_time: run.cycle_time,
            worst_overshoot: run.worst_overshoot(),
            worst_torque_use: run.worst_torque_use(),
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
}

/// Why retiming gave no result.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum RetimeError {
    /// A waypoint misses the target even at the slowest speed share tried.
    #[error(
        "waypoint {waypoint} misses the target even at {:.0} % speed: overshoot {:.2} mm, torque use {:.0} %",
        .speed_share * 100.0, .overshoot * 1e3, .torque_use * 100.0
    )]
    Unreachable {
        /// Waypoint index.
        waypoint: usize,
        /// The slowest share tried, (0, 1].
        speed_share: f64,
        /// Its overshoot there, in m.
        overshoot: f64,
        /// Its torque use there (share).
        torque_use: f64,
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
    let count = initial.speed_share.len();
    let total_runs = (target.rounds + 4 + REPAIRS) as f64;
    let mut runs = 0.0;
    let mut tick = || -> Result<(), RetimeError> {
        runs += 1.0;
        if progress((runs / total_runs).min(1.0)) {
            Ok(())
        } else {
            Err(RetimeError::Cancelled)
        }
    };
    let plan = |timing: &Timing| planner.plan(timing).map_err(RetimeError::Plan);
    let (motion, stops) = plan(initial)?;
    let before = dry_run(arm, &motion, &stops, &options)?;
    tick()?;
    let is_stop: Vec<bool> = stops.iter().map(|w| w.stop).collect();
    // Pass-through waypoints share the speed of the stop they flow into.
    let group: Vec<usize> = {
        let mut owner = vec![count.saturating_sub(1); count];
        let mut next_stop = count.saturating_sub(1);
        for i in (0..count).rev() {
            if is_stop[i] {
                next_stop = i;
            }
            owner[i] = next_stop;
        }
        owner
    };
    // A stop meets the target when its overshoot and the torque use of every move flowing into
    // it (its pass-through waypoints too) are within bounds. The search keeps a little margin
    // (`SEARCH_MARGIN`) so that the checking run, with shorter dwells, still passes.
    let meets_within = |run: &[Option<&WaypointResult>], stop: usize, margin: f64| {
        let overshoot_ok = run[stop].is_some_and(|w| w.overshoot <= target.max_overshoot * margin);
        let torque_ok = (0..count)
            .filter(|&i| group[i] == stop)
            .all(|i| run[i].is_some_and(|w| w.peak_torque_use <= margin));
        overshoot_ok && torque_ok
    };
    let meets =
        |run: &[Option<&WaypointResult>], stop: usize| meets_within(run, stop, SEARCH_MARGIN);
    fn whole(run: &DryRun) -> Vec<Option<&WaypointResult>> {
        run.waypoints.iter().map(Some).collect()
    }

    // 1. Speed shares, with long dwells so that every move starts from rest: one dry run of the
    // whole sequence at full speed, which also keeps the rest state at every stop; after it,
    // each round of the bisection reruns only the stops still searched, each from the stop
    // before it.
    let mut low = vec![target.min_speed_share; count];
    let mut high = vec![1.0; count];
    let long = |speed_share: Vec<f64>| Timing {
        speed_share,
        dwell: vec![target.search_dwell; count],
    };
    let (motion, timings) = plan(&long(vec![1.0; count]))?;
    let (fastest, rests) = dry_run_keeping_rests(arm, &motion, &timings, &options, true)?;
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
            });
        } else {
            open[i] = true;
        }
    }
    let rerun = |speed_share: Vec<f64>, wanted: &[bool]| {
        let (motion, timings) = plan(&long(speed_share))?;
        Ok::<_, RetimeError>(rerun_stops(
            arm, &motion, &timings, &options, &rests, wanted,
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
            });
        }
    }
    tick()?;
    let shares: Vec<f64> = (0..count).map(|i| low[group[i]]).collect();

    // 2. Dwells from the settle times predicted with those shares, over the whole sequence:
    // where a stop's rest lies inside the deadband depends on every move before it, and with
    // it whether the tool point starts inside the settle band.
    let every_stop: Vec<bool> = (0..count).map(|i| i > 0 && is_stop[i]).collect();
    let settling = rerun(shares.clone(), &every_stop)?;
    tick()?;
    let dwell: Vec<f64> = (0..count)
        .map(|i| {
            let measured = settling[i].as_ref().unwrap_or(&fastest.waypoints[i]);
            let settle = measured.settle_time.unwrap_or(target.max_dwell);
            let rounded = (settle * 100.0).ceil() / 100.0; // to the next 10 ms
            if is_stop[i] {
                rounded.clamp(target.min_dwell, target.max_dwell)
            } else {
                0.0
            }
        })
        .collect();
    let mut timing = Timing {
        speed_share: shares,
        dwell,
    };

    // 3. Check with the strict target, on the whole sequence. A stop that misses first gets the
    // longest dwell before it (the arm left the stop before without having settled), then
    // slower moves.
    let mut check = |timing: &Timing| -> Result<DryRun, RetimeError> {
        let (motion, timings) = plan(timing)?;
        let run = dry_run(arm, &motion, &timings, &options)?;
        tick()?;
        Ok(run)
    };
    let mut after = check(&timing)?;
    for _ in 0..REPAIRS {
        let missing: Vec<usize> = (0..count)
            .filter(|&i| is_stop[i] && !meets_within(&whole(&after), i, 1.0))
            .collect();
        if missing.is_empty() {
            break;
        }
        for &stop in &missing {
            let before = (0..stop).rev().find(|&i| is_stop[i]);
            match before {
                Some(previous) if timing.dwell[previous] < target.max_dwell => {
                    timing.dwell[previous] = target.max_dwell;
                }
                _ => {
                    for i in (0..count).filter(|&i| group[i] == stop) {
                        timing.speed_share[i] =
                            (timing.speed_share[i] * 0.9).max(target.min_speed_share);
                    }
                }
            }
        }
        after = check(&timing)?;
    }
    if let Some(i) = (0..count).find(|&i| is_stop[i] && !meets_within(&whole(&after), i, 1.0)) {
        let w = &after.waypoints[i];
        return Err(RetimeError::Unreachable {
            waypoint: i,
            speed_share: timing.speed_share[i],
            overshoot: w.overshoot,
            torque_use: w.peak_torque_use,
        });
    }
    Ok(Retimed {
        timing,
        before,
        after,
    })
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
