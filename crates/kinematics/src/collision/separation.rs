//! Signed distances between a placed arm's links and the obstacles, and between links that are
//! not neighbours, through `parry3d-f64`: its distance query (GJK) for the gap to an obstacle,
//! its contact query (EPA) for the depth of an overlap, and its segment–segment closest points
//! for two capsules. The library's routines are tested and fast, so none are written here.
//!
//! parry uses glam types; this file is the one place that converts nalgebra's to them.

use nalgebra::Vector3;
use parry3d_f64::math::{Pose, Vector};
use parry3d_f64::query;
use parry3d_f64::shape::{Capsule, Cuboid, HalfSpace, Segment, Shape};

use super::arm_shape::{ArmShape, PlacedArm};
use super::obstacle::{Obstacle, ObstacleShape};
use crate::arm::Arm;
use crate::error::KinematicsError;
use crate::fk::forward;

/// A gap (m) counted when a query is not supported: far larger than any arm here.
const FARTHEST: f64 = 1.0e3;

/// What a link is checked against: an obstacle or another link (by index).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Other {
    /// An obstacle, by its index in the obstacle list.
    Obstacle(usize),
    /// Another link, by its index in [`ArmShape::links`].
    Link(usize),
}

/// A link and what it is checked against.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub struct Pair {
    /// The link, by its index in [`ArmShape::links`].
    pub link: usize,
    /// The obstacle or the other link (always a later link than `link`).
    pub other: Other,
}

/// The signed distance of one pair in one pose.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Proximity {
    /// The pair.
    pub pair: Pair,
    /// Gap between the two (m) when positive, depth of their overlap (m) when negative.
    pub distance: f64,
}

impl ArmShape {
    /// Every pair to check: each link against each obstacle, and each link against every later
    /// link that is not its neighbour. The first link is not checked against the table, which
    /// it stands on.
    pub fn pairs(&self, obstacles: &[Obstacle]) -> Vec<Pair> {
        let count = self.links().len();
        let mut pairs = Vec::new();
        for link in 0..count {
            for (index, obstacle) in obstacles.iter().enumerate() {
                if !(link == 0 && obstacle.is_table()) {
                    pairs.push(Pair {
                        link,
                        other: Other::Obstacle(index),
                    });
                }
            }
            for other in link + 1..count {
                if !self.neighbours(link, other) {
                    pairs.push(Pair {
                        link,
                        other: Other::Link(other),
                    });
                }
            }
        }
        pairs
    }
}

/// Signed distance (m) of `pair` in the placed pose: the gap when positive, the depth of the
/// overlap when negative. An obstacle index past `obstacles` or a link index past the shape
/// gives `f64::INFINITY` (nothing there to touch).
pub fn pair_distance(
    shape: &ArmShape,
    placed: &PlacedArm,
    obstacles: &[Obstacle],
    pair: Pair,
) -> f64 {
    let (Some(link), Some(segment)) = (
        shape.links().get(pair.link),
        placed.segments().get(pair.link),
    ) else {
        return f64::INFINITY;
    };
    let capsule = Capsule::new(glam(&segment.0), glam(&segment.1), link.radius);
    // The obstacle goes first: parry 0.31 places a half-space given second
    // on the wrong side.
    match pair.other {
        Other::Link(other) => {
            let (Some(other_link), Some(other_segment)) =
                (shape.links().get(other), placed.segments().get(other))
            else {
                return f64::INFINITY;
            };
            // Two capsules: the distance between their segments less both radii, exact (the
            // segment routine is Ericson's, Real-Time Collision Detection, 2005, §5.1.9).
            let (first, second) = (
                Segment::new(glam(&segment.0), glam(&segment.1)),
                Segment::new(glam(&other_segment.0), glam(&other_segment.1)),
            );
            let (on_first, on_second) =
                query::details::closest_points_segment_segment_with_locations(
                    &Pose::identity(),
                    &first,
                    &second,
                );
            (first.point_at(&on_first) - second.point_at(&on_second)).length()
                - link.radius
                - other_link.radius
        }
        Other::Obstacle(index) => match obstacles.get(index).map(|o| o.shape) {
            None => f64::INFINITY,
            Some(ObstacleShape::Table { height }) => signed_distance(
                &Pose::translation(0.0, 0.0, height),
                &HalfSpace::new(Vector::Z),
                &capsule,
            ),
            Some(ObstacleShape::Box { centre, half_size }) => signed_distance(
                &Pose::from_translation(glam(&centre)),
                &Cuboid::new(glam(&half_size)),
                &capsule,
            ),
        },
    }
}

/// Signed distance (m) between `first` at `pose` and a capsule given in the base frame: the gap
/// from the distance query (GJK), the depth of an overlap from the contact query (EPA).
fn signed_distance(pose: &Pose, first: &dyn Shape, capsule: &Capsule) -> f64 {
    let identity = Pose::identity();
    // Every pair here is capsule against capsule, half-space or cuboid, all of which parry
    // supports; were one not, the pair would count as far apart.
    let gap = query::distance(pose, first, &identity, capsule).map_or(FARTHEST, |d| d.distance);
    if gap > 0.0 {
        return gap;
    }
    match query::contact(pose, first, &identity, capsule, 0.0) {
        Ok(Some(contact)) => contact.dist.min(0.0),
        Ok(None) | Err(_) => 0.0,
    }
}

/// A cheap lower bound (m) of [`pair_distance`]: exact for the table and between links (both
/// closed forms are cheap), and for a box the gap between the box and the capsule's bounding
/// box, which the iterative query is asked for only when that gap is small.
pub fn pair_distance_bound(
    shape: &ArmShape,
    placed: &PlacedArm,
    obstacles: &[Obstacle],
    pair: Pair,
) -> f64 {
    let (Other::Obstacle(index), Some(link), Some(segment)) = (
        pair.other,
        shape.links().get(pair.link),
        placed.segments().get(pair.link),
    ) else {
        return pair_distance(shape, placed, obstacles, pair);
    };
    match obstacles.get(index).map(|o| o.shape) {
        Some(ObstacleShape::Box { centre, half_size }) => {
            let low = segment.0.inf(&segment.1).add_scalar(-link.radius);
            let high = segment.0.sup(&segment.1).add_scalar(link.radius);
            let gap = Vector3::from_fn(|axis, _| {
                let (box_low, box_high) = (
                    centre[axis] - half_size[axis],
                    centre[axis] + half_size[axis],
                );
                (box_low - high[axis]).max(low[axis] - box_high).max(0.0)
            });
            let gap = gap.norm();
            if gap > 0.0 {
                gap
            } else {
                pair_distance(shape, placed, obstacles, pair)
            }
        }
        _ => pair_distance(shape, placed, obstacles, pair),
    }
}

/// Every pair's signed distance in the pose `positions` (rad or m, one per joint), skipping the
/// pairs for which `exempt` says true. Distances in m, negative for an overlap.
///
/// # Errors
/// [`KinematicsError`] if the count is wrong or a position is not finite.
pub fn pose_proximities(
    arm: &Arm,
    shape: &ArmShape,
    obstacles: &[Obstacle],
    positions: &[f64],
    exempt: impl Fn(Pair) -> bool,
) -> Result<Vec<Proximity>, KinematicsError> {
    let pose = forward(arm, positions)?;
    let placed = shape.place(&pose);
    Ok(shape
        .pairs(obstacles)
        .into_iter()
        .filter(|&pair| !exempt(pair))
        .map(|pair| Proximity {
            pair,
            distance: pair_distance(shape, &placed, obstacles, pair),
        })
        .collect())
}

fn glam(v: &Vector3<f64>) -> Vector {
    Vector::new(v.x, v.y, v.z)
}
