//! Sequence plan: the timed moves and dwells through a list of joint-space waypoints.
//!
//! Each move between two waypoints is synchronised across joints ([`synchronise`]). At a stop
//! every joint comes to rest and the arm dwells; at a pass-through each joint keeps a velocity
//! chosen so that the move in and the move out agree on it (velocity is continuous, and the
//! acceleration is zero there, so it is continuous too) and no limit is exceeded. A joint that
//! turns around at a pass-through, or does not move on one side of it, passes it at rest.

use crate::profile::{JointLimits, JointMove, JointState, Profile, ProfileError, ProfileShape};
use crate::sync::{SyncError, SyncedMove, synchronise};

/// What the arm does at a waypoint.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum WaypointKind {
    /// Come to rest and wait `dwell` s (0 allowed).
    Stop {
        /// Time at rest, s.
        dwell: f64,
    },
    /// Flow through without stopping. The first and last waypoints are always stops.
    PassThrough,
}

/// A waypoint of a sequence in joint space.
#[derive(Debug, Clone, PartialEq)]
pub struct SequenceWaypoint {
    /// Joint positions, rad (one per joint, in chain order).
    pub positions: Vec<f64>,
    /// Stop (with dwell) or pass-through.
    pub kind: WaypointKind,
    /// Share of every joint's limits (velocity, acceleration, jerk) that the move arriving at
    /// this waypoint may use, in (0, 1]. Ignored for the first waypoint.
    pub speed_share: f64,
}

/// Why a sequence could not be planned, or sampled.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum SequenceError {
    /// Fewer than two waypoints.
    #[error("a sequence needs at least two waypoints, {count} given")]
    TooFewWaypoints {
        /// Waypoints given.
        count: usize,
    },
    /// A waypoint has a different number of joints than the limits.
    #[error("waypoint {waypoint} has {found} joint positions, expected {expected}")]
    WrongJointCount {
        /// Index of the waypoint (0-based).
        waypoint: usize,
        /// Number of joints of the limits.
        expected: usize,
        /// Number of positions at the waypoint.
        found: usize,
    },
    /// A speed share is not in (0, 1].
    #[error("waypoint {waypoint} has speed share {value}, expected a number in (0, 1]")]
    BadSpeedShare {
        /// Index of the waypoint.
        waypoint: usize,
        /// The value given.
        value: f64,
    },
    /// A dwell is negative, NaN or infinite.
    #[error("waypoint {waypoint} has dwell {value} s, expected a finite number ≥ 0")]
    BadDwell {
        /// Index of the waypoint.
        waypoint: usize,
        /// The value given, s.
        value: f64,
    },
    /// The move arriving at a waypoint could not be planned.
    #[error("move to waypoint {waypoint}: {source}")]
    Move {
        /// Index of the waypoint the move arrives at.
        waypoint: usize,
        /// What went wrong.
        #[source]
        source: SyncError,
    },
    /// One profile shape per waypoint is needed.
    #[error("{found} profile shapes for {expected} waypoints")]
    WrongShapeCount {
        /// Waypoints given.
        expected: usize,
        /// Shapes given.
        found: usize,
    },
    /// A sample rate outside 50–1000 Hz.
    #[error("sample rate {rate_hz} Hz, expected 50 to 1000 Hz")]
    RateOutOfRange {
        /// The rate given, Hz.
        rate_hz: f64,
    },
}

/// What a segment of a plan is.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SegmentKind {
    /// The move from one waypoint to the next.
    Move {
        /// Index of the waypoint it leaves.
        from_waypoint: usize,
        /// Index of the waypoint it arrives at.
        to_waypoint: usize,
    },
    /// A dwell at rest at a stop.
    Dwell {
        /// Index of the waypoint.
        waypoint: usize,
    },
}

/// One timed piece of a plan.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Segment {
    /// Start time, s from the start of the sequence.
    pub start: f64,
    /// What it is.
    pub kind: SegmentKind,
    /// The synchronised motion of every joint; a dwell holds every joint still.
    pub motion: SyncedMove,
}

/// A planned sequence: segments with start times, evaluated at any time in O(log n).
#[derive(Debug, Clone, PartialEq)]
pub struct SequencePlan {
    joint_count: usize,
    segments: Vec<Segment>,
    /// Start times of the segments, kept apart for a cache-friendly binary search.
    starts: Vec<f64>,
    duration: f64,
}

/// Largest number of halvings of a pass-through velocity before the joint stops there.
const HALVINGS: u32 = 12;

/// Plans made while refining pass-through velocities; the quickest is kept.
const REFINEMENTS: usize = 3;

/// Plans a sequence through `waypoints` with profiles of `shape` and per-joint `limits`
/// (rad/s, rad/s², rad/s³; scaled by each move's speed share).
///
/// Pass-through velocities start from the slower of the two neighbouring moves' average
/// velocities (as if each were planned rest to rest); where a move cannot be made with them,
/// or a joint would back up past a waypoint to make it, the velocities at its ends are
/// halved, and after repeated halving set to zero. The
/// velocities are then refined twice from the durations of the plan before, and the quickest
/// of the three plans is kept.
///
/// # Errors
/// [`SequenceError::TooFewWaypoints`], [`SequenceError::WrongJointCount`],
/// [`SequenceError::BadSpeedShare`], [`SequenceError::BadDwell`]; [`SequenceError::Move`] for
/// a move whose joints cannot be planned (bad limits, more than
/// [`MAX_JOINTS`](crate::MAX_JOINTS) joints).
pub fn plan_sequence(
    shape: ProfileShape,
    waypoints: &[SequenceWaypoint],
    limits: &[JointLimits],
) -> Result<SequencePlan, SequenceError> {
    plan_sequence_shaped(&vec![shape; waypoints.len()], waypoints, limits)
}

/// [`plan_sequence`] with a profile shape per waypoint: `shapes[i]` shapes the move arriving at
/// waypoint `i` (and its dwell); `shapes[0]` only the dwell at the start.
///
/// # Errors
/// As [`plan_sequence`]; [`SequenceError::WrongShapeCount`] when `shapes` and `waypoints`
/// differ in length.
pub fn plan_sequence_shaped(
    shapes: &[ProfileShape],
    waypoints: &[SequenceWaypoint],
    limits: &[JointLimits],
) -> Result<SequencePlan, SequenceError> {
    validate(waypoints, limits)?;
    if shapes.len() != waypoints.len() {
        return Err(SequenceError::WrongShapeCount {
            expected: waypoints.len(),
            found: shapes.len(),
        });
    }
    let joints = limits.len();
    let move_count = waypoints.len() - 1;
    let shared_limits = |arrival: usize| -> Vec<JointLimits> {
        let share = waypoints[arrival].speed_share;
        limits
            .iter()
            .map(|l| JointLimits::new(l.velocity * share, l.acceleration * share, l.jerk * share))
            .collect()
    };
    let move_limits: Vec<Vec<JointLimits>> = (1..waypoints.len()).map(shared_limits).collect();
    // Rest-to-rest durations of every move give the first guess at pass-through velocities.
    let mut rest_durations = Vec::with_capacity(move_count);
    let at_rest = vec![0.0; joints];
    for (index, limits) in move_limits.iter().enumerate() {
        let moves = joint_moves(waypoints, index, &at_rest, &at_rest);
        let shape = shapes[index + 1];
        let synced = synchronise(shape, &moves, limits).map_err(|source| SequenceError::Move {
            waypoint: index + 1,
            source,
        })?;
        rest_durations.push(synced.duration());
    }
    // A first plan from the rest-to-rest durations, then refinements from the durations of
    // the previous plan (passing through makes moves quicker, so their mean velocities
    // rise); the quickest plan is kept.
    let mut best: Option<(f64, Vec<SyncedMove>)> = None;
    let mut durations = rest_durations;
    for _ in 0..REFINEMENTS {
        let velocities = pass_through_velocities(waypoints, &move_limits, &durations);
        let planned = plan_moves(shapes, waypoints, &move_limits, velocities)?;
        let total: f64 = planned.iter().map(SyncedMove::duration).sum();
        durations = planned.iter().map(SyncedMove::duration).collect();
        if best.as_ref().is_none_or(|(quickest, _)| total < *quickest) {
            best = Some((total, planned));
        }
    }
    let planned = best.map(|(_, planned)| planned).unwrap_or_default();
    let mut segments = Vec::with_capacity(2 * waypoints.len());
    let mut time = 0.0;
    let dwell_at = |waypoint: usize, time: &mut f64, segments: &mut Vec<Segment>| {
        if let WaypointKind::Stop { dwell } = waypoints[waypoint].kind
            && dwell > 0.0
        {
            let hold: Vec<JointMove> = waypoints[waypoint]
                .positions
                .iter()
                .map(|&p| JointMove::rest_to_rest(p, p))
                .collect();
            // A zero-length move stretched to the dwell holds still; it cannot fail.
            let shape = shapes[waypoint];
            if let Ok(motion) = synchronise(shape, &hold, limits).and_then(|m| m.stretched(dwell)) {
                segments.push(Segment {
                    start: *time,
                    kind: SegmentKind::Dwell { waypoint },
                    motion,
                });
                *time += dwell;
            }
        }
    };
    dwell_at(0, &mut time, &mut segments);
    for (index, motion) in planned.into_iter().enumerate() {
        segments.push(Segment {
            start: time,
            kind: SegmentKind::Move {
                from_waypoint: index,
                to_waypoint: index + 1,
            },
            motion,
        });
        time += motion.duration();
        dwell_at(index + 1, &mut time, &mut segments);
    }
    Ok(SequencePlan {
        joint_count: joints,
        starts: segments.iter().map(|segment| segment.start).collect(),
        segments,
        duration: time,
    })
}

/// Velocity of every joint at every waypoint: zero at stops, at the ends, and where a joint
/// turns round or rests on one side; otherwise the slower of the two neighbouring moves' mean
/// velocities (from `durations`, s), within both moves' velocity limits.
fn pass_through_velocities(
    waypoints: &[SequenceWaypoint],
    move_limits: &[Vec<JointLimits>],
    durations: &[f64],
) -> Vec<Vec<f64>> {
    let joints = waypoints[0].positions.len();
    let mut velocities = vec![vec![0.0; joints]; waypoints.len()];
    for waypoint in 1..waypoints.len() - 1 {
        if waypoints[waypoint].kind != WaypointKind::PassThrough {
            continue;
        }
        for joint in 0..joints {
            let before =
                waypoints[waypoint].positions[joint] - waypoints[waypoint - 1].positions[joint];
            let after =
                waypoints[waypoint + 1].positions[joint] - waypoints[waypoint].positions[joint];
            if before * after <= 0.0 {
                continue;
            }
            let mean_in = before / durations[waypoint - 1].max(f64::MIN_POSITIVE);
            let mean_out = after / durations[waypoint].max(f64::MIN_POSITIVE);
            let cap = move_limits[waypoint - 1][joint]
                .velocity
                .min(move_limits[waypoint][joint].velocity);
            let speed = mean_in.abs().min(mean_out.abs()).min(cap);
            velocities[waypoint][joint] = before.signum() * speed;
        }
    }
    velocities
}

/// Plans every move with the given waypoint velocities, halving the velocities at the ends of
/// a move that cannot be made (and finally setting them to zero) and planning the moves
/// touching a changed waypoint again.
fn plan_moves(
    shapes: &[ProfileShape],
    waypoints: &[SequenceWaypoint],
    move_limits: &[Vec<JointLimits>],
    mut velocities: Vec<Vec<f64>>,
) -> Result<Vec<SyncedMove>, SequenceError> {
    let move_count = move_limits.len();
    let mut halvings = vec![0_u32; waypoints.len()];
    let mut planned: Vec<Option<SyncedMove>> = vec![None; move_count];
    loop {
        let mut changed = false;
        for index in 0..move_count {
            if planned[index].is_some() {
                continue;
            }
            let moves = joint_moves(waypoints, index, &velocities[index], &velocities[index + 1]);
            let setback = match synchronise(shapes[index + 1], &moves, &move_limits[index]) {
                // A joint backing up would overshoot its waypoint: slow the ends instead.
                Ok(synced) if !synced.profiles().iter().any(Profile::reverses) => {
                    planned[index] = Some(synced);
                    continue;
                }
                Ok(synced) => Setback::BacksUp(Box::new(synced)),
                Err(
                    error @ SyncError::Joint {
                        source: ProfileError::StretchUnreachable { .. },
                        ..
                    },
                ) => Setback::Unreachable(error),
                Err(source) => {
                    return Err(SequenceError::Move {
                        waypoint: index + 1,
                        source,
                    });
                }
            };
            let mut modified = false;
            for end in [index, index + 1] {
                if velocities[end].iter().all(|v| *v == 0.0) {
                    continue;
                }
                modified = true;
                halvings[end] += 1;
                let factor = if halvings[end] >= HALVINGS { 0.0 } else { 0.5 };
                velocities[end].iter_mut().for_each(|v| *v *= factor);
                // Both moves touching this waypoint must be planned again.
                if end > 0 {
                    planned[end - 1] = None;
                }
                if end < move_count {
                    planned[end] = None;
                }
            }
            if modified {
                changed = true;
                continue;
            }
            // Rest to rest never backs up and always stretches; keep or report rather than loop.
            match setback {
                Setback::BacksUp(synced) => planned[index] = Some(*synced),
                Setback::Unreachable(source) => {
                    return Err(SequenceError::Move {
                        waypoint: index + 1,
                        source,
                    });
                }
            }
        }
        if !changed {
            break;
        }
    }
    // Every move is planned once nothing changes.
    Ok(planned.into_iter().flatten().collect())
}

/// Why a move has to be planned again with slower ends.
enum Setback {
    /// A joint would back up past its waypoint.
    BacksUp(Box<SyncedMove>),
    /// A joint cannot take as long as the slowest.
    Unreachable(SyncError),
}

/// Checks counts, shares and dwells.
fn validate(waypoints: &[SequenceWaypoint], limits: &[JointLimits]) -> Result<(), SequenceError> {
    if waypoints.len() < 2 {
        return Err(SequenceError::TooFewWaypoints {
            count: waypoints.len(),
        });
    }
    for (index, waypoint) in waypoints.iter().enumerate() {
        if waypoint.positions.len() != limits.len() {
            return Err(SequenceError::WrongJointCount {
                waypoint: index,
                expected: limits.len(),
                found: waypoint.positions.len(),
            });
        }
        let share = waypoint.speed_share;
        if index > 0 && !(share > 0.0 && share <= 1.0) {
            return Err(SequenceError::BadSpeedShare {
                waypoint: index,
                value: share,
            });
        }
        if let WaypointKind::Stop { dwell } = waypoint.kind
            && !(dwell.is_finite() && dwell >= 0.0)
        {
            return Err(SequenceError::BadDwell {
                waypoint: index,
                value: dwell,
            });
        }
    }
    Ok(())
}

/// The joint moves of move `index` (waypoint `index` to `index + 1`) with the given boundary
/// velocities.
fn joint_moves(
    waypoints: &[SequenceWaypoint],
    index: usize,
    from_velocities: &[f64],
    to_velocities: &[f64],
) -> Vec<JointMove> {
    let from = &waypoints[index].positions;
    let to = &waypoints[index + 1].positions;
    (0..from.len())
        .map(|joint| {
            JointMove::passing(
                from[joint],
                to[joint],
                from_velocities[joint],
                to_velocities[joint],
            )
        })
        .collect()
}

impl SequencePlan {
    /// Duration of the whole sequence (the cycle time), s.
    pub fn duration(&self) -> f64 {
        self.duration
    }

    /// Number of joints.
    pub fn joint_count(&self) -> usize {
        self.joint_count
    }

    /// The segments in time order.
    pub fn segments(&self) -> &[Segment] {
        &self.segments
    }

    /// Index of the segment running at time `t` (s), found by binary search; times before the
    /// start give the first segment, after the end the last.
    pub fn segment_at(&self, t: f64) -> usize {
        self.starts
            .partition_point(|&start| start <= t)
            .saturating_sub(1)
    }

    /// Writes every joint's position, velocity, acceleration and jerk at time `t` (s, clamped
    /// to the sequence) into `states`, as many as both hold. O(log n) in the segment count.
    pub fn states_at(&self, t: f64, states: &mut [JointState]) {
        if let Some(segment) = self.segments.get(self.segment_at(t)) {
            segment
                .motion
                .states_at(self.local_time(segment, t), states);
        }
    }

    /// Writes every joint's position at time `t` (s, clamped to the sequence) into
    /// `positions` (rad), as many as both hold. O(log n) in the segment count.
    pub fn positions_at(&self, t: f64, positions: &mut [f64]) {
        if let Some(segment) = self.segments.get(self.segment_at(t)) {
            segment
                .motion
                .positions_at(self.local_time(segment, t), positions);
        }
    }

    /// One joint's position at time `t` (s, clamped to the sequence), rad or m; 0 for a joint
    /// the plan does not have. O(log n) in the segment count.
    pub fn joint_position_at(&self, t: f64, joint: usize) -> f64 {
        self.segments
            .get(self.segment_at(t))
            .map_or(0.0, |segment| {
                let local = self.local_time(segment, t);
                segment
                    .motion
                    .profiles()
                    .get(joint)
                    .map_or(0.0, |profile| profile.position_at(local))
            })
    }

    /// Time within `segment`; at or after the end of the plan, the segment's own end, so that
    /// the last waypoint is reached exactly despite rounding in the start times.
    fn local_time(&self, segment: &Segment, t: f64) -> f64 {
        if t >= self.duration {
            segment.motion.duration()
        } else {
            t - segment.start
        }
    }
}
