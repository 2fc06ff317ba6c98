//! Calibration: the linear map from a joint's position to its servo's pulse width, and the one
//! pulse rule (round to the device's pulse unit, clamp to the calibrated range) that every
//! place showing or sending a pulse width goes through.

use super::ArmError;

/// Which way the pulse width moves as the joint position grows.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum PulseDirection {
    /// A larger position needs a longer pulse.
    Rising,
    /// A larger position needs a shorter pulse (the servo is mounted the other way round).
    Falling,
}

/// The pulse unit assumed where no device has announced its own: 1 µs, the step of common
/// hobby-servo controllers (common practice).
pub const DEFAULT_PULSE_UNIT_US: f64 = 1.0;

/// A pulse width as a device sends it: a whole number of pulse units within the range allowed.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SentPulse {
    /// The width sent, in µs: a whole number of pulse units.
    pub pulse_us: f64,
    /// Whether the wanted width lay outside the allowed range and was limited to it.
    pub clamped: bool,
}

/// The pulse rule: `wanted_us` limited to `low_us..=high_us`, then rounded to the nearest whole
/// multiple of `unit_us` (halves away from zero) that lies in that range. All values in µs.
///
/// When no multiple of the unit lies in the range (a range narrower than one unit between two
/// steps), the multiple nearest the limited width is sent. A `unit_us` that is not a positive
/// finite number means no rounding; a range given the wrong way round is taken as written from
/// the smaller end to the larger. A NaN `wanted_us` gives a NaN width, marked clamped.
///
/// # Example
/// ```
/// use armwright_kinematics::sent_pulse;
/// assert_eq!(sent_pulse(1500.5, 1.0, 1000.0, 2000.0).pulse_us, 1501.0);
/// let limited = sent_pulse(2000.4, 1.0, 1000.0, 2000.2);
/// assert_eq!((limited.pulse_us, limited.clamped), (2000.0, true));
/// ```
pub fn sent_pulse(wanted_us: f64, unit_us: f64, low_us: f64, high_us: f64) -> SentPulse {
    let (low_us, high_us) = (low_us.min(high_us), low_us.max(high_us));
    let clamped = !(low_us..=high_us).contains(&wanted_us);
    let limited = wanted_us.max(low_us).min(high_us);
    if !(unit_us.is_finite() && unit_us > 0.0) {
        return SentPulse {
            pulse_us: if wanted_us.is_nan() {
                f64::NAN
            } else {
                limited
            },
            clamped,
        };
    }
    // A whole-unit end is met exactly despite floating-point division (1e-9 of a unit).
    let first = (low_us / unit_us - 1e-9).ceil();
    let last = (high_us / unit_us + 1e-9).floor();
    let nearest = (limited / unit_us).round();
    let steps = if first <= last {
        nearest.max(first).min(last)
    } else {
        nearest
    };
    SentPulse {
        pulse_us: if wanted_us.is_nan() {
            f64::NAN
        } else {
            steps * unit_us
        },
        clamped,
    }
}

/// The pulse width measured at two known joint positions, a straight line through them, and
/// the pulse range the servo accepts.
///
/// Positions are in rad (revolute) or m (prismatic); pulse widths in µs. The direction follows
/// from the two points.
#[derive(Debug, Clone, PartialEq)]
pub struct Calibration {
    /// First known joint position (rad or m).
    pub position_a: f64,
    /// Pulse width at `position_a`, in µs.
    pub pulse_a_us: f64,
    /// Second known joint position (rad or m).
    pub position_b: f64,
    /// Pulse width at `position_b`, in µs.
    pub pulse_b_us: f64,
    /// Shortest pulse the servo accepts, in µs.
    pub pulse_min_us: f64,
    /// Longest pulse the servo accepts, in µs.
    pub pulse_max_us: f64,
}

impl Calibration {
    /// Pulse width change per unit of joint position, in µs/rad or µs/m; negative when falling.
    pub fn slope_us(&self) -> f64 {
        (self.pulse_b_us - self.pulse_a_us) / (self.position_b - self.position_a)
    }

    /// Which way the pulse moves as the position grows.
    pub fn direction(&self) -> PulseDirection {
        if self.slope_us() >= 0.0 {
            PulseDirection::Rising
        } else {
            PulseDirection::Falling
        }
    }

    /// Pulse width for a joint position, in µs, not rounded and not clamped.
    pub fn pulse_us(&self, position: f64) -> f64 {
        self.pulse_a_us + (position - self.position_a) * self.slope_us()
    }

    /// The pulse width sent for a joint position (rad or m): [`Calibration::pulse_us`] put
    /// through the pulse rule ([`sent_pulse`]) with the device's `unit_us` (µs) and the range
    /// `pulse_min_us..=pulse_max_us`.
    pub fn sent_pulse(&self, position: f64, unit_us: f64) -> SentPulse {
        sent_pulse(
            self.pulse_us(position),
            unit_us,
            self.pulse_min_us,
            self.pulse_max_us,
        )
    }

    /// Joint position for a pulse width given in µs.
    pub fn position(&self, pulse_us: f64) -> f64 {
        self.position_a + (pulse_us - self.pulse_a_us) / self.slope_us()
    }

    /// Joint motion a pulse-width change of `delta_us` µs makes, in rad or m (always ≥ 0).
    pub fn position_per_us(&self, delta_us: f64) -> f64 {
        (delta_us / self.slope_us()).abs()
    }

    pub(crate) fn check(&self, joint: usize) -> Result<(), ArmError> {
        let error = |field: &'static str, problem: String| ArmError::JointField {
            joint,
            field,
            problem,
        };
        let values = [
            ("calibration.position_a", self.position_a),
            ("calibration.pulse_a_us", self.pulse_a_us),
            ("calibration.position_b", self.position_b),
            ("calibration.pulse_b_us", self.pulse_b_us),
            ("calibration.pulse_min_us", self.pulse_min_us),
            ("calibration.pulse_max_us", self.pulse_max_us),
        ];
        for (field, value) in values {
            if !value.is_finite() {
                return Err(error(field, format!("is not a finite number ({value})")));
            }
        }
        if self.position_a == self.position_b {
            return Err(error(
                "calibration.position_b",
                "must differ from position_a".into(),
            ));
        }
        if self.pulse_a_us == self.pulse_b_us {
            return Err(error(
                "calibration.pulse_b_us",
                "must differ from pulse_a_us (the pulse must change with position)".into(),
            ));
        }
        if self.pulse_min_us >= self.pulse_max_us {
            return Err(error(
                "calibration.pulse_min_us",
                format!(
                    "({} µs) must be below pulse_max_us ({} µs)",
                    self.pulse_min_us, self.pulse_max_us
                ),
            ));
        }
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn ninety_per_500() -> Calibration {
        Calibration {
            position_a: 0.0,
            pulse_a_us: 1500.0,
            position_b: std::f64::consts::FRAC_PI_2,
            pulse_b_us: 2000.0,
            pulse_min_us: 1000.0,
            pulse_max_us: 2000.0,
        }
    }

    #[test]
    fn pulse_and_position_are_inverse() {
        let calibration = ninety_per_500();
        for position in [-1.0, -0.3, 0.0, 0.7, 1.5] {
            let back = calibration.position(calibration.pulse_us(position));
            assert!((back - position).abs() < 1e-12);
        }
    }

    #[test]
    fn five_us_is_about_one_degree_on_a_180_degree_span() {
        // Common practice: a hobby servo's 1000–2000 µs span covers about 180°, so a deadband
        // of a few µs is about 1° per 5 µs (180° / 1000 µs = 0.18°/µs → 0.9° per 5 µs).
        let calibration = Calibration {
            position_a: -std::f64::consts::FRAC_PI_2,
            pulse_a_us: 1000.0,
            position_b: std::f64::consts::FRAC_PI_2,
            pulse_b_us: 2000.0,
            pulse_min_us: 1000.0,
            pulse_max_us: 2000.0,
        };
        let degrees = calibration.position_per_us(5.0).to_degrees();
        assert!((degrees - 0.9).abs() < 1e-9, "{degrees}");
    }

    #[test]
    fn the_pulse_rule_rounds_halves_away_from_zero_to_the_unit() {
        assert_eq!(sent_pulse(1500.5, 1.0, 500.0, 2500.0).pulse_us, 1501.0);
        assert_eq!(sent_pulse(1500.49, 1.0, 500.0, 2500.0).pulse_us, 1500.0);
        // A 0.5 µs unit (500 ns): 1500.3 is nearer 1500.5 than 1500.0.
        assert_eq!(sent_pulse(1500.3, 0.5, 500.0, 2500.0).pulse_us, 1500.5);
        // A 4 µs unit: 1502 is a half step, away from zero is 1504.
        assert_eq!(sent_pulse(1502.0, 4.0, 500.0, 2500.0).pulse_us, 1504.0);
        assert!(!sent_pulse(1502.0, 4.0, 500.0, 2500.0).clamped);
    }

    #[test]
    fn the_pulse_rule_clamps_to_the_range_and_says_so() {
        let below = sent_pulse(880.0, 1.0, 900.0, 2100.0);
        assert_eq!((below.pulse_us, below.clamped), (900.0, true));
        let above = sent_pulse(2300.0, 1.0, 900.0, 2100.0);
        assert_eq!((above.pulse_us, above.clamped), (2100.0, true));
        // Exactly at an end is inside: not clamped.
        let at_end = sent_pulse(2100.0, 1.0, 900.0, 2100.0);
        assert_eq!((at_end.pulse_us, at_end.clamped), (2100.0, false));
    }

    #[test]
    fn rounding_never_steps_outside_a_range_whose_ends_are_not_whole_units() {
        // 2000.6 rounds to 2001, beyond the 2000.7 µs end: the last whole unit inside, 2000,
        // is sent. At the other end 999.4 would round to 999, below 999.3: 1000 is sent.
        assert_eq!(sent_pulse(2000.6, 1.0, 999.3, 2000.7).pulse_us, 2000.0);
        assert_eq!(sent_pulse(999.4, 1.0, 999.3, 2000.7).pulse_us, 1000.0);
        // Clamped to 999.3 first, then the first whole unit inside.
        let below = sent_pulse(990.0, 1.0, 999.3, 2000.7);
        assert_eq!((below.pulse_us, below.clamped), (1000.0, true));
    }

    #[test]
    fn a_range_narrower_than_one_unit_sends_the_nearest_step() {
        // No whole 4 µs step lies in 1501–1502: 1501.5 is nearest 1500.
        assert_eq!(sent_pulse(1501.5, 4.0, 1501.0, 1502.0).pulse_us, 1500.0);
    }

    #[test]
    fn odd_inputs_give_no_panic_and_say_what_happened() {
        let reversed = sent_pulse(2500.0, 1.0, 2100.0, 900.0);
        assert_eq!((reversed.pulse_us, reversed.clamped), (2100.0, true));
        let unrounded = sent_pulse(1500.25, 0.0, 900.0, 2100.0);
        assert_eq!((unrounded.pulse_us, unrounded.clamped), (1500.25, false));
        let nan = sent_pulse(f64::NAN, 1.0, 900.0, 2100.0);
        assert!(nan.pulse_us.is_nan() && nan.clamped);
    }

    #[test]
    fn a_calibration_sends_its_rounded_and_clamped_pulse() {
        let calibration = ninety_per_500();
        // 10° is 1555.56 µs → 1556 µs.
        let sent = calibration.sent_pulse(10f64.to_radians(), DEFAULT_PULSE_UNIT_US);
        assert_eq!((sent.pulse_us, sent.clamped), (1556.0, false));
        // 100° would be 2055.6 µs, beyond the 2000 µs end.
        let sent = calibration.sent_pulse(100f64.to_radians(), DEFAULT_PULSE_UNIT_US);
        assert_eq!((sent.pulse_us, sent.clamped), (2000.0, true));
    }

    #[test]
    fn a_falling_map_says_so() {
        let mut calibration = ninety_per_500();
        calibration.pulse_b_us = 1000.0;
        assert_eq!(calibration.direction(), PulseDirection::Falling);
        assert!(calibration.pulse_us(0.5) < 1500.0);
    }
}
