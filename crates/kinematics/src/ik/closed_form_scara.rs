//! Closed form for the horizontal-jointed arm (SCARA type): shoulder and elbow on vertical
//! axes form a planar two-link arm seen from above, the lift sets the height and the wrist roll
//! sets the tool yaw.
//!
//! Branches: "right-handed" has the elbow angle ≥ 0 (seen from above, the elbow lies to the
//! right of the line from shoulder to wrist), "left-handed" ≤ 0. They coincide, and are returned
//! once, when the arm is stretched.

use super::{BranchCollector, IkError, IkSolutions, IkTarget, planar_two_link};
use crate::arm::{Arm, ScaraDims};

/// Every in-limit branch for the target; `target.angle` is the tool yaw (rad), taken from `near`
/// when free. Inputs are already checked finite and of the right count.
pub(crate) fn solve(
    arm: &Arm,
    dims: &ScaraDims,
    target: &IkTarget,
    near: &[f64],
) -> Result<IkSolutions, IkError> {
    let yaw = target.angle.unwrap_or(near[0] + near[1] + near[3]);
    let position = target.position;
    let lift = position.z - dims.base_height + dims.tool_drop;
    let mut collector = BranchCollector::new();
    match planar_two_link::solve(
        dims.upper_arm,
        dims.forearm,
        position.x,
        position.y,
        near[0],
    ) {
        Err(short_by) => collector.out_of_reach(short_by),
        Ok(solutions) => {
            for ((shoulder, elbow), label) in [
                (solutions.bent_positive, "right-handed"),
                (solutions.bent_negative, "left-handed"),
            ] {
                let roll = yaw - shoulder - elbow;
                collector.offer(arm, &[shoulder, elbow, lift, roll], near, label);
            }
        }
    }
    collector.finish()
}
