//! The input arm in the editor: the pose the connected device's analog inputs give through the
//! scene's `inputs` (drawn over the edited arm as a third overlay), and capturing that pose
//! into the sequence with one key, as a new waypoint (one undo step, like Store).

use egui::{Color32, Key};

use super::command::Command;
use super::state::EditorState;
use crate::scene::{input_map_of, pose_from_file_units, pose_to_file_units};

/// The key that captures the input arm's pose as a waypoint.
pub const CAPTURE_KEY: Key = Key::I;

/// The capture key as the window names it.
pub const CAPTURE_KEY_NAME: &str = "I";

/// The input arm's colour (amber: apart from the sky-blue edited arm, the mint device arm, the
/// grey dry-run arm and the map's viridis ramp).
pub const INPUT_ARM: Color32 = Color32::from_rgb(245, 180, 70);

/// Shown when the capture key finds no input arm.
pub const NO_INPUT_ARM: &str = "no input arm to capture: connect a device that sends analog \
                                readings (protocol 3) and map its inputs to joints in the \
                                scene's \"inputs\" (Arm tab, \"Input arm\")";

/// The input arm's pose (rad or m per joint) from `readings` (0–4095, input 0 first): each
/// mapped joint from its input, every other joint as edited. `None` when the scene maps no
/// input or its inputs have problems (`armwright check` names them).
pub fn input_arm_pose(state: &EditorState, readings: &[u16]) -> Option<Vec<f64>> {
    let map = input_map_of(&state.scene).ok()?;
    if map.is_empty() || state.pose.len() != state.joint_count() {
        return None;
    }
    let edited = pose_to_file_units(&state.scene.arm, &state.pose);
    let pose = map.pose(readings, &edited);
    Some(pose_from_file_units(
        &state.scene.arm,
        &pose.joints_deg_or_mm,
    ))
}

/// What the capture key does: move the edited arm to the input arm's pose (each joint within
/// its limits) and store it as a new waypoint after the selected one; `None` when there is no
/// input arm.
pub fn capture_command(state: &EditorState) -> Option<Command> {
    let pose = state.device.input_pose.as_ref()?;
    let mut commands: Vec<Command> = pose
        .iter()
        .enumerate()
        .map(|(joint, &position)| Command::SetJoint { joint, position })
        .collect();
    commands.push(Command::StoreWaypoint);
    Some(Command::Many(commands))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::editor::sample_scene;
    use crate::scene::{InputDoc, InputPointDoc};

    #[test]
    fn the_input_arm_moves_mapped_joints_and_keeps_the_rest_as_edited() {
        let mut scene = sample_scene();
        scene.inputs = vec![InputDoc {
            input: 1,
            joint: scene.arm.joints[0].name.clone(),
            points: vec![
                InputPointDoc {
                    reading: 1048,
                    position: -40.0,
                },
                InputPointDoc {
                    reading: 3048,
                    position: 40.0,
                },
            ],
        }];
        let mut state = EditorState::new(scene, None);
        let pose = input_arm_pose(&state, &[0, 2548]).expect("mapped");
        assert!((pose[0].to_degrees() - 20.0).abs() < 1e-9, "{pose:?}");
        for (kept, edited) in pose[1..].iter().zip(&state.pose[1..]) {
            assert!((kept - edited).abs() < 1e-12, "{pose:?}");
        }
        assert!(capture_command(&state).is_none(), "no readings yet");
        state.device.input_pose = Some(pose.clone());
        let Some(Command::Many(commands)) = capture_command(&state) else {
            panic!("a capture command");
        };
        assert_eq!(commands.len(), pose.len() + 1);
        assert!(matches!(commands.last(), Some(Command::StoreWaypoint)));
    }
}
