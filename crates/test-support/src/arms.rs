//! The invented arms of the kinematics and trajectory tests and benchmarks: a horizontal-jointed
//! arm, a 4- or 5-joint articulated arm and random chains by origin and axis. Invented
//! hobby-servo figures, for tests only.

use armwright_kinematics::{
    Arm, ArmDescription, ArmType, ArticulatedDims, Calibration, ChainDims, JointKind,
    JointPlacement, JointSpec, MassProperties, ScaraDims, ServoSpec,
};
use nalgebra::{Isometry3, Matrix3, Vector3};
use std::f64::consts::PI;

/// The generator [`random_chain`] draws from (here too, so a test needs one `use`).
pub use crate::seeded::Seeded;

/// A 20 kg·cm class standard servo weighing `mass` kg: 1.96 N·m stall, 0.17 s/60° (≈ 6.2
/// rad/s).
pub fn servo(mass: f64) -> ServoSpec {
    ServoSpec {
        stall_torque: 1.96,
        no_load_speed: 6.16,
        deadband_us: 4.0,
        proportional_band_us: 40.0,
        backlash: 0.5_f64.to_radians(),
        mass,
        mount_offset: Vector3::zeros(),
        drive_ratio: 1.0,
    }
}

/// 1000–2000 µs over −90°..+90° (common practice for hobby servos).
pub fn calibration() -> Calibration {
    Calibration {
        position_a: -PI / 2.0,
        pulse_a_us: 1000.0,
        position_b: PI / 2.0,
        pulse_b_us: 2000.0,
        pulse_min_us: 900.0,
        pulse_max_us: 2100.0,
    }
}

/// A joint named `name` with limits `min`..`max` (rad or m), home at 0 (or the nearest limit),
/// the standard [`servo`] of 55 g and the [`calibration`], carrying `link`.
pub fn joint(name: &str, min: f64, max: f64, link: MassProperties) -> JointSpec {
    JointSpec {
        name: name.to_string(),
        min,
        max,
        home: 0.0_f64.clamp(min, max),
        servo: servo(0.055),
        calibration: calibration(),
        link_mass: link,
    }
}

/// The horizontal-jointed arm: shoulder, elbow, a 100 mm lift through a screw (`drive_ratio`
/// 0.01) and a tool roll.
pub fn scara() -> Arm {
    let mut lift = joint(
        "lift",
        -0.05,
        0.05,
        MassProperties::point(0.03, Vector3::zeros()),
    );
    lift.servo.drive_ratio = 0.01;
    lift.calibration = Calibration {
        position_a: -0.05,
        pulse_a_us: 1000.0,
        position_b: 0.05,
        pulse_b_us: 2000.0,
        pulse_min_us: 900.0,
        pulse_max_us: 2100.0,
    };
    Arm::new(ArmDescription {
        arm_type: ArmType::Scara(ScaraDims {
            base_height: 0.12,
            upper_arm: 0.15,
            forearm: 0.12,
            tool_drop: 0.04,
        }),
        joints: vec![
            joint(
                "shoulder",
                -2.4,
                2.4,
                MassProperties::rod_along_x(0.08, 0.15),
            ),
            joint("elbow", -2.6, 2.6, MassProperties::rod_along_x(0.06, 0.12)),
            lift,
            joint(
                "roll",
                -PI,
                PI,
                MassProperties::point(0.02, Vector3::zeros()),
            ),
        ],
        tool_mass: MassProperties::point(0.04, Vector3::zeros()),
        payload_mass: 0.02,
        gripper: None,
    })
    .expect("sample horizontal arm is valid")
}

/// The articulated arm: base, shoulder, elbow and wrist, and a tool roll when `with_roll`.
pub fn articulated(with_roll: bool) -> Arm {
    let dims = ArticulatedDims {
        base_height: 0.09,
        upper_arm: 0.12,
        forearm: 0.11,
        wrist_to_tool: 0.07,
    };
    let mut joints = vec![
        joint(
            "base",
            -PI / 2.0,
            PI / 2.0,
            MassProperties::point(0.03, Vector3::zeros()),
        ),
        joint(
            "shoulder",
            -0.2,
            PI - 0.2,
            MassProperties::rod_along_x(0.05, 0.12),
        ),
        joint("elbow", -2.5, 2.5, MassProperties::rod_along_x(0.04, 0.11)),
        joint(
            "wrist",
            -PI / 2.0,
            PI / 2.0,
            MassProperties::rod_along_x(0.02, 0.05),
        ),
    ];
    if with_roll {
        joints.push(joint(
            "roll",
            -PI / 2.0,
            PI / 2.0,
            MassProperties::point(0.01, Vector3::zeros()),
        ));
    }
    Arm::new(ArmDescription {
        arm_type: if with_roll {
            ArmType::Articulated5(dims)
        } else {
            ArmType::Articulated4(dims)
        },
        joints,
        tool_mass: MassProperties::point(0.03, Vector3::zeros()),
        payload_mass: 0.025,
        gripper: None,
    })
    .expect("sample articulated arm is valid")
}

/// A random chain of `count` joints given by origin and axis, with random masses and inertias.
pub fn random_chain(rng: &mut Seeded, count: usize) -> Arm {
    let mut point = Vector3::zeros();
    let mut placements = Vec::new();
    let mut joints = Vec::new();
    for index in 0..count {
        let kind = if rng.uniform(0.0, 1.0) < 0.2 {
            JointKind::Prismatic
        } else {
            JointKind::Revolute
        };
        let axis = Vector3::new(
            rng.uniform(-1.0, 1.0),
            rng.uniform(-1.0, 1.0),
            rng.uniform(-1.0, 1.0),
        );
        let axis = if axis.norm() < 0.1 {
            Vector3::z()
        } else {
            axis.normalize()
        };
        point += Vector3::new(
            rng.uniform(-0.1, 0.1),
            rng.uniform(-0.1, 0.1),
            rng.uniform(0.0, 0.1),
        );
        placements.push(JointPlacement { kind, axis, point });
        let (min, max) = match kind {
            JointKind::Revolute => (-PI * 0.9, PI * 0.9),
            JointKind::Prismatic => (-0.05, 0.05),
        };
        let a = rng.uniform(1e-4, 1e-3);
        let b = rng.uniform(1e-4, 1e-3);
        let link = MassProperties {
            mass: rng.uniform(0.01, 0.2),
            centre: Vector3::new(
                rng.uniform(-0.05, 0.05),
                rng.uniform(-0.05, 0.05),
                rng.uniform(-0.05, 0.05),
            ),
            inertia: Matrix3::new(
                a + b,
                1e-5,
                0.0,
                1e-5,
                a + 0.5 * b,
                2e-5,
                0.0,
                2e-5,
                b + 0.5 * a,
            ),
        };
        let mut spec = joint(&format!("j{index}"), min, max, link);
        spec.servo.mass = rng.uniform(0.0, 0.06);
        joints.push(spec);
    }
    let tool_home = Isometry3::new(
        point + Vector3::new(0.05, 0.0, 0.02),
        Vector3::new(
            rng.uniform(-1.0, 1.0),
            rng.uniform(-1.0, 1.0),
            rng.uniform(-1.0, 1.0),
        ),
    );
    Arm::new(ArmDescription {
        arm_type: ArmType::Chain(ChainDims::OriginAxis {
            joints: placements,
            tool_home,
        }),
        joints,
        tool_mass: MassProperties::point(rng.uniform(0.0, 0.05), Vector3::new(0.01, 0.0, 0.0)),
        payload_mass: rng.uniform(0.0, 0.05),
        gripper: None,
    })
    .expect("random chain is valid")
}
