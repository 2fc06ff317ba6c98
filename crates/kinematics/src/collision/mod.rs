//! Collision geometry of one pose: the arm's links as capsules, the workspace's obstacles, and
//! signed distances between them. Time is not known here; checking along a plan is the
//! trajectory crate's `clearance.rs`.
//!
//! Naming scheme: `arm_shape.rs` (the links as capsules around the segments between joint
//! origins, their default radii from the servo size, which pairs are neighbours, and how far a
//! link can move for a change of the joints), `obstacle.rs` (the table half-space and
//! axis-aligned boxes), `carried.rs` (a box held in the gripper, fixed to the tool frame, against
//! the obstacles), `separation.rs` (signed distances through `parry3d-f64`, and the
//! clearance of one pose).
//!
//! Distances are signed, in m: positive is the gap between two shapes, negative the depth by
//! which they overlap.

mod arm_shape;
mod carried;
mod obstacle;
mod separation;

pub use arm_shape::{ArmShape, LinkShape, MAX_LINKS, PlacedArm, ShapeError};
pub use carried::CarriedBox;
pub use obstacle::{Obstacle, ObstacleShape};
pub use separation::{
    Other, Pair, Proximity, pair_distance, pair_distance_bound, pose_proximities,
};
