//! Second-order step response estimates against an independent numeric integration (RK4).
//! Source of the formulas: Ogata, *Modern Control Engineering*, 5th ed., ch. 5.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

mod common;

use armwright_trajectory::{SecondOrder, VibrationError};
use common::Plant;

/// Unit step response sampled finely: (times, positions).
fn step_response(system: &SecondOrder, until: f64, steps: usize) -> (Vec<f64>, Vec<f64>) {
    let mut plant = Plant::at_rest(system.natural_frequency(), system.damping_ratio());
    let dt = until / steps as f64;
    let mut times = vec![0.0];
    let mut positions = vec![0.0];
    for k in 0..steps {
        plant.step(k as f64 * dt, dt, &|_| 1.0);
        times.push((k + 1) as f64 * dt);
        positions.push(plant.position);
    }
    (times, positions)
}

#[test]
fn overshoot_and_peak_time_match_the_integrated_response() {
    // Ogata 2010, ch. 5: Mp = exp(−ζπ/√(1−ζ²)), tp = π/ω_d.
    for &zeta in &[0.02, 0.1, 0.25, 0.5, 0.7, 0.9] {
        let system = SecondOrder::new(7.0, zeta).expect("valid");
        let peak_time = system.peak_time().expect("underdamped");
        let steps = 200_000;
        let (times, positions) = step_response(&system, 2.0 * peak_time, steps);
        let (index, peak) = positions
            .iter()
            .enumerate()
            .fold(
                (0, f64::MIN),
                |best, (i, &x)| if x > best.1 { (i, x) } else { best },
            );
        let dt = 2.0 * peak_time / steps as f64;
        assert!(
            (peak - 1.0 - system.overshoot()).abs() < 1e-8,
            "ζ = {zeta}: integrated {} vs formula {}",
            peak - 1.0,
            system.overshoot()
        );
        assert!((times[index] - peak_time).abs() <= dt, "ζ = {zeta}");
    }
    assert_eq!(SecondOrder::new(3.0, 1.0).expect("valid").overshoot(), 0.0);
    assert_eq!(SecondOrder::new(3.0, 2.0).expect("valid").peak_time(), None);
}

#[test]
fn damped_frequency_matches_the_spacing_of_crossings() {
    // Ogata 2010, ch. 5: ω_d = ωₙ√(1−ζ²); the response crosses its final value every π/ω_d.
    let system = SecondOrder::new(12.0, 0.15).expect("valid");
    let half_period = std::f64::consts::PI / system.damped_frequency();
    let (times, positions) = step_response(&system, 4.0 * half_period, 400_000);
    let mut crossings = Vec::new();
    for k in 1..positions.len() {
        let (a, b) = (positions[k - 1] - 1.0, positions[k] - 1.0);
        if a.signum() != b.signum() && a != 0.0 {
            crossings.push(times[k - 1] + (times[k] - times[k - 1]) * a / (a - b));
        }
    }
    assert!(crossings.len() >= 3);
    for pair in crossings.windows(2) {
        assert!(((pair[1] - pair[0]) / half_period - 1.0).abs() < 1e-6);
    }
}

#[test]
fn settling_time_estimates_match_the_integrated_response() {
    // Ogata 2010, ch. 5: the 2 % settling time is about 4/(ζωₙ); the envelope
    // e^(−ζωₙt)/√(1−ζ²) bounds the response, so the envelope time is never early.
    for &zeta in &[0.05, 0.1, 0.2, 0.3, 0.5] {
        let system = SecondOrder::new(5.0, zeta).expect("valid");
        let bound = system.settling_time_bound(0.02);
        let (times, positions) = step_response(&system, 1.5 * bound, 300_000);
        let settled_at = times
            .iter()
            .zip(&positions)
            .filter(|(_, x)| (**x - 1.0).abs() > 0.02)
            .map(|(t, _)| *t)
            .fold(0.0, f64::max);
        assert!(settled_at <= bound, "ζ = {zeta}: {settled_at} > {bound}");
        let estimate = system.settling_time_estimate();
        assert!(
            (estimate / settled_at - 1.0).abs() < 0.25,
            "ζ = {zeta}: estimate {estimate} s, integrated {settled_at} s"
        );
    }
}

#[test]
fn bad_parameters_are_rejected() {
    for bad in [0.0, -1.0, f64::NAN, f64::INFINITY] {
        assert!(matches!(
            SecondOrder::new(bad, 0.1),
            Err(VibrationError::NaturalFrequency { .. })
        ));
    }
    for bad in [-0.1, f64::NAN, f64::INFINITY] {
        assert!(matches!(
            SecondOrder::new(1.0, bad),
            Err(VibrationError::DampingRatio { .. })
        ));
    }
}
