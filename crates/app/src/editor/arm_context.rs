//! What an area of the editor reads of the rest when it applies its own commands: the scene, the
//! arm built from it, the current pose and gripper, the input arm's pose, and what lets hardware
//! move (the caution acknowledged, no stop latched). Calibration and follow take this and their
//! own part of the state instead of the whole `EditorState`, so they sit below it; the state
//! builds it from its fields.

use armwright_kinematics::{Arm, JointKind};

use super::estop::StopState;
use crate::scene::{GripperState, JointKindDoc, Scene};

/// The editor around one area, read-only.
#[derive(Debug, Clone, Copy)]
pub(crate) struct ArmContext<'a> {
    /// The scene being edited (in the file's units).
    pub scene: &'a Scene,
    /// The arm model built from `scene.arm`; `None` when it cannot be built.
    pub arm: Option<&'a Arm>,
    /// The current pose: one position per joint, rad (revolute) or m (prismatic).
    pub pose: &'a [f64],
    /// The gripper's current state.
    pub gripper: GripperState,
    /// The input arm's joint positions, rad or m; `None` without readings or inputs.
    pub input_pose: Option<&'a [f64]>,
    /// Whether the streaming caution was acknowledged in this session.
    pub caution_acknowledged: bool,
    /// The emergency-stop latch.
    pub stop: StopState,
}

impl ArmContext<'_> {
    /// Whether an emergency stop is latched.
    pub fn stop_latched(&self) -> bool {
        matches!(self.stop, StopState::Latched { .. })
    }

    /// Whether the joint at `index` slides (mm) rather than turns (degrees).
    pub fn is_prismatic(&self, index: usize) -> bool {
        self.scene.arm.shape.joint_kinds().get(index) == Some(&JointKindDoc::Prismatic)
    }

    /// The joint's kind in the arm model (revolute when unknown).
    pub fn joint_kind(&self, joint: usize) -> JointKind {
        if self.is_prismatic(joint) {
            JointKind::Prismatic
        } else {
            JointKind::Revolute
        }
    }

    /// Clamps a position (rad or m) into the joint's limits.
    pub fn clamp_to_limits(&self, joint: usize, position: f64) -> f64 {
        match self.arm.and_then(|arm| arm.joints().get(joint)) {
            Some(spec) if spec.min <= spec.max => position.clamp(spec.min, spec.max),
            _ => position,
        }
    }

    /// A joint's name for messages: `joint 2 "elbow"`.
    pub fn joint_label(&self, joint: usize) -> String {
        match self.scene.arm.joints.get(joint) {
            Some(doc) => format!("joint {} \"{}\"", joint + 1, doc.name),
            None => format!("joint {}", joint + 1),
        }
    }
}
