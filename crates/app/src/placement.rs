//! Placement success for a scene: each pick or place (a waypoint where the gripper acts) is
//! estimated with that waypoint's own tolerance (`placement_tolerance_mm`, else 2 mm) and with
//! each joint's calibration uncertainty (`calibration.uncertainty_deg` or `_mm`, written by
//! `armwright calibrate --write` from the fit's residuals, else the estimate's default), all
//! through the field table's rows. `simulate` and the editor's retime panel both call here.

use armwright_kinematics::{Arm, MAX_JOINTS};
use armwright_trajectory::{DryRun, PlacementEstimate, PlacementOptions, placement_estimate};

use crate::scene::field_table as table;
use crate::scene::{Scene, pose_from_file_units};

/// Placement tolerance of a waypoint that gives none, in mm.
pub const DEFAULT_PLACEMENT_TOLERANCE_MM: f64 = 2.0;

/// One pick or place: the estimate and the tolerance it was made for.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Placement {
    /// The estimate.
    pub estimate: PlacementEstimate,
    /// The waypoint's tolerance, in mm.
    pub tolerance_mm: f64,
}

/// The placement settings for waypoint `index` of `scene`: its tolerance, and every joint's
/// calibration uncertainty where the scene gives one (degrees or mm → rad or m through the
/// row).
pub fn placement_options_of(scene: &Scene, index: usize) -> PlacementOptions {
    let tolerance_mm = scene
        .waypoints
        .get(index)
        .and_then(|w| table::waypoint::PLACEMENT_TOLERANCE.value(w))
        .unwrap_or(DEFAULT_PLACEMENT_TOLERANCE_MM);
    let row = &table::calibration::UNCERTAINTY;
    let mut joint_calibration_sd = [None; MAX_JOINTS];
    let kinds = scene.arm.shape.joint_kinds();
    for ((slot, joint), kind) in joint_calibration_sd
        .iter_mut()
        .zip(&scene.arm.joints)
        .zip(kinds)
    {
        *slot = row
            .value(&joint.calibration)
            .map(|_| row.si(&joint.calibration, kind));
    }
    PlacementOptions {
        tolerance: tolerance_mm / 1e3,
        joint_calibration_sd,
        ..PlacementOptions::default()
    }
}

/// Per waypoint of `scene`, the placement estimate where the gripper acts in `run` (`None`
/// elsewhere).
///
/// # Errors
/// A sentence naming the waypoint whose pose does not fit the arm.
pub fn placements_of(
    scene: &Scene,
    arm: &Arm,
    run: &DryRun,
) -> Result<Vec<Option<Placement>>, String> {
    scene
        .waypoints
        .iter()
        .zip(&run.waypoints)
        .enumerate()
        .map(|(index, (waypoint, result))| {
            if result.gripper_acts.is_none() {
                return Ok(None);
            }
            let options = placement_options_of(scene, index);
            let pose = pose_from_file_units(&scene.arm, &waypoint.joints_deg_or_mm);
            placement_estimate(arm, &pose, result.resting_offset, &options)
                .map(|estimate| {
                    Some(Placement {
                        estimate,
                        tolerance_mm: options.tolerance * 1e3,
                    })
                })
                .map_err(|error| format!("waypoint \"{}\": {error}", waypoint.name))
        })
        .collect()
}
