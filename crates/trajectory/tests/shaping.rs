//! ZV and ZVD input shapers against Singer & Seering, "Preshaping command inputs to reduce
//! system vibration" (J. Dyn. Sys., Meas., Control, 1990): impulse sequences, residual
//! vibration expressions, and a simulation of a linear second-order plant (RK4, written here).
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

mod common;

use armwright_trajectory::{
    JointLimits, JointMove, Profile, SecondOrder, Shaper, ShaperKind, VibrationError,
};
use common::{Plant, check_sampled};

const KINDS: [ShaperKind; 2] = [ShaperKind::Zv, ShaperKind::Zvd];

/// Residual vibration amplitude of `plant` after a unit step shaped by `shaper` (or unshaped),
/// simulated, measured just after the last impulse and a little later.
fn residual_after_step(real: &SecondOrder, shaper: Option<&Shaper>) -> f64 {
    let mut plant = Plant::at_rest(real.natural_frequency(), real.damping_ratio());
    let mut level = 0.0;
    let mut t = 0.0;
    // Integrate each stretch between impulses with exactly aligned steps.
    let impulses = shaper.map_or(&[][..], |s| s.impulses());
    let unshaped = [armwright_trajectory::Impulse {
        time: 0.0,
        amplitude: 1.0,
    }];
    let impulses = if impulses.is_empty() {
        &unshaped[..]
    } else {
        impulses
    };
    for impulse in impulses {
        plant.run(t, impulse.time, 20_000, &|_| level);
        t = impulse.time;
        level += impulse.amplitude;
    }
    let end = t + 1.0;
    plant.run(t, end, 20_000, &|_| level);
    plant.vibration_about(level)
}

#[test]
fn impulses_follow_the_published_sequences() {
    // Singer & Seering 1990: undamped plant, ZV = [1/2, 1/2] at [0, π/ωₙ],
    // ZVD = [1/4, 1/2, 1/4] at [0, π/ωₙ, 2π/ωₙ].
    let undamped = SecondOrder::new(10.0, 0.0).expect("valid");
    let half = std::f64::consts::PI / 10.0;
    let zv = Shaper::zv(&undamped).expect("ok");
    let expected = [(0.0, 0.5), (half, 0.5)];
    for (impulse, (time, amplitude)) in zv.impulses().iter().zip(expected) {
        assert!(
            (impulse.time - time).abs() < 1e-15 && (impulse.amplitude - amplitude).abs() < 1e-15
        );
    }
    let zvd = Shaper::zvd(&undamped).expect("ok");
    let expected = [(0.0, 0.25), (half, 0.5), (2.0 * half, 0.25)];
    for (impulse, (time, amplitude)) in zvd.impulses().iter().zip(expected) {
        assert!(
            (impulse.time - time).abs() < 1e-15 && (impulse.amplitude - amplitude).abs() < 1e-15
        );
    }
    assert_eq!(zvd.duration(), 2.0 * half);
    // Damped: amplitudes positive, summing to 1, first smaller share as damping grows.
    for kind in KINDS {
        let shaper = Shaper::new(kind, &SecondOrder::new(10.0, 0.3).expect("ok")).expect("ok");
        let sum: f64 = shaper.impulses().iter().map(|i| i.amplitude).sum();
        assert!((sum - 1.0).abs() < 1e-15);
        assert!(shaper.impulses().iter().all(|i| i.amplitude > 0.0));
        assert_eq!(shaper.kind(), kind);
    }
    assert!(matches!(
        Shaper::zv(&SecondOrder::new(10.0, 1.0).expect("ok")),
        Err(VibrationError::DampingRatio { .. })
    ));
}

#[test]
fn a_shaped_step_leaves_no_residual_vibration_on_the_modelled_plant() {
    for kind in KINDS {
        for &zeta in &[0.0, 0.02, 0.1, 0.3, 0.6] {
            let plant = SecondOrder::new(2.0 * std::f64::consts::PI * 3.0, zeta).expect("ok");
            let shaper = Shaper::new(kind, &plant).expect("ok");
            // Residual vibration expression (Singer & Seering 1990): zero at the model.
            assert!(
                shaper.residual_vibration(&plant) < 1e-12,
                "{kind:?} ζ = {zeta}"
            );
            // Simulation: shaped residual below 1e-6 of the unshaped one.
            let shaped = residual_after_step(&plant, Some(&shaper));
            let unshaped = residual_after_step(&plant, None);
            assert!(
                shaped < 1e-6 * unshaped,
                "{kind:?} ζ = {zeta}: shaped {shaped:e}, unshaped {unshaped:e}"
            );
        }
    }
}

#[test]
fn zv_and_zvd_tolerate_their_published_frequency_errors() {
    // Singer & Seering 1990, undamped plant: the 5 % vibration band spans about ±3 % frequency
    // error for ZV and about ±14 % for ZVD (V = |cos(πr/2)| and cos²(πr/2), r = ω/ωₙ).
    let assumed = SecondOrder::new(20.0, 0.0).expect("ok");
    for (kind, tolerated, beyond) in [(ShaperKind::Zv, 0.03, 0.06), (ShaperKind::Zvd, 0.14, 0.25)] {
        let shaper = Shaper::new(kind, &assumed).expect("ok");
        for error in [-tolerated, -tolerated / 2.0, tolerated / 2.0, tolerated] {
            let real = SecondOrder::new(20.0 * (1.0 + error), 0.0).expect("ok");
            let expression = shaper.residual_vibration(&real);
            let closed = (std::f64::consts::FRAC_PI_2 * (1.0 + error)).cos().abs();
            let closed = if kind == ShaperKind::Zv {
                closed
            } else {
                closed * closed
            };
            assert!((expression - closed).abs() < 1e-12, "{kind:?} {error}");
            assert!(expression < 0.05, "{kind:?} at {error}: {expression}");
            let simulated =
                residual_after_step(&real, Some(&shaper)) / residual_after_step(&real, None);
            assert!(
                (simulated - expression).abs() < 1e-6,
                "{kind:?} {error}: {simulated}"
            );
        }
        // Further out the band is left: the check above can fail.
        let real = SecondOrder::new(20.0 * (1.0 + beyond), 0.0).expect("ok");
        assert!(shaper.residual_vibration(&real) > 0.05);
    }
}

#[test]
fn a_shaped_profile_keeps_its_ends_and_limits_and_stops_the_vibration() {
    let limits = JointLimits::new(2.0, 8.0, 80.0);
    let profile = Profile::double_s(&JointMove::rest_to_rest(0.1, 1.3), &limits).expect("ok");
    let plant = SecondOrder::new(15.0, 0.05).expect("ok");
    for kind in KINDS {
        let shaper = Shaper::new(kind, &plant).expect("ok");
        let shaped = shaper.apply(&profile);
        assert_eq!(shaped.duration(), profile.duration() + shaper.duration());
        assert_eq!(shaped.state_at(shaped.duration()).position, 1.3);
        assert_eq!(shaped.state_at(0.0).position, 0.1);
        let steps = (shaped.duration() / common::SAMPLE_STEP) as usize;
        for k in 0..=steps {
            let state = shaped.state_at(k as f64 * common::SAMPLE_STEP);
            assert!(state.velocity.abs() <= limits.velocity * (1.0 + 1e-12));
            assert!(state.acceleration.abs() <= limits.acceleration * (1.0 + 1e-12));
            assert!(state.jerk.abs() <= limits.jerk * (1.0 + 1e-12));
        }
        // On the modelled plant the shaped move leaves far less vibration than the unshaped.
        let vibration = |command: &dyn Fn(f64) -> f64, duration: f64| {
            let mut simulated = Plant::at_rest(plant.natural_frequency(), plant.damping_ratio());
            simulated.position = 0.1;
            simulated.run(0.0, duration, 400_000, &command);
            simulated.vibration_about(1.3)
        };
        let shaped_vibration = vibration(&|t| shaped.state_at(t).position, shaped.duration());
        let unshaped_vibration = vibration(&|t| profile.position_at(t), shaped.duration());
        assert!(
            shaped_vibration < 1e-6 * unshaped_vibration,
            "{kind:?}: {shaped_vibration:e} vs {unshaped_vibration:e}"
        );
    }
    check_sampled(&profile).expect("the unshaped profile is within limits");
}
