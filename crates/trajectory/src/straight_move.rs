//! Straight moves: the tool point on a straight line between two waypoints, turned into joint
//! positions along the path by inverse kinematics.
//!
//! The line (and the tool angles the arm honours, interpolated) is cut into pieces short enough
//! that the joint-space chord of each piece stays within [`LINE_TOLERANCE`] of the line at its
//! middle; the planner then flows through the cut points as pass-through waypoints, so joint
//! limits hold everywhere and the arm slows by itself where the joints must move a lot per mm
//! (near a singular pose).

use std::f64::consts::{PI, TAU};

use armwright_kinematics::{Arm, IkOptions, IkTarget, solve_ik, tool_pose};
use nalgebra::Vector3;

/// Largest distance, in m, between the line and the tool point half-way along a piece.
pub const LINE_TOLERANCE: f64 = 0.5e-3;

/// Most pieces one straight move is cut into.
const MAX_PIECES: usize = 1024;

/// Largest change of any joint between neighbouring cut points, in rad or m, before the path
/// counts as jumping to another branch.
const BRANCH_JUMP: f64 = 0.35;

/// Why a straight move cannot be made.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error(
    "straight move to waypoint {waypoint}: {reason} at {:.0} % of the way, tool point ({:.1}, {:.1}, {:.1}) mm",
    .share * 100.0, .point[0] * 1e3, .point[1] * 1e3, .point[2] * 1e3
)]
pub struct StraightMoveError {
    /// The waypoint the move arrives at.
    pub waypoint: usize,
    /// How far along the path, 0–1.
    pub share: f64,
    /// The tool point there, in m, base frame.
    pub point: [f64; 3],
    /// What goes wrong there, in words.
    pub reason: String,
}

/// Joint positions (rad or m) at the cut points of the straight move from `from` to `to`,
/// after `from` and ending with `to`.
///
/// # Errors
/// [`StraightMoveError`] naming the waypoint and the point along the path where the line leaves
/// the reach envelope, needs a joint past its limits, or would have to change branch.
pub fn straight_path(
    arm: &Arm,
    from: &[f64],
    to: &[f64],
    waypoint: usize,
) -> Result<Vec<Vec<f64>>, StraightMoveError> {
    let fail = |share: f64, point: Vector3<f64>, reason: String| StraightMoveError {
        waypoint,
        share,
        point: [point.x, point.y, point.z],
        reason,
    };
    let ends = |pose: &[f64], share: f64| {
        IkTarget::of_pose(arm, pose).map_err(|e| fail(share, Vector3::zeros(), e.to_string()))
    };
    let (start, end) = (ends(from, 0.0)?, ends(to, 1.0)?);
    let along = |share: f64| IkTarget {
        position: start.position.lerp(&end.position, share),
        angle: blend(start.angle, end.angle, share),
        roll: blend(start.roll, end.roll, share),
    };
    let options = IkOptions {
        restarts: 0,
        ..IkOptions::default()
    };
    let length = (end.position - start.position).norm();
    let mut pieces = ((length / 5e-3).ceil() as usize).clamp(1, MAX_PIECES);
    loop {
        // One attempt at `pieces` cut points; `None` asks for finer cuts.
        let attempt = || -> Result<Option<Vec<Vec<f64>>>, StraightMoveError> {
            let mut path = Vec::with_capacity(pieces);
            let mut previous = from.to_vec();
            for k in 1..=pieces {
                let share = k as f64 / pieces as f64;
                let target = along(share);
                let solutions = solve_ik(arm, &target, &previous, &options)
                    .map_err(|e| fail(share, target.position, e.to_string()))?;
                let next = solutions.nearest(&previous).positions().to_vec();
                let jump = next
                    .iter()
                    .zip(&previous)
                    .map(|(a, b)| (a - b).abs())
                    .fold(0.0, f64::max);
                if jump > BRANCH_JUMP {
                    if pieces < MAX_PIECES {
                        return Ok(None);
                    }
                    let reason = "the arm would have to change branch".to_string();
                    return Err(fail(share, target.position, reason));
                }
                // The chord in joint space must stay near the line at its middle.
                let middle: Vec<f64> = next
                    .iter()
                    .zip(&previous)
                    .map(|(a, b)| 0.5 * (a + b))
                    .collect();
                let at_middle = tool_pose(arm, &middle)
                    .map_err(|e| fail(share, target.position, e.to_string()))?
                    .translation
                    .vector;
                let wanted = along(share - 0.5 / pieces as f64).position;
                if (at_middle - wanted).norm() > LINE_TOLERANCE && pieces < MAX_PIECES {
                    return Ok(None);
                }
                previous.clone_from(&next);
                path.push(next);
            }
            Ok(Some(path))
        };
        let Some(mut path) = attempt()? else {
            pieces *= 2;
            continue;
        };
        let reached = path
            .last()
            .is_none_or(|last| last.iter().zip(to).all(|(a, b)| (a - b).abs() < 1e-6));
        if !reached {
            let reason = "the line ends on another branch than the waypoint's".to_string();
            return Err(fail(1.0, end.position, reason));
        }
        // End exactly on the waypoint as stored.
        if let Some(last) = path.last_mut() {
            last.copy_from_slice(to);
        }
        return Ok(path);
    }
}

/// Linear blend of two optional angles along the shorter way round (rad).
fn blend(a: Option<f64>, b: Option<f64>, share: f64) -> Option<f64> {
    match (a, b) {
        (Some(a), Some(b)) => {
            let turn = (b - a + PI).rem_euclid(TAU) - PI;
            Some(a + turn * share)
        }
        _ => None,
    }
}
