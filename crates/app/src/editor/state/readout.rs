//! What the editor works out from the pose and the last drag: the branch and the branches
//! offered, the drag's outcome, torque use, the accuracy budget and the heaviest payload.

use armwright_kinematics::{
    AccuracyBudget, Arm, PayloadLimit, accuracy_budget, gravity_torques, max_payload, torque_use,
};

use super::{BranchChoice, ReachStatus};

/// The readout of the current pose, recomputed whenever the pose or the arm changes.
#[derive(Debug, Clone, PartialEq)]
pub struct PoseReadout {
    /// The inverse-kinematics branch the arm is on, once known.
    pub branch: Option<String>,
    /// Other branches that reach the last drag target.
    pub branch_choices: Vec<BranchChoice>,
    /// The outcome of the last drag of the tool point.
    pub reach: ReachStatus,
    /// Torque use of each joint holding the current pose against gravity with the payload, as a
    /// share of its derated rating (1.0 = 100 %).
    pub torque_use: Vec<f64>,
    /// The tool point's accuracy budget at the current pose (from servo deadband and backlash).
    pub accuracy: Option<AccuracyBudget>,
    /// The heaviest payload the current pose can hold within the derated stall torque, as
    /// `pose --json` gives it (`max_payload_g`); cheap (two gravity passes), so recomputed on
    /// every pose change.
    pub max_payload: Option<PayloadLimit>,
}

impl Default for PoseReadout {
    fn default() -> PoseReadout {
        PoseReadout {
            branch: None,
            branch_choices: Vec::new(),
            reach: ReachStatus::Idle,
            torque_use: Vec::new(),
            accuracy: None,
            max_payload: None,
        }
    }
}

impl PoseReadout {
    /// Forgets the branch and the last drag's outcome: the arm was set some other way than by a
    /// drag.
    pub(crate) fn forget_drag(&mut self) {
        self.branch = None;
        self.branch_choices.clear();
        self.reach = ReachStatus::Idle;
    }

    /// Recomputes torque use, the accuracy budget and the heaviest payload of `pose` (rad or m
    /// per joint) on `arm` with the torque `derating` (a share, 1.0 = 100 %); with no arm there
    /// are none.
    pub(crate) fn recompute(&mut self, arm: Option<&Arm>, pose: &[f64], derating: f64) {
        let Some(arm) = arm else {
            self.torque_use.clear();
            self.accuracy = None;
            self.max_payload = None;
            return;
        };
        self.accuracy = accuracy_budget(arm, pose).ok();
        self.max_payload = max_payload(arm, pose, derating).ok();
        self.torque_use = gravity_torques(arm, pose, arm.payload_mass())
            .map(|efforts| torque_use(arm, &efforts, derating).as_slice().to_vec())
            .unwrap_or_default();
    }

    /// Index of the joint using the most of its rating, and that share, when any is above 1.0.
    pub fn worst_torque_overload(&self) -> Option<(usize, f64)> {
        self.torque_use
            .iter()
            .copied()
            .enumerate()
            .filter(|(_, share)| *share > 1.0)
            .max_by(|a, b| a.1.total_cmp(&b.1))
    }
}
