//! Placement success: the closed form against the Rayleigh result and against the Monte Carlo.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

#[path = "../../kinematics/tests/common/mod.rs"]
mod common;

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
