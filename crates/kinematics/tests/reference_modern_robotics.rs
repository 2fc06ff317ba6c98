//! Forward kinematics, the space Jacobian, gravity torques and inverse dynamics checked against
//! the general-purpose reference library `modern_robotics` from PyPI (Lynch & Park, *Modern
//! Robotics*, 2017, and its library), through the committed fixtures in `tests/reference/`.
//!
//! The comparison needs no Python and always runs. A second check regenerates the fixtures
//! with the Python script and compares them with the committed ones; when Python or the library
//! is missing it skips with a notice, or fails under `ARMWRIGHT_STRICT=1`
//! (`armwright_test_support::outside_tool`).
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

use armwright_test_support::arms as common;
use armwright_test_support::reference;

use armwright_kinematics::{
    Arm, ArmDescription, ArmType, ChainDims, JointKind, JointPlacement, MassProperties, forward,
    gravity_torques, inverse_dynamics, space_jacobian, tool_pose,
};
use nalgebra::{Isometry3, Matrix3, Matrix4, Rotation3, Translation3, UnitQuaternion, Vector3};
use serde_json::Value;

/// Agreement asked of every compared number, in m, rad or N·m.
const TOLERANCE: f64 = 1e-9;

fn number(value: &Value) -> f64 {
    value.as_f64().expect("a number")
}

fn numbers(value: &Value) -> Vec<f64> {
    value
        .as_array()
        .expect("an array")
        .iter()
        .map(number)
        .collect()
}

fn vector3(value: &Value) -> Vector3<f64> {
    Vector3::from_column_slice(&numbers(value))
}

fn matrix3(value: &Value) -> Matrix3<f64> {
    let rows: Vec<Vec<f64>> = value.as_array().unwrap().iter().map(numbers).collect();
    Matrix3::from_fn(|r, c| rows[r][c])
}

fn matrix4(value: &Value) -> Matrix4<f64> {
    let rows: Vec<Vec<f64>> = value.as_array().unwrap().iter().map(numbers).collect();
    Matrix4::from_fn(|r, c| rows[r][c])
}

fn isometry(value: &Value) -> Isometry3<f64> {
    let m = matrix4(value);
    let rotation = Rotation3::from_matrix_unchecked(m.fixed_view::<3, 3>(0, 0).into_owned());
    Isometry3::from_parts(
        Translation3::new(m[(0, 3)], m[(1, 3)], m[(2, 3)]),
        UnitQuaternion::from_rotation_matrix(&rotation),
    )
}

fn kind(value: &Value) -> JointKind {
    match value.as_str() {
        Some("revolute") => JointKind::Revolute,
        Some("prismatic") => JointKind::Prismatic,
        other => panic!("unknown joint kind {other:?}"),
    }
}

fn body(value: &Value) -> MassProperties {
    MassProperties {
        mass: number(&value["mass"]),
        centre: vector3(&value["centre"]),
        inertia: matrix3(&value["inertia"]),
    }
}

/// The fixture's arm as an origin-and-axis chain whose bodies are exactly the fixture's: massless
/// servos and tool, each link carrying its lumped body.
fn chain(record: &Value) -> Arm {
    let limits: Vec<Vec<f64>> = record["limits"]
        .as_array()
        .unwrap()
        .iter()
        .map(numbers)
        .collect();
    let mut placements = Vec::new();
    let mut specs = Vec::new();
    for (index, joint) in record["joints"].as_array().unwrap().iter().enumerate() {
        placements.push(JointPlacement {
            kind: kind(&joint["kind"]),
            axis: vector3(&joint["axis"]),
            point: vector3(&joint["point"]),
        });
        let mut spec = common::joint(
            &format!("j{index}"),
            limits[index][0],
            limits[index][1],
            body(&joint["body"]),
        );
        spec.servo.mass = 0.0;
        specs.push(spec);
    }
    Arm::new(ArmDescription {
        arm_type: ArmType::Chain(ChainDims::OriginAxis {
            joints: placements,
            tool_home: isometry(&record["tool_home"]),
        }),
        joints: specs,
        tool_mass: MassProperties::zero(),
        payload_mass: number(&record["payload"]),
        gripper: None,
    })
    .expect("fixture chain is valid")
}

fn assert_close(what: &str, got: f64, want: f64) {
    assert!(
        (got - want).abs() <= TOLERANCE,
        "{what}: {got} vs reference {want} (off by {:e})",
        (got - want).abs()
    );
}

/// Every state of one fixture arm, computed on `arm`, against the reference values.
fn check_states(name: &str, arm: &Arm, record: &Value) -> usize {
    let payload = number(&record["payload"]);
    let states = record["states"].as_array().unwrap();
    for (s, state) in states.iter().enumerate() {
        let at = |what: &str| format!("{name} state {s} {what}");
        let (q, qd, qdd) = (
            numbers(&state["q"]),
            numbers(&state["qd"]),
            numbers(&state["qdd"]),
        );
        let pose = tool_pose(arm, &q).unwrap().to_homogeneous();
        let want = matrix4(&state["tool_pose"]);
        for r in 0..4 {
            for c in 0..4 {
                assert_close(&at("tool pose"), pose[(r, c)], want[(r, c)]);
            }
        }
        let jacobian = space_jacobian(arm, &q).unwrap();
        let rows: Vec<Vec<f64>> = state["space_jacobian"]
            .as_array()
            .unwrap()
            .iter()
            .map(numbers)
            .collect();
        for (r, row) in rows.iter().enumerate() {
            for (c, &value) in row.iter().enumerate() {
                assert_close(&at("space Jacobian"), jacobian.matrix[(r, c)], value);
            }
        }
        let gravity = gravity_torques(arm, &q, payload).unwrap();
        for (got, want) in gravity
            .as_slice()
            .iter()
            .zip(numbers(&state["gravity_torques"]))
        {
            assert_close(&at("gravity torque"), *got, want);
        }
        let dynamics = inverse_dynamics(arm, &q, &qd, &qdd, payload).unwrap();
        let want = numbers(&state["inverse_dynamics"]);
        assert_eq!(dynamics.len(), want.len());
        for (got, want) in dynamics.as_slice().iter().zip(want) {
            assert_close(&at("inverse dynamics"), *got, want);
        }
    }
    states.len()
}

/// The built-in arm of tests/common that a fixture record repeats.
fn built_in(name: &str) -> Arm {
    match name {
        "scara" => common::scara(),
        "articulated4" => common::articulated(false),
        "articulated5" => common::articulated(true),
        other => panic!("no built-in arm named {other}"),
    }
}

/// The built-in arm has the fixture's axes, points, bodies and tool frame at zero.
fn assert_same_arm(name: &str, arm: &Arm, record: &Value) {
    let zero = vec![0.0; arm.joint_count()];
    let pose = forward(arm, &zero).unwrap();
    let joints = record["joints"].as_array().unwrap();
    assert_eq!(joints.len(), arm.joint_count(), "{name}");
    for (index, joint) in joints.iter().enumerate() {
        let (axis, point) = pose.joint_axis(arm, index);
        assert_eq!(
            arm.joints()[index].kind,
            kind(&joint["kind"]),
            "{name} {index}"
        );
        assert!(
            (axis - vector3(&joint["axis"])).norm() < 1e-12,
            "{name} axis {index}"
        );
        assert!(
            (point - vector3(&joint["point"])).norm() < 1e-12,
            "{name} point {index}"
        );
        // Built-in joint frames are parallel to the base at zero, as the fixture's are.
        assert!(pose.frames()[index].rotation.angle() < 1e-12);
        let want = body(&joint["body"]);
        let got = arm.body(index).unwrap();
        assert!((got.mass - want.mass).abs() < 1e-12, "{name} mass {index}");
        assert!(
            (got.centre - want.centre).norm() < 1e-12,
            "{name} centre {index}"
        );
        assert!(
            (got.inertia - want.inertia).norm() < 1e-12,
            "{name} inertia {index}"
        );
    }
    let tool = pose.tool().to_homogeneous();
    assert!(
        (tool - matrix4(&record["tool_home"])).norm() < 1e-12,
        "{name} tool"
    );
}

#[test]
fn built_in_arm_types_match_the_reference() {
    let fixture = reference::fixture("builtin_arms.json");
    assert_eq!(
        number(&fixture["gravity"]),
        armwright_kinematics::STANDARD_GRAVITY
    );
    let arms = fixture["arms"].as_array().unwrap();
    let names: Vec<&str> = arms.iter().map(|a| a["name"].as_str().unwrap()).collect();
    assert_eq!(names, ["scara", "articulated4", "articulated5"]);
    for record in arms {
        let name = record["name"].as_str().unwrap();
        let arm = built_in(name);
        assert_same_arm(name, &arm, record);
        assert!(check_states(name, &arm, record) >= 20);
        assert!(check_states(&format!("{name} as a chain"), &chain(record), record) >= 20);
    }
}

#[test]
fn random_chains_match_the_reference() {
    let fixture = reference::fixture("random_chains.json");
    let arms = fixture["arms"].as_array().unwrap();
    assert!(arms.len() >= 20, "only {} random chains", arms.len());
    let mut kinds = [0usize; 2];
    for record in arms {
        let name = record["name"].as_str().unwrap();
        let arm = chain(record);
        for joint in arm.joints() {
            kinds[usize::from(joint.kind == JointKind::Prismatic)] += 1;
        }
        assert!(check_states(name, &arm, record) >= 20);
    }
    assert!(
        kinds[0] > 0 && kinds[1] > 0,
        "both joint kinds are exercised"
    );
}

#[test]
fn fixtures_regenerate_from_the_python_reference() {
    let Some(out) = reference::regenerate("generate_kinematics.py", "modern_robotics, numpy")
    else {
        return;
    };
    for file in ["builtin_arms.json", "random_chains.json"] {
        let text = std::fs::read_to_string(out.join(file)).expect("the generator wrote it");
        let fresh: Value = serde_json::from_str(&text).expect("fresh fixture is JSON");
        reference::assert_same_json(file, &fresh, &reference::fixture(file));
    }
    let _ = std::fs::remove_dir_all(&out);
}
