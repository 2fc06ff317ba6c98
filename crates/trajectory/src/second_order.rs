//! Linear second-order system: the textbook estimates of its step response.
//!
//! A joint following its servo behaves, to first approximation, like
//! `x'' + 2ζωₙ x' + ωₙ² x = ωₙ² u` (natural frequency ωₙ in rad/s, damping ratio ζ). The
//! estimates here are those of Ogata, *Modern Control Engineering*, 5th ed., ch. 5: percent
//! overshoot `exp(−ζπ/√(1−ζ²))`, 2 % settling time ≈ `4/(ζωₙ)`, damped frequency
//! `ωₙ√(1−ζ²)`, peak time `π/ω_d`.

/// Why a vibration model or shaper could not be made.
#[derive(Debug, Clone, Copy, PartialEq, thiserror::Error)]
pub enum VibrationError {
    /// The natural frequency is zero, negative, NaN or infinite (rad/s).
    #[error("natural frequency {value} rad/s, expected a positive finite number")]
    NaturalFrequency {
        /// The value given, rad/s.
        value: f64,
    },
    /// The damping ratio is negative, NaN or infinite, or (for a shaper) not below 1.
    #[error("damping ratio {value}, expected a finite number in {expected}")]
    DampingRatio {
        /// The value given.
        value: f64,
        /// The allowed range, in words.
        expected: &'static str,
    },
}

/// A linear second-order system, `x'' + 2ζωₙ x' + ωₙ² x = ωₙ² u`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SecondOrder {
    natural_frequency: f64,
    damping_ratio: f64,
}

impl SecondOrder {
    /// A system with natural frequency ωₙ (rad/s, positive) and damping ratio ζ (≥ 0).
    ///
    /// # Errors
    /// [`VibrationError::NaturalFrequency`] or [`VibrationError::DampingRatio`] for a value out
    /// of range, NaN or infinite.
    pub fn new(natural_frequency: f64, damping_ratio: f64) -> Result<Self, VibrationError> {
        if !(natural_frequency.is_finite() && natural_frequency > 0.0) {
            return Err(VibrationError::NaturalFrequency {
                value: natural_frequency,
            });
        }
        if !(damping_ratio.is_finite() && damping_ratio >= 0.0) {
            return Err(VibrationError::DampingRatio {
                value: damping_ratio,
                expected: "[0, ∞)",
            });
        }
        Ok(Self {
            natural_frequency,
            damping_ratio,
        })
    }

    /// Natural frequency ωₙ, rad/s.
    pub fn natural_frequency(&self) -> f64 {
        self.natural_frequency
    }

    /// Damping ratio ζ (dimensionless).
    pub fn damping_ratio(&self) -> f64 {
        self.damping_ratio
    }

    /// Damped frequency ω_d = ωₙ√(1−ζ²), rad/s; 0 when ζ ≥ 1 (no oscillation).
    pub fn damped_frequency(&self) -> f64 {
        let zeta = self.damping_ratio;
        if zeta >= 1.0 {
            0.0
        } else {
            self.natural_frequency * (1.0 - zeta * zeta).sqrt()
        }
    }

    /// Largest overshoot of a unit step response as a share of the step (0.163 means
    /// 16.3 %): `exp(−ζπ/√(1−ζ²))`, and 0 when ζ ≥ 1 (Ogata 2010, ch. 5).
    pub fn overshoot(&self) -> f64 {
        let zeta = self.damping_ratio;
        if zeta >= 1.0 {
            0.0
        } else {
            (-zeta * std::f64::consts::PI / (1.0 - zeta * zeta).sqrt()).exp()
        }
    }

    /// Time of the first, largest overshoot, π/ω_d in s; `None` when ζ ≥ 1.
    pub fn peak_time(&self) -> Option<f64> {
        let damped = self.damped_frequency();
        (damped > 0.0).then(|| std::f64::consts::PI / damped)
    }

    /// The usual estimate of the 2 % settling time, 4/(ζωₙ) in s (Ogata 2010, ch. 5);
    /// infinite for an undamped system.
    pub fn settling_time_estimate(&self) -> f64 {
        4.0 / (self.damping_ratio * self.natural_frequency)
    }

    /// Time after which the envelope of the step response stays within `band` (a share of the
    /// step, e.g. 0.02), s: `ln(1/(band·√(1−ζ²)))/(ζωₙ)` for ζ < 1. The response itself has
    /// settled by then. Infinite when undamped; for ζ ≥ 1 the 2 % estimate is returned. A
    /// band that is not positive gives infinity.
    pub fn settling_time_bound(&self, band: f64) -> f64 {
        let zeta = self.damping_ratio;
        if band.is_nan() || band <= 0.0 {
            return f64::INFINITY;
        }
        if zeta >= 1.0 {
            return self.settling_time_estimate();
        }
        let root = (1.0 - zeta * zeta).sqrt();
        ((1.0 / (band * root)).ln() / (zeta * self.natural_frequency)).max(0.0)
    }
}
