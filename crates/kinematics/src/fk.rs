//! Forward kinematics: joint positions → every link frame and the tool-point pose.

use std::f64::consts::FRAC_PI_2;

use nalgebra::{Isometry3, Quaternion, SMatrix, Translation3, Unit, UnitQuaternion, Vector3};

use crate::arm::{Arm, Joint, JointKind, MAX_JOINTS};
use crate::error::{KinematicsError, check_pose};

/// Every joint's frame and the tool frame for one pose, in the base frame (m). Lives on the
/// stack: no allocation.
#[derive(Debug, Clone, Copy)]
pub struct ChainPose {
    frames: [Isometry3<f64>; MAX_JOINTS],
    count: usize,
    tool: Isometry3<f64>,
}

impl ChainPose {
    /// Each joint's frame after its motion (the frame its link is described in), base first.
    pub fn frames(&self) -> &[Isometry3<f64>] {
        &self.frames[..self.count]
    }

    /// The tool frame; its origin is the tool point.
    pub fn tool(&self) -> &Isometry3<f64> {
        &self.tool
    }

    /// Joint `index`'s axis in the base frame (unit) and a point on it (m).
    pub fn joint_axis(&self, arm: &Arm, index: usize) -> (Vector3<f64>, Vector3<f64>) {
        let frame = &self.frames[index];
        let axis = frame.rotation * arm.joints()[index].axis.into_inner();
        (axis, frame.translation.vector)
    }
}

/// Forward kinematics: every link frame and the tool frame for the given joint positions.
///
/// `positions` are in rad (revolute) or m (prismatic), one per movable joint in chain order;
/// frames are in the base frame, in m.
///
/// # Errors
/// [`KinematicsError`] if the count is wrong or a position is not finite.
pub fn forward(arm: &Arm, positions: &[f64]) -> Result<ChainPose, KinematicsError> {
    check_pose(arm.joint_count(), positions)?;
    let mut frames = [Isometry3::identity(); MAX_JOINTS];
    let mut current = Isometry3::identity();
    for (index, (joint, &q)) in arm.joints().iter().zip(positions).enumerate() {
        current = joint_frame(&current, joint, q);
        frames[index] = current;
    }
    Ok(ChainPose {
        frames,
        count: arm.joint_count(),
        tool: compose(&current, arm.tool_offset()),
    })
}

/// The tool-point pose for the given joint positions, in the base frame (m).
///
/// `positions` are in rad (revolute) or m (prismatic), one per movable joint in chain order.
/// Runs on the arm's precomputed tool chain: no allocation, no per-joint rotation of the
/// origins, joints taken two at a time, and one half-angle sine and cosine per joint.
///
/// # Errors
/// [`KinematicsError`] if the count is wrong or a position is not finite.
#[inline]
pub fn tool_pose(arm: &Arm, positions: &[f64]) -> Result<Isometry3<f64>, KinematicsError> {
    let chain = arm.tool_chain();
    if positions.len() == arm.joint_count()
        && let Some(pose) = chain.tool_pose_within_half_turns(positions)
    {
        return Ok(pose);
    }
    check_pose(arm.joint_count(), positions)?;
    Ok(chain.tool_pose(positions))
}

/// One joint of a [`ToolChain`]: a shift (m) in the frame before the joint, then a turn about
/// or a slide along `axis` (unit), both with every earlier origin's rotation folded in.
#[derive(Debug, Clone, Copy, PartialEq)]
struct ToolStep {
    shift: [f64; 3],
    axis: [f64; 3],
    /// Half-angle per unit position: ½ for a revolute joint, 0 for a prismatic one.
    turn: f64,
    /// Slide per unit position: 0 for a revolute joint, 1 for a prismatic one.
    slide: f64,
    /// Whether the joint slides (`slide` is 1), as a flag the hot path tests in one step.
    slides: bool,
}

/// Two joints in a row of a [`ToolChain`], taken as one step by the tool pose, with the
/// constants their product needs. With a and b the two axes and s₁, s₂ the two shifts, the
/// pair moves by s₁ + R(a, θ₁)·s₂ and turns by (c₁, s₁·a)·(c₂, s₂·b) (half-angle sines and
/// cosines); the second shift turned about the first axis is
/// s₂ + sin θ₁·(a × s₂) + (1 − cos θ₁)·a × (a × s₂) (Rodrigues' formula).
#[derive(Debug, Clone, Copy, PartialEq)]
struct ToolPair {
    /// s₁ + s₂ (m).
    shift: [f64; 3],
    /// a × s₂ and a × (a × s₂) (m).
    shift_turn: [[f64; 3]; 2],
    /// a and b, unit.
    axes: [[f64; 3]; 2],
    /// a · b.
    dot: f64,
    /// a × b.
    cross: [f64; 3],
    /// a × (a × b): with a × b, the second axis turned about the first, for a second joint that
    /// slides.
    cross_twice: [f64; 3],
}

/// The last joint of a chain of odd length together with the tool offset (shift t, turn T):
/// the joint moves by s + R(a, θ)·t and turns by (c, s·a)·T = c·T + s·(0, a)·T.
#[derive(Debug, Clone, Copy, PartialEq)]
struct ToolEnd {
    /// s + t (m).
    shift: [f64; 3],
    /// a × t and a × (a × t) (m).
    shift_turn: [[f64; 3]; 2],
    /// (0, a)·T as (w, x, y, z).
    axis_turn: [f64; 4],
}

/// The last pair of a chain of even length together with the tool offset's turn T: the pair
/// turns by (c₁, s₁·a)·(c₂, s₂·b)·T = c₁c₂·T + c₁s₂·(0, b)·T + s₁c₂·(0, a)·T + s₁s₂·(0, a)(0, b)·T,
/// four constant quaternions. The tool shift t then goes through the whole turn, T included,
/// as T⁻¹·t.
#[derive(Debug, Clone, Copy, PartialEq)]
struct ToolEndPair {
    /// T, (0, b)·T, (0, a)·T and (0, a)(0, b)·T, each as (w, x, y, z).
    turns: [[f64; 4]; 4],
    /// T⁻¹·t (m).
    tool_shift: [f64; 3],
}

/// The chain as the tool pose needs it, worked out once per arm.
///
/// A joint's frame is `previous · origin · motion(q)`. Writing each frame turned by the product
/// of the origin rotations so far, `Cᵢ = R₁…Rᵢ` (frameᵢ · Cᵢ⁻¹ … ), every origin becomes a pure
/// shift `C₍ᵢ₋₁₎·tᵢ` and every axis `Cᵢ·aᵢ`; the tool offset absorbs `Cₙ`. The tool pose is then
/// a plain product of shifts and turns about fixed axes, with no origin rotation left to
/// multiply by, whatever the arm type.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct ToolChain {
    steps: [ToolStep; MAX_JOINTS],
    /// Joints 1 and 2, 3 and 4, … as pairs.
    pairs: [ToolPair; MAX_JOINTS / 2],
    /// The last joint with the tool offset, when the joint count is odd.
    end: ToolEnd,
    /// The last pair with the tool offset's turn, when the joint count is even.
    end_pair: ToolEndPair,
    count: usize,
    tool_shift: [f64; 3],
    /// The tool offset's rotation as a quaternion (w, x, y, z).
    tool_turn: [f64; 4],
}

impl ToolChain {
    /// The chain of `joints` (in order) ending in the `tool` offset from the last joint.
    pub(crate) fn of(joints: &[Joint], tool: &Isometry3<f64>) -> ToolChain {
        let mut steps = [ToolStep {
            shift: [0.0; 3],
            axis: [0.0; 3],
            turn: 0.0,
            slide: 0.0,
            slides: false,
        }; MAX_JOINTS];
        let mut turn = UnitQuaternion::identity();
        for (step, joint) in steps.iter_mut().zip(joints) {
            let shift = turn * joint.origin.translation.vector;
            turn *= joint.origin.rotation;
            let axis = turn * joint.axis.into_inner();
            let prismatic = joint.kind == JointKind::Prismatic;
            *step = ToolStep {
                shift: [shift.x, shift.y, shift.z],
                axis: [axis.x, axis.y, axis.z],
                turn: if prismatic { 0.0 } else { 0.5 },
                slide: if prismatic { 1.0 } else { 0.0 },
                slides: prismatic,
            };
        }
        let tool_shift = turn * tool.translation.vector;
        let tool_turn = (turn * tool.rotation).into_inner();
        let count = joints.len().min(MAX_JOINTS);
        let vector = |v: [f64; 3]| Vector3::from(v);
        let array = |v: Vector3<f64>| [v.x, v.y, v.z];
        let mut pairs = [ToolPair {
            shift: [0.0; 3],
            shift_turn: [[0.0; 3]; 2],
            axes: [[0.0; 3]; 2],
            dot: 0.0,
            cross: [0.0; 3],
            cross_twice: [0.0; 3],
        }; MAX_JOINTS / 2];
        for (pair, two) in pairs.iter_mut().zip(steps[..count].chunks_exact(2)) {
            let (a, b) = (vector(two[0].axis), vector(two[1].axis));
            let second = vector(two[1].shift);
            let cross = a.cross(&b);
            *pair = ToolPair {
                shift: array(vector(two[0].shift) + second),
                shift_turn: [array(a.cross(&second)), array(a.cross(&a.cross(&second)))],
                axes: [two[0].axis, two[1].axis],
                dot: a.dot(&b),
                cross: array(cross),
                cross_twice: array(a.cross(&cross)),
            };
        }
        let last = &steps[count.saturating_sub(1)];
        let (a, t) = (vector(last.axis), tool_shift);
        let tool_vector = tool_turn.imag();
        let axis_turn = a * tool_turn.w + a.cross(&tool_vector);
        let end = ToolEnd {
            shift: array(vector(last.shift) + t),
            shift_turn: [array(a.cross(&t)), array(a.cross(&a.cross(&t)))],
            axis_turn: [-a.dot(&tool_vector), axis_turn.x, axis_turn.y, axis_turn.z],
        };
        let end_pair = {
            let (a, b) = (
                vector(pairs[(count / 2).saturating_sub(1)].axes[0]),
                vector(pairs[(count / 2).saturating_sub(1)].axes[1]),
            );
            let pure = |v: Vector3<f64>| Quaternion::new(0.0, v.x, v.y, v.z);
            let turn = tool_turn;
            let as_array = |q: Quaternion<f64>| [q.w, q.i, q.j, q.k];
            let shift = UnitQuaternion::new_unchecked(tool_turn).inverse() * tool_shift;
            ToolEndPair {
                turns: [
                    as_array(turn),
                    as_array(pure(b) * turn),
                    as_array(pure(a) * turn),
                    as_array(pure(a) * pure(b) * turn),
                ],
                tool_shift: array(shift),
            }
        };
        ToolChain {
            steps,
            pairs,
            end,
            end_pair,
            count,
            tool_shift: [tool_shift.x, tool_shift.y, tool_shift.z],
            tool_turn: [tool_turn.w, tool_turn.i, tool_turn.j, tool_turn.k],
        }
    }

    /// The tool pose for `positions` (rad or m, one per joint, already checked).
    #[inline]
    pub(crate) fn tool_pose(&self, positions: &[f64]) -> Isometry3<f64> {
        self.pose_for(positions, Angles::Any)
            .unwrap_or_else(|| self.tool_at([0.0; 3], (1.0, 0.0, 0.0, 0.0)))
    }

    /// The tool pose for `positions` (rad or m, one per joint, not checked) when every turning
    /// joint lies within ±π rad and every position is finite; `None` otherwise. The range test
    /// is the finiteness check too, so the usual pose is checked and placed in one pass.
    #[inline]
    pub(crate) fn tool_pose_within_half_turns(&self, positions: &[f64]) -> Option<Isometry3<f64>> {
        self.pose_for(positions, Angles::WithinHalfTurns)
    }

    /// [`ToolChain::pose_by_pairs`] for the chain's joint count.
    #[inline(always)]
    fn pose_for(&self, positions: &[f64], angles: Angles) -> Option<Isometry3<f64>> {
        // One straight run of arithmetic per joint count, which the compiler lays out without
        // a loop or an index check.
        const _: () = assert!(MAX_JOINTS == 8, "one arm per joint count below");
        match self.count.min(positions.len()) {
            0 => Some(self.tool_at([0.0; 3], (1.0, 0.0, 0.0, 0.0))),
            1 => self.pose_by_pairs::<1>(positions, angles),
            2 => self.pose_by_pairs::<2>(positions, angles),
            3 => self.pose_by_pairs::<3>(positions, angles),
            4 => self.pose_by_pairs::<4>(positions, angles),
            5 => self.pose_by_pairs::<5>(positions, angles),
            6 => self.pose_by_pairs::<6>(positions, angles),
            7 => self.pose_by_pairs::<7>(positions, angles),
            _ => self.pose_by_pairs::<8>(positions, angles),
        }
    }

    /// The first `N` positions and steps with every joint's half-angle sine and cosine, worked
    /// out first and all lanes alike (a slide turns by a zero angle): they do not depend on one
    /// another, so they run two to an instruction and the product after waits only on itself.
    /// `None` when fewer than `N` positions are given, or when `angles` asks for half turns
    /// and a position lies outside them or is not finite.
    #[inline(always)]
    #[allow(clippy::type_complexity)] // four plain arrays, named at the one place they are used
    fn half_angles<'a, const N: usize>(
        &'a self,
        positions: &'a [f64],
        angles_taken: Angles,
    ) -> Option<(&'a [f64; N], &'a [ToolStep; N], [f64; N], [f64; N])> {
        let (positions, steps) = (
            positions.first_chunk::<N>()?,
            self.steps.first_chunk::<N>()?,
        );
        let mut angles = [0.0; N];
        for ((angle, &q), step) in angles.iter_mut().zip(positions).zip(steps) {
            *angle = step.turn * q;
        }
        // Half angles within ±π/2 (turning joints within ±π, the usual case) need no reduction.
        // NaN fails the comparison (a slide's infinite position makes one: 0·∞) and takes the
        // general path.
        let (sines, cosines) = if angles
            .iter()
            .fold(true, |within, x| within & (x.abs() <= FRAC_PI_2))
        {
            half_turn_sin_cos_lanes(&angles)
        } else if angles_taken == Angles::Any {
            sin_cos_lanes(&angles)
        } else {
            return None;
        };
        Some((positions, steps, sines, cosines))
    }

    /// The tool pose of the first `N` joints (1 to [`MAX_JOINTS`]) two joints at a time: each
    /// pair's own shift and turn come from the constants of [`ToolPair`] (a lone last joint's
    /// from [`ToolEnd`]), so the running turn multiplies once per pair rather than once per
    /// joint. Each pair's shift waits for the next one and the two are turned together, one to a
    /// lane: the running turn's chain of products no longer waits on turning a shift in between.
    #[inline(always)]
    fn pose_by_pairs<const N: usize>(
        &self,
        positions: &[f64],
        angles: Angles,
    ) -> Option<Isometry3<f64>> {
        let (positions, steps, sines, cosines) = self.half_angles::<N>(positions, angles)?;
        if N == 0 {
            return Some(self.tool_at([0.0; 3], IDENTITY_TURN));
        }
        // The pairs' own motions, then a lone last joint's with the tool offset's turn; the last
        // pair of an even chain takes the tool offset's turn with its own.
        let pair = |index: usize| {
            let with_tool = N.is_multiple_of(2) && index + 1 == N / 2;
            self.pair_motion(index, &sines, &cosines, positions, with_tool)
        };
        let end = || {
            self.end_motion(
                &steps[N - 1],
                sines[N - 1],
                cosines[N - 1],
                positions[N - 1],
            )
        };
        let (s0, t0) = if N >= 2 { pair(0) } else { end() };
        let mut p = s0;
        let mut turn = t0;
        // A shift and the running turn before it, waiting for a second to be turned beside it.
        let mut waiting: Option<(Turn, [f64; 3])> = None;
        let mut then = |turn_before: Turn, shift: [f64; 3], p: &mut [f64; 3]| {
            if let Some((first_turn, first_shift)) = waiting.take() {
                let [first, second] =
                    turn_vectors_in_lanes([first_turn, turn_before], [first_shift, shift]);
                *p = add(*p, add(first, second));
            } else {
                waiting = Some((turn_before, shift));
            }
        };
        if N >= 4 {
            let (s1, t1) = pair(1);
            then(turn, s1, &mut p);
            turn = turn_product(turn, t1);
        }
        if N >= 6 {
            let (s2, t2) = pair(2);
            then(turn, s2, &mut p);
            turn = turn_product(turn, t2);
        }
        if N >= 8 {
            let (s3, t3) = pair(3);
            then(turn, s3, &mut p);
            turn = turn_product(turn, t3);
        }
        if N % 2 == 1 && N > 1 {
            let (s_end, t_end) = end();
            then(turn, s_end, &mut p);
            turn = turn_product(turn, t_end);
        }
        if N.is_multiple_of(2) {
            // The turn includes the tool offset's: its shift goes as T⁻¹·t.
            then(turn, self.end_pair.tool_shift, &mut p);
        }
        if let Some((last_turn, last_shift)) = waiting {
            p = add(p, turn_vector(last_turn, last_shift));
        }
        Some(Isometry3::from_parts(
            Translation3::new(p[0], p[1], p[2]),
            UnitQuaternion::new_unchecked(Quaternion::new(turn.0, turn.1, turn.2, turn.3)),
        ))
    }

    /// The lone last joint of an odd chain with the tool offset: its shift (m) and turn
    /// (w, x, y, z, the tool offset's included), from its half-angle sine and cosine and its
    /// position (rad or m).
    #[inline(always)]
    fn end_motion(
        &self,
        step: &ToolStep,
        s: f64,
        c: f64,
        position: f64,
    ) -> ([f64; 3], (f64, f64, f64, f64)) {
        let end = &self.end;
        let (sin, versine) = (2.0 * s * c, 2.0 * s * s);
        let [x1, x2] = end.shift_turn;
        let mut shift = [
            end.shift[0] + sin * x1[0] + versine * x2[0],
            end.shift[1] + sin * x1[1] + versine * x2[1],
            end.shift[2] + sin * x1[2] + versine * x2[2],
        ];
        if step.slides {
            shift = add(shift, scaled(step.axis, position));
        }
        let ([tw, tx, ty, tz], [aw, ax, ay, az]) = (self.tool_turn, end.axis_turn);
        let turn = (
            c * tw + s * aw,
            c * tx + s * ax,
            c * ty + s * ay,
            c * tz + s * az,
        );
        (shift, turn)
    }

    /// The tool pose for `positions` (rad or m, one per joint, already checked) and the
    /// geometric Jacobian at the tool point in the base frame: rows 0–2 the tool point's
    /// velocity (m/s), rows 3–5 the tool frame's angular velocity (rad/s), one column per joint
    /// (unit rate), columns past the joint count zero. As [`crate::tool_jacobian`] gives it,
    /// from one pass down the chain.
    pub(crate) fn tool_pose_and_jacobian(
        &self,
        positions: &[f64],
    ) -> (Isometry3<f64>, SMatrix<f64, 6, MAX_JOINTS>) {
        let mut axes = [([0.0; 3], [0.0; 3]); MAX_JOINTS];
        let tool = self.walk(positions, |index, axis, point| axes[index] = (axis, point));
        let tip = tool.translation.vector;
        let mut matrix = SMatrix::<f64, 6, MAX_JOINTS>::zeros();
        for (index, (step, (axis, point))) in self.steps[..self.count].iter().zip(axes).enumerate()
        {
            let axis = Vector3::from(axis);
            let (linear, angular) = if step.slides {
                (axis, Vector3::zeros())
            } else {
                (axis.cross(&(tip - Vector3::from(point))), axis)
            };
            matrix.fixed_view_mut::<3, 1>(0, index).copy_from(&linear);
            matrix.fixed_view_mut::<3, 1>(3, index).copy_from(&angular);
        }
        (tool, matrix)
    }

    /// Steps down the chain, telling `joint` each joint's index, its axis in the base frame
    /// (unit) and a point on that axis (m), and returns the tool pose.
    #[inline(always)]
    fn walk(
        &self,
        positions: &[f64],
        joint: impl FnMut(usize, [f64; 3], [f64; 3]),
    ) -> Isometry3<f64> {
        // One straight run of arithmetic per joint count, which the compiler lays out without
        // a loop, an index check or a branch but a slide's.
        const _: () = assert!(MAX_JOINTS == 8, "one arm per joint count below");
        match self.count.min(positions.len()) {
            0 => self.tool_at([0.0; 3], (1.0, 0.0, 0.0, 0.0)),
            1 => self.walk_joints::<1>(positions, joint),
            2 => self.walk_joints::<2>(positions, joint),
            3 => self.walk_joints::<3>(positions, joint),
            4 => self.walk_joints::<4>(positions, joint),
            5 => self.walk_joints::<5>(positions, joint),
            6 => self.walk_joints::<6>(positions, joint),
            7 => self.walk_joints::<7>(positions, joint),
            _ => self.walk_joints::<8>(positions, joint),
        }
    }

    /// [`ToolChain::walk`] for the first `N` joints (1 to [`MAX_JOINTS`]).
    #[inline(always)]
    fn walk_joints<const N: usize>(
        &self,
        positions: &[f64],
        mut joint: impl FnMut(usize, [f64; 3], [f64; 3]),
    ) -> Isometry3<f64> {
        let Some((positions, steps, sines, cosines)) =
            self.half_angles::<N>(positions, Angles::Any)
        else {
            return self.tool_at([0.0; 3], (1.0, 0.0, 0.0, 0.0));
        };
        // The first joint: nothing before it turns, so its shift and axis are as stored.
        let first = &steps[0];
        joint(0, first.axis, first.shift);
        let mut p = add(first.shift, scaled(first.axis, first.slide * positions[0]));
        let [ax, ay, az] = first.axis;
        let s = sines[0];
        let mut turn = (cosines[0], s * ax, s * ay, s * az);
        for index in 1..N {
            let step = &steps[index];
            p = add(p, turn_vector(turn, step.shift));
            // A turn about the axis leaves the axis where it is: its direction now is its
            // direction after the joint moves.
            joint(index, turn_vector(turn, step.axis), p);
            if step.slides {
                let slide = scaled(step.axis, positions[index]);
                p = add(p, turn_vector(turn, slide));
            }
            let [ax, ay, az] = step.axis;
            let (s, c) = (sines[index], cosines[index]);
            turn = turn_product(turn, (c, s * ax, s * ay, s * az));
        }
        self.tool_at(p, turn)
    }

    /// Pair `index`'s own shift (m) and turn (w, x, y, z), from the joints' half-angle sines
    /// and cosines and their positions (rad or m).
    #[inline(always)]
    fn pair_motion(
        &self,
        index: usize,
        sines: &[f64],
        cosines: &[f64],
        positions: &[f64],
        with_tool: bool,
    ) -> ([f64; 3], (f64, f64, f64, f64)) {
        let pair = &self.pairs[index];
        let (i, j) = (2 * index, 2 * index + 1);
        let (s1, c1, s2, c2) = (sines[i], cosines[i], sines[j], cosines[j]);
        // sin θ₁ and 1 − cos θ₁ from the half angle.
        let (sin, versine) = (2.0 * s1 * c1, 2.0 * s1 * s1);
        let [a, b] = pair.axes;
        let [x1, x2] = pair.shift_turn;
        let mut shift = [
            pair.shift[0] + sin * x1[0] + versine * x2[0],
            pair.shift[1] + sin * x1[1] + versine * x2[1],
            pair.shift[2] + sin * x1[2] + versine * x2[2],
        ];
        if self.steps[i].slides {
            shift = add(shift, scaled(a, positions[i]));
        }
        if self.steps[j].slides {
            let (cross, twice) = (pair.cross, pair.cross_twice);
            let turned = [
                b[0] + sin * cross[0] + versine * twice[0],
                b[1] + sin * cross[1] + versine * twice[1],
                b[2] + sin * cross[2] + versine * twice[2],
            ];
            shift = add(shift, scaled(turned, positions[j]));
        }
        let (cc, ss, cs, sc) = (c1 * c2, s1 * s2, c1 * s2, s1 * c2);
        let turn = if with_tool {
            let [t, bt, at, abt] = self.end_pair.turns;
            let lane = |k: usize| (cc * t[k] + cs * bt[k]) + (sc * at[k] + ss * abt[k]);
            (lane(0), lane(1), lane(2), lane(3))
        } else {
            (
                cc - ss * pair.dot,
                (cs * b[0] + sc * a[0]) + ss * pair.cross[0],
                (cs * b[1] + sc * a[1]) + ss * pair.cross[1],
                (cs * b[2] + sc * a[2]) + ss * pair.cross[2],
            )
        };
        (shift, turn)
    }

    /// The tool pose from the last joint's frame: its origin `p` (m) and turn (w, x, y, z).
    #[inline(always)]
    fn tool_at(&self, p: [f64; 3], turn: (f64, f64, f64, f64)) -> Isometry3<f64> {
        let moved = turn_vector(turn, self.tool_shift);
        let [tw, tx, ty, tz] = self.tool_turn;
        let (w, x, y, z) = turn_product(turn, (tw, tx, ty, tz));
        Isometry3::from_parts(
            Translation3::new(p[0] + moved[0], p[1] + moved[1], p[2] + moved[2]),
            UnitQuaternion::new_unchecked(Quaternion::new(w, x, y, z)),
        )
    }
}

/// Which joint angles a tool-chain pass takes.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Angles {
    /// Any finite positions, already checked.
    Any,
    /// Only finite positions with every turning joint within ±π rad (no angle reduction).
    WithinHalfTurns,
}

/// A unit quaternion as (w, x, y, z).
type Turn = (f64, f64, f64, f64);

/// The turn that turns nothing.
const IDENTITY_TURN: Turn = (1.0, 0.0, 0.0, 0.0);

/// The Hamilton product of two quaternions (w, x, y, z), each term's products paired for a
/// short dependency chain.
#[inline(always)]
fn turn_product(
    (w, x, y, z): (f64, f64, f64, f64),
    (c, bx, by, bz): (f64, f64, f64, f64),
) -> (f64, f64, f64, f64) {
    (
        (w * c - x * bx) - (y * by + z * bz),
        (w * bx + x * c) + (y * bz - z * by),
        (w * by + y * c) + (z * bx - x * bz),
        (w * bz + z * c) + (x * by - y * bx),
    )
}

/// Two vectors each turned by its own unit quaternion (w, x, y, z), by the formula of
/// [`turn_vector`]: every quantity is held as two lanes, the first vector's and the second's,
/// and each step runs over both lanes before the next, so the two run side by side, two to an
/// instruction.
#[inline(always)]
fn turn_vectors_in_lanes(
    turns: [(f64, f64, f64, f64); 2],
    vectors: [[f64; 3]; 2],
) -> [[f64; 3]; 2] {
    let [first, second] = turns;
    let (w, x, y, z) = (
        [first.0, second.0],
        [first.1, second.1],
        [first.2, second.2],
        [first.3, second.3],
    );
    let [v1, v2] = vectors;
    let (vx, vy, vz) = ([v1[0], v2[0]], [v1[1], v2[1]], [v1[2], v2[2]]);
    // t = 2·u × v, u the turn's vector part.
    let (mut tx, mut ty, mut tz) = ([0.0; 2], [0.0; 2], [0.0; 2]);
    for lane in 0..2 {
        tx[lane] = 2.0 * (y[lane] * vz[lane] - z[lane] * vy[lane]);
        ty[lane] = 2.0 * (z[lane] * vx[lane] - x[lane] * vz[lane]);
        tz[lane] = 2.0 * (x[lane] * vy[lane] - y[lane] * vx[lane]);
    }
    // v + w·t + u × t.
    let (mut ox, mut oy, mut oz) = ([0.0; 2], [0.0; 2], [0.0; 2]);
    for lane in 0..2 {
        ox[lane] = vx[lane] + w[lane] * tx[lane] + (y[lane] * tz[lane] - z[lane] * ty[lane]);
        oy[lane] = vy[lane] + w[lane] * ty[lane] + (z[lane] * tx[lane] - x[lane] * tz[lane]);
        oz[lane] = vz[lane] + w[lane] * tz[lane] + (x[lane] * ty[lane] - y[lane] * tx[lane]);
    }
    [[ox[0], oy[0], oz[0]], [ox[1], oy[1], oz[1]]]
}

#[inline(always)]
fn add(a: [f64; 3], b: [f64; 3]) -> [f64; 3] {
    [a[0] + b[0], a[1] + b[1], a[2] + b[2]]
}

#[inline(always)]
fn scaled(v: [f64; 3], by: f64) -> [f64; 3] {
    [v[0] * by, v[1] * by, v[2] * by]
}

/// `v` turned by the unit quaternion (w, x, y, z): v + 2w(u × v) + 2u × (u × v), u = (x, y, z).
#[inline(always)]
fn turn_vector((w, x, y, z): (f64, f64, f64, f64), v: [f64; 3]) -> [f64; 3] {
    let tx = 2.0 * (y * v[2] - z * v[1]);
    let ty = 2.0 * (z * v[0] - x * v[2]);
    let tz = 2.0 * (x * v[1] - y * v[0]);
    [
        v[0] + w * tx + (y * tz - z * ty),
        v[1] + w * ty + (z * tx - x * tz),
        v[2] + w * tz + (x * ty - y * tx),
    ]
}

/// The frame of `joint` at position `q` (rad or m), given the previous joint's frame (or the
/// base): `previous · origin · motion(q)`.
///
/// Written out in plain arithmetic because it is the hot path of forward kinematics, gravity
/// and dynamics: built-in types place every joint by a pure translation, so the origin's
/// rotation is usually the identity and is skipped; the turn is built from the unit axis and
/// the half angle directly (no square root), and about a coordinate axis half of the
/// quaternion product's terms vanish.
#[inline(always)]
pub(crate) fn joint_frame(previous: &Isometry3<f64>, joint: &Joint, q: f64) -> Isometry3<f64> {
    let origin = &joint.origin;
    let rotation = if origin.rotation.w != 1.0 {
        product(&previous.rotation, &origin.rotation)
    } else {
        previous.rotation
    };
    let translation =
        previous.translation.vector + rotate(&previous.rotation, &origin.translation.vector);
    let axis = joint.axis.as_ref();
    match joint.kind {
        JointKind::Revolute => {
            let (sin, cos) = sin_cos(0.5 * q);
            Isometry3::from_parts(
                Translation3::from(translation),
                turned(&rotation, axis, sin, cos),
            )
        }
        JointKind::Prismatic => Isometry3::from_parts(
            Translation3::from(translation + rotate(&rotation, &(axis * q))),
            rotation,
        ),
    }
}

/// `first · second`, the same as nalgebra's `Isometry3` product, in plain arithmetic.
#[inline(always)]
fn compose(first: &Isometry3<f64>, second: &Isometry3<f64>) -> Isometry3<f64> {
    Isometry3::from_parts(
        Translation3::from(
            first.translation.vector + rotate(&first.rotation, &second.translation.vector),
        ),
        product(&first.rotation, &second.rotation),
    )
}

/// `v` turned by the unit quaternion: v + 2w(u × v) + 2u × (u × v), u its vector part.
#[inline(always)]
pub(crate) fn rotate(rotation: &UnitQuaternion<f64>, v: &Vector3<f64>) -> Vector3<f64> {
    let q = rotation.quaternion();
    let (w, x, y, z) = (q.w, q.i, q.j, q.k);
    let tx = 2.0 * (y * v.z - z * v.y);
    let ty = 2.0 * (z * v.x - x * v.z);
    let tz = 2.0 * (x * v.y - y * v.x);
    Vector3::new(
        v.x + w * tx + (y * tz - z * ty),
        v.y + w * ty + (z * tx - x * tz),
        v.z + w * tz + (x * ty - y * tx),
    )
}

/// The Hamilton product of two unit quaternions.
#[inline(always)]
fn product(a: &UnitQuaternion<f64>, b: &UnitQuaternion<f64>) -> UnitQuaternion<f64> {
    let (a, b) = (a.quaternion(), b.quaternion());
    UnitQuaternion::new_unchecked(Quaternion::new(
        a.w * b.w - a.i * b.i - a.j * b.j - a.k * b.k,
        a.w * b.i + a.i * b.w + a.j * b.k - a.k * b.j,
        a.w * b.j - a.i * b.k + a.j * b.w + a.k * b.i,
        a.w * b.k + a.i * b.j - a.j * b.i + a.k * b.w,
    ))
}

/// `rotation` followed by a turn about the unit `axis` whose half angle has the given sine and
/// cosine: the product with (cos, sin·axis), shortened when the axis is a coordinate axis (as
/// every built-in arm type's are).
#[inline(always)]
fn turned(
    rotation: &UnitQuaternion<f64>,
    axis: &Vector3<f64>,
    sin: f64,
    cos: f64,
) -> UnitQuaternion<f64> {
    let q = rotation.quaternion();
    let (w, x, y, z) = (q.w, q.i, q.j, q.k);
    let shortened = if axis.x == 0.0 && axis.y == 0.0 {
        let s = sin * axis.z;
        Quaternion::new(
            cos * w - s * z,
            cos * x + s * y,
            cos * y - s * x,
            cos * z + s * w,
        )
    } else if axis.y == 0.0 && axis.z == 0.0 {
        let s = sin * axis.x;
        Quaternion::new(
            cos * w - s * x,
            cos * x + s * w,
            cos * y + s * z,
            cos * z - s * y,
        )
    } else if axis.x == 0.0 && axis.z == 0.0 {
        let s = sin * axis.y;
        Quaternion::new(
            cos * w - s * y,
            cos * x - s * z,
            cos * y + s * w,
            cos * z + s * x,
        )
    } else {
        let turn = Quaternion::new(cos, axis.x * sin, axis.y * sin, axis.z * sin);
        return product(rotation, &UnitQuaternion::new_unchecked(turn));
    };
    UnitQuaternion::new_unchecked(shortened)
}

/// π/2 split into a head of 33 significant bits (so `k · head` is exact for |k| < 2²⁰) and the
/// rest, for reducing an angle to within ±π/4.
const HALF_PI_HEAD: f64 = 1.5707963267341256;
const HALF_PI_TAIL: f64 = 6.077100506506192e-11;
/// Angles this large or larger (and non-finite ones) go to the standard library.
const REDUCED_RANGE: f64 = 1.0e5;

/// Sine and cosine together, to within a few units in the last place of `f64::sin_cos`, for
/// the forward-kinematics hot path (std calls `sin` and `cos` separately, which is most of the
/// cost of a 5-joint pose). Angles of ±1e5 rad or more, and non-finite ones, go to the standard
/// library; see [`sin_cos_reduced`] for the method.
#[inline(always)]
pub(crate) fn sin_cos(x: f64) -> (f64, f64) {
    if x.is_nan() || x.abs() >= REDUCED_RANGE {
        return x.sin_cos();
    }
    sin_cos_reduced(x)
}

/// Sines and cosines of every angle of `angles` (rad), as [`sin_cos`] gives them one by one.
/// Within ±1e5 rad every lane runs the same branch-free arithmetic, so the compiler does two
/// lanes per instruction.
#[inline(always)]
fn sin_cos_lanes<const N: usize>(angles: &[f64; N]) -> ([f64; N], [f64; N]) {
    let mut sines = [0.0; N];
    let mut cosines = [1.0; N];
    // NaN fails the comparison, so it takes the per-angle path too.
    if angles.iter().all(|x| x.abs() < REDUCED_RANGE) {
        for ((x, sine), cosine) in angles.iter().zip(&mut sines).zip(&mut cosines) {
            (*sine, *cosine) = sin_cos_reduced(*x);
        }
    } else {
        for ((x, sine), cosine) in angles.iter().zip(&mut sines).zip(&mut cosines) {
            (*sine, *cosine) = sin_cos(*x);
        }
    }
    (sines, cosines)
}

/// Sines and cosines of every angle of `angles`, each within ±π/2 rad: the kernels of
/// [`sin_cos_reduced`] on half of each angle (within ±π/4, so no reduction and no quarter-turn
/// swap), then the double-angle formulas sin 2u = 2·sin u·cos u and cos 2u = 1 − 2·sin² u. Agrees
/// with `f64::sin_cos` to within a few units in the last place (tested below); every lane runs
/// the same branch-free arithmetic.
#[inline(always)]
fn half_turn_sin_cos_lanes<const N: usize>(angles: &[f64; N]) -> ([f64; N], [f64; N]) {
    let mut sines = [0.0; N];
    let mut cosines = [1.0; N];
    for ((x, sine), cosine) in angles.iter().zip(&mut sines).zip(&mut cosines) {
        let (s, c) = sin_cos_kernels(0.5 * x);
        (*sine, *cosine) = (2.0 * s * c, 1.0 - 2.0 * s * s);
    }
    (sines, cosines)
}

/// Sine and cosine of `r` within ±π/4 rad, by the kernels described at [`sin_cos_reduced`].
#[inline(always)]
fn sin_cos_kernels(r: f64) -> (f64, f64) {
    const S1: f64 = -0.16666666666666632;
    const S2: f64 = 0.00833333333332249;
    const S3: f64 = -0.0001984126982985795;
    const S4: f64 = 2.7557313707070068e-06;
    const S5: f64 = -2.5050760253406863e-08;
    const S6: f64 = 1.58969099521155e-10;
    const C1: f64 = 0.0416666666666666;
    const C2: f64 = -0.001388888888887411;
    const C3: f64 = 2.480158728947673e-05;
    const C4: f64 = -2.7557314351390663e-07;
    const C5: f64 = 2.087572321298175e-09;
    const C6: f64 = -1.1359647557788195e-11;
    let z = r * r;
    // Estrin's scheme: the terms pair up in z, z² and z⁴, so each polynomial waits on three
    // products and sums in a row rather than six as in Horner's.
    let (z2, rz) = (z * z, r * z);
    let z4 = z2 * z2;
    let sin_poly = ((S1 + z * S2) + z2 * (S3 + z * S4)) + z4 * (S5 + z * S6);
    let cos_poly = ((C1 + z * C2) + z2 * (C3 + z * C4)) + z4 * (C5 + z * C6);
    (r + rz * sin_poly, (1.0 - 0.5 * z) + z2 * cos_poly)
}

/// Sine and cosine of `x` within ±1e5 rad. The angle is reduced to r within ±π/4 by a multiple
/// k of π/2, then sin r and cos r come from the near-minimax polynomials of fdlibm's
/// `__kernel_sin` and `__kernel_cos` (Sun Microsystems, 1993; degree 13 and 14, error below
/// 2⁻⁵⁸ of the result on ±π/4; coefficients as published there, quoted from memory, to f64
/// precision, and checked by the tests below against the standard library). No branch and no
/// table: the quarter turn k picks and signs the results by bit operations.
#[inline(always)]
fn sin_cos_reduced(x: f64) -> (f64, f64) {
    // Nearest whole k to x·2/π without a call or a branch: adding 1.5·2⁵² leaves no room for a
    // fraction, so the sum is rounded to a whole number, which the subtraction gives back; the
    // sum's lowest mantissa bits are k's, two's complement.
    const ROUNDER: f64 = 6_755_399_441_055_744.0;
    let rounded = x * std::f64::consts::FRAC_2_PI + ROUNDER;
    let quarter = rounded.to_bits();
    let k = rounded - ROUNDER;
    let r = (x - k * HALF_PI_HEAD) - k * HALF_PI_TAIL;
    let (sin, cos) = sin_cos_kernels(r);
    // x = r + k·π/2: k odd swaps sine and cosine; the sine changes sign for k ≡ 2, 3 (mod 4),
    // the cosine for k ≡ 1, 2.
    let odd = 0u64.wrapping_sub(quarter & 1);
    let (sin, cos) = (sin.to_bits(), cos.to_bits());
    let swapped_sin = (cos & odd) | (sin & !odd);
    let swapped_cos = (sin & odd) | (cos & !odd);
    let sin_sign = (quarter & 2) << 62;
    let cos_sign = (quarter.wrapping_add(1) & 2) << 62;
    (
        f64::from_bits(swapped_sin ^ sin_sign),
        f64::from_bits(swapped_cos ^ cos_sign),
    )
}

/// The tool frame's orientation as yaw, pitch and roll, in rad.
///
/// The rotation is Rz(yaw)·Ry(−pitch)·Rx(roll): yaw turns about the base's vertical, pitch
/// lifts the tool's approach axis (its X axis) above the horizontal, roll turns about the
/// approach axis. For the built-in articulated arms pitch is the sum of shoulder, elbow and wrist
/// angles; for the horizontal-jointed arm yaw is the sum of shoulder, elbow and roll.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ToolAngles {
    /// About the base's vertical axis, in rad.
    pub yaw: f64,
    /// Elevation of the approach axis above the horizontal, in rad.
    pub pitch: f64,
    /// About the approach axis, in rad.
    pub roll: f64,
}

impl ToolAngles {
    /// The angles of a tool frame.
    pub fn of(tool: &Isometry3<f64>) -> ToolAngles {
        let (roll, pitch_about_y, yaw) = tool.rotation.euler_angles();
        ToolAngles {
            yaw,
            pitch: -pitch_about_y,
            roll,
        }
    }

    /// The approach axis (tool X) in the base frame, a unit vector.
    pub fn approach(tool: &Isometry3<f64>) -> Unit<Vector3<f64>> {
        Unit::new_unchecked(tool.rotation * Vector3::x())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn sin_cos_agrees_with_the_standard_library() {
        // Every quadrant, both signs, the reduction boundaries and a long sweep.
        let mut worst: f64 = 0.0;
        let mut x = -40.0;
        while x < 40.0 {
            let (s, c) = sin_cos(x);
            worst = worst.max((s - x.sin()).abs()).max((c - x.cos()).abs());
            x += 0.000_731;
        }
        for k in -64..=64 {
            for nudge in [-1e-12, 0.0, 1e-12] {
                let x = f64::from(k) * std::f64::consts::FRAC_PI_4 + nudge;
                let (s, c) = sin_cos(x);
                worst = worst.max((s - x.sin()).abs()).max((c - x.cos()).abs());
            }
        }
        assert!(worst < 5e-16, "largest difference {worst:e}");
    }

    #[test]
    fn turns_about_coordinate_axes_match_the_general_product() {
        let start = UnitQuaternion::from_euler_angles(0.3, -1.1, 2.0);
        for axis in [
            Vector3::x(),
            -Vector3::x(),
            Vector3::y(),
            -Vector3::y(),
            Vector3::z(),
            -Vector3::z(),
            Vector3::new(0.6, 0.0, 0.8),
        ] {
            for angle in [-2.5_f64, -0.4, 0.0, 0.9, 3.0] {
                let (sin, cos) = (0.5 * angle).sin_cos();
                let fast = turned(&start, &axis, sin, cos);
                let general =
                    start * UnitQuaternion::from_axis_angle(&Unit::new_normalize(axis), angle);
                assert!(fast.angle_to(&general) < 1e-15, "{axis:?} {angle}");
            }
        }
    }

    #[test]
    fn plain_products_match_nalgebra() {
        let a = Isometry3::new(Vector3::new(0.1, -0.2, 0.3), Vector3::new(0.4, 1.1, -0.7));
        let b = Isometry3::new(Vector3::new(-0.5, 0.25, 0.05), Vector3::new(-1.3, 0.2, 2.1));
        let ours = compose(&a, &b);
        let theirs = a * b;
        assert!((ours.translation.vector - theirs.translation.vector).norm() < 1e-15);
        assert!(ours.rotation.angle_to(&theirs.rotation) < 1e-15);
        let v = Vector3::new(0.3, -0.9, 0.4);
        assert!((rotate(&a.rotation, &v) - a.rotation * v).norm() < 1e-15);
    }

    /// A joint at `origin` turning about or sliding along `axis`, limits ±4.
    fn placed(kind: JointKind, origin: Isometry3<f64>, axis: Unit<Vector3<f64>>) -> Joint {
        Joint::for_tests(kind, origin, axis, -4.0, 4.0).expect("a valid joint")
    }

    #[test]
    fn the_tool_chain_agrees_with_the_frame_by_frame_product() {
        // Origins with rotations (as Denavit–Hartenberg rows give), which the tool chain folds
        // into its axes, a slide, a slanted axis and a turned tool offset.
        let turned = |t: [f64; 3], r: [f64; 3]| {
            Isometry3::new(
                Vector3::new(t[0], t[1], t[2]),
                Vector3::new(r[0], r[1], r[2]),
            )
        };
        let slanted = Unit::new_normalize(Vector3::new(0.3, -0.5, 0.8));
        let joints = [
            placed(
                JointKind::Revolute,
                turned([0.0, 0.0, 0.1], [0.0, 0.0, 0.3]),
                Vector3::z_axis(),
            ),
            placed(
                JointKind::Prismatic,
                turned([0.02, 0.0, 0.0], [1.2, 0.0, -0.4]),
                slanted,
            ),
            placed(
                JointKind::Revolute,
                turned([0.1, 0.01, 0.0], [-0.7, 0.2, 0.0]),
                Vector3::y_axis(),
            ),
            placed(
                JointKind::Revolute,
                Isometry3::translation(0.08, 0.0, 0.03),
                slanted,
            ),
            placed(
                JointKind::Revolute,
                turned([0.0, -0.05, 0.0], [0.0, 2.1, 1.0]),
                Vector3::x_axis(),
            ),
        ];
        let tool = turned([0.01, 0.02, 0.05], [0.3, -0.2, 0.9]);
        let chain = ToolChain::of(&joints, &tool);
        for q in [
            [0.0; 5],
            [0.4, 0.02, -1.3, 2.9, 0.7],
            [-3.0, -0.04, 2.2, -0.6, -2.5],
        ] {
            let fast = chain.tool_pose(&q);
            let mut slow = Isometry3::identity();
            for (joint, &position) in joints.iter().zip(&q) {
                slow = slow * joint.origin * joint.motion(position);
            }
            let slow = slow * tool;
            assert!((fast.translation.vector - slow.translation.vector).norm() < 1e-15);
            assert!(fast.rotation.angle_to(&slow.rotation) < 1e-14);
            assert!((fast.rotation.norm() - 1.0).abs() < 1e-15);
            // The Jacobian from the same pass: each column as central differences of the
            // tool pose give it (linear velocity, and angular from the rotation's change).
            let (tool, jacobian) = chain.tool_pose_and_jacobian(&q);
            assert!((tool.translation.vector - fast.translation.vector).norm() < 1e-15);
            assert!(tool.rotation.angle_to(&fast.rotation) < 1e-14);
            let h = 1e-6;
            for joint in 0..5 {
                let (mut up, mut down) = (q, q);
                up[joint] += h;
                down[joint] -= h;
                let (a, b) = (chain.tool_pose(&up), chain.tool_pose(&down));
                let linear = (a.translation.vector - b.translation.vector) / (2.0 * h);
                let angular = (a.rotation * b.rotation.inverse()).scaled_axis() / (2.0 * h);
                let column = jacobian.column(joint);
                assert!(
                    (column.fixed_rows::<3>(0) - linear).norm() < 1e-8,
                    "{joint}"
                );
                assert!(
                    (column.fixed_rows::<3>(3) - angular).norm() < 1e-8,
                    "{joint}"
                );
            }
        }
    }

    #[test]
    fn pairs_of_joints_give_the_frame_by_frame_pose_on_random_chains() {
        // Random chains of every length (odd ones end in a joint taken with the tool), turning
        // and sliding joints in either place of a pair, origins with rotations, slanted axes,
        // positions over ±4 (rad or m); the tool pose by pairs, the joint-by-joint pass the
        // Jacobian uses and the plain product of nalgebra isometries agree to 1e-12.
        let mut state = 0x1234_5678_9ABC_DEF0_u64;
        let mut uniform = move |low: f64, high: f64| {
            state = state
                .wrapping_mul(6_364_136_223_846_793_005)
                .wrapping_add(1_442_695_040_888_963_407);
            low + (high - low) * ((state >> 11) as f64 / (1u64 << 53) as f64)
        };
        let mut worst: f64 = 0.0;
        for case in 0..4000 {
            let count = 1 + case % MAX_JOINTS;
            let mut random_frame = || {
                Isometry3::new(
                    Vector3::new(uniform(-0.2, 0.2), uniform(-0.2, 0.2), uniform(-0.2, 0.2)),
                    Vector3::new(uniform(-2.0, 2.0), uniform(-2.0, 2.0), uniform(-2.0, 2.0)),
                )
            };
            let frames: Vec<_> = (0..=count).map(|_| random_frame()).collect();
            let joints: Vec<Joint> = frames[..count]
                .iter()
                .map(|origin| {
                    let kind = if uniform(0.0, 1.0) < 0.3 {
                        JointKind::Prismatic
                    } else {
                        JointKind::Revolute
                    };
                    let axis = Vector3::new(uniform(-1.0, 1.0), uniform(-1.0, 1.0), 0.5);
                    placed(kind, *origin, Unit::new_normalize(axis))
                })
                .collect();
            let tool = frames[count];
            let chain = ToolChain::of(&joints, &tool);
            let q: Vec<f64> = (0..count).map(|_| uniform(-4.0, 4.0)).collect();
            let fast = chain.tool_pose(&q);
            let mut slow = Isometry3::identity();
            for (joint, &position) in joints.iter().zip(&q) {
                slow = slow * joint.origin * joint.motion(position);
            }
            let slow = slow * tool;
            let (by_joint, _) = chain.tool_pose_and_jacobian(&q);
            for other in [slow, by_joint] {
                worst = worst
                    .max((fast.translation.vector - other.translation.vector).norm())
                    .max(fast.rotation.angle_to(&other.rotation));
            }
            assert!((fast.rotation.norm() - 1.0).abs() < 1e-14);
        }
        assert!(worst < 1e-12, "largest difference {worst:e}");
    }

    #[test]
    fn sin_cos_lanes_match_one_by_one() {
        let angles = [-1.0e6, -3.9, -0.7, 0.0, 1.2, 2.5, 7.0, f64::NAN];
        let (sines, cosines) = sin_cos_lanes(&angles);
        for ((x, sine), cosine) in angles.iter().zip(sines).zip(cosines) {
            let (s, c) = sin_cos(*x);
            assert!(s.to_bits() == sine.to_bits() || (s.is_nan() && sine.is_nan()));
            assert!(c.to_bits() == cosine.to_bits() || (c.is_nan() && cosine.is_nan()));
        }
        let (sines, _) = sin_cos_lanes(&[0.3, -2.0]);
        assert_eq!(sines, [sin_cos(0.3).0, sin_cos(-2.0).0]);
    }

    #[test]
    fn half_turn_sin_cos_agrees_with_the_standard_library() {
        // A sweep over ±π/2 (the ends included), two lanes at a time as the tool chain takes
        // them, against `f64::sin_cos`.
        let mut worst: f64 = 0.0;
        let steps = 200_000;
        for step in 0..=steps {
            let x = -FRAC_PI_2 + std::f64::consts::PI * f64::from(step) / f64::from(steps);
            let (sines, cosines) = half_turn_sin_cos_lanes(&[x, -0.5 * x]);
            for ((angle, sine), cosine) in [x, -0.5 * x].iter().zip(sines).zip(cosines) {
                let (s, c) = angle.sin_cos();
                worst = worst.max((sine - s).abs()).max((cosine - c).abs());
            }
        }
        assert!(worst < 5e-16, "largest difference {worst:e}");
    }

    #[test]
    fn the_checked_pass_refuses_angles_past_half_turns_and_bad_positions() {
        let joints = [
            placed(
                JointKind::Revolute,
                Isometry3::identity(),
                Vector3::z_axis(),
            ),
            placed(
                JointKind::Prismatic,
                Isometry3::translation(0.1, 0.0, 0.0),
                Vector3::x_axis(),
            ),
        ];
        let chain = ToolChain::of(&joints, &Isometry3::translation(0.0, 0.0, 0.05));
        for q in [
            [3.2, 0.0],
            [f64::NAN, 0.0],
            [0.0, f64::INFINITY],
            [0.0, f64::NAN],
        ] {
            assert!(chain.tool_pose_within_half_turns(&q).is_none(), "{q:?}");
        }
        // Within ±π the checked pass and the general one give the same pose; just past it the
        // general one still agrees with the frame-by-frame product.
        for q in [[std::f64::consts::PI, 0.02], [-3.0, -1.0], [3.2, 0.5]] {
            let general = chain.tool_pose(&q);
            if let Some(checked) = chain.tool_pose_within_half_turns(&q) {
                assert_eq!(checked, general);
            }
            let mut slow = Isometry3::identity();
            for (joint, &position) in joints.iter().zip(&q) {
                slow = slow * joint.origin * joint.motion(position);
            }
            let slow = slow * Isometry3::translation(0.0, 0.0, 0.05);
            assert!((general.translation.vector - slow.translation.vector).norm() < 1e-15);
            assert!(general.rotation.angle_to(&slow.rotation) < 1e-15);
        }
    }

    #[test]
    fn sin_cos_hands_huge_and_bad_angles_to_the_standard_library() {
        for x in [2.0e5, -3.0e9, f64::INFINITY, f64::NAN] {
            let (s, c) = sin_cos(x);
            let (ws, wc) = x.sin_cos();
            assert!(s.to_bits() == ws.to_bits() || (s.is_nan() && ws.is_nan()));
            assert!(c.to_bits() == wc.to_bits() || (c.is_nan() && wc.is_nan()));
        }
    }
}
