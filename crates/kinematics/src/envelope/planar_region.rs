//! Where a planar three-joint chain can put its tip, decided so that no reachable point is
//! missed: the region's boundary is drawn from the curves it can lie on, and everything between
//! those curves is decided one piece at a time.
//!
//! The chain: joints s, e, w turn about parallel axes at the origin, the elbow (a from the
//! origin) and the wrist (b further on); the tip is c beyond the wrist, so with u(t) = (cos t,
//! sin t) it sits at T = a·u(s) + b·u(s + e) + c·u(s + e + w). The tool angle φ = s + e + w is
//! free, or fixed (then w = φ − s − e must be in its limits).
//!
//! Why the curves suffice: the region A (the image of the box of joint limits) is closed, so a
//! cell that holds a point of A but whose centre is outside holds a point of A's boundary; and
//! A's boundary lies in the image of the joint configurations where the map loses rank on the
//! box's interior, faces and edges (the image of a compact box under a smooth map can only
//! fold over there). For this chain every such set is a line in joint space along one joint:
//! with one joint moving and the others fixed at a limit, at 0 or π (links in line), or at the
//! angle that puts the tip in line with the moving joint's axis and another axis. Each of
//! those curves lies in A, so marking the cells they touch over-reaches by no more than the
//! sampling radius. Between the curves, a connected run of untouched cells lies in one
//! connected piece of the plane without boundary points, entirely in A or entirely outside,
//! which one test of one point decides.
//!
//! Lengths in m, angles in rad.

use std::f64::consts::{PI, TAU};

use crate::fk::sin_cos;
use crate::ik::planar_two_link;

/// How far past a limit (rad) a joint value still counts as within it: rounding, not reach.
const LIMIT_SLACK: f64 = 1e-9;

/// A planar three-joint chain and its tool-angle rule.
#[derive(Debug, Clone, Copy)]
pub(super) struct PlanarChain {
    /// a, b, c: origin to elbow, elbow to wrist, wrist to tip, in m.
    pub(super) lengths: [f64; 3],
    /// Limits of s, e, w in rad, (min, max).
    pub(super) limits: [(f64, f64); 3],
    /// The tool angle φ = s + e + w when fixed, in rad.
    pub(super) angle: Option<f64>,
    /// The w to report for a free angle when the tip does not depend on it (c = 0), in rad.
    pub(super) idle_w: f64,
}

/// A line in joint space, start + t·direction, already clipped to the joint limits.
#[derive(Debug, Clone, Copy)]
struct JointLine {
    start: [f64; 3],
    direction: [f64; 3],
    t: (f64, f64),
}

impl PlanarChain {
    /// The tip for joint angles (s, e, w), in m.
    pub(super) fn tip(&self, q: [f64; 3]) -> [f64; 2] {
        let [a, b, c] = self.lengths;
        let (s1, c1) = sin_cos(q[0]);
        let (s2, c2) = sin_cos(q[0] + q[1]);
        let (s3, c3) = sin_cos(q[0] + q[1] + q[2]);
        [a * c1 + b * c2 + c * c3, a * s1 + b * s2 + c * s3]
    }

    /// The value of joint `index` congruent to `angle` (whole turns apart) within its limits,
    /// the one nearest the middle of the limits.
    fn fit(&self, index: usize, angle: f64) -> Option<f64> {
        let (low, high) = self.limits[index];
        let middle = 0.5 * (low + high);
        // Within half a turn of the middle: the only candidate when the limits span less than
        // a turn, and inside them when they span more.
        let value = middle + (angle - middle + PI).rem_euclid(TAU) - PI;
        (value >= low - LIMIT_SLACK && value <= high + LIMIT_SLACK).then_some(value)
    }

    /// Joint angles (s, e, w) that put the tip at `point`, if any; a free angle is searched
    /// over the tool pointing straight away from the origin and straight at it and then
    /// `angle_samples` evenly spaced values.
    pub(super) fn pose_at(&self, point: [f64; 2], angle_samples: usize) -> Option<[f64; 3]> {
        if let Some(angle) = self.angle {
            return self.pose_at_angle(point, angle);
        }
        if self.lengths[2] == 0.0 {
            return self.pose_at_angle(point, f64::NAN);
        }
        let away = point[1].atan2(point[0]);
        [away, away + PI]
            .into_iter()
            .chain((0..angle_samples).map(|k| TAU * k as f64 / angle_samples as f64))
            .find_map(|angle| self.pose_at_angle(point, angle))
    }

    /// Joint angles for the tip at `point` with tool angle `angle` (NaN: any, for c = 0).
    fn pose_at_angle(&self, point: [f64; 2], angle: f64) -> Option<[f64; 3]> {
        let [a, b, c] = self.lengths;
        let (wrist_x, wrist_y) = if angle.is_nan() {
            (point[0], point[1])
        } else {
            let (sin, cos) = angle.sin_cos();
            (point[0] - c * cos, point[1] - c * sin)
        };
        let keep = 0.5 * (self.limits[0].0 + self.limits[0].1);
        let solutions = planar_two_link::solve(a, b, wrist_x, wrist_y, keep).ok()?;
        [solutions.bent_positive, solutions.bent_negative]
            .into_iter()
            .find_map(|(s, e)| {
                let s = self.fit(0, s)?;
                let e = self.fit(1, e)?;
                let w = if angle.is_nan() {
                    self.idle_w
                } else {
                    self.fit(2, angle - s - e)?
                };
                Some([s, e, w])
            })
    }

    /// Every joint value congruent to `angle` (whole turns apart) within joint `index`'s
    /// limits.
    fn within(&self, index: usize, angle: f64) -> impl Iterator<Item = f64> {
        let (low, high) = self.limits[index];
        (-3..=3)
            .map(move |turn| angle + TAU * f64::from(turn))
            .filter(move |value| *value >= low && *value <= high)
    }

    /// `value` and every whole turn of `extra` that fits joint `index`.
    fn candidates(&self, index: usize, extra: &[f64]) -> Vec<f64> {
        let (low, high) = self.limits[index];
        let mut values = vec![low, high];
        for &angle in extra {
            values.extend(self.within(index, angle));
        }
        values
    }

    /// The joint-space lines whose images hold the region's boundary (see the module
    /// documentation).
    fn boundary_lines(&self) -> Vec<JointLine> {
        let [a, b, c] = self.lengths;
        let mut lines = Vec::new();
        let mut push = |start: [f64; 3], direction: [f64; 3]| {
            if let Some(line) = self.clip(start, direction) {
                lines.push(line);
            }
        };
        let (s_low, s_high) = self.limits[0];
        match self.angle {
            None => {
                // s moving: e and w at limits, in line (0, π), or at the angle that puts the
                // tip in line with the origin and the wrist (w given e) or the elbow (e given
                // w).
                for e in self.candidates(1, &[0.0, PI]) {
                    let in_line_with_wrist = (b * e.sin()).atan2(a + b * e.cos()) - e;
                    for w in
                        self.candidates(2, &[0.0, PI, in_line_with_wrist, in_line_with_wrist + PI])
                    {
                        push([s_low, e, w], [1.0, 0.0, 0.0]);
                    }
                }
                for w in [self.limits[2].0, self.limits[2].1] {
                    let in_line_with_elbow = -(c * w.sin()).atan2(b + c * w.cos());
                    for e in self
                        .within(1, in_line_with_elbow)
                        .chain(self.within(1, in_line_with_elbow + PI))
                        .collect::<Vec<_>>()
                    {
                        push([s_low, e, w], [1.0, 0.0, 0.0]);
                    }
                }
                // e moving: s at a limit, w at a limit or in line.
                for s in [s_low, s_high] {
                    for w in self.candidates(2, &[0.0, PI]) {
                        push([s, self.limits[1].0, w], [0.0, 1.0, 0.0]);
                    }
                    // w moving: s and e at limits.
                    for e in [self.limits[1].0, self.limits[1].1] {
                        push([s, e, self.limits[2].0], [0.0, 0.0, 1.0]);
                    }
                }
            }
            Some(angle) => {
                // w = φ − s − e follows the other two; each whole turn of it is its own line.
                for turn in -3..=3 {
                    let phi = angle + TAU * f64::from(turn);
                    for e in self.candidates(1, &[0.0, PI]) {
                        push([s_low, e, phi - s_low - e], [1.0, 0.0, -1.0]);
                    }
                    for s in [s_low, s_high] {
                        let e = self.limits[1].0;
                        push([s, e, phi - s - e], [0.0, 1.0, -1.0]);
                    }
                    for w in [self.limits[2].0, self.limits[2].1] {
                        push([s_low, phi - w - s_low, w], [1.0, -1.0, 0.0]);
                    }
                }
            }
        }
        lines
    }

    /// The part of the line start + t·direction inside the joint limits, if any.
    fn clip(&self, start: [f64; 3], direction: [f64; 3]) -> Option<JointLine> {
        let (mut from, mut to) = (f64::NEG_INFINITY, f64::INFINITY);
        for index in 0..3 {
            let (low, high) = self.limits[index];
            let slack = 1e-12;
            if direction[index] == 0.0 {
                if start[index] < low - slack || start[index] > high + slack {
                    return None;
                }
            } else {
                let t1 = (low - start[index]) / direction[index];
                let t2 = (high - start[index]) / direction[index];
                from = from.max(t1.min(t2));
                to = to.min(t1.max(t2));
            }
        }
        (from.is_finite() && to.is_finite() && from <= to).then_some(JointLine {
            start,
            direction,
            t: (from, to),
        })
    }

    /// Calls `visit(tip, joint angles)` at points along every boundary curve, spaced so that
    /// every point of the curves lies within `spacing / 2` of one of them.
    pub(super) fn walk_boundary(&self, spacing: f64, mut visit: impl FnMut([f64; 2], [f64; 3])) {
        let [a, b, c] = self.lengths;
        // How fast the tip can move per unit of t: each joint's rate times the farthest the
        // tip can be from its axis.
        let reach = [a + b + c, b + c, c];
        for line in self.boundary_lines() {
            let speed: f64 = (0..3).map(|i| line.direction[i].abs() * reach[i]).sum();
            let length = (line.t.1 - line.t.0) * speed;
            let steps = ((length / spacing).ceil() as usize).clamp(1, 1_000_000);
            for k in 0..=steps {
                let t = line.t.0 + (line.t.1 - line.t.0) * k as f64 / steps as f64;
                let q = [0, 1, 2].map(|i| line.start[i] + t * line.direction[i]);
                visit(self.tip(q), q);
            }
        }
    }
}

/// One part of the reachable set along a line: positions from `low` to `high` (m along the
/// line), and a pose that reaches it or within the sampling radius of it.
#[derive(Debug, Clone, Copy)]
pub(super) struct SlicePiece {
    pub(super) low: f64,
    pub(super) high: f64,
    pub(super) pose: [f64; 3],
}

/// Where the line origin + x·direction (direction a unit vector) meets the chain's region, as
/// pieces of x within `range`, over-reaching by at most `spacing` where the boundary crosses.
///
/// Boundary crossings are found as the curve points within `spacing` of the line, each
/// widened to ±`spacing`; every stretch between them lies wholly inside or wholly outside the
/// region and is decided at its middle.
pub(super) fn slice(
    chain: &PlanarChain,
    origin: [f64; 2],
    direction: [f64; 2],
    range: (f64, f64),
    spacing: f64,
    angle_samples: usize,
) -> Vec<SlicePiece> {
    let mut bands: Vec<SlicePiece> = Vec::new();
    chain.walk_boundary(spacing, |tip, pose| {
        let relative = [tip[0] - origin[0], tip[1] - origin[1]];
        let across = relative[0] * direction[1] - relative[1] * direction[0];
        let along = relative[0] * direction[0] + relative[1] * direction[1];
        if across.abs() <= spacing && along + spacing >= range.0 && along - spacing <= range.1 {
            bands.push(SlicePiece {
                low: along - spacing,
                high: along + spacing,
                pose,
            });
        }
    });
    bands.sort_by(|x, y| x.low.total_cmp(&y.low));
    // Merge overlapping bands, keeping the first pose of each.
    let mut merged: Vec<SlicePiece> = Vec::new();
    for band in bands {
        match merged.last_mut() {
            Some(last) if band.low <= last.high => last.high = last.high.max(band.high),
            _ => merged.push(band),
        }
    }
    // Decide each gap between bands (and before the first and after the last) at its middle.
    let mut pieces = Vec::new();
    let mut from = range.0;
    let gaps_and_bands = merged
        .iter()
        .map(|band| Some(*band))
        .chain(std::iter::once(None));
    for band in gaps_and_bands {
        let to = band.map_or(range.1, |b| b.low.max(range.0));
        if to > from {
            let middle = 0.5 * (from + to);
            let point = [
                origin[0] + middle * direction[0],
                origin[1] + middle * direction[1],
            ];
            if let Some(pose) = chain.pose_at(point, angle_samples) {
                pieces.push(SlicePiece {
                    low: from,
                    high: to,
                    pose,
                });
            }
        }
        if let Some(band) = band {
            pieces.push(SlicePiece {
                low: band.low.max(range.0),
                high: band.high.min(range.1),
                pose: band.pose,
            });
            from = from.max(band.high);
        }
    }
    pieces.retain(|piece| piece.low <= piece.high);
    pieces
}

/// A square grid in the chain's plane seen through a map: cell (column, row) covers
/// u ∈ [u_min + column·size, … + size], v likewise, and a grid point (u, v) is the chain point
/// (sign·u, v − v_offset). `half` keeps only chain points with x ≥ 0 (`Some(1.0)`) or x ≤ 0
/// (`Some(-1.0)`).
#[derive(Debug, Clone, Copy)]
pub(super) struct GridView {
    pub(super) cells: usize,
    pub(super) u_min: f64,
    pub(super) v_min: f64,
    pub(super) size: f64,
    pub(super) sign: f64,
    pub(super) v_offset: f64,
    pub(super) half: Option<f64>,
}

impl GridView {
    /// The cell's rectangle in the chain's plane, clipped to the half, as (x range, y range);
    /// `None` when the cell lies wholly in the other half.
    fn chain_rect(&self, column: usize, row: usize) -> Option<((f64, f64), (f64, f64))> {
        let u = (
            self.u_min + column as f64 * self.size,
            self.u_min + (column + 1) as f64 * self.size,
        );
        let v = (
            self.v_min + row as f64 * self.size,
            self.v_min + (row + 1) as f64 * self.size,
        );
        let x = if self.sign > 0.0 { u } else { (-u.1, -u.0) };
        let x = match self.half {
            Some(side) if side > 0.0 => (x.0.max(0.0), x.1),
            Some(_) => (x.0, x.1.min(0.0)),
            None => x,
        };
        (x.0 <= x.1).then_some((x, (v.0 - self.v_offset, v.1 - self.v_offset)))
    }
}

/// Marks every cell of `grid` that holds a point of the chain's region (or lies within
/// `spacing / 2` of one), with a pose reaching it or reaching a point that close, in `found`
/// (row-major; cells already holding a pose keep it).
pub(super) fn mark_cells(
    chain: &PlanarChain,
    grid: &GridView,
    spacing: f64,
    angle_samples: usize,
    found: &mut [Option<[f64; 3]>],
) {
    let n = grid.cells;
    let mut touched = vec![false; n * n];
    let radius = 0.5 * spacing;
    chain.walk_boundary(spacing, |tip, pose| {
        if let Some(side) = grid.half
            && tip[0] * side < -radius
        {
            return;
        }
        let u = grid.sign * tip[0];
        let v = tip[1] + grid.v_offset;
        let first = |value: f64, low: f64| ((value - radius - low) / grid.size).floor();
        let last = |value: f64, low: f64| ((value + radius - low) / grid.size).floor();
        let columns = (
            first(u, grid.u_min).max(0.0),
            last(u, grid.u_min).min(n as f64 - 1.0),
        );
        let rows = (
            first(v, grid.v_min).max(0.0),
            last(v, grid.v_min).min(n as f64 - 1.0),
        );
        if columns.0 > columns.1 || rows.0 > rows.1 {
            return;
        }
        for row in rows.0 as usize..=rows.1 as usize {
            for column in columns.0 as usize..=columns.1 as usize {
                let index = row * n + column;
                if !touched[index] && grid.chain_rect(column, row).is_some() {
                    touched[index] = true;
                    found[index].get_or_insert(pose);
                }
            }
        }
    });
    // Runs of untouched cells, joined through shared edges, each decided at one cell's centre
    // (a few tried, for a free angle's sampled search).
    let mut seen = touched.clone();
    let mut stack = Vec::new();
    let mut members = Vec::new();
    for first in 0..n * n {
        if seen[first] || grid.chain_rect(first % n, first / n).is_none() {
            continue;
        }
        seen[first] = true;
        stack.push(first);
        members.clear();
        while let Some(index) = stack.pop() {
            members.push(index);
            let (column, row) = (index % n, index / n);
            let neighbours = [
                (column > 0).then(|| index - 1),
                (column + 1 < n).then(|| index + 1),
                (row > 0).then(|| index - n),
                (row + 1 < n).then(|| index + n),
            ];
            for next in neighbours.into_iter().flatten() {
                if !seen[next] && grid.chain_rect(next % n, next / n).is_some() {
                    seen[next] = true;
                    stack.push(next);
                }
            }
        }
        let centre = |index: usize| {
            grid.chain_rect(index % n, index / n)
                .map(|(x, y)| [0.5 * (x.0 + x.1), 0.5 * (y.0 + y.1)])
        };
        let tries = [0, members.len() / 2, members.len() - 1];
        let inside = tries
            .iter()
            .find_map(|&k| centre(members[k]).and_then(|p| chain.pose_at(p, angle_samples)));
        if let Some(pose) = inside {
            for &index in &members {
                found[index].get_or_insert(pose);
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn chain(angle: Option<f64>) -> PlanarChain {
        PlanarChain {
            lengths: [0.12, 0.11, 0.07],
            limits: [(-0.2, PI - 0.2), (-2.5, 2.5), (-PI / 2.0, PI / 2.0)],
            angle,
            idle_w: 0.0,
        }
    }

    #[test]
    fn found_poses_reach_the_point() {
        for angle in [None, Some(0.3)] {
            let chain = chain(angle);
            let mut reached = 0;
            for k in 0..400 {
                let q = [
                    -0.2 + 0.007 * k as f64,
                    -2.5 + 0.0125 * k as f64,
                    (-PI / 2.0) + 0.0078 * k as f64,
                ];
                let mut target = chain.tip(q);
                if let Some(phi) = angle {
                    // Keep the wrist where q puts it, and turn the tool to φ.
                    let wrist = [
                        target[0] - 0.07 * (q[0] + q[1] + q[2]).cos(),
                        target[1] - 0.07 * (q[0] + q[1] + q[2]).sin(),
                    ];
                    target = [wrist[0] + 0.07 * phi.cos(), wrist[1] + 0.07 * phi.sin()];
                }
                if let Some(found) = chain.pose_at(target, 720) {
                    let tip = chain.tip(found);
                    assert!((tip[0] - target[0]).hypot(tip[1] - target[1]) < 1e-9);
                    reached += 1;
                }
            }
            assert!(reached > 100, "{angle:?}: {reached}");
        }
    }

    #[test]
    fn boundary_curves_stay_within_the_limits() {
        for angle in [None, Some(-0.7)] {
            let chain = chain(angle);
            let mut count = 0;
            chain.walk_boundary(0.002, |_, q| {
                for (value, (low, high)) in q.iter().zip(chain.limits) {
                    assert!(*value >= low - 1e-9 && *value <= high + 1e-9, "{q:?}");
                }
                count += 1;
            });
            assert!(count > 100);
        }
    }
}
