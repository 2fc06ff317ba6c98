//! Clearance along a motion: the arm's links against the workspace's obstacles and against each
//! other, looked at along the commanded plan or along the dry run's simulated motion, per move.
//!
//! A move is the motion into a waypoint and its dwell: from the previous waypoint's departure
//! to this one's (the first waypoint's move is the start of the motion up to its departure; the
//! last runs on to the end of the motion, the dry run's settling tail included).
//!
//! Looks fall at least every [`ClearanceOptions::interval`] s, and closer where the motion is
//! fast: no point of the arm moves more than [`ClearanceOptions::max_step`] m between two looks
//! (a bound from the joint steps, [`ArmShape::sweep`]). A pair is measured again only once the
//! distance its links could have covered since its last measurement might bring it into contact
//! or below the move's smallest clearance so far (less the resolution): conservative
//! advancement, so dwells and far-apart pairs cost nothing, and the smallest clearance is exact
//! to within the resolution at the looks.

use armwright_kinematics::{
    Arm, ArmShape, KinematicsError, MAX_JOINTS, MAX_LINKS, Obstacle, Other, Pair, forward,
    pair_distance, pair_distance_bound, tool_pose,
};

use crate::arm_plan::TaskWaypoint;
use crate::dry_run::{CommandedMotion, WaypointTiming};
use crate::servo_sim::ServoTrace;

/// How closely a motion is looked at.
#[derive(Debug, Clone, PartialEq)]
pub struct ClearanceOptions {
    /// Longest time between two looks, in s. Default 1 ms (a plan sampled at 1 kHz).
    pub interval: f64,
    /// Farthest any point of the arm may move between two looks, in m; a fast motion is looked
    /// at more often. Default 2 mm.
    pub max_step: f64,
    /// The smallest clearance of a move is found to within this, in m, or within
    /// [`ClearanceOptions::relative_resolution`] of it, whichever is larger. Default 0.1 mm.
    pub resolution: f64,
    /// The smallest clearance of a move is found to within this share of it, where that is
    /// more than [`ClearanceOptions::resolution`]. Default 2 %: 40 mm of clearance is known to
    /// 0.8 mm, a near miss to 0.1 mm.
    pub relative_resolution: f64,
    /// An overlap no deeper than this, in m, counts as touching (a pen on paper), not as a
    /// contact. Default 0.1 mm (our choice: finer than any hobby servo can place the tool).
    pub touch_tolerance: f64,
}

impl Default for ClearanceOptions {
    fn default() -> Self {
        ClearanceOptions {
            interval: 1e-3,
            max_step: 2e-3,
            resolution: 1e-4,
            relative_resolution: 0.02,
            touch_tolerance: 1e-4,
        }
    }
}

/// A pair left out on one move: a gripped object.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Exemption {
    /// The move (by the waypoint it leads into) on which it holds.
    pub waypoint: usize,
    /// The link it holds for, or `None` for every link.
    pub link: Option<usize>,
    /// The obstacle, by its index in the obstacle list.
    pub obstacle: usize,
}

/// The arm, its collision shape, the obstacles and the pairs left out: what is checked.
#[derive(Debug, Clone, Copy)]
pub struct Workcell<'a> {
    /// The arm.
    pub arm: &'a Arm,
    /// Its links as capsules.
    pub shape: &'a ArmShape,
    /// The workspace's obstacles.
    pub obstacles: &'a [Obstacle],
    /// Pairs left out on some moves.
    pub exemptions: &'a [Exemption],
}

/// A contact: a link overlapping an obstacle or another link.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Contact {
    /// The move (by the waypoint it leads into) on which it happens.
    pub waypoint: usize,
    /// When it starts (the first look that finds it), in s from the start of the motion.
    pub time: f64,
    /// The link and what it overlaps.
    pub pair: Pair,
    /// The deepest overlap of this pair on the move, in m.
    pub depth: f64,
}

/// The clearance of one move.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MoveClearance {
    /// The waypoint the move leads into.
    pub waypoint: usize,
    /// Smallest signed distance of any checked pair on the move, in m: negative is the depth of
    /// the deepest overlap. Infinite when nothing is checked.
    pub min_clearance: f64,
    /// The pair at the smallest distance, if any was checked.
    pub closest: Option<Pair>,
    /// When the smallest distance was found, in s from the start of the motion.
    pub closest_time: f64,
    /// The move's first contact, if any.
    pub first_contact: Option<Contact>,
}

/// The clearance of a whole motion, one entry per move.
#[derive(Debug, Clone, PartialEq)]
pub struct Clearance {
    /// One per waypoint, in order.
    pub moves: Vec<MoveClearance>,
}

impl Clearance {
    /// Smallest clearance over every move, in m (negative for an overlap; infinite when nothing
    /// is checked).
    pub fn min_clearance(&self) -> f64 {
        self.moves
            .iter()
            .map(|m| m.min_clearance)
            .fold(f64::INFINITY, f64::min)
    }

    /// The first contact of each move that has one, in order.
    pub fn contacts(&self) -> impl Iterator<Item = &Contact> {
        self.moves.iter().filter_map(|m| m.first_contact.as_ref())
    }
}

/// The clearance along a commanded motion (a plan), per move.
pub fn plan_clearance<M: CommandedMotion>(
    cell: &Workcell<'_>,
    motion: &M,
    timings: &[WaypointTiming],
    options: &ClearanceOptions,
) -> Clearance {
    let end = motion.duration();
    walk(cell, timings, end, options, |t, out| {
        motion.positions_at(t.min(end), out)
    })
}

/// The clearance along the dry run's simulated motion (link positions after backlash), per
/// move; between the trace's samples the joints move in straight lines.
pub fn dry_run_clearance(
    cell: &Workcell<'_>,
    trace: &ServoTrace,
    timings: &[WaypointTiming],
    options: &ClearanceOptions,
) -> Clearance {
    let samples = trace.len();
    let n = trace.joint_count;
    let end = samples.saturating_sub(1) as f64 * trace.step;
    walk(cell, timings, end, options, |t, out| {
        if samples == 0 {
            return;
        }
        let at = (t / trace.step).clamp(0.0, (samples - 1) as f64);
        let below = at.floor() as usize;
        let above = (below + 1).min(samples - 1);
        let share = at - below as f64;
        let (a, b) = (trace.actual_at(below), trace.actual_at(above));
        for (j, out) in out.iter_mut().enumerate().take(n) {
            *out = a[j] + (b[j] - a[j]) * share;
        }
    })
}

/// The pairs left out because the gripper holds or reaches into an object, or the tool works
/// on it.
///
/// A waypoint where the gripper changes state (it closes: a pick; it opens: a place) grips the
/// objects (boxes and trays, never the table) whose box, grown by the tool link's radius on
/// every side, holds its tool point. An arm without a gripper carries a tool (a pen, a probe)
/// that works on what it touches: every one of its waypoints marks the objects that hold its
/// tool point that way. For each, the tool link is left out against that object on the move
/// into the waypoint and on the move out of it. An object picked (the gripper closes on it)
/// rides in the gripper from then on: it is left out for every link on every later move. The
/// object carried is not added to the arm's shape, nor is a placed object moved to where it
/// was put.
///
/// # Errors
/// [`KinematicsError`] for a waypoint the arm cannot take.
pub fn grip_exemptions(
    arm: &Arm,
    shape: &ArmShape,
    obstacles: &[Obstacle],
    waypoints: &[TaskWaypoint],
) -> Result<Vec<Exemption>, KinematicsError> {
    let tool = shape.tool_link();
    let radius = shape.links()[tool].radius;
    let mut exemptions = Vec::new();
    let tool_arm = arm.gripper().is_none();
    for (waypoint, here) in waypoints.iter().enumerate() {
        let changes = waypoint
            .checked_sub(1)
            .and_then(|before| waypoints.get(before))
            .is_some_and(|before| before.gripper_closed != here.gripper_closed);
        if !(changes || tool_arm) {
            continue;
        }
        let picks = changes && here.gripper_closed;
        let point = tool_pose(arm, &here.positions)?.translation.vector;
        for (obstacle, object) in obstacles.iter().enumerate() {
            if object.is_table() || !object.holds(&point, radius) {
                continue;
            }
            for on in [waypoint, waypoint + 1] {
                if on < waypoints.len() {
                    exemptions.push(Exemption {
                        waypoint: on,
                        link: Some(tool),
                        obstacle,
                    });
                }
            }
            if picks {
                exemptions.extend((waypoint + 1..waypoints.len()).map(|on| Exemption {
                    waypoint: on,
                    link: None,
                    obstacle,
                }));
            }
        }
    }
    Ok(exemptions)
}

/// Walks the motion move by move, `positions` giving the joints at any time (s).
fn walk(
    cell: &Workcell<'_>,
    timings: &[WaypointTiming],
    end_time: f64,
    options: &ClearanceOptions,
    mut positions: impl FnMut(f64, &mut [f64]),
) -> Clearance {
    let n = cell.arm.joint_count();
    let pairs = cell.shape.pairs(cell.obstacles);
    let interval = if options.interval > 0.0 {
        options.interval
    } else {
        ClearanceOptions::default().interval
    };
    let max_step = if options.max_step > 0.0 {
        options.max_step
    } else {
        ClearanceOptions::default().max_step
    };
    let mut here = [0.0; MAX_JOINTS];
    let mut next = [0.0; MAX_JOINTS];
    let mut sweep = [0.0; MAX_LINKS];
    let mut moves = Vec::with_capacity(timings.len());
    let mut start = 0.0_f64;
    for (waypoint, timing) in timings.iter().enumerate() {
        let end = if waypoint + 1 == timings.len() {
            end_time.max(timing.departure)
        } else {
            timing.departure
        };
        let active: Vec<Pair> = pairs
            .iter()
            .copied()
            .filter(|pair| !exempt(cell.exemptions, waypoint, *pair))
            .collect();
        let mut look = Look::new(waypoint, active, cell.obstacles, options);
        let mut t = start;
        positions(t, &mut here[..n]);
        loop {
            look.at(cell, t, &here[..n]);
            if t >= end {
                break;
            }
            let mut dt = interval.min(end - t);
            positions(t + dt, &mut next[..n]);
            cell.shape.sweep(&here[..n], &next[..n], &mut sweep);
            let moved = sweep.iter().copied().fold(0.0, f64::max);
            if moved > max_step {
                dt /= (moved / max_step).ceil();
                positions(t + dt, &mut next[..n]);
                cell.shape.sweep(&here[..n], &next[..n], &mut sweep);
            }
            look.moved(&sweep);
            t = if end - (t + dt) < 1e-12 { end } else { t + dt };
            here = next;
        }
        moves.push(look.finish());
        start = end;
    }
    Clearance { moves }
}

fn exempt(exemptions: &[Exemption], waypoint: usize, pair: Pair) -> bool {
    let Other::Obstacle(obstacle) = pair.other else {
        return false;
    };
    exemptions.iter().any(|e| {
        e.waypoint == waypoint
            && e.obstacle == obstacle
            && e.link.is_none_or(|link| link == pair.link)
    })
}

/// One move's bookkeeping: each pair's last distance and how far its links have moved since.
struct Look<'o> {
    options: &'o ClearanceOptions,
    result: MoveClearance,
    pairs: Vec<Pair>,
    /// Per pair: distance at its last measurement (m) and the links' travel then (m).
    last: Vec<(f64, f64, f64)>,
    /// Each link's travel since the move began, an upper bound, in m.
    travel: [f64; MAX_LINKS],
    /// Per pair: whether the other side is a box (whose distance query is iterative, so a cheap
    /// bound goes first).
    boxed: Vec<bool>,
}

impl<'o> Look<'o> {
    fn new(
        waypoint: usize,
        pairs: Vec<Pair>,
        obstacles: &[Obstacle],
        options: &'o ClearanceOptions,
    ) -> Look<'o> {
        let boxed = pairs
            .iter()
            .map(|pair| match pair.other {
                Other::Obstacle(index) => obstacles.get(index).is_some_and(|o| !o.is_table()),
                Other::Link(_) => false,
            })
            .collect();
        Look {
            boxed,
            options,
            result: MoveClearance {
                waypoint,
                min_clearance: f64::INFINITY,
                closest: None,
                closest_time: 0.0,
                first_contact: None,
            },
            last: vec![(f64::NEG_INFINITY, 0.0, 0.0); pairs.len()],
            pairs,
            travel: [0.0; MAX_LINKS],
        }
    }

    fn moved(&mut self, sweep: &[f64]) {
        for (travel, step) in self.travel.iter_mut().zip(sweep) {
            *travel += step;
        }
    }

    fn travel_of(&self, other: Other) -> f64 {
        match other {
            Other::Link(link) => self.travel[link],
            Other::Obstacle(_) => 0.0,
        }
    }

    fn at(&mut self, cell: &Workcell<'_>, t: f64, positions: &[f64]) {
        let mut placed = None;
        for index in 0..self.pairs.len() {
            let pair = self.pairs[index];
            let (distance, link_then, other_then) = self.last[index];
            let (link_now, other_now) = (self.travel[pair.link], self.travel_of(pair.other));
            let lowest = distance - (link_now - link_then) - (other_now - other_then);
            let smallest = self.result.min_clearance;
            let resolution = self
                .options
                .resolution
                .max(self.options.relative_resolution * smallest);
            if lowest > 0.0 && lowest >= smallest - resolution {
                continue;
            }
            if placed.is_none() {
                match forward(cell.arm, positions) {
                    Ok(pose) => placed = Some(cell.shape.place(&pose)),
                    Err(_) => return,
                }
            }
            let Some(placed) = placed.as_ref() else {
                return;
            };
            // A cheap lower bound first: when it clears the threshold, it serves as well as the
            // distance for the next skip.
            if self.boxed[index] {
                let bound = pair_distance_bound(cell.shape, placed, cell.obstacles, pair);
                if bound > 0.0 && bound >= smallest - resolution {
                    self.last[index] = (bound, link_now, other_now);
                    continue;
                }
            }
            let distance = pair_distance(cell.shape, placed, cell.obstacles, pair);
            self.last[index] = (distance, link_now, other_now);
            if distance < self.result.min_clearance {
                self.result.min_clearance = distance;
                self.result.closest = Some(pair);
                self.result.closest_time = t;
            }
            if distance < -self.options.touch_tolerance {
                match &mut self.result.first_contact {
                    None => {
                        self.result.first_contact = Some(Contact {
                            waypoint: self.result.waypoint,
                            time: t,
                            pair,
                            depth: -distance,
                        })
                    }
                    Some(contact) if contact.pair == pair => {
                        contact.depth = contact.depth.max(-distance)
                    }
                    Some(_) => {}
                }
            }
        }
    }

    fn finish(self) -> MoveClearance {
        self.result
    }
}
