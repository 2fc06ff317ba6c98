//! Moving the edited arm: a joint, the gripper, the held tool angle, a drag of the tool point
//! through inverse kinematics (staying on the arm's branch), and a switch to another branch.

use armwright_kinematics::{IkError, IkOptions, IkTarget, JointKind, solve_ik};
use nalgebra::Vector3;

use crate::editor::state::{BranchChoice, EditorState, Level, ReachStatus};
use crate::scene::{GripperState, position_to_file_unit};

/// A revolute joint turning more than this in one drag step counts as a jump to another branch,
/// in rad (60°): the nearest solution near a singular pose can be far away.
const BRANCH_JUMP: f64 = std::f64::consts::FRAC_PI_3;

/// A prismatic joint sliding more than this in one drag step counts as a jump, in m.
const SLIDE_JUMP: f64 = 0.05;

/// Sets one joint (rad or m), held inside its limits.
pub(super) fn set_joint(state: &mut EditorState, joint: usize, position: f64) {
    if joint < state.pose.len() && position.is_finite() {
        state.pose[joint] = state.clamp_to_limits(joint, position);
        state.readout.forget_drag();
        state.pose_changed();
    }
}

/// Opens or closes the gripper of the edited pose.
pub(super) fn set_gripper(state: &mut EditorState, gripper: GripperState) {
    state.gripper = gripper;
}

/// Sets the tool angle a drag holds (rad), wrapped into (−π, π].
pub(super) fn set_tool_angle(state: &mut EditorState, angle: f64) {
    if angle.is_finite() {
        state.tool_angle = wrap_angle(angle);
    }
}

/// Puts the arm on the branch the user picked among those the last drag offered.
pub(super) fn choose_branch(state: &mut EditorState, index: usize) {
    if let Some(choice) = state.readout.branch_choices.get(index).cloned()
        && choice.positions.len() == state.pose.len()
    {
        state.pose = choice.positions;
        state.readout.branch = Some(choice.label.clone());
        state.readout.branch_choices.clear();
        state.readout.reach = ReachStatus::Reached;
        state.pose_changed();
        state.say(
            Level::Info,
            format!("switched to branch \"{}\"", choice.label),
        );
    }
}

/// Moves the tool point to `target` (m, base frame) at the held tool angle, staying on the
/// arm's branch; says why when it cannot.
pub(super) fn drag_tool_point(state: &mut EditorState, target: [f64; 3]) {
    let Some(arm) = state.arm.as_ref() else {
        return;
    };
    let ik_target =
        IkTarget::at(Vector3::new(target[0], target[1], target[2])).with_angle(state.tool_angle);
    match solve_ik(arm, &ik_target, &state.pose, &IkOptions::default()) {
        Ok(solutions) => {
            let branches = solutions.as_slice();
            let chosen = match &state.readout.branch {
                Some(label) => branches.iter().find(|branch| branch.label() == label),
                None => Some(solutions.nearest(&state.pose)),
            };
            let kinds: Vec<JointKind> = (0..state.pose.len())
                .map(|joint| state.joint_kind(joint))
                .collect();
            let continuous =
                chosen.filter(|branch| !jumps(&kinds, &state.pose, branch.positions()));
            state.readout.branch_choices = branches
                .iter()
                .filter(|branch| Some(branch.label()) != continuous.map(|c| c.label()))
                .map(|branch| BranchChoice {
                    label: branch.label().to_string(),
                    positions: branch.positions().to_vec(),
                })
                .collect();
            match continuous {
                Some(branch) => {
                    state.pose = branch.positions().to_vec();
                    state.readout.branch = Some(branch.label().to_string());
                    state.readout.reach = ReachStatus::Reached;
                    let angle = state.tool_angle;
                    state.pose_changed();
                    // Keep the angle the user set, not the one read back (they agree up to
                    // rounding, and reading back would let it creep).
                    state.tool_angle = angle;
                }
                None => state.readout.reach = ReachStatus::OtherBranchOnly,
            }
        }
        Err(IkError::OutOfReach { short_by }) => {
            state.readout.reach = ReachStatus::OutOfReach {
                short_by_mm: short_by * 1e3,
            };
        }
        Err(IkError::BeyondLimit {
            joint,
            position,
            by,
        }) => {
            let kind = state.scene.arm.shape.joint_kinds();
            let kind = kind
                .get(joint)
                .copied()
                .unwrap_or(crate::scene::JointKindDoc::Revolute);
            state.readout.reach = ReachStatus::AtJointLimit {
                joint,
                needed: position_to_file_unit(kind, position),
                past_by: position_to_file_unit(kind, by),
            };
        }
        Err(error) => {
            state.readout.reach = ReachStatus::NotSolved {
                reason: error.to_string(),
            };
        }
    }
}

/// Whether going from `from` to `to` moves a joint by more than one drag step can.
fn jumps(kinds: &[JointKind], from: &[f64], to: &[f64]) -> bool {
    kinds
        .iter()
        .zip(from.iter().zip(to))
        .any(|(kind, (a, b))| match kind {
            JointKind::Revolute => (a - b).abs() > BRANCH_JUMP,
            JointKind::Prismatic => (a - b).abs() > SLIDE_JUMP,
        })
}

/// An angle wrapped into (−π, π], in rad.
fn wrap_angle(angle: f64) -> f64 {
    let wrapped = angle.rem_euclid(std::f64::consts::TAU);
    if wrapped > std::f64::consts::PI {
        wrapped - std::f64::consts::TAU
    } else {
        wrapped
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn angles_wrap_into_half_open_turn() {
        assert!((wrap_angle(3.0 * std::f64::consts::PI) - std::f64::consts::PI).abs() < 1e-12);
        assert!((wrap_angle(-0.5) + 0.5).abs() < 1e-12);
    }

    #[test]
    fn a_small_step_is_not_a_jump_but_a_flip_is() {
        let kinds = [JointKind::Revolute, JointKind::Prismatic];
        assert!(!jumps(&kinds, &[0.0, 0.0], &[0.1, 0.01]));
        assert!(jumps(&kinds, &[0.0, 0.0], &[2.0, 0.0]));
        assert!(jumps(&kinds, &[0.0, 0.0], &[0.0, 0.2]));
    }
}
