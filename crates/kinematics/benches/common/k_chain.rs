//! The same arm built in the `k` crate (crates.io `k` 0.32, a general kinematics library), for
//! benchmarks side by side with ours.
#![allow(dead_code)]

use armwright_kinematics::{Arm, JointKind};
use k::nalgebra as kn;

fn k_isometry(pose: &nalgebra::Isometry3<f64>) -> (kn::Translation3<f64>, kn::UnitQuaternion<f64>) {
    let t = pose.translation.vector;
    let q = pose.rotation.quaternion();
    (
        kn::Translation3::new(t.x, t.y, t.z),
        kn::UnitQuaternion::from_quaternion(kn::Quaternion::new(q.w, q.i, q.j, q.k)),
    )
}

/// `arm` as a `k` serial chain: one node per joint (origin, axis, limits), then a fixed node for
/// the tool offset.
pub fn k_chain(arm: &Arm) -> k::SerialChain<f64> {
    let mut nodes: Vec<k::Node<f64>> = Vec::new();
    for (index, joint) in arm.joints().iter().enumerate() {
        let (translation, rotation) = k_isometry(&joint.origin);
        let axis =
            kn::Unit::new_normalize(kn::Vector3::new(joint.axis.x, joint.axis.y, joint.axis.z));
        let joint_type = match joint.kind {
            JointKind::Revolute => k::JointType::Rotational { axis },
            JointKind::Prismatic => k::JointType::Linear { axis },
        };
        nodes.push(
            k::NodeBuilder::new()
                .name(&format!("joint{index}"))
                .translation(translation)
                .rotation(rotation)
                .joint_type(joint_type)
                .limits(Some(k::joint::Range::new(joint.min, joint.max)))
                .into_node(),
        );
    }
    let (translation, rotation) = k_isometry(arm.tool_offset());
    nodes.push(
        k::NodeBuilder::new()
            .name("tool")
            .translation(translation)
            .rotation(rotation)
            .joint_type(k::JointType::Fixed)
            .into_node(),
    );
    for pair in nodes.windows(2) {
        pair[1].set_parent(&pair[0]);
    }
    k::SerialChain::new_unchecked(k::Chain::from_root(nodes[0].clone()))
}

/// A `k` isometry as ours.
pub fn from_k(pose: &kn::Isometry3<f64>) -> nalgebra::Isometry3<f64> {
    let t = pose.translation.vector;
    let q = pose.rotation.quaternion();
    nalgebra::Isometry3::from_parts(
        nalgebra::Translation3::new(t.x, t.y, t.z),
        nalgebra::UnitQuaternion::from_quaternion(nalgebra::Quaternion::new(q.w, q.i, q.j, q.k)),
    )
}

/// Our isometry as `k`'s.
pub fn to_k(pose: &nalgebra::Isometry3<f64>) -> kn::Isometry3<f64> {
    let (translation, rotation) = k_isometry(pose);
    kn::Isometry3::from_parts(translation, rotation)
}
