//! Forward kinematics: joint positions → every link frame and the tool-point pose.

use nalgebra::{Isometry3, Quaternion, Translation3, Unit, UnitQuaternion, Vector3};

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
///
/// # Errors
/// [`KinematicsError`] if the count is wrong or a position is not finite.
pub fn tool_pose(arm: &Arm, positions: &[f64]) -> Result<Isometry3<f64>, KinematicsError> {
    check_pose(arm.joint_count(), positions)?;
    let mut current = Isometry3::identity();
    for (joint, &q) in arm.joints().iter().zip(positions) {
        current = joint_frame(&current, joint, q);
    }
    Ok(compose(&current, arm.tool_offset()))
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
/// sin r and cos r come from their Taylor series, sin r = Σ (−1)ⁿ r²ⁿ⁺¹/(2n+1)! to r¹⁷ and
/// cos r = Σ (−1)ⁿ r²ⁿ/(2n)! to r¹⁸, whose next terms are below 1e-19 there. Angles beyond
/// ±1e5 rad, and non-finite ones, go to the standard library.
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
    // 1/n! for the odd and even n, with alternating signs.
    let sin = r + r
        * z
        * (-1.0 / 6.0
            + z * (1.0 / 120.0
                + z * (-1.0 / 5040.0
                    + z * (1.0 / 362_880.0
                        + z * (-1.0 / 39_916_800.0
                            + z * (1.0 / 6_227_020_800.0
                                + z * (-1.0 / 1_307_674_368_000.0
                                    + z * (1.0 / 355_687_428_096_000.0))))))));
    let cos = 1.0 - 0.5 * z
        + z * z
            * (1.0 / 24.0
                + z * (-1.0 / 720.0
                    + z * (1.0 / 40_320.0
                        + z * (-1.0 / 3_628_800.0
                            + z * (1.0 / 479_001_600.0
                                + z * (-1.0 / 87_178_291_200.0
                                    + z * (1.0 / 20_922_789_888_000.0
                                        + z * (-1.0 / 6_402_373_705_728_000.0))))))));
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
