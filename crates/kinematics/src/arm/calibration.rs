//! Calibration: the linear map from a joint's position to its servo's pulse width.

use super::ArmError;

/// Which way the pulse width moves as the joint position grows.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum PulseDirection {
    /// A larger position needs a longer pulse.
    Rising,
    /// A larger position needs a shorter pulse (the servo is mounted the other way round).
    Falling,
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
    fn a_falling_map_says_so() {
        let mut calibration = ninety_per_500();
        calibration.pulse_b_us = 1000.0;
        assert_eq!(calibration.direction(), PulseDirection::Falling);
        assert!(calibration.pulse_us(0.5) < 1500.0);
    }
}
