//! Placement success: the closed form against the Rayleigh result and against the Monte Carlo.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

use armwright_test_support::arms as common;

use armwright_trajectory::{PlacementOptions, disc_probability, placement_estimate};

#[test]
fn the_closed_form_is_the_rayleigh_result_for_a_centred_isotropic_gaussian() {
    // Circular tolerance r under an isotropic Gaussian of standard deviation σ per axis, centred
    // on the target: P = 1 − exp(−r²/2σ²), the Rayleigh distribution's CDF (Papoulis & Pillai,
    // *Probability, Random Variables and Stochastic Processes*, 4th ed., 2002; the formula
    // from memory).
    for (radius, sigma) in [
        (1.0e-3_f64, 1.0e-3_f64),
        (2.0e-3, 0.5e-3),
        (0.5e-3, 2.0e-3),
        (3e-3, 1.2e-3),
    ] {
        let expected = 1.0 - (-(radius * radius) / (2.0 * sigma * sigma)).exp();
        let got = disc_probability(
            [0.0, 0.0],
            [[sigma * sigma, 0.0], [0.0, sigma * sigma]],
            radius,
        );
        assert!(
            (got - expected).abs() < 1e-12,
            "r {radius} σ {sigma}: {got} vs {expected}"
        );
    }
}

#[test]
fn the_monte_carlo_agrees_with_the_linearised_closed_form_on_an_arm() {
    // Deadband and backlash are uniform, not Gaussian, and forward kinematics is not linear, so
    // the two agree only roughly: within 0.04 over a spread of tolerances and poses.
    let arm = common::articulated(false);
    let poses = [
        [0.3, 0.9, -1.2, 0.3],
        [-0.6, 1.2, -1.6, 0.4],
        [0.0, 0.5, -0.7, -0.2],
    ];
    let mut compared = 0;
    for pose in poses {
        for tolerance in [0.5e-3, 1.0e-3, 2.0e-3, 4.0e-3] {
            let options = PlacementOptions {
                tolerance,
                draws: 20_000,
                ..PlacementOptions::default()
            };
            let estimate =
                placement_estimate(&arm, &pose, [0.4e-3, -0.2e-3, 0.0], &options).expect("fits");
            assert_eq!(estimate.draws, 20_000);
            assert!(
                (estimate.success - estimate.closed_form).abs() < 0.04,
                "pose {pose:?}, tolerance {tolerance}: Monte Carlo {} vs closed form {}",
                estimate.success,
                estimate.closed_form
            );
            assert!(estimate.mean_error > 0.0 && estimate.p95_error >= estimate.mean_error);
            compared += 1;
        }
    }
    assert_eq!(compared, 12);
}

#[test]
fn a_larger_tolerance_succeeds_more_often_and_a_seed_repeats() {
    let arm = common::articulated(false);
    let pose = [0.3, 0.9, -1.2, 0.3];
    let at = |tolerance: f64| {
        let options = PlacementOptions {
            tolerance,
            ..PlacementOptions::default()
        };
        placement_estimate(&arm, &pose, [0.0; 3], &options).expect("fits")
    };
    let (tight, loose) = (at(0.5e-3), at(5e-3));
    assert!(tight.success < loose.success);
    assert!(tight.closed_form < loose.closed_form);
    assert_eq!(at(0.5e-3), tight);
    // The 95th percentile sits at the tolerance where the share is 0.95.
    let at_p95 = at(tight.p95_error);
    assert!((at_p95.success - 0.95).abs() < 0.01, "{}", at_p95.success);
}

#[test]
fn a_resting_offset_beyond_the_tolerance_with_no_spread_never_succeeds() {
    let arm = common::articulated(false);
    let pose = [0.3, 0.9, -1.2, 0.3];
    let options = PlacementOptions {
        tolerance: 1e-3,
        calibration_sd: 0.0,
        ..PlacementOptions::default()
    };
    // 5 mm off, where deadband and backlash spread the tool point by about 1–2 mm.
    let estimate = placement_estimate(&arm, &pose, [5e-3, 0.0, 0.0], &options).expect("fits");
    assert_eq!(estimate.success, 0.0);
    assert!(estimate.closed_form < 1e-3, "{}", estimate.closed_form);
    assert!((estimate.mean_error - 5e-3).abs() < 2e-3);
}

/// The horizontal-jointed sample arm with servos that have no deadband and no backlash, so that
/// calibration is the only source of error.
fn scara_without_play() -> armwright_kinematics::Arm {
    use armwright_kinematics::{Arm, ArmDescription, ArmType, MassProperties, ScaraDims};
    let mut joints = vec![
        common::joint(
            "shoulder",
            -2.4,
            2.4,
            MassProperties::rod_along_x(0.08, 0.15),
        ),
        common::joint("elbow", -2.6, 2.6, MassProperties::rod_along_x(0.06, 0.12)),
        common::joint(
            "lift",
            -0.05,
            0.05,
            MassProperties::point(0.03, Default::default()),
        ),
        common::joint(
            "roll",
            -3.1,
            3.1,
            MassProperties::point(0.02, Default::default()),
        ),
    ];
    for joint in &mut joints {
        joint.servo.deadband_us = 0.0;
        joint.servo.backlash = 0.0;
    }
    joints[2].servo.drive_ratio = 0.01;
    Arm::new(ArmDescription {
        arm_type: ArmType::Scara(ScaraDims {
            base_height: 0.12,
            upper_arm: 0.15,
            forearm: 0.12,
            tool_drop: 0.04,
        }),
        joints,
        tool_mass: MassProperties::point(0.04, Default::default()),
        payload_mass: 0.02,
        gripper: None,
    })
    .expect("arm is valid")
}

/// The error function, by Abramowitz & Stegun, *Handbook of Mathematical Functions*, 1964,
/// formula 7.1.26 (absolute error below 1.5e-7).
fn erf(x: f64) -> f64 {
    let t = 1.0 / (1.0 + 0.327_591_1 * x.abs());
    let poly = t
        * (0.254_829_592
            + t * (-0.284_496_736
                + t * (1.421_413_741 + t * (-1.453_152_027 + t * 1.061_405_429))));
    (1.0 - poly * (-x * x).exp()).copysign(x)
}

#[test]
fn one_joints_calibration_error_gives_the_normal_share_within_the_tolerance() {
    // Only the shoulder's calibration is uncertain (σ rad); the tool point, R m from the
    // shoulder's axis, then lands off along the tangent by R·δ, a normal error of standard
    // deviation R·σ, which falls within ±r with probability erf(r / (√2·R·σ)) (the normal
    // distribution's share within ±k σ; Papoulis & Pillai, 4th ed., 2002, from memory). The
    // chord 2R·sin(δ/2) differs from R·δ by far less than the tolerance here.
    let arm = scara_without_play();
    let pose = [0.4, 1.1, 0.0, 0.2];
    let tool = armwright_kinematics::tool_pose(&arm, &pose)
        .expect("fits")
        .translation
        .vector;
    let reach = tool.x.hypot(tool.y);
    let sigma = 0.6_f64.to_radians();
    let mut stated = [Some(0.0); armwright_trajectory::MAX_JOINTS];
    stated[0] = Some(sigma);
    for tolerance in [0.5e-3, 1.0e-3, 2.0e-3, 3.0e-3] {
        let options = PlacementOptions {
            tolerance,
            joint_calibration_sd: stated,
            draws: 40_000,
            ..PlacementOptions::default()
        };
        let estimate = placement_estimate(&arm, &pose, [0.0; 3], &options).expect("fits");
        let expected = erf(tolerance / (std::f64::consts::SQRT_2 * reach * sigma));
        assert!(
            (estimate.closed_form - expected).abs() < 1e-3,
            "tolerance {tolerance}: closed form {} vs erf {expected}",
            estimate.closed_form
        );
        let standard_error = (expected * (1.0 - expected) / 40_000.0).sqrt();
        assert!(
            (estimate.success - expected).abs() < 4.0 * standard_error + 1e-4,
            "tolerance {tolerance}: Monte Carlo {} vs erf {expected}",
            estimate.success
        );
    }
}

#[test]
fn a_larger_calibration_uncertainty_lowers_the_predicted_success() {
    // A joint's own calibration uncertainty (from its fit's residuals) replaces the default;
    // the shares fall as it grows, in both estimates.
    let arm = common::articulated(false);
    let pose = [0.3, 0.9, -1.2, 0.3];
    let at = |shoulder_deg: f64| {
        let mut stated = [None; armwright_trajectory::MAX_JOINTS];
        stated[1] = Some(shoulder_deg.to_radians());
        let options = PlacementOptions {
            tolerance: 2e-3,
            joint_calibration_sd: stated,
            ..PlacementOptions::default()
        };
        placement_estimate(&arm, &pose, [0.0; 3], &options).expect("fits")
    };
    let shares: Vec<_> = [0.1, 0.5, 1.0, 2.0].into_iter().map(at).collect();
    for pair in shares.windows(2) {
        assert!(pair[1].success < pair[0].success, "{shares:?}");
        assert!(pair[1].closed_form < pair[0].closed_form, "{shares:?}");
        assert!(pair[1].p95_error > pair[0].p95_error, "{shares:?}");
    }
    // Stated at the default (0.5°), it gives the default's figures exactly.
    let default = placement_estimate(&arm, &pose, [0.0; 3], &PlacementOptions::default());
    assert_eq!(shares[1], default.expect("fits"));
}
