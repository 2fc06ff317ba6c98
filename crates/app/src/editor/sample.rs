//! The scene the editor opens when no file is given: the bundled pen-plotter sample
//! (`sample-scenes/pen-plotter.armwright.json`, built into the binary), or, should that ever fail
//! to load, a small pen-holding arm built here that dots drill points on a panel. Both are our
//! own invented scenarios.

use crate::scene::field::filled;
use crate::scene::field_table::{articulated, servo};
use crate::scene::{
    ArmDoc, ArmShape, BandDoc, BoxDoc, CalibrationDoc, CalibrationPoint, GripperDoc, GripperState,
    JointDoc, LinkMassDoc, LinkSettings, MoveKind, Scene, ServoDoc, Timing, ToolMassDoc, TrayDoc,
    Waypoint, Workspace,
};

/// The bundled pen-plotter sample, as the file's bytes.
const PEN_PLOTTER: &[u8] = include_bytes!("../../../../sample-scenes/pen-plotter.armwright.json");

/// The sample scene the editor opens when no file is given.
pub fn sample_scene() -> Scene {
    crate::scene::load_bytes(PEN_PLOTTER).unwrap_or_else(|_| built_in_scene())
}

/// A pen-holding arm built in code, used if the bundled sample cannot be read: it takes the pen
/// from its holder and dots two drill points on a panel.
fn built_in_scene() -> Scene {
    let joint = |name: &str, min: f64, max: f64, home: f64, stall_ncm: f64, mass_g: f64| {
        JointDoc {
            name: name.to_string(),
            min,
            max,
            home,
            servo: ServoDoc {
                proportional_band: BandDoc::Us(40.0),
                ..filled(&[
                    (servo::STALL_TORQUE, stall_ncm),
                    (servo::NO_LOAD_SPEED, 300.0),
                    (servo::DEADBAND, 4.0),
                    (servo::BACKLASH, 0.5),
                    (servo::MASS, 55.0),
                ])
            },
            calibration: CalibrationDoc {
                points: [
                    // 10 µs per degree, centred on the joint's range.
                    CalibrationPoint {
                        position: (min + max) / 2.0 - 90.0,
                        pulse_us: 600,
                    },
                    CalibrationPoint {
                        position: (min + max) / 2.0 + 90.0,
                        pulse_us: 2400,
                    },
                ],
                pulse_min_us: 500,
                pulse_max_us: 2500,
                uncertainty: None,
            },
            link: LinkMassDoc {
                mass_g,
                centre_mm: [40.0, 0.0, 0.0],
                inertia_g_mm2: None,
                radius_mm: None,
            },
        }
    };
    let waypoint = |name: &str, joints: [f64; 4], gripper: GripperState| Waypoint {
        name: name.to_string(),
        joints_deg_or_mm: joints.to_vec(),
        move_kind: MoveKind::Joint,
        gripper,
        ..Waypoint::default()
    };
    Scene {
        description:
            "Pen plotter: take the pen and dot two drill points on a panel (built-in sample)".into(),
        arm: ArmDoc {
            shape: ArmShape::Articulated4(filled(&[
                (articulated::BASE_HEIGHT, 70.0),
                (articulated::UPPER_ARM, 120.0),
                (articulated::FOREARM, 110.0),
                (articulated::WRIST_TO_TOOL, 45.0),
            ])),
            joints: vec![
                joint("base", -90.0, 90.0, 0.0, 120.0, 60.0),
                joint("shoulder", -10.0, 150.0, 60.0, 200.0, 40.0),
                joint("elbow", -150.0, 10.0, -100.0, 150.0, 30.0),
                joint("wrist", -90.0, 90.0, -50.0, 60.0, 15.0),
            ],
            tool: ToolMassDoc {
                mass_g: 25.0,
                centre_mm: [15.0, 0.0, 0.0],
            },
            payload_g: 10.0,
            gripper: Some(GripperDoc {
                open_pulse_us: 1100,
                closed_pulse_us: 1800,
            }),
        },
        waypoints: vec![
            waypoint(
                "above holder",
                [-40.0, 60.0, -100.0, -50.0],
                GripperState::Open,
            ),
            waypoint(
                "take pen",
                [-40.0, 35.0, -90.0, -35.0],
                GripperState::Closed,
            ),
            waypoint(
                "drill point 1",
                [-15.0, 40.0, -110.0, -20.0],
                GripperState::Closed,
            ),
            waypoint(
                "drill point 2",
                [15.0, 40.0, -110.0, -20.0],
                GripperState::Closed,
            ),
        ],
        timing: Timing::default(),
        workspace: Workspace {
            table_height_mm: Some(0.0),
            boxes: vec![BoxDoc {
                name: "pen holder".into(),
                position_mm: [120.0, -110.0, 0.0],
                size_mm: [40.0, 40.0, 60.0],
            }],
            trays: vec![TrayDoc {
                name: "panel".into(),
                position_mm: [190.0, 40.0, 0.0],
                size_mm: [120.0, 160.0, 8.0],
                pockets: [1, 1],
            }],
        },
        link: LinkSettings::default(),
        inputs: Vec::new(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn both_samples_pass_the_scene_checks() {
        assert!(crate::scene::load_bytes(PEN_PLOTTER).is_ok());
        for scene in [sample_scene(), built_in_scene()] {
            assert_eq!(crate::scene::validate(&scene), Vec::new());
            assert!(crate::scene::build_arm(&scene.arm).is_ok());
        }
    }
}
