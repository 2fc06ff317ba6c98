//! The reach envelope and torque-utilisation map: over a square grid in a plane, which cells
//! the tool point can reach within the joint limits, and the lowest torque use (gravity and
//! payload) over the ways of reaching each one.
//!
//! Views: the top view is the horizontal plane at a chosen height, grid axes (u, v) = base (x, y);
//! the side view is the vertical plane through the base axis at a chosen yaw, u = horizontal
//! distance along that yaw (negative behind the base axis), v = height z. The grid is square
//! and centred on the base axis, wide enough for the stretched arm.
//!
//! How angles are sampled and boundaries traced is said on [`reach_map`].

use std::collections::HashMap;
use std::f64::consts::{FRAC_PI_2, PI, TAU};

use nalgebra::Vector3;

mod planar_region; // cells a planar three-joint chain reaches, with none missed

use self::planar_region::{GridView, PlanarChain, SlicePiece, mark_cells, slice};
use crate::arm::{Arm, ArmType, ArticulatedDims, JointKind, MAX_JOINTS, ScaraDims};
use crate::gravity::gravity_torques;
use crate::ik::{IkOptions, IkTarget, fit_into_limits, planar_two_link, solve_ik};
use crate::torque_use::torque_use;

/// Which plane the map covers.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum MapView {
    /// The horizontal plane at `height` (m above the base frame's origin); u = x, v = y.
    Top {
        /// Height of the plane, in m.
        height: f64,
    },
    /// The vertical plane through the base axis at `yaw` (rad from +X towards +Y); u = distance
    /// along that direction (m, negative behind the axis), v = z (m).
    Side {
        /// Direction of the plane, in rad.
        yaw: f64,
    },
}

/// How fine the map is and what load it assumes.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MapOptions {
    /// Cells along each side of the square grid (2 to 2000; values outside are brought in).
    pub cells: usize,
    /// Share of each servo's stall torque one is willing to use, in (0, 1]; 1 compares with the
    /// full stall torque.
    pub derating: f64,
    /// Payload at the tool point, in kg; `None` takes [`Arm::payload_mass`].
    pub payload_mass: Option<f64>,
    /// How many evenly spaced values a free tool angle is sampled at (1 to 360); see
    /// [`reach_map`] for the two aimed samples added per point.
    pub angle_samples: usize,
    /// A fixed tool angle (pitch for the articulated arms, rad) instead of sampling.
    pub tool_angle: Option<f64>,
}

impl Default for MapOptions {
    fn default() -> MapOptions {
        MapOptions {
            cells: 200,
            derating: 1.0,
            payload_mass: None,
            angle_samples: 8,
            tool_angle: None,
        }
    }
}

/// The grid's extent in the view plane, in m: u from `u_min` to `u_max`, v from `v_min` to
/// `v_max`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MapExtent {
    /// Lowest u, in m.
    pub u_min: f64,
    /// Highest u, in m.
    pub u_max: f64,
    /// Lowest v, in m.
    pub v_min: f64,
    /// Highest v, in m.
    pub v_max: f64,
}

/// A reach envelope and torque-utilisation map over a square grid.
#[derive(Debug, Clone, PartialEq)]
pub struct ReachMap {
    view: MapView,
    cells: usize,
    extent: MapExtent,
    /// Row-major from (u_min, v_min): per cell the lowest torque use, `None` if unreachable.
    values: Vec<Option<f64>>,
    boundary: Vec<Vec<[f64; 2]>>,
}

impl ReachMap {
    /// The view the map was made for.
    pub fn view(&self) -> MapView {
        self.view
    }

    /// Cells along each side.
    pub fn cells(&self) -> usize {
        self.cells
    }

    /// The grid's extent, in m.
    pub fn extent(&self) -> MapExtent {
        self.extent
    }

    /// Width (and height) of one cell, in m.
    pub fn cell_size(&self) -> f64 {
        (self.extent.u_max - self.extent.u_min) / self.cells as f64
    }

    /// Centre of cell (`column`, `row`) in the view plane (u, v), in m; column counts along u
    /// from `u_min`, row along v from `v_min`.
    pub fn cell_centre(&self, column: usize, row: usize) -> [f64; 2] {
        let size = self.cell_size();
        [
            self.extent.u_min + (column as f64 + 0.5) * size,
            self.extent.v_min + (row as f64 + 0.5) * size,
        ]
    }

    /// The lowest torque use (share of the derated rating; 1.0 = all of it) over the ways of
    /// reaching cell (`column`, `row`), or `None` when the tool point cannot reach it (or the
    /// cell is off the grid).
    pub fn torque_use(&self, column: usize, row: usize) -> Option<f64> {
        if column >= self.cells || row >= self.cells {
            return None;
        }
        self.values[row * self.cells + column]
    }

    /// Whether the tool point can reach cell (`column`, `row`).
    pub fn reachable(&self, column: usize, row: usize) -> bool {
        self.torque_use(column, row).is_some()
    }

    /// Share of all cells that are reachable, 0 to 1.
    pub fn reachable_share(&self) -> f64 {
        let reachable = self.values.iter().filter(|value| value.is_some()).count();
        reachable as f64 / self.values.len() as f64
    }

    /// Share of the reachable cells whose lowest torque use is above 1 (over the derated
    /// rating), 0 to 1; 0 when nothing is reachable.
    pub fn over_torque_share(&self) -> f64 {
        let reachable = self.values.iter().flatten().count();
        let over = self.values.iter().flatten().filter(|&&u| u > 1.0).count();
        if reachable == 0 {
            0.0
        } else {
            over as f64 / reachable as f64
        }
    }

    /// The farthest horizontal distance from the base axis of a reachable cell centre, in m; 0
    /// when nothing is reachable.
    pub fn farthest_reach(&self) -> f64 {
        let mut farthest: f64 = 0.0;
        for row in 0..self.cells {
            for column in 0..self.cells {
                if self.reachable(column, row) {
                    let [u, v] = self.cell_centre(column, row);
                    let distance = match self.view {
                        MapView::Top { .. } => u.hypot(v),
                        MapView::Side { .. } => u.abs(),
                    };
                    farthest = farthest.max(distance);
                }
            }
        }
        farthest
    }

    /// The envelope's boundary as polylines of (u, v) points in m; a closed loop repeats its
    /// first point at the end.
    pub fn boundary(&self) -> &[Vec<[f64; 2]>] {
        &self.boundary
    }

    /// A point (u, v) of this map's plane in the base frame, in m.
    pub fn point_in_base(&self, u: f64, v: f64) -> Vector3<f64> {
        plane_point(self.view, u, v)
    }
}

fn plane_point(view: MapView, u: f64, v: f64) -> Vector3<f64> {
    match view {
        MapView::Top { height } => Vector3::new(u, v, height),
        MapView::Side { yaw } => Vector3::new(u * yaw.cos(), u * yaw.sin(), v),
    }
}

/// The reach envelope and torque-utilisation map of `arm` in `view`.
///
/// A free tool angle is sampled: for the articulated arms the in-plane tool pitch at
/// [`MapOptions::angle_samples`] evenly spaced values over a whole turn (8 by default, every
/// 45°), starting at straight down (so straight down, level and straight up are among them when
/// the count is a multiple of 4), plus, per point, the tool pointing straight away from the
/// shoulder axis and straight at it — the stretched and folded arm, which set the envelope's
/// outer and inner rims. The 5-joint roll is held at its home position (turned over, that is a
/// tool roll of π; roll moves neither the tool point nor, with the tool's mass on the roll axis,
/// the torques). Gravity torques do not depend on the base yaw, so the top view of an
/// articulated arm reads one radial profile per base side (facing the point or turned over it),
/// sampled every quarter cell, and checks the base limits per cell. For the horizontal arm the
/// tool yaw moves neither the tool point nor the gravity torques, so any in-limit roll serves.
/// General chains are solved per cell by damped least squares on the tool point, starting from the
/// neighbouring cell's answer; only the branch found counts, so a chain's map can miss cells
/// and is slower than the 50 ms of the built-in types.
///
/// Which cells are reachable (built-in types): a cell counts when any point of it is reachable
/// (or lies within an eighth of a cell of a reachable point), with either base side, either
/// elbow branch and any in-limit tool angle when it is free (the fixed one otherwise; the
/// 5-joint roll and the horizontal arm's free roll do not move the tool point). The envelope's
/// edge is drawn from the curves it can lie on (links in line, joints at limits) and the cells
/// between those curves are decided a connected run at a time (`planar_region.rs`), so no
/// reachable point lies in a cell marked out of reach.
///
/// The torque use of one pose is its worst joint's [`torque_use`]; a cell keeps the lowest over
/// the branches and sampled angles that reach its centre, or, where they miss it, the torque
/// use of a pose found reaching the cell. The boundary is traced by marching squares
/// over the cell centres, each crossing placed by bisection along the cell edge with the same
/// reach test, so boundary points lie on the envelope to a few µm rather than half a cell.
///
/// Lengths in m, angles in rad; torque use as a share of the derated rating. Inputs that make no
/// sense (a NaN height or yaw, a negative payload) give a map with no reachable cell; counts are
/// brought into their ranges. Never panics.
///
/// # Example
/// ```
/// # use armwright_kinematics::*;
/// # fn demo(arm: &Arm) {
/// let map = reach_map(arm, &MapView::Top { height: 0.05 }, &MapOptions::default());
/// println!("{:.0} % reachable", map.reachable_share() * 100.0);
/// # }
/// ```
pub fn reach_map(arm: &Arm, view: &MapView, options: &MapOptions) -> ReachMap {
    let cells = options.cells.clamp(2, 2000);
    let payload = options.payload_mass.unwrap_or(arm.payload_mass());
    let context = Context {
        arm,
        chain_reach: match arm.arm_type() {
            ArmType::Chain(_) => chain_reach(arm),
            _ => f64::INFINITY,
        },
        derating: options.derating,
        payload,
        angles: angle_set(options),
        home: home_array(arm),
    };
    let extent = grid_extent(arm, view);
    let mut map = ReachMap {
        view: *view,
        cells,
        extent,
        values: vec![None; cells * cells],
        boundary: Vec::new(),
    };
    let plane_value = match view {
        MapView::Top { height } => *height,
        MapView::Side { yaw } => *yaw,
    };
    if !(plane_value.is_finite() && payload.is_finite() && payload >= 0.0) {
        return map;
    }
    match arm.arm_type() {
        ArmType::Scara(dims) => fill_cells(&mut map, |point| context.scara(dims, point, true)),
        ArmType::Articulated4(dims) | ArmType::Articulated5(dims) => match view {
            MapView::Top { height } => context.articulated_top(dims, *height, &mut map),
            MapView::Side { .. } => {
                fill_cells(&mut map, |point| context.articulated(dims, point, true))
            }
        },
        ArmType::Chain(_) => context.chain(&mut map),
    }
    let centre_reached: Vec<bool> = map.values.iter().map(Option::is_some).collect();
    match (arm.arm_type(), view) {
        (ArmType::Scara(dims), MapView::Top { height }) => {
            context.scara_top_cells(dims, *height, &mut map)
        }
        (ArmType::Scara(dims), MapView::Side { yaw }) => {
            context.scara_side_cells(dims, *yaw, &mut map)
        }
        (ArmType::Articulated4(dims) | ArmType::Articulated5(dims), MapView::Top { height }) => {
            context.articulated_top_cells(dims, *height, &mut map)
        }
        (ArmType::Articulated4(dims) | ArmType::Articulated5(dims), MapView::Side { yaw }) => {
            context.articulated_side_cells(dims, *yaw, &mut map)
        }
        (ArmType::Chain(_), _) => {}
    }
    let reach_test = |point: Vector3<f64>| match arm.arm_type() {
        ArmType::Scara(dims) => context.scara(dims, point, false).is_some(),
        ArmType::Articulated4(dims) | ArmType::Articulated5(dims) => {
            context.articulated(dims, point, false).is_some()
        }
        ArmType::Chain(_) => context.chain_point(point, &context.home).is_some(),
    };
    let traced = traced_cells(&map, &centre_reached);
    map.boundary = trace_boundary(&map, &traced, reach_test);
    map
}

/// The cells the boundary is traced around: those whose centre the sampled angles reach, and
/// the reachable cells all of whose neighbours are reachable (inside the envelope, where the
/// sampled angles may have missed a centre). Cells reachable only at their edge are left out,
/// so the bisection along each crossed edge finds the envelope itself.
fn traced_cells(map: &ReachMap, centre_reached: &[bool]) -> Vec<bool> {
    let n = map.cells;
    (0..n * n)
        .map(|index| {
            let (column, row) = (index % n, index / n);
            let surrounded = (column.saturating_sub(1)..=(column + 1).min(n - 1)).all(|c| {
                (row.saturating_sub(1)..=(row + 1).min(n - 1)).all(|r| map.reachable(c, r))
            });
            centre_reached[index] || surrounded
        })
        .collect()
}

/// Sampled tool angles (rad) for a free angle, or the one fixed angle; at most 360.
fn angle_set(options: &MapOptions) -> AngleSet {
    let mut set = AngleSet {
        values: [0.0; 360],
        sin_cos: [(0.0, 1.0); 360],
        count: 0,
        fixed: false,
    };
    if let Some(angle) = options.tool_angle.filter(|a| a.is_finite()) {
        set.values[0] = angle;
        set.count = 1;
        set.fixed = true;
    } else {
        let count = options.angle_samples.clamp(1, 360);
        for (index, value) in set.values.iter_mut().take(count).enumerate() {
            *value = -FRAC_PI_2 + TAU * index as f64 / count as f64;
        }
        set.count = count;
    }
    for (value, sin_cos) in set.values.iter().zip(set.sin_cos.iter_mut()) {
        *sin_cos = value.sin_cos();
    }
    set
}

struct AngleSet {
    values: [f64; 360],
    sin_cos: [(f64, f64); 360],
    count: usize,
    fixed: bool,
}

impl AngleSet {
    fn as_slice(&self) -> &[f64] {
        &self.values[..self.count]
    }

    /// (sin, cos) of each value, worked out once per map.
    fn sin_cos(&self) -> &[(f64, f64)] {
        &self.sin_cos[..self.count]
    }
}

fn home_array(arm: &Arm) -> [f64; MAX_JOINTS] {
    let mut home = [0.0; MAX_JOINTS];
    for (slot, joint) in home.iter_mut().zip(arm.joints()) {
        *slot = joint.home;
    }
    home
}

/// A square grid centred on the base axis, wide enough for the stretched arm (plus 5 %).
fn grid_extent(arm: &Arm, view: &MapView) -> MapExtent {
    let (reach, centre_height) = match arm.arm_type() {
        ArmType::Scara(d) => {
            let lift = &arm.joints()[2];
            let middle = 0.5 * (lift.min + lift.max);
            (
                d.upper_arm + d.forearm,
                d.base_height - d.tool_drop + middle,
            )
        }
        ArmType::Articulated4(d) | ArmType::Articulated5(d) => {
            (d.upper_arm + d.forearm + d.wrist_to_tool, d.base_height)
        }
        ArmType::Chain(_) => (chain_reach(arm), 0.0),
    };
    let half = reach * 1.05;
    match view {
        MapView::Top { .. } => MapExtent {
            u_min: -half,
            u_max: half,
            v_min: -half,
            v_max: half,
        },
        MapView::Side { .. } => MapExtent {
            u_min: -half,
            u_max: half,
            v_min: centre_height - half,
            v_max: centre_height + half,
        },
    }
}

/// A bound on how far a chain's tool point can get from the base origin, in m: the sum of the
/// distances between successive joint origins and the tool point at zero, plus every prismatic
/// joint's longest travel.
fn chain_reach(arm: &Arm) -> f64 {
    let mut reach = 0.0;
    for joint in arm.joints() {
        reach += joint.origin.translation.vector.norm();
        if joint.kind == JointKind::Prismatic {
            reach += joint.min.abs().max(joint.max.abs());
        }
    }
    (reach + arm.tool_offset().translation.vector.norm()).max(1e-3)
}

/// Fills each cell with `value(centre in the base frame)`.
fn fill_cells(map: &mut ReachMap, mut value: impl FnMut(Vector3<f64>) -> Option<f64>) {
    for row in 0..map.cells {
        for column in 0..map.cells {
            let [u, v] = map.cell_centre(column, row);
            map.values[row * map.cells + column] = value(map.point_in_base(u, v));
        }
    }
}

struct Context<'a> {
    arm: &'a Arm,
    /// Bound on a chain's reach from the base origin, in m (infinite for built-in types).
    chain_reach: f64,
    derating: f64,
    payload: f64,
    angles: AngleSet,
    home: [f64; MAX_JOINTS],
}

impl Context<'_> {
    /// Torque use of one pose: the worst joint's share.
    fn pose_use(&self, positions: &[f64]) -> Option<f64> {
        let efforts = gravity_torques(self.arm, positions, self.payload).ok()?;
        Some(torque_use(self.arm, &efforts, self.derating).max_abs())
    }

    /// Horizontal arm at a point: lowest torque use over both elbow branches, or with
    /// `with_torque` false any reachable branch's 0.
    fn scara(&self, dims: &ScaraDims, point: Vector3<f64>, with_torque: bool) -> Option<f64> {
        let joints = self.arm.joints();
        let lift =
            fit_into_limits(&joints[2], point.z - dims.base_height + dims.tool_drop, 0.0).ok()?;
        let solutions =
            planar_two_link::solve(dims.upper_arm, dims.forearm, point.x, point.y, self.home[0])
                .ok()?;
        let mut best: Option<f64> = None;
        for (shoulder, elbow) in [solutions.bent_positive, solutions.bent_negative] {
            let Ok(shoulder) = fit_into_limits(&joints[0], shoulder, self.home[0]) else {
                continue;
            };
            let Ok(elbow) = fit_into_limits(&joints[1], elbow, self.home[1]) else {
                continue;
            };
            let roll = match (self.angles.fixed, self.angles.values[0]) {
                (true, yaw) => match fit_into_limits(&joints[3], yaw - shoulder - elbow, 0.0) {
                    Ok(roll) => roll,
                    Err(_) => continue,
                },
                (false, _) => self.home[3],
            };
            if !with_torque {
                return Some(0.0);
            }
            let value = self.pose_use(&[shoulder, elbow, lift, roll])?;
            best = Some(best.map_or(value, |known| known.min(value)));
        }
        best
    }

    /// Articulated arm at a point in the base frame: lowest torque use over the base facing
    /// the point or turned over it, elbow up or down, and the sampled pitches.
    fn articulated(
        &self,
        dims: &ArticulatedDims,
        point: Vector3<f64>,
        with_torque: bool,
    ) -> Option<f64> {
        let reach = point.x.hypot(point.y);
        let facing = if reach <= crate::ik::ON_BASE_AXIS {
            self.home[0]
        } else {
            point.y.atan2(point.x)
        };
        let base = &self.arm.joints()[0];
        let mut best: Option<f64> = None;
        for (yaw, in_plane) in [(facing, reach), (facing + PI, -reach)] {
            if fit_into_limits(base, yaw, self.home[0]).is_err() {
                continue;
            }
            if let Some(value) = self.in_plane(dims, in_plane, point.z, with_torque) {
                if !with_torque {
                    return Some(0.0);
                }
                best = Some(best.map_or(value, |known: f64| known.min(value)));
            }
        }
        best
    }

    /// The arm's own plane: the tool point at signed distance `in_plane` from the base axis
    /// and height `height` (m), base yaw left out (gravity torques do not depend on it).
    fn in_plane(
        &self,
        dims: &ArticulatedDims,
        in_plane: f64,
        height: f64,
        with_torque: bool,
    ) -> Option<f64> {
        let joints = self.arm.joints();
        let mut best: Option<f64> = None;
        let mut pose = self.home;
        // Besides the even samples, a free pitch also tries the tool pointing straight away
        // from the shoulder axis and straight at it: the stretched and folded arm, which reach
        // farthest and nearest, so the envelope's rims do not shrink between samples.
        let away = (height - dims.base_height).atan2(in_plane);
        let aimed = [away, away + PI];
        let extra: &[f64] = if self.angles.fixed { &[] } else { &aimed };
        let even = self.angles.as_slice().iter().zip(self.angles.sin_cos());
        let aimed_sin_cos = [away.sin_cos(), (away + PI).sin_cos()];
        for (&angle, &(sin, cos)) in even.chain(extra.iter().zip(&aimed_sin_cos)) {
            // A fixed pitch is measured outwards from the base axis: turned over it is π − pitch,
            // whose cosine changes sign.
            let (pitch, cos) = if self.angles.fixed && in_plane < 0.0 {
                (PI - angle, -cos)
            } else {
                (angle, cos)
            };
            let wrist_out = in_plane - dims.wrist_to_tool * cos;
            let wrist_up = height - dims.base_height - dims.wrist_to_tool * sin;
            let Ok(solutions) = planar_two_link::solve(
                dims.upper_arm,
                dims.forearm,
                wrist_out,
                wrist_up,
                self.home[1],
            ) else {
                continue;
            };
            for (shoulder, elbow) in [solutions.bent_positive, solutions.bent_negative] {
                let fitted = (
                    fit_into_limits(&joints[1], shoulder, self.home[1]),
                    fit_into_limits(&joints[2], elbow, self.home[2]),
                    fit_into_limits(&joints[3], pitch - shoulder - elbow, self.home[3]),
                );
                let (Ok(shoulder), Ok(elbow), Ok(wrist)) = fitted else {
                    continue;
                };
                if !with_torque {
                    return Some(0.0);
                }
                pose[1] = shoulder;
                pose[2] = elbow;
                pose[3] = wrist;
                if let Some(value) = self.pose_use(&pose[..self.arm.joint_count()]) {
                    best = Some(best.map_or(value, |known: f64| known.min(value)));
                }
            }
        }
        best
    }

    /// Top view of an articulated arm. Gravity torques do not depend on the base yaw, so the
    /// lowest torque use depends only on the distance from the base axis and on whether the
    /// base may face the point or turn over it there: one radial profile per side, four
    /// samples per cell width, serves every cell.
    fn articulated_top(&self, dims: &ArticulatedDims, height: f64, map: &mut ReachMap) {
        let size = map.cell_size();
        let step = size / 4.0;
        let farthest = map.extent.u_max.hypot(map.extent.v_max) + size;
        let samples = ((farthest / step).ceil() as usize).clamp(2, 40_000);
        let profile = |sign: f64| -> Vec<Option<f64>> {
            (0..=samples)
                .map(|k| self.in_plane(dims, sign * k as f64 * step, height, true))
                .collect()
        };
        let facing = profile(1.0);
        let turned = profile(-1.0);
        let base = &self.arm.joints()[0];
        for row in 0..map.cells {
            for column in 0..map.cells {
                let [x, y] = map.cell_centre(column, row);
                let reach = x.hypot(y);
                let yaw = y.atan2(x);
                let k = ((reach / step).round() as usize).min(samples);
                let mut best: Option<f64> = None;
                for (side_yaw, profile) in [(yaw, &facing), (yaw + PI, &turned)] {
                    if let Some(value) = profile[k]
                        && fit_into_limits(base, side_yaw, self.home[0]).is_ok()
                    {
                        best = Some(best.map_or(value, |known: f64| known.min(value)));
                    }
                }
                map.values[row * map.cells + column] = best;
            }
        }
    }

    /// The shoulder, elbow and wrist pitch of an articulated arm as a planar chain in its own
    /// plane (x = signed distance from the base axis, y = height above the shoulder), with the
    /// tool angle for points on the `side` (+1 ahead of the base axis, −1 behind) of it.
    fn articulated_chain(&self, dims: &ArticulatedDims, side: f64) -> PlanarChain {
        let joints = self.arm.joints();
        let angle = self.angles.fixed.then(|| {
            // A fixed pitch is measured outwards from the base axis, as in `in_plane`.
            let pitch = self.angles.values[0];
            if side < 0.0 { PI - pitch } else { pitch }
        });
        PlanarChain {
            lengths: [dims.upper_arm, dims.forearm, dims.wrist_to_tool],
            limits: [1, 2, 3].map(|i| (joints[i].min, joints[i].max)),
            angle,
            idle_w: self.home[3],
        }
    }

    /// The chains serving each half of an articulated arm's plane: one for both halves when the
    /// pitch is free, one per half when it is fixed.
    fn articulated_pieces(&self, dims: &ArticulatedDims) -> Vec<(PlanarChain, Option<f64>)> {
        if self.angles.fixed {
            vec![
                (self.articulated_chain(dims, 1.0), Some(1.0)),
                (self.articulated_chain(dims, -1.0), Some(-1.0)),
            ]
        } else {
            vec![(self.articulated_chain(dims, 1.0), None)]
        }
    }

    /// Torque use of an articulated pose given by its shoulder, elbow and wrist (rad).
    fn articulated_use(&self, q: [f64; 3]) -> Option<f64> {
        let mut pose = self.home;
        pose[1..4].copy_from_slice(&q);
        self.pose_use(&pose[..self.arm.joint_count()])
    }

    /// Fills the cells that hold a reachable point but whose centre the sampled angles missed,
    /// with the torque use of the pose found for them.
    fn fill_found(
        &self,
        map: &mut ReachMap,
        found: &[Option<[f64; 3]>],
        use_of: impl Fn([f64; 3]) -> Option<f64>,
    ) {
        for (value, pose) in map.values.iter_mut().zip(found) {
            if value.is_none()
                && let Some(pose) = pose
            {
                *value = use_of(*pose);
            }
        }
    }

    /// Side view of an articulated arm: every cell holding a point the arm reaches with the
    /// base facing the plane's direction or turned over it, any in-limit pitch (or the fixed
    /// one).
    fn articulated_side_cells(&self, dims: &ArticulatedDims, yaw: f64, map: &mut ReachMap) {
        let base = &self.arm.joints()[0];
        let n = map.cells;
        let mut found = vec![None; n * n];
        for (sign, base_yaw) in [(1.0, yaw), (-1.0, yaw + PI)] {
            if fit_into_limits(base, base_yaw, self.home[0]).is_err() {
                continue;
            }
            for (chain, half) in self.articulated_pieces(dims) {
                let grid = GridView {
                    cells: n,
                    u_min: map.extent.u_min,
                    v_min: map.extent.v_min,
                    size: map.cell_size(),
                    sign,
                    v_offset: dims.base_height,
                    half,
                };
                mark_cells(
                    &chain,
                    &grid,
                    map.cell_size() * BOUNDARY_SPACING,
                    DENSE_ANGLE_SAMPLES,
                    &mut found,
                );
            }
        }
        self.fill_found(map, &found, |q| self.articulated_use(q));
    }

    /// Top view of an articulated arm: where the plane at `height` cuts the arm's own plane,
    /// swept round by the base within its limits.
    fn articulated_top_cells(&self, dims: &ArticulatedDims, height: f64, map: &mut ReachMap) {
        let spacing = map.cell_size() * BOUNDARY_SPACING;
        let farthest = map.extent.u_max.hypot(map.extent.v_max) + map.cell_size();
        let level = height - dims.base_height;
        let mut pieces: Vec<SlicePiece> = Vec::new();
        for (chain, half) in self.articulated_pieces(dims) {
            let range = match half {
                Some(side) if side > 0.0 => (0.0, farthest),
                Some(_) => (-farthest, 0.0),
                None => (-farthest, farthest),
            };
            pieces.extend(slice(
                &chain,
                [0.0, level],
                [1.0, 0.0],
                range,
                spacing,
                DENSE_ANGLE_SAMPLES,
            ));
        }
        let uses: Vec<Option<f64>> = pieces
            .iter()
            .map(|piece| self.articulated_use(piece.pose))
            .collect();
        let base = &self.arm.joints()[0];
        let whole_turn = base.max - base.min >= TAU;
        let yaw_allowed = |(from, to): (f64, f64)| {
            whole_turn
                || (-2..=2).any(|turn| {
                    let shift = TAU * f64::from(turn);
                    from <= base.max + shift && to >= base.min + shift
                })
        };
        for row in 0..map.cells {
            for column in 0..map.cells {
                let index = row * map.cells + column;
                if map.values[index].is_some() {
                    continue;
                }
                let (radii, yaws) = polar_extent(map, column, row);
                let mut best: Option<f64> = None;
                for (piece, value) in pieces.iter().zip(&uses) {
                    // Ahead of the base axis the base faces the cell; behind it, turned over.
                    let ahead = piece.high >= 0.0
                        && piece.high >= radii.0
                        && piece.low.max(0.0) <= radii.1
                        && yaw_allowed(yaws);
                    let behind = piece.low <= 0.0
                        && -piece.low >= radii.0
                        && (-piece.high).max(0.0) <= radii.1
                        && yaw_allowed((yaws.0 + PI, yaws.1 + PI));
                    if (ahead || behind)
                        && let Some(value) = value
                    {
                        best = Some(best.map_or(*value, |known: f64| known.min(*value)));
                    }
                }
                map.values[index] = best;
            }
        }
    }

    /// The shoulder, elbow and roll of the horizontal arm as a planar chain seen from above
    /// (the tool point on the roll axis), with the fixed tool yaw if any.
    fn scara_chain(&self, dims: &ScaraDims) -> PlanarChain {
        let joints = self.arm.joints();
        PlanarChain {
            lengths: [dims.upper_arm, dims.forearm, 0.0],
            limits: [0, 1, 3].map(|i| (joints[i].min, joints[i].max)),
            angle: self.angles.fixed.then(|| self.angles.values[0]),
            idle_w: self.home[3],
        }
    }

    /// Torque use of a horizontal-arm pose given by shoulder, elbow and roll (rad) and the lift.
    fn scara_use(&self, q: [f64; 3], lift: f64) -> Option<f64> {
        self.pose_use(&[q[0], q[1], lift, q[2]])
    }

    /// Top view of the horizontal arm: the lift sets the height, the two links the rest.
    fn scara_top_cells(&self, dims: &ScaraDims, height: f64, map: &mut ReachMap) {
        let lift = &self.arm.joints()[2];
        let Ok(lift) = fit_into_limits(lift, height - dims.base_height + dims.tool_drop, 0.0)
        else {
            return;
        };
        let n = map.cells;
        let grid = GridView {
            cells: n,
            u_min: map.extent.u_min,
            v_min: map.extent.v_min,
            size: map.cell_size(),
            sign: 1.0,
            v_offset: 0.0,
            half: None,
        };
        let mut found = vec![None; n * n];
        mark_cells(
            &self.scara_chain(dims),
            &grid,
            map.cell_size() * BOUNDARY_SPACING,
            DENSE_ANGLE_SAMPLES,
            &mut found,
        );
        self.fill_found(map, &found, |q| self.scara_use(q, lift));
    }

    /// Side view of the horizontal arm: where the vertical plane cuts the links' reach, times
    /// the lift's travel.
    fn scara_side_cells(&self, dims: &ScaraDims, yaw: f64, map: &mut ReachMap) {
        let lift = &self.arm.joints()[2];
        let lowest = dims.base_height - dims.tool_drop + lift.min;
        let highest = dims.base_height - dims.tool_drop + lift.max;
        let farthest = map.extent.u_max.hypot(map.extent.v_max) + map.cell_size();
        let pieces = slice(
            &self.scara_chain(dims),
            [0.0, 0.0],
            [yaw.cos(), yaw.sin()],
            (-farthest, farthest),
            map.cell_size() * BOUNDARY_SPACING,
            DENSE_ANGLE_SAMPLES,
        );
        let size = map.cell_size();
        for row in 0..map.cells {
            let v = (
                map.extent.v_min + row as f64 * size,
                map.extent.v_min + (row + 1) as f64 * size,
            );
            if v.1 < lowest || v.0 > highest {
                continue;
            }
            let lift_here =
                (0.5 * (v.0 + v.1) - dims.base_height + dims.tool_drop).clamp(lift.min, lift.max);
            for column in 0..map.cells {
                let index = row * map.cells + column;
                if map.values[index].is_some() {
                    continue;
                }
                let u = (
                    map.extent.u_min + column as f64 * size,
                    map.extent.u_min + (column + 1) as f64 * size,
                );
                map.values[index] = pieces
                    .iter()
                    .filter(|piece| piece.high >= u.0 && piece.low <= u.1)
                    .filter_map(|piece| self.scara_use(piece.pose, lift_here))
                    .reduce(f64::min);
            }
        }
    }

    /// A chain: damped least squares per cell in a back-and-forth raster, each start from the
    /// last cell's answer.
    fn chain(&self, map: &mut ReachMap) {
        let count = self.arm.joint_count();
        let mut near = self.home;
        for row in 0..map.cells {
            for step in 0..map.cells {
                let column = if row % 2 == 0 {
                    step
                } else {
                    map.cells - 1 - step
                };
                let [u, v] = map.cell_centre(column, row);
                let point = map.point_in_base(u, v);
                if let Some(found) = self.chain_point(point, &near) {
                    near[..count].copy_from_slice(&found[..count]);
                    map.values[row * map.cells + column] = self.pose_use(&found[..count]);
                }
            }
        }
    }

    fn chain_point(
        &self,
        point: Vector3<f64>,
        near: &[f64; MAX_JOINTS],
    ) -> Option<[f64; MAX_JOINTS]> {
        // Past the bound on the chain's reach no start can succeed.
        if point.norm() > self.chain_reach {
            return None;
        }
        let options = IkOptions {
            max_iterations: 30,
            restarts: 1,
            position_tolerance: 1e-6,
            ..IkOptions::default()
        };
        let count = self.arm.joint_count();
        let solutions = solve_ik(self.arm, &IkTarget::at(point), &near[..count], &options).ok()?;
        let mut found = [0.0; MAX_JOINTS];
        found[..count].copy_from_slice(solutions.as_slice().first()?.positions());
        Some(found)
    }
}

/// Spacing of the points walked along the boundary curves, as a share of a cell: a cell within
/// half of this of a reachable point is marked reachable.
const BOUNDARY_SPACING: f64 = 0.25;

/// Tool angles tried (evenly spaced over a turn) when deciding whether a point can be reached
/// with a free pitch: a quarter degree apart.
const DENSE_ANGLE_SAMPLES: usize = 1440;

/// The range of distances from the base axis (m) and of directions (rad, from +X towards +Y)
/// covering cell (`column`, `row`) of a top view; every direction when the cell holds the axis.
fn polar_extent(map: &ReachMap, column: usize, row: usize) -> ((f64, f64), (f64, f64)) {
    let size = map.cell_size();
    let x = (
        map.extent.u_min + column as f64 * size,
        map.extent.u_min + (column + 1) as f64 * size,
    );
    let y = (
        map.extent.v_min + row as f64 * size,
        map.extent.v_min + (row + 1) as f64 * size,
    );
    let nearest_x = 0.0_f64.clamp(x.0, x.1);
    let nearest_y = 0.0_f64.clamp(y.0, y.1);
    let corners = [(x.0, y.0), (x.1, y.0), (x.0, y.1), (x.1, y.1)];
    let farthest = corners
        .iter()
        .map(|(cx, cy)| cx.hypot(*cy))
        .fold(0.0, f64::max);
    let nearest = nearest_x.hypot(nearest_y);
    if nearest == 0.0 {
        return ((0.0, farthest), (-PI, PI));
    }
    let middle = (0.5 * (y.0 + y.1)).atan2(0.5 * (x.0 + x.1));
    let (mut from, mut to) = (0.0_f64, 0.0_f64);
    for (cx, cy) in corners {
        let off = (cy.atan2(cx) - middle + PI).rem_euclid(TAU) - PI;
        from = from.min(off);
        to = to.max(off);
    }
    ((nearest, farthest), (middle + from, middle + to))
}

/// Marching squares over the cell centres; each crossing is placed by bisection along its edge
/// with `reachable`, then the segments are joined into polylines.
fn trace_boundary(
    map: &ReachMap,
    traced: &[bool],
    reachable: impl Fn(Vector3<f64>) -> bool,
) -> Vec<Vec<[f64; 2]>> {
    let n = map.cells;
    let inside = |column: usize, row: usize| traced[row * n + column];
    // Edge keys: horizontal edge between (c, r) and (c + 1, r) → 2·(r·n + c); vertical edge
    // between (c, r) and (c, r + 1) → 2·(r·n + c) + 1.
    let horizontal = |column: usize, row: usize| 2 * (row * n + column);
    let vertical = |column: usize, row: usize| 2 * (row * n + column) + 1;
    let mut segments: Vec<(usize, usize)> = Vec::new();
    for row in 0..n.saturating_sub(1) {
        for column in 0..n.saturating_sub(1) {
            let corners = [
                inside(column, row),
                inside(column + 1, row),
                inside(column + 1, row + 1),
                inside(column, row + 1),
            ];
            let bottom = horizontal(column, row);
            let right = vertical(column + 1, row);
            let top = horizontal(column, row + 1);
            let left = vertical(column, row);
            let mut crossed = [0usize; 4];
            let mut count = 0;
            for (edge, (a, b)) in
                [bottom, right, top, left]
                    .into_iter()
                    .zip([(0, 1), (1, 2), (2, 3), (3, 0)])
            {
                if corners[a] != corners[b] {
                    crossed[count] = edge;
                    count += 1;
                }
            }
            match count {
                2 => segments.push((crossed[0], crossed[1])),
                4 => {
                    // A saddle: keep the reachable corners apart (join each crossing to the
                    // next one round the square on the unreachable side).
                    if corners[0] {
                        segments.push((bottom, right));
                        segments.push((top, left));
                    } else {
                        segments.push((left, bottom));
                        segments.push((right, top));
                    }
                }
                _ => {}
            }
        }
    }
    let mut crossing_points: HashMap<usize, [f64; 2]> = HashMap::new();
    let mut point_of = |edge: usize| -> [f64; 2] {
        *crossing_points
            .entry(edge)
            .or_insert_with(|| edge_crossing(map, traced, edge, &reachable))
    };
    let mut ends: HashMap<usize, Vec<usize>> = HashMap::new();
    for (index, (a, b)) in segments.iter().enumerate() {
        ends.entry(*a).or_default().push(index);
        ends.entry(*b).or_default().push(index);
    }
    let mut used = vec![false; segments.len()];
    let mut polylines = Vec::new();
    for first in 0..segments.len() {
        if used[first] {
            continue;
        }
        // Walk backwards to an open end (if any), then forwards collecting edges.
        let mut start_edge = segments[first].0;
        let mut through = first;
        let mut visited = 0;
        loop {
            let next = ends
                .get(&start_edge)
                .and_then(|list| list.iter().copied().find(|&s| s != through && !used[s]));
            match next {
                Some(segment) if segment != first && visited < segments.len() => {
                    let (a, b) = segments[segment];
                    start_edge = if a == start_edge { b } else { a };
                    through = segment;
                    visited += 1;
                }
                _ => break,
            }
        }
        let mut line = vec![point_of(start_edge)];
        let mut edge = start_edge;
        let mut from = usize::MAX;
        loop {
            let next = ends
                .get(&edge)
                .and_then(|list| list.iter().copied().find(|&s| s != from && !used[s]));
            let Some(segment) = next else { break };
            used[segment] = true;
            let (a, b) = segments[segment];
            edge = if a == edge { b } else { a };
            from = segment;
            line.push(point_of(edge));
        }
        if line.len() > 1 {
            polylines.push(line);
        }
    }
    polylines
}

/// Where the envelope crosses the edge between two cell centres, by bisection (12 halvings).
fn edge_crossing(
    map: &ReachMap,
    traced: &[bool],
    edge: usize,
    reachable: &impl Fn(Vector3<f64>) -> bool,
) -> [f64; 2] {
    let n = map.cells;
    let cell = edge / 2;
    let (column, row) = (cell % n, cell / n);
    let (next_column, next_row) = if edge.is_multiple_of(2) {
        (column + 1, row)
    } else {
        (column, row + 1)
    };
    let a = map.cell_centre(column, row);
    let b = map.cell_centre(next_column.min(n - 1), next_row.min(n - 1));
    let a_inside = traced[row * n + column];
    let (mut low, mut high) = (0.0, 1.0);
    let at = |t: f64| [a[0] + (b[0] - a[0]) * t, a[1] + (b[1] - a[1]) * t];
    for _ in 0..12 {
        let middle = 0.5 * (low + high);
        let [u, v] = at(middle);
        if reachable(map.point_in_base(u, v)) == a_inside {
            low = middle;
        } else {
            high = middle;
        }
    }
    at(0.5 * (low + high))
}
