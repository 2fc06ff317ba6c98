//! Forward kinematics: joint positions → every link frame and the tool-point pose.

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
/// origins.
///
/// # Errors
/// [`KinematicsError`] if the count is wrong or a position is not finite.
pub fn tool_pose(arm: &Arm, positions: &[f64]) -> Result<Isometry3<f64>, KinematicsError> {
    check_pose(arm.joint_count(), positions)?;
    Ok(arm.tool_chain().tool_pose(positions))
}

/// One joint of a [`ToolChain`]: a shift (m) in the frame before the joint, then a turn about
/// or a slide along `axis` (unit), both with every earlier origin's rotation folded in.
#[derive(Debug, Clone, Copy, PartialEq)]
struct ToolStep {
    shift: [f64; 3],
    axis: [f64; 3],
    prismatic: bool,
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
            prismatic: false,
        }; MAX_JOINTS];
        let mut turn = UnitQuaternion::identity();
        for (step, joint) in steps.iter_mut().zip(joints) {
            let shift = turn * joint.origin.translation.vector;
            turn *= joint.origin.rotation;
            let axis = turn * joint.axis.into_inner();
            *step = ToolStep {
                shift: [shift.x, shift.y, shift.z],
                axis: [axis.x, axis.y, axis.z],
                prismatic: joint.kind == JointKind::Prismatic,
            };
        }
        let tool_shift = turn * tool.translation.vector;
        let tool_turn = (turn * tool.rotation).into_inner();
        ToolChain {
            steps,
            count: joints.len().min(MAX_JOINTS),
            tool_shift: [tool_shift.x, tool_shift.y, tool_shift.z],
            tool_turn: [tool_turn.w, tool_turn.i, tool_turn.j, tool_turn.k],
        }
    }

    /// The tool pose for `positions` (rad or m, one per joint, already checked).
    #[inline]
    pub(crate) fn tool_pose(&self, positions: &[f64]) -> Isometry3<f64> {
        self.walk(positions, |_, _, _| {})
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
            let (linear, angular) = if step.prismatic {
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
        mut joint: impl FnMut(usize, [f64; 3], [f64; 3]),
    ) -> Isometry3<f64> {
        // Every joint's half-angle sine and cosine first: they do not depend on one another,
        // so they overlap, and the product below waits only on itself.
        let mut half = [(0.0, 1.0); MAX_JOINTS];
        for ((slot, &q), step) in half.iter_mut().zip(positions).zip(&self.steps) {
            if !step.prismatic {
                *slot = sin_cos(0.5 * q);
            }
        }
        let mut w = 1.0;
        let mut x = 0.0;
        let mut y = 0.0;
        let mut z = 0.0;
        let mut p = [0.0; 3];
        let count = self.count.min(positions.len());
        for index in 0..count {
            let step = &self.steps[index];
            let [ax, ay, az] = step.axis;
            let moved = turn_vector(w, x, y, z, step.shift);
            p = [p[0] + moved[0], p[1] + moved[1], p[2] + moved[2]];
            // A turn about the axis leaves the axis where it is: its direction now is its
            // direction after the joint moves.
            joint(index, turn_vector(w, x, y, z, step.axis), p);
            if step.prismatic {
                let q = positions[index];
                let slide = turn_vector(w, x, y, z, [ax * q, ay * q, az * q]);
                p = [p[0] + slide[0], p[1] + slide[1], p[2] + slide[2]];
            } else {
                let (s, c) = half[index];
                let (bx, by, bz) = (s * ax, s * ay, s * az);
                // (w, x, y, z) · (c, bx, by, bz), each term's products paired for a short
                // dependency chain.
                (w, x, y, z) = (
                    (w * c - x * bx) - (y * by + z * bz),
                    (w * bx + x * c) + (y * bz - z * by),
                    (w * by + y * c) + (z * bx - x * bz),
                    (w * bz + z * c) + (x * by - y * bx),
                );
            }
        }
        let moved = turn_vector(w, x, y, z, self.tool_shift);
        let [tw, tx, ty, tz] = self.tool_turn;
        let rotation = Quaternion::new(
            (w * tw - x * tx) - (y * ty + z * tz),
            (w * tx + x * tw) + (y * tz - z * ty),
            (w * ty + y * tw) + (z * tx - x * tz),
            (w * tz + z * tw) + (x * ty - y * tx),
        );
        Isometry3::from_parts(
            Translation3::new(p[0] + moved[0], p[1] + moved[1], p[2] + moved[2]),
            UnitQuaternion::new_unchecked(rotation),
        )
    }
}

/// `v` turned by the unit quaternion (w, x, y, z): v + 2w(u × v) + 2u × (u × v), u = (x, y, z).
#[inline(always)]
fn turn_vector(w: f64, x: f64, y: f64, z: f64, v: [f64; 3]) -> [f64; 3] {
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

/// Sine and cosine together, to within a few units in the last place of `f64::sin_cos`, for
/// the forward-kinematics hot path (std calls `sin` and `cos` separately, which is most of the
/// cost of a 5-joint pose). The angle is reduced to r within ±π/4 by a multiple of π/2, then
/// sin r and cos r come from the near-minimax polynomials of fdlibm's `__kernel_sin` and
/// `__kernel_cos` (Sun Microsystems, 1993; degree 13 and 14, error below 2⁻⁵⁸ of the result on
/// ±π/4; coefficients as published there, quoted from memory, to f64 precision, and checked by the test below
/// against the standard library). Angles beyond ±1e5 rad, and non-finite ones, go to the
/// standard library.
#[inline(always)]
pub(crate) fn sin_cos(x: f64) -> (f64, f64) {
    if x.is_nan() || x.abs() >= 1.0e5 {
        return x.sin_cos();
    }
    // Nearest whole k to x·2/π without a call or a branch: adding 1.5·2⁵² leaves no room for a
    // fraction, so the sum is rounded to a whole number, which the subtraction gives back.
    const ROUNDER: f64 = 6_755_399_441_055_744.0;
    let k = (x * std::f64::consts::FRAC_2_PI + ROUNDER) - ROUNDER;
    let r = (x - k * HALF_PI_HEAD) - k * HALF_PI_TAIL;
    let z = r * r;
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
    let sin = r + r * z * (S1 + z * (S2 + z * (S3 + z * (S4 + z * (S5 + z * S6)))));
    let cos = 1.0 - 0.5 * z + z * z * (C1 + z * (C2 + z * (C3 + z * (C4 + z * (C5 + z * C6)))));
    // x = r + k·π/2: turn (cos r, sin r) on by k quarter turns, from a table rather than a
    // branch, as random angles would make a branch mispredict often.
    const QUARTER_COS: [f64; 4] = [1.0, 0.0, -1.0, 0.0];
    const QUARTER_SIN: [f64; 4] = [0.0, 1.0, 0.0, -1.0];
    let quarter = (k as i64 & 3) as usize;
    let (qc, qs) = (QUARTER_COS[quarter], QUARTER_SIN[quarter]);
    (sin * qc + cos * qs, cos * qc - sin * qs)
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

    /// A joint at `origin` turning about or sliding along `axis`, with plain servo figures.
    fn placed(kind: JointKind, origin: Isometry3<f64>, axis: Unit<Vector3<f64>>) -> Joint {
        use crate::arm::{Calibration, JointSpec, MassProperties, ServoSpec};
        let spec = JointSpec {
            name: "test".into(),
            min: -4.0,
            max: 4.0,
            home: 0.0,
            servo: ServoSpec {
                stall_torque: 1.0,
                no_load_speed: 6.0,
                deadband_us: 4.0,
                proportional_band_us: 40.0,
                backlash: 0.0,
                mass: 0.05,
                mount_offset: Vector3::zeros(),
                drive_ratio: 1.0,
            },
            calibration: Calibration {
                position_a: -1.0,
                pulse_a_us: 1000.0,
                position_b: 1.0,
                pulse_b_us: 2000.0,
                pulse_min_us: 900.0,
                pulse_max_us: 2100.0,
            },
            link_mass: MassProperties::zero(),
        };
        Joint::new(0, spec, kind, origin, axis).expect("a valid joint")
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
            assert_eq!(tool, fast);
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
    fn sin_cos_hands_huge_and_bad_angles_to_the_standard_library() {
        for x in [2.0e5, -3.0e9, f64::INFINITY, f64::NAN] {
            let (s, c) = sin_cos(x);
            let (ws, wc) = x.sin_cos();
            assert!(s.to_bits() == ws.to_bits() || (s.is_nan() && ws.is_nan()));
            assert!(c.to_bits() == wc.to_bits() || (c.is_nan() && wc.is_nan()));
        }
    }
}
