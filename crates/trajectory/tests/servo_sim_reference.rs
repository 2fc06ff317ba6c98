//! The dry run's non-linear joint model against SciPy's `solve_ivp` integrating the same
//! equations (SciPy: Virtanen et al., *SciPy 1.0*, Nature Methods 17, 2020). The fixture is
//! written by tests/reference/generate_servo_response.py.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

use armwright_test_support::reference::{self, numbers};

use armwright_kinematics::Calibration;
use armwright_trajectory::{JointLoad, ServoModel, ServoModelOptions, simulate};
use serde_json::Value;

fn number(v: &Value, key: &str) -> f64 {
    v[key]
        .as_f64()
        .unwrap_or_else(|| panic!("fixture lacks {key}"))
}

fn model(v: &Value) -> ServoModel {
    ServoModel {
        stall_effort: number(v, "stall_effort"),
        no_load_speed: number(v, "no_load_speed"),
        deadband_us: number(v, "deadband_us"),
        proportional_band_us: number(v, "proportional_band_us"),
        calibration: Calibration {
            position_a: number(v, "position_a"),
            pulse_a_us: number(v, "pulse_a_us"),
            position_b: number(v, "position_b"),
            pulse_b_us: number(v, "pulse_b_us"),
            pulse_min_us: number(v, "pulse_min_us"),
            pulse_max_us: number(v, "pulse_max_us"),
        },
        backlash: number(v, "backlash"),
        motor_inertia: number(v, "motor_inertia"),
        damping_ratio: number(v, "damping_ratio"),
        dry_friction: number(v, "dry_friction"),
        friction_smoothing: number(v, "friction_smoothing"),
        pulse_resolution_us: number(v, "pulse_resolution_us"),
    }
}

#[test]
fn nonlinear_joint_model_agrees_with_scipy_within_a_hundredth_of_a_degree() {
    let doc = reference::fixture("servo_response.json");
    let options = ServoModelOptions {
        step: number(&doc, "step"),
        frame_period: number(&doc, "frame_period"),
        settle_before: number(&doc, "settle_before"),
        ..ServoModelOptions::default()
    };
    let cases = doc["cases"].as_array().expect("cases");
    assert!(cases.len() >= 3);
    for case in cases {
        let servo = model(&case["model"]);
        let frames = numbers(&case["frame_commands"]);
        let inertia = number(case, "load_inertia");
        let gravity = number(case, "gravity_effort");
        let frame = options.frame_period;
        let trace = simulate(
            std::slice::from_ref(&servo),
            &options,
            number(&doc, "duration"),
            |t, out| out[0] = frames[(t / frame + 1e-9).floor() as usize],
            |_, link, loads| {
                loads[0] = JointLoad {
                    inertia,
                    holding_effort: gravity * link[0].cos(),
                }
            },
        )
        .expect("valid run");
        let expected = numbers(&case["actual"]);
        assert_eq!(trace.len(), expected.len());
        let worst = (0..trace.len())
            .map(|k| (trace.actual_at(k)[0] - expected[k]).abs())
            .fold(0.0, f64::max);
        assert!(
            worst.to_degrees() < 0.01,
            "{}: {}°",
            case["name"],
            worst.to_degrees()
        );
        // The runs must actually move: a fixture of a resting joint would prove nothing.
        let travel = expected.iter().fold(f64::MIN, |a, &b| a.max(b))
            - expected.iter().fold(f64::MAX, |a, &b| a.min(b));
        assert!(travel.to_degrees() > 20.0);
    }
}

#[test]
fn servo_fixture_regenerates_from_scipy() {
    let Some(out) = reference::regenerate("generate_servo_response.py", "scipy") else {
        return;
    };
    let name = "servo_response.json";
    let text = std::fs::read_to_string(out.join(name)).expect("the generator wrote it");
    let fresh: Value = serde_json::from_str(&text).expect("fresh fixture is JSON");
    reference::assert_same_json(name, &fresh, &reference::fixture(name));
    let _ = std::fs::remove_dir_all(&out);
}
