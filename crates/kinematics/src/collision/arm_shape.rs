//! The arm's links as capsules: one around the segment between a joint's origin and the next
//! joint's origin (the last one reaches the tool point and stands for the gripper or tool), with
//! a radius in m.

use nalgebra::{Point3, Vector3};

use crate::arm::{Arm, ArmType, JointKind, MAX_JOINTS};
use crate::fk::ChainPose;

/// Largest number of links an arm shape has: one per joint and a fixed base column.
pub const MAX_LINKS: usize = MAX_JOINTS + 1;

/// Mass of the servo whose body is [`SERVO_WIDTH_M`] wide, in kg.
const REFERENCE_SERVO_MASS: f64 = 0.055;
/// Width of a standard-size hobby servo of 55 g (about 40 × 20 × 38 mm; from memory), in m.
const SERVO_WIDTH_M: f64 = 0.020;
/// Smallest and largest default radius, in m: a bracket is never thinner than a micro servo's
/// half width, nor a hobby arm's link thicker than 50 mm.
const DEFAULT_RADIUS_RANGE: (f64, f64) = (0.004, 0.025);

/// One link of the arm: a capsule around the segment from `start` to `end`, both in the frame of
/// the joint that moves it (or the base frame for a fixed link), in m.
#[derive(Debug, Clone, PartialEq)]
pub struct LinkShape {
    /// A name for reports: "base column", "upper arm", "forearm", "gripper" or "tool" for the
    /// built-in arm types; "`<joint name>` link" for a general chain.
    pub name: String,
    /// The joint whose frame the link moves with (0-based), or `None` for a link fixed to the
    /// base.
    pub body: Option<usize>,
    /// One end of the segment, in the body's frame, in m.
    pub start: Vector3<f64>,
    /// The other end of the segment, in the body's frame, in m.
    pub end: Vector3<f64>,
    /// Radius of the capsule, in m.
    pub radius: f64,
}

/// A radius that cannot be used.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum ShapeError {
    /// A link radius is not a positive, finite length.
    #[error("link radius of joint {joint} must be a positive, finite length, got {:.3} mm", .radius * 1e3)]
    Radius {
        /// The joint whose link it is, 0-based.
        joint: usize,
        /// The bad value, in m.
        radius: f64,
    },
    /// A radius was given for a joint the arm does not have.
    #[error("joint {joint} does not exist; the arm has {count} joints")]
    NoSuchJoint {
        /// The joint index given.
        joint: usize,
        /// The arm's joint count.
        count: usize,
    },
}

/// The collision shape of an arm: its links in chain order, base first, the last one carrying
/// the tool point. Links next to each other in this list are neighbours (they meet at a joint)
/// and are never checked against each other.
#[derive(Debug, Clone, PartialEq)]
pub struct ArmShape {
    links: Vec<LinkShape>,
    /// Per link, per joint: the part of the lever arm (m) from that joint's origin to the
    /// farthest point of the link that does not depend on the pose.
    levers: Vec<[f64; MAX_JOINTS]>,
    prismatic: [bool; MAX_JOINTS],
    joint_count: usize,
}

/// Every link's segment in the base frame for one pose: start and end, in m.
#[derive(Debug, Clone, Copy)]
pub struct PlacedArm {
    segments: [(Vector3<f64>, Vector3<f64>); MAX_LINKS],
    count: usize,
}

impl PlacedArm {
    /// Each link's segment (start, end) in the base frame, in m, in the order of
    /// [`ArmShape::links`].
    pub fn segments(&self) -> &[(Vector3<f64>, Vector3<f64>)] {
        &self.segments[..self.count]
    }
}

impl ArmShape {
    /// The arm's links with default radii: half the width of the larger servo at either end of
    /// the link, the width estimated from the servo's mass (a standard 55 g servo is about 20 mm
    /// wide, and width grows with the cube root of mass; from memory), kept within 4–25 mm.
    ///
    /// The arm type decides which segments are links: a horizontal-jointed arm has a fixed base
    /// column up to its shoulder, and its lift and wrist roll share one link with the gripper
    /// below them; a vertical articulated arm's base column turns with the base joint and its
    /// wrist roll has no length of its own.
    pub fn of(arm: &Arm) -> ArmShape {
        let joints = arm.joints();
        let n = joints.len();
        let width = |index: usize| joints.get(index).map_or(0.0, |j| servo_width(j.servo.mass));
        let radius_of = |body: Option<usize>| {
            let widest = match body {
                None => width(0),
                Some(k) => width(k).max(width(k + 1)),
            };
            (widest / 2.0).clamp(DEFAULT_RADIUS_RANGE.0, DEFAULT_RADIUS_RANGE.1)
        };
        let origin = |index: usize| {
            joints
                .get(index)
                .map_or(arm.tool_offset().translation.vector, |j| {
                    j.origin.translation.vector
                })
        };
        let tool_name = if arm.gripper().is_some() {
            "gripper"
        } else {
            "tool"
        };
        let last = n - 1;
        let mut spans: Vec<(String, Option<usize>, Vector3<f64>)> = Vec::new();
        match arm.arm_type() {
            ArmType::Articulated4(_) | ArmType::Articulated5(_) => {
                spans.push(("base column".into(), Some(0), origin(1)));
                spans.push(("upper arm".into(), Some(1), origin(2)));
                spans.push(("forearm".into(), Some(2), origin(3)));
            }
            ArmType::Scara(_) => {
                spans.push(("base column".into(), None, origin(0)));
                spans.push(("upper arm".into(), Some(0), origin(1)));
                spans.push(("forearm".into(), Some(1), origin(2)));
            }
            ArmType::Chain(_) => {
                if origin(0).norm() > 0.0 {
                    spans.push(("base column".into(), None, origin(0)));
                }
                for (index, joint) in joints.iter().enumerate().take(last) {
                    let end = origin(index + 1);
                    if end.norm() > 0.0 {
                        spans.push((format!("{} link", joint.name), Some(index), end));
                    }
                }
            }
        }
        // The last joint's link reaches the tool point. Its segment stops one radius short of
        // the tool point, so the capsule's tip is the tool point itself.
        let tool = origin(n);
        spans.push((tool_name.into(), Some(last), tool));
        let links = spans
            .into_iter()
            .map(|(name, body, end)| LinkShape {
                name,
                body,
                start: Vector3::zeros(),
                end,
                radius: radius_of(body),
            })
            .collect();
        let mut prismatic = [false; MAX_JOINTS];
        for (flag, joint) in prismatic.iter_mut().zip(joints) {
            *flag = joint.kind == JointKind::Prismatic;
        }
        let mut shape = ArmShape {
            links,
            levers: Vec::new(),
            prismatic,
            joint_count: n,
        };
        shape.update_levers(arm);
        shape
    }

    /// The same shape with the link moved by joint `joint` given `radius` m. The gripper (or
    /// tool) is the last joint's link.
    ///
    /// # Errors
    /// [`ShapeError`] for a radius that is not positive and finite, or a joint the arm lacks.
    pub fn with_radius(
        mut self,
        arm: &Arm,
        joint: usize,
        radius: f64,
    ) -> Result<ArmShape, ShapeError> {
        if joint >= self.joint_count {
            return Err(ShapeError::NoSuchJoint {
                joint,
                count: self.joint_count,
            });
        }
        if !(radius.is_finite() && radius > 0.0) {
            return Err(ShapeError::Radius { joint, radius });
        }
        for link in self.links.iter_mut().filter(|l| l.body == Some(joint)) {
            link.radius = radius;
        }
        self.update_levers(arm);
        Ok(self)
    }

    /// The links, base first; the last carries the tool point.
    pub fn links(&self) -> &[LinkShape] {
        &self.links
    }

    /// The index of the link carrying the tool point (the gripper or tool).
    pub fn tool_link(&self) -> usize {
        self.links.len() - 1
    }

    /// Whether links `a` and `b` meet at a joint (or are the same link), so are not checked
    /// against each other.
    pub fn neighbours(&self, a: usize, b: usize) -> bool {
        a.abs_diff(b) <= 1
    }

    /// Every link's segment in the base frame for the pose `pose` (from [`crate::forward`]). The
    /// tool link's segment ends one radius short of the tool point, so that its capsule ends at
    /// the tool point.
    pub fn place(&self, pose: &ChainPose) -> PlacedArm {
        let frames = pose.frames();
        let mut segments = [(Vector3::zeros(), Vector3::zeros()); MAX_LINKS];
        let tool_link = self.tool_link();
        for (index, (link, segment)) in self.links.iter().zip(segments.iter_mut()).enumerate() {
            let (start, mut end) = match link.body.and_then(|k| frames.get(k)) {
                Some(frame) => (
                    frame * Point3::from(link.start),
                    frame * Point3::from(link.end),
                ),
                None => (Point3::from(link.start), Point3::from(link.end)),
            };
            if index == tool_link {
                let along = end - start;
                let length = along.norm();
                end = if length > link.radius {
                    end - along * (link.radius / length)
                } else {
                    start
                };
            }
            *segment = (start.coords, end.coords);
        }
        PlacedArm {
            segments,
            count: self.links.len(),
        }
    }

    /// An upper bound of how far any point of each link moves (m) when the joints go from
    /// `from` to `to` (rad or m, one per joint), each joint moving one way only: a revolute
    /// joint's turn times its lever arm to the link's farthest point, plus a sliding joint's
    /// travel. Written to `out`, one per link (as many as both hold).
    pub fn sweep(&self, from: &[f64], to: &[f64], out: &mut [f64]) {
        let n = self.joint_count.min(from.len()).min(to.len());
        for (link, (moved, levers)) in self.links.iter().zip(out.iter_mut().zip(&self.levers)) {
            let Some(body) = link.body else {
                *moved = 0.0;
                continue;
            };
            let last = body.min(n.saturating_sub(1));
            // Sliding joints after a turning one lengthen its lever arm by their travel.
            let mut slide_beyond = 0.0;
            let mut total = 0.0;
            for j in (0..=last).rev() {
                let step = (to[j] - from[j]).abs();
                if self.prismatic[j] {
                    total += step;
                    slide_beyond += from[j].abs().max(to[j].abs());
                } else {
                    total += step * (levers[j] + slide_beyond);
                }
            }
            *moved = total;
        }
    }

    fn update_levers(&mut self, arm: &Arm) {
        let joints = arm.joints();
        self.levers = self
            .links
            .iter()
            .map(|link| {
                let mut levers = [0.0; MAX_JOINTS];
                if let Some(body) = link.body {
                    let reach = link.start.norm().max(link.end.norm()) + link.radius;
                    // From joint j's origin to the link's frame: the fixed offsets between.
                    let mut between = 0.0;
                    for j in (0..=body.min(MAX_JOINTS - 1)).rev() {
                        levers[j] = between + reach;
                        between += joints[j].origin.translation.vector.norm();
                    }
                }
                levers
            })
            .collect();
    }
}

/// Estimated width of a hobby servo's body from its mass (kg), in m.
fn servo_width(mass: f64) -> f64 {
    SERVO_WIDTH_M * (mass.max(0.0) / REFERENCE_SERVO_MASS).cbrt()
}
