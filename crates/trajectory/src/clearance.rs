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
//! to within the resolution at the looks. Each link keeps a travel budget: every pair's slack
//! when it was last looked at (how far it lay above what makes it worth measuring) is shared
//! out, all of it to a link against an obstacle and half to each of two links, and a link's
//! budget is the smallest share it was given. A look goes over only the pairs of links whose
//! travel has used up their budget, and skips the pairs altogether while none has.
//!
//! An object carried in the gripper ([`Carry`]) moves with the tool from the move after its pick
//! up to and including the move into its place, and is checked against every other obstacle on
//! those moves except what the gripper itself may touch there, and against every link of the
//! arm but the gripper (or tool) link that holds it; its travel between looks is bounded by the
//! tool link's plus its farthest point from the tool point times the joints' turn.

use armwright_kinematics::{
    Arm, ArmShape, CarriedBox, ChainPose, JointKind, KinematicsError, MAX_JOINTS, MAX_LINKS,
    Obstacle, Other, Pair, PlacedArm, forward, pair_distance, pair_distance_bound, tool_pose,
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

/// An object carried in the gripper on a run of moves.
#[derive(Debug, Clone, PartialEq)]
pub struct Carry {
    /// The first move (by the waypoint it leads into) on which it is carried: the one after the
    /// pick.
    pub first: usize,
    /// The last move on which it is carried: the move into its place (or the last move, when it
    /// is never put down).
    pub last: usize,
    /// The box and where it sits in the tool frame.
    pub object: CarriedBox,
    /// The obstacles it stands on where it is picked (within [`RESTING_ON`]), by index: left
    /// out on the first move, which lifts it off them.
    pub lifted_from: Vec<usize>,
    /// The obstacles it stands on where it is put, by index: left out on the last move, which
    /// sets it down on them.
    pub put_on: Vec<usize>,
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
    /// Objects carried in the gripper, each on its run of moves.
    pub carried: &'a [Carry],
}

/// A contact: a link overlapping an obstacle or another link.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Contact {
    /// The move (by the waypoint it leads into) on which it happens.
    pub waypoint: usize,
    /// When it starts (the first look that finds it), in s from the start of the motion.
    pub time: f64,
    /// The link and what it overlaps. For a carried object, the link that carries it (the
    /// gripper) and the obstacle or link it hits.
    pub pair: Pair,
    /// The carried object (by its index in the obstacle list) that hits `pair.other`, when it
    /// is the carried object rather than the link that does.
    pub carried: Option<usize>,
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
    /// The carried object of that pair (by obstacle index), when it is a carried object and
    /// not the link.
    pub closest_carried: Option<usize>,
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
    walk(cell, timings, end, options, Passes::Skipping, |t, out| {
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
    let end = trace.len().saturating_sub(1) as f64 * trace.step;
    walk(
        cell,
        timings,
        end,
        options,
        Passes::Skipping,
        trace_positions(trace),
    )
}

/// The trace's link positions at any time (s), in straight lines between its samples.
fn trace_positions(trace: &ServoTrace) -> impl Fn(f64, &mut [f64]) + '_ {
    let samples = trace.len();
    let n = trace.joint_count;
    move |t, out| {
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
    }
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
/// rides in the gripper from then on: it is left out for every link on every later move, and
/// checked where it is carried instead ([`carried_objects`]). A placed object is not moved to
/// where it was put.
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

/// The objects the gripper carries, and on which moves.
///
/// At a waypoint where the gripper closes (a pick), the object picked is the smallest box (by
/// volume) among those [`grip_exemptions`] finds gripped there: a part in a tray is picked, not
/// the tray. It keeps the place in the tool frame it had at the pick, and is carried from the
/// move after the pick up to and including the move into the next waypoint where the gripper
/// opens (its place), or to the end. An object that would stand more than
/// [`SUNK_AT_PLACE`] deep in the table where it is put (or at the last waypoint, when it never
/// is) is not carried: it is the fixture a part was taken from (a peg from a feeder, a pen from
/// a holder), which stays. What it stands on at the pick and where it is put (within
/// [`RESTING_ON`]) is left out on the move that lifts it off and the move that sets it down. An
/// arm without a gripper carries nothing.
///
/// # Errors
/// [`KinematicsError`] for a waypoint the arm cannot take.
pub fn carried_objects(
    arm: &Arm,
    shape: &ArmShape,
    obstacles: &[Obstacle],
    waypoints: &[TaskWaypoint],
) -> Result<Vec<Carry>, KinematicsError> {
    if arm.gripper().is_none() {
        return Ok(Vec::new());
    }
    let radius = shape.links()[shape.tool_link()].radius;
    let mut carried = Vec::new();
    for (pick, here) in waypoints.iter().enumerate().skip(1) {
        if !here.gripper_closed || waypoints[pick - 1].gripper_closed {
            continue;
        }
        let tool = tool_pose(arm, &here.positions)?;
        let point = tool.translation.vector;
        let picked = obstacles
            .iter()
            .enumerate()
            .filter(|(_, o)| !o.is_table() && o.holds(&point, radius))
            .filter_map(|(index, o)| CarriedBox::picked(index, o, &tool))
            .min_by(|a, b| a.half_size.product().total_cmp(&b.half_size.product()));
        let Some(object) = picked else {
            continue;
        };
        let place = (pick + 1..waypoints.len())
            .find(|&w| !waypoints[w].gripper_closed)
            .unwrap_or(waypoints.len() - 1);
        let put = tool_pose(arm, &waypoints[place].positions)?;
        let sunk = obstacles
            .iter()
            .filter(|o| o.is_table())
            .any(|table| object.distance(&put, table) < -SUNK_AT_PLACE);
        if pick < place && !sunk {
            let resting_on = |tool: &nalgebra::Isometry3<f64>| -> Vec<usize> {
                (0..obstacles.len())
                    .filter(|&o| {
                        o != object.obstacle && object.distance(tool, &obstacles[o]) <= RESTING_ON
                    })
                    .collect()
            };
            let (lifted_from, put_on) = (resting_on(&tool), resting_on(&put));
            carried.push(Carry {
                first: pick + 1,
                last: place,
                object,
                lifted_from,
                put_on,
            });
        }
    }
    Ok(carried)
}

/// How near an obstacle (m) a carried object may be at its pick or place and count as standing
/// on it: 2 mm (our choice: the arm sags and overshoots by about that much at a stop, and pushes
/// the object onto what it stands on rather than through it).
pub const RESTING_ON: f64 = 2e-3;

/// How deep in the table an object may stand where it is put and still count as carried there,
/// in m: 1 mm, for a place taught a little low (our choice).
pub const SUNK_AT_PLACE: f64 = 1e-3;

/// Whether a look may skip its pass over the pairs when none can need measuring.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Passes {
    /// Skip the pass while every link's travel since the last pass is within its budget (the
    /// walk's own path).
    Skipping,
    /// Measure every pair at every look: the exhaustive check the skipping walk is compared with.
    #[cfg(test)]
    Every,
}

/// Walks the motion move by move, `positions` giving the joints at any time (s).
fn walk(
    cell: &Workcell<'_>,
    timings: &[WaypointTiming],
    end_time: f64,
    options: &ClearanceOptions,
    passes: Passes,
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
    let revolute: Vec<bool> = cell
        .arm
        .joints()
        .iter()
        .map(|joint| joint.kind == JointKind::Revolute)
        .collect();
    let tool_link = cell.shape.tool_link();
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
        let carried = carried_checks(cell, waypoint, tool_link);
        let mut look = Look::new(waypoint, active, carried, cell, options, passes);
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
            // The joints' turn bounds how far a carried object swings about the tool point.
            let turn: f64 = (0..n)
                .filter(|&j| revolute[j])
                .map(|j| (next[j] - here[j]).abs())
                .sum();
            look.moved(&sweep, turn);
            t = if end - (t + dt) < 1e-12 { end } else { t + dt };
            here = next;
        }
        moves.push(look.finish());
        start = end;
    }
    Clearance { moves }
}

/// The carried objects' checks on the move into `waypoint`: each object carried on it against
/// every link but the one that holds it (the tool link), and against every other obstacle the
/// gripper is not exempt from there.
fn carried_checks(cell: &Workcell<'_>, waypoint: usize, tool_link: usize) -> Vec<CarriedCheck> {
    let mut checks = Vec::new();
    for (carry, held) in cell.carried.iter().enumerate() {
        if !(held.first..=held.last).contains(&waypoint) {
            continue;
        }
        for link in (0..cell.shape.links().len()).filter(|&link| link != tool_link) {
            checks.push(CarriedCheck {
                carry,
                pair: Pair {
                    link: tool_link,
                    other: Other::Link(link),
                },
                last: (f64::NEG_INFINITY, 0.0, 0.0),
            });
        }
        for obstacle in 0..cell.obstacles.len() {
            let pair = Pair {
                link: tool_link,
                other: Other::Obstacle(obstacle),
            };
            let resting = (waypoint == held.first && held.lifted_from.contains(&obstacle))
                || (waypoint == held.last && held.put_on.contains(&obstacle));
            if obstacle != held.object.obstacle
                && !resting
                && !exempt(cell.exemptions, waypoint, pair)
            {
                checks.push(CarriedCheck {
                    carry,
                    pair,
                    last: (f64::NEG_INFINITY, 0.0, 0.0),
                });
            }
        }
    }
    checks
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

/// A carried object against one obstacle or link: the gripper's link and the other, and the
/// distance at its last measurement (m) with the object's and the other's travel then (m).
struct CarriedCheck {
    carry: usize,
    pair: Pair,
    last: (f64, f64, f64),
}

/// The sides whose travel is kept: each link, and the carried objects.
const SIDES: usize = MAX_LINKS + 1;
/// The side of the carried objects: the tool link's travel plus the farthest carried point's
/// swing about the tool point.
const CARRIED: usize = MAX_LINKS;
/// Rounding of the travel sums is far below this margin, m.
const MARGIN: f64 = 1e-12;

/// One move's bookkeeping: each pair's last distance and how far its links have moved since.
struct Look<'o> {
    options: &'o ClearanceOptions,
    result: MoveClearance,
    pairs: Vec<Pair>,
    /// Per pair: distance at its last measurement (m) and the links' travel then (m).
    last: Vec<(f64, f64, f64)>,
    /// Each link's travel since the move began, an upper bound, in m; at [`CARRIED`], the
    /// tool link's plus the farthest carried point's swing about the tool point.
    travel: [f64; SIDES],
    /// Per pair: whether the other side is a box (whose distance query is iterative, so a cheap
    /// bound goes first).
    boxed: Vec<bool>,
    /// The carried objects' checks on this move.
    carried: Vec<CarriedCheck>,
    /// The joints' summed turn since the move began, in rad (a bound of a carried object's
    /// swing per m of its reach from the tool point).
    turn: f64,
    /// Whether a look may skip its pass over the pairs.
    passes: Passes,
    /// Per side (link, or the carried objects at [`CARRIED`]): how far it may travel after the
    /// last pass before some pair it belongs to could be worth measuring, m. The pairs' slacks
    /// (how far each one's lowest possible distance lay above what makes it worth measuring)
    /// are shared out: a pair against an obstacle gives its link all of its slack, a pair of two
    /// links (or a carried object and a link) gives each half, so while every side stays within
    /// its budget no pair's two sides together use up its slack. Zero forces the next pass.
    budget: [f64; SIDES],
    /// Each side's travel when its budget was last set afresh, m.
    since: [f64; SIDES],
    /// The sides out of room at the current pass.
    spent: [bool; SIDES],
    /// The tool link, whose travel the carried objects' adds to.
    tool: usize,
    /// Farthest point of any carried object on this move from the tool point, m.
    reach: f64,
}

impl<'o> Look<'o> {
    fn new(
        waypoint: usize,
        pairs: Vec<Pair>,
        carried: Vec<CarriedCheck>,
        cell: &Workcell<'_>,
        options: &'o ClearanceOptions,
        passes: Passes,
    ) -> Look<'o> {
        let obstacles = cell.obstacles;
        let reach = carried
            .iter()
            .filter_map(|check| cell.carried.get(check.carry))
            .map(|held| held.object.extent)
            .fold(0.0, f64::max);
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
                closest_carried: None,
                closest_time: 0.0,
                first_contact: None,
            },
            last: vec![(f64::NEG_INFINITY, 0.0, 0.0); pairs.len()],
            pairs,
            travel: [0.0; SIDES],
            carried,
            turn: 0.0,
            passes,
            budget: [0.0; SIDES],
            since: [0.0; SIDES],
            spent: [false; SIDES],
            tool: cell.shape.tool_link(),
            reach,
        }
    }

    /// Adds each link's travel bound (m) and the joints' summed turn (rad) of one step.
    fn moved(&mut self, sweep: &[f64], turn: f64) {
        for (travel, step) in self.travel.iter_mut().zip(sweep).take(MAX_LINKS) {
            *travel += step;
        }
        self.turn += turn;
        self.travel[CARRIED] = self.travel[self.tool] + self.reach * self.turn;
    }

    /// How much farther each side may travel before some pair could be worth measuring, m
    /// (less a margin for the rounding of the sums).
    fn room(&self, side: usize) -> f64 {
        self.budget[side] - (self.travel[side] - self.since[side]) - MARGIN
    }

    /// Whether no pair can be worth measuring now: every side's travel since the last pass is
    /// within its budget, so every pair's lowest possible distance still lies above zero and
    /// above the threshold.
    fn all_clear(&self) -> bool {
        self.passes == Passes::Skipping && (0..SIDES).all(|side| self.room(side) > 0.0)
    }

    /// Whether a pair of `side` and `other` must be looked at in this pass: one of its sides is
    /// out of room. A pair whose sides both still have room is clear: each has travelled less
    /// than its share of the pair's slack since that was shared out.
    fn due(&self, side: usize, other: Other) -> bool {
        self.spent[side] || matches!(other, Other::Link(link) if self.spent[link])
    }

    /// Shares a pair's slack (m, from now) out to its sides: all of it to a side against an
    /// obstacle, half to each of two moving sides. A side out of room (with a fresh budget
    /// from now) takes its share as its budget; a side that still has room keeps it only up
    /// to its share, so that the two sides together cannot use up the slack.
    fn allow(&mut self, side: usize, other: Other, slack: f64) {
        let share = |this: &mut Look<'_>, side: usize, share: f64| {
            let limit = if this.spent[side] {
                share
            } else {
                this.travel[side] - this.since[side] + share
            };
            this.budget[side] = this.budget[side].min(limit);
        };
        match other {
            Other::Obstacle(_) => share(self, side, slack),
            Other::Link(link) => {
                share(self, side, 0.5 * slack);
                share(self, link, 0.5 * slack);
            }
        }
    }

    fn travel_of(&self, other: Other) -> f64 {
        match other {
            Other::Link(link) => self.travel[link],
            Other::Obstacle(_) => 0.0,
        }
    }

    /// The smallest distance worth measuring again: a pair whose lowest possible distance lies
    /// above this is skipped.
    fn threshold(&self) -> f64 {
        let smallest = self.result.min_clearance;
        let resolution = self
            .options
            .resolution
            .max(self.options.relative_resolution * smallest);
        smallest - resolution
    }

    fn at(&mut self, cell: &Workcell<'_>, t: f64, positions: &[f64]) {
        if self.all_clear() {
            return;
        }
        // The sides out of room: only their pairs can be worth measuring; they get fresh
        // budgets from now on, the others keep theirs (or less).
        let mut spent = [self.passes != Passes::Skipping; SIDES];
        for (side, spent) in spent.iter_mut().enumerate() {
            *spent |= self.room(side) <= 0.0;
            if *spent {
                self.budget[side] = f64::INFINITY;
                self.since[side] = self.travel[side];
            }
        }
        self.spent = spent;
        if !self.pass(cell, t, positions) {
            self.budget = [0.0; SIDES];
        }
        for budget in &mut self.budget {
            *budget = budget.max(0.0);
        }
    }

    /// One pass over the pairs: each is measured unless its lowest possible distance lies above
    /// zero and above the threshold. Each pair's slack after it (its lowest possible distance
    /// less the larger of zero and the threshold when it was looked at; the threshold only
    /// falls, so that is never more than the slack at the pass's end) goes to its sides'
    /// budgets. Returns false when the pose cannot be placed.
    fn pass(&mut self, cell: &Workcell<'_>, t: f64, positions: &[f64]) -> bool {
        let mut pose: Option<(ChainPose, PlacedArm)> = None;
        let placed_pose = |pose: &mut Option<(ChainPose, PlacedArm)>| -> bool {
            if pose.is_none() {
                match forward(cell.arm, positions) {
                    Ok(chain) => {
                        let placed = cell.shape.place(&chain);
                        *pose = Some((chain, placed));
                    }
                    Err(_) => return false,
                }
            }
            true
        };
        for index in 0..self.pairs.len() {
            let pair = self.pairs[index];
            if !self.due(pair.link, pair.other) {
                continue;
            }
            let (distance, link_then, other_then) = self.last[index];
            let (link_now, other_now) = (self.travel[pair.link], self.travel_of(pair.other));
            let lowest = distance - (link_now - link_then) - (other_now - other_then);
            let threshold = self.threshold();
            let floor = threshold.max(0.0);
            if lowest > 0.0 && lowest >= threshold && self.passes == Passes::Skipping {
                self.allow(pair.link, pair.other, lowest - floor);
                continue;
            }
            if !placed_pose(&mut pose) {
                return false;
            }
            let Some((_, placed)) = pose.as_ref() else {
                return false;
            };
            // A cheap lower bound first: when it clears the threshold, it serves as well as the
            // distance for the next skip.
            if self.boxed[index] && self.passes == Passes::Skipping {
                let bound = pair_distance_bound(cell.shape, placed, cell.obstacles, pair);
                if bound > 0.0 && bound >= threshold {
                    self.last[index] = (bound, link_now, other_now);
                    self.allow(pair.link, pair.other, bound - floor);
                    continue;
                }
            }
            let distance = pair_distance(cell.shape, placed, cell.obstacles, pair);
            self.last[index] = (distance, link_now, other_now);
            self.record(t, pair, None, distance);
            self.allow(pair.link, pair.other, distance - self.threshold().max(0.0));
        }
        for index in 0..self.carried.len() {
            let check = &self.carried[index];
            let other = check.pair.other;
            if !self.due(CARRIED, other) {
                continue;
            }
            let Some(held) = cell.carried.get(check.carry) else {
                continue;
            };
            let travel = self.travel[check.pair.link] + held.object.extent * self.turn;
            let other_travel = self.travel_of(check.pair.other);
            let (distance, then, other_then) = check.last;
            let lowest = distance - (travel - then) - (other_travel - other_then);
            if lowest > 0.0 && lowest >= self.threshold() && self.passes == Passes::Skipping {
                self.allow(CARRIED, other, lowest - self.threshold().max(0.0));
                continue;
            }
            if !placed_pose(&mut pose) {
                return false;
            }
            let Some((chain, placed)) = pose.as_ref() else {
                return false;
            };
            let distance = match check.pair.other {
                Other::Obstacle(obstacle) => match cell.obstacles.get(obstacle) {
                    Some(obstacle) => held.object.distance(chain.tool(), obstacle),
                    None => continue,
                },
                Other::Link(link) => {
                    match (cell.shape.links().get(link), placed.segments().get(link)) {
                        (Some(shape), Some((start, end))) => {
                            held.object
                                .distance_to_link(chain.tool(), start, end, shape.radius)
                        }
                        _ => continue,
                    }
                }
            };
            let pair = check.pair;
            self.carried[index].last = (distance, travel, other_travel);
            self.record(t, pair, Some(held.object.obstacle), distance);
            self.allow(CARRIED, pair.other, distance - self.threshold().max(0.0));
        }
        true
    }

    /// Notes one measurement: `pair` (with its carried object, if that is what was measured)
    /// at `distance` m at time `t` s.
    fn record(&mut self, t: f64, pair: Pair, carried: Option<usize>, distance: f64) {
        if distance < self.result.min_clearance {
            self.result.min_clearance = distance;
            self.result.closest = Some(pair);
            self.result.closest_carried = carried;
            self.result.closest_time = t;
        }
        if distance < -self.options.touch_tolerance {
            match &mut self.result.first_contact {
                None => {
                    self.result.first_contact = Some(Contact {
                        waypoint: self.result.waypoint,
                        time: t,
                        pair,
                        carried,
                        depth: -distance,
                    })
                }
                Some(contact) if contact.pair == pair && contact.carried == carried => {
                    contact.depth = contact.depth.max(-distance)
                }
                Some(_) => {}
            }
        }
    }

    fn finish(self) -> MoveClearance {
        self.result
    }
}

#[cfg(test)]
mod tests {
    use armwright_kinematics::{ArmShape, CarriedBox, Obstacle, tool_pose};
    use nalgebra::Vector3;

    use super::*;
    use crate::arm_limits::LimitSettings;
    use crate::arm_plan::{Task, TaskWaypoint, plan_task};
    use crate::profile::ProfileShape;
    use crate::servo_sim::ServoModelOptions;
    use armwright_test_support::arms;

    /// Asserts that the skipping walk found the same first contact (move, time, pair, carried
    /// object, depth) on every move as measuring every pair at every look, and the same smallest
    /// clearance per move to within the resolution (never below it: it is measured, not
    /// guessed). Returns how many moves have a contact.
    fn assert_same(fast: &Clearance, every: &Clearance, options: &ClearanceOptions) -> usize {
        assert_eq!(fast.moves.len(), every.moves.len());
        let mut contacts = 0;
        for (a, b) in fast.moves.iter().zip(&every.moves) {
            assert_eq!(a.first_contact, b.first_contact, "move {}", a.waypoint);
            contacts += usize::from(a.first_contact.is_some());
            let resolution = options
                .resolution
                .max(options.relative_resolution * b.min_clearance);
            assert!(
                a.min_clearance >= b.min_clearance - 1e-12
                    && a.min_clearance <= b.min_clearance + resolution,
                "move {}: skipping {} m, every pair {} m",
                a.waypoint,
                a.min_clearance,
                b.min_clearance
            );
        }
        contacts
    }

    #[test]
    fn skipping_finds_what_measuring_every_pair_at_every_look_finds_in_random_scenes() {
        // Six random scenes (a table at a random height and three boxes of random size and
        // place around the arm, with and without a wrist roll), each with random moves, every
        // other one carrying a box on some of them; looked at along the plan and along its dry
        // run. The skipping walk must find the same first contacts (move, time, pair, depth)
        // as measuring every pair at every look, and each move's smallest clearance to within
        // the resolution (0.1 mm or 2 % of it; every other scene with a fine resolution of
        // 0.01 mm, which leaves the skipping little room). Every third scene's moves are wide
        // enough to fold the arm onto itself.
        use crate::dry_run::{DryRunOptions, dry_run};
        let (mut contacts, mut near, mut walks) = (0, 0, 0);
        for seed in 0..6_u64 {
            let options = if seed % 2 == 0 {
                ClearanceOptions::default()
            } else {
                ClearanceOptions {
                    resolution: 1e-5,
                    relative_resolution: 0.0,
                    ..ClearanceOptions::default()
                }
            };
            let spread = if seed % 3 == 2 { 1.4 } else { 0.6 };
            let mut rng = arms::Seeded::new(100 + seed);
            let arm = arms::articulated(seed % 2 == 0);
            let shape = ArmShape::of(&arm);
            let mut obstacles = vec![Obstacle::table(rng.uniform(-0.01, 0.03))];
            for name in ["first", "second", "third"] {
                let size = Vector3::new(
                    rng.uniform(0.01, 0.04),
                    rng.uniform(0.01, 0.04),
                    rng.uniform(0.01, 0.05),
                );
                let centre = Vector3::new(rng.uniform(0.08, 0.22), rng.uniform(-0.15, 0.15), 0.0);
                obstacles.push(Obstacle::standing_box(name, centre, size));
            }
            let centre = [0.0, 0.9, -1.2, 0.3, 0.0];
            let n = arm.joint_count();
            let waypoints: Vec<TaskWaypoint> = (0..10)
                .map(|_| TaskWaypoint {
                    positions: centre[..n]
                        .iter()
                        .map(|c| c + rng.uniform(-spread, spread))
                        .collect(),
                    stop: rng.uniform(0.0, 1.0) < 0.7,
                    dwell: 0.05,
                    speed_share: rng.uniform(0.5, 1.0),
                    gripper_closed: false,
                    straight: false,
                    shape: ProfileShape::DoubleS,
                })
                .collect();
            let carried = if seed % 2 == 1 {
                let tool = tool_pose(&arm, &waypoints[2].positions).unwrap();
                let held = Obstacle::standing_box(
                    "held",
                    tool.translation.vector - Vector3::new(0.0, 0.0, 0.02),
                    Vector3::repeat(0.02),
                );
                vec![Carry {
                    first: 3,
                    last: 6,
                    object: CarriedBox::picked(1, &held, &tool).unwrap(),
                    lifted_from: Vec::new(),
                    put_on: Vec::new(),
                }]
            } else {
                Vec::new()
            };
            let task = Task {
                waypoints,
                limits: LimitSettings::default(),
                model: ServoModelOptions::default(),
                shaping: None,
            };
            let plan = plan_task(&arm, &task).unwrap();
            let cell = Workcell {
                arm: &arm,
                shape: &shape,
                obstacles: &obstacles,
                exemptions: &[],
                carried: &carried,
            };
            let end = plan.duration();
            let along_plan = |passes: Passes| {
                walk(&cell, plan.timings(), end, &options, passes, |t, out| {
                    plan.positions_at(t.min(end), out)
                })
            };
            let simulated = dry_run(&arm, &plan, plan.timings(), &DryRunOptions::default())
                .unwrap()
                .trace;
            let trace_end = simulated.len().saturating_sub(1) as f64 * simulated.step;
            let along_dry_run = |passes: Passes| {
                walk(
                    &cell,
                    plan.timings(),
                    trace_end,
                    &options,
                    passes,
                    trace_positions(&simulated),
                )
            };
            for (fast, every) in [
                (along_plan(Passes::Skipping), along_plan(Passes::Every)),
                (
                    along_dry_run(Passes::Skipping),
                    along_dry_run(Passes::Every),
                ),
            ] {
                contacts += assert_same(&fast, &every, &options);
                near += every
                    .moves
                    .iter()
                    .filter(|m| (0.0..0.01).contains(&m.min_clearance))
                    .count();
                walks += 1;
            }
        }
        assert_eq!(walks, 12);
        assert!(contacts > 0, "the random scenes must also have contacts");
        assert!(near > 0, "and near misses within 10 mm");
    }

    #[test]
    fn skipping_passes_finds_what_measuring_every_pair_at_every_look_finds() {
        // The clearance bench's cell (a table, three cubes and a tray) on random moves of the
        // 5-joint arm, one cube carried on a few of them: skipping the pass over the pairs
        // where none can need measuring finds the same contacts (move, time, pair, depth) as
        // measuring every pair at every look, and the same smallest clearance per move within
        // the resolution.
        let arm = arms::articulated(true);
        let shape = ArmShape::of(&arm);
        let cube = |x: f64, y: f64| {
            Obstacle::standing_box("cube", Vector3::new(x, y, 0.0), Vector3::repeat(0.025))
        };
        let obstacles = [
            Obstacle::table(0.0),
            cube(0.12, 0.08),
            cube(0.15, 0.08),
            cube(0.18, 0.08),
            Obstacle::standing_box(
                "tray",
                Vector3::new(0.15, -0.10, 0.0),
                Vector3::new(0.096, 0.072, 0.02),
            ),
        ];
        let mut rng = arms::Seeded::new(29);
        let centre = [0.0, 0.9, -1.2, 0.3, 0.0];
        let waypoints: Vec<TaskWaypoint> = (0..24)
            .map(|_| TaskWaypoint {
                positions: centre.iter().map(|c| c + rng.uniform(-0.5, 0.5)).collect(),
                stop: true,
                dwell: 0.05,
                speed_share: 1.0,
                gripper_closed: false,
                straight: false,
                shape: ProfileShape::DoubleS,
            })
            .collect();
        let tool = tool_pose(&arm, &waypoints[4].positions).unwrap();
        let held = Obstacle::standing_box(
            "held",
            tool.translation.vector - Vector3::new(0.0, 0.0, 0.02),
            Vector3::repeat(0.03),
        );
        let carried = [Carry {
            first: 5,
            last: 9,
            object: CarriedBox::picked(1, &held, &tool).unwrap(),
            lifted_from: Vec::new(),
            put_on: Vec::new(),
        }];
        let task = Task {
            waypoints,
            limits: LimitSettings::default(),
            model: ServoModelOptions::default(),
            shaping: None,
        };
        let plan = plan_task(&arm, &task).unwrap();
        let cell = Workcell {
            arm: &arm,
            shape: &shape,
            obstacles: &obstacles,
            exemptions: &[],
            carried: &carried,
        };
        let options = ClearanceOptions::default();
        let end = plan.duration();
        let run = |passes: Passes| {
            walk(&cell, plan.timings(), end, &options, passes, |t, out| {
                plan.positions_at(t.min(end), out)
            })
        };
        let (fast, every) = (run(Passes::Skipping), run(Passes::Every));
        let contacts = assert_same(&fast, &every, &options);
        assert!(
            contacts > 0,
            "the random moves must also reach into something"
        );
        assert!(
            every.min_clearance() < 0.01,
            "and come near: {}",
            every.min_clearance()
        );
    }
}
