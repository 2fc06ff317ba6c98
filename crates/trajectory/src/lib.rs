//! Velocity profiles, multi-joint synchronisation, sequence plans and sampling, input shaping
//! and second-order response estimates for small servo arms.
//!
//! # Conventions
//!
//! SI units throughout: positions in rad (m for a sliding joint), velocities in rad/s,
//! accelerations in rad/s², jerks in rad/s³, time in s measured from the start of a move,
//! frequencies in rad/s. Limits are symmetric per joint and given as plain numbers. A number in
//! another unit carries the unit in its name. No function panics on any input; bad inputs give a
//! typed error.
//!
//! # Example
//!
//! Plan a three-waypoint sequence for two joints and look at where it ends (a task planned on
//! an arm, [`plan_task`], is sampled for streaming by [`TaskPlan::sampler`]):
//!
//! ```
//! use armwright_trajectory::{
//!     JointLimits, ProfileShape, SequenceWaypoint, WaypointKind, plan_sequence,
//! };
//! let limits = [JointLimits::new(3.0, 12.0, 120.0), JointLimits::new(2.0, 8.0, 80.0)];
//! let waypoint = |positions: Vec<f64>, kind, speed_share| SequenceWaypoint {
//!     positions,
//!     kind,
//!     speed_share,
//! };
//! let waypoints = [
//!     waypoint(vec![0.0, 0.0], WaypointKind::Stop { dwell: 0.0 }, 1.0),
//!     waypoint(vec![0.6, 0.3], WaypointKind::PassThrough, 0.8),
//!     waypoint(vec![1.2, 0.1], WaypointKind::Stop { dwell: 0.5 }, 1.0),
//! ];
//! let plan = plan_sequence(ProfileShape::DoubleS, &waypoints, &limits)?;
//! let mut end = [0.0; 2];
//! plan.positions_at(plan.duration(), &mut end);
//! assert_eq!(end, [1.2, 0.1]);
//! # Ok::<(), armwright_trajectory::SequenceError>(())
//! ```
#![warn(missing_docs)]

mod approach; // the slow planned move from the device's pose to waypoint 1, and the park move
mod arm_limits; // limits a plan takes from the arm's servos, masses and gravity
mod arm_plan; // a task planned on a real arm: limits, gripper payload, waypoint timings
mod clearance; // the arm against obstacles and itself along a plan and along the dry run
mod dry_run; // a plan run through the servo model: overshoot, settling, following error
mod follower; // the connected arm following a changing target live: jerk-limited, speed-capped
mod placement; // share of picks and places within tolerance: Monte Carlo and closed form
mod profile; // one joint's move: trapezoid and double-S profiles, evaluation, stretching
mod retime; // the fastest timing whose dry run meets an overshoot and torque target
mod sample; // the one sampler: a task plan at a fixed rate (50–1000 Hz) as named samples
mod second_order; // linear second-order response: overshoot, settling time, damped frequency
mod sequence; // waypoints → timed moves and dwells, pass-through velocities, evaluation
mod servo_sim; // the hobby-servo model: position loop, torque-speed line, friction, backlash
mod shaping; // ZV and ZVD input shapers and shaped profiles
mod straight_move; // the tool point on a straight line, through inverse kinematics along it
mod sync; // several joints of one move: start and end together, slowest sets the duration

pub use crate::approach::{
    Approach, ApproachStart, plan_approach, plan_park, streamed_samples, wake_order,
};
pub use crate::arm_limits::{LimitError, LimitSettings, limits_from_arm};
pub use crate::arm_plan::{PlanError, Task, TaskPlan, TaskPlanner, TaskWaypoint, plan_task};
pub use crate::clearance::*; // Clearance, ClearanceOptions, Workcell, Carry, plan_clearance, dry_run_clearance, grip_exemptions, carried_objects
pub use crate::dry_run::{
    CommandedMotion, DryRun, DryRunError, DryRunOptions, GRIPPER_TIME, WaypointResult,
    WaypointTiming, dry_run, gripper_moment,
};
pub use crate::follower::{FollowError, FollowJoint, Follower};
pub use crate::placement::{
    MAX_PLACEMENT_DRAWS, PlacementEstimate, PlacementOptions, disc_probability, placement_estimate,
};
pub use crate::profile::{
    Boundary, JointLimits, JointMove, JointState, LimitKind, Profile, ProfileError, ProfileShape,
    ProfileTimes,
};
pub use crate::retime::{
    Binding, Planner, RetimeError, RetimeTarget, Retimed, RunSummary, Timing, retime,
};
pub use crate::sample::{MAX_SAMPLE_RATE_HZ, MIN_SAMPLE_RATE_HZ, Sample, Sampler};
pub use crate::second_order::{SecondOrder, VibrationError};
pub use crate::sequence::{
    Segment, SegmentKind, SequenceError, SequencePlan, SequenceWaypoint, WaypointKind,
    plan_sequence, plan_sequence_shaped,
};
pub use crate::servo_sim::{
    JointLoad, MAX_RUN_DURATION, ServoModel, ServoModelOptions, ServoSimError, ServoStepper,
    ServoTrace, simulate,
};
pub use crate::shaping::{Impulse, ShapedProfile, Shaper, ShaperKind};
pub use crate::straight_move::{LINE_TOLERANCE, StraightMoveError, straight_path};
pub use crate::sync::{MAX_JOINTS, SyncError, SyncedMove, synchronise};
