//! The calibration fit checked against NumPy's least-squares polynomial fit (`numpy.polyfit`,
//! PyPI `numpy`) through the committed fixture `tests/reference/fixtures/calibration_fit.json`,
//! written by `tests/reference/generate_calibration_fit.py`.
//!
//! The comparison needs no Python and always runs. A second check regenerates the fixture and
//! compares it with the committed one; when Python or NumPy is missing it skips with a notice, or fails
//! under `ARMWRIGHT_STRICT=1` (`armwright_test_support::outside_tool`).
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

use armwright_test_support::reference::{self, numbers};

use armwright_kinematics::{CalibrationFitOptions, CalibrationReading, FitShape, fit_calibration};
use serde_json::Value;

/// `numpy.polyfit` coefficients (highest power first, degrees per µs^k) → ours (lowest first).
fn lowest_first(value: &Value) -> Vec<f64> {
    let mut coefficients = numbers(value);
    coefficients.reverse();
    coefficients
}

fn assert_close(what: &str, ours: f64, theirs: f64) {
    // The fixture keeps 12 significant digits.
    let tolerance = 1e-9 * theirs.abs().max(1e-3);
    assert!(
        (ours - theirs).abs() <= tolerance,
        "{what}: ours {ours}, numpy.polyfit {theirs}"
    );
}

#[test]
fn fits_match_numpy_polyfit() {
    let fixture = reference::fixture("calibration_fit.json");
    let sets = fixture["sets"].as_array().expect("sets");
    let mut quadratics = 0;
    for set in sets {
        let name = set["name"].as_str().expect("a name");
        let pulses = numbers(&set["pulses_us"]);
        let angles = numbers(&set["angles_deg"]);
        let readings: Vec<CalibrationReading> = pulses
            .iter()
            .zip(&angles)
            .map(|(&pulse_us, &degrees)| CalibrationReading {
                pulse_us,
                position: degrees.to_radians(),
            })
            .collect();
        let fit = fit_calibration(&readings, &CalibrationFitOptions::default()).expect(name);

        let line = lowest_first(&set["linear"]["coefficients_high_first"]);
        assert_close(
            &format!("{name}: offset"),
            fit.line[0].to_degrees(),
            line[0],
        );
        assert_close(&format!("{name}: slope"), fit.line[1].to_degrees(), line[1]);

        let expected = match fit.shape {
            FitShape::Linear => &set["linear"],
            FitShape::Quadratic => {
                quadratics += 1;
                let quadratic = lowest_first(&set["quadratic"]["coefficients_high_first"]);
                for (k, (&ours, theirs)) in fit.coefficients.iter().zip(quadratic).enumerate() {
                    assert_close(&format!("{name}: c{k}"), ours.to_degrees(), theirs);
                }
                &set["quadratic"]
            }
        };
        for (index, (ours, theirs)) in fit
            .residuals
            .iter()
            .zip(numbers(&expected["residuals_deg"]))
            .enumerate()
        {
            assert!(
                (ours.to_degrees() - theirs).abs() < 1e-8,
                "{name}: residual {index}: ours {}°, numpy {theirs}°",
                ours.to_degrees()
            );
        }
    }
    // The bowed sets must be recognised as bowed, the straight ones as straight.
    assert_eq!(
        quadratics, 2,
        "the two bowed sets, and only they, fit as quadratics"
    );
}

#[test]
fn committed_fixture_matches_a_fresh_numpy_run() {
    let Some(out) = reference::regenerate("generate_calibration_fit.py", "numpy") else {
        return;
    };
    let fresh: Value = serde_json::from_str(
        &std::fs::read_to_string(out.join("calibration_fit.json")).expect("written"),
    )
    .expect("JSON");
    reference::assert_same_json("", &fresh, &reference::fixture("calibration_fit.json"));
}
