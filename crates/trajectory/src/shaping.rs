//! Zero-vibration (ZV) and zero-vibration-derivative (ZVD) input shapers (Singer & Seering,
//! "Preshaping command inputs to reduce system vibration", J. Dyn. Sys., Meas., Control, 1990).
//!
//! A shaper is a short train of impulses; convolving a command with it cancels the vibration a
//! second-order system would show. ZV uses two impulses and cancels exactly at the modelled
//! frequency; ZVD uses three and also cancels the derivative with respect to frequency, so it
//! tolerates more modelling error at the cost of a longer delay.

use crate::profile::{JointState, Profile};
use crate::second_order::{SecondOrder, VibrationError};

/// Which shaper.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ShaperKind {
    /// Zero vibration: two impulses, half a damped period apart.
    Zv,
    /// Zero vibration and derivative: three impulses, half a damped period apart.
    Zvd,
}

/// One impulse of a shaper: when (s) and how large (share of the command).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Impulse {
    /// Time after the command, s.
    pub time: f64,
    /// Amplitude; the amplitudes of a shaper are positive and sum to 1.
    pub amplitude: f64,
}

/// An input shaper: impulses whose amplitudes are positive and sum to 1.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Shaper {
    kind: ShaperKind,
    count: usize,
    impulses: [Impulse; 3],
}

impl Shaper {
    /// The shaper of `kind` for the plant `plant` (its ωₙ and ζ).
    ///
    /// With K = exp(−ζπ/√(1−ζ²)) and the damped half period T = π/ω_d (Singer & Seering 1990):
    /// ZV has amplitudes 1/(1+K), K/(1+K) at 0, T; ZVD has 1/(1+K)², 2K/(1+K)², K²/(1+K)²
    /// at 0, T, 2T.
    ///
    /// # Errors
    /// [`VibrationError::DampingRatio`] when ζ ≥ 1: such a plant does not oscillate.
    pub fn new(kind: ShaperKind, plant: &SecondOrder) -> Result<Self, VibrationError> {
        let zeta = plant.damping_ratio();
        let Some(half_period) = plant.peak_time() else {
            return Err(VibrationError::DampingRatio {
                value: zeta,
                expected: "[0, 1) for a shaper",
            });
        };
        let k = plant.overshoot();
        let zero = Impulse {
            time: 0.0,
            amplitude: 0.0,
        };
        let (count, impulses) = match kind {
            ShaperKind::Zv => {
                let sum = 1.0 + k;
                (
                    2,
                    [
                        Impulse {
                            time: 0.0,
                            amplitude: 1.0 / sum,
                        },
                        Impulse {
                            time: half_period,
                            amplitude: k / sum,
                        },
                        zero,
                    ],
                )
            }
            ShaperKind::Zvd => {
                let sum = (1.0 + k) * (1.0 + k);
                (
                    3,
                    [
                        Impulse {
                            time: 0.0,
                            amplitude: 1.0 / sum,
                        },
                        Impulse {
                            time: half_period,
                            amplitude: 2.0 * k / sum,
                        },
                        Impulse {
                            time: 2.0 * half_period,
                            amplitude: k * k / sum,
                        },
                    ],
                )
            }
        };
        Ok(Self {
            kind,
            count,
            impulses,
        })
    }

    /// The ZV shaper for `plant`; see [`Shaper::new`].
    ///
    /// # Errors
    /// As [`Shaper::new`].
    pub fn zv(plant: &SecondOrder) -> Result<Self, VibrationError> {
        Self::new(ShaperKind::Zv, plant)
    }

    /// The ZVD shaper for `plant`; see [`Shaper::new`].
    ///
    /// # Errors
    /// As [`Shaper::new`].
    pub fn zvd(plant: &SecondOrder) -> Result<Self, VibrationError> {
        Self::new(ShaperKind::Zvd, plant)
    }

    /// Which shaper this is.
    pub fn kind(&self) -> ShaperKind {
        self.kind
    }

    /// The impulses, in time order.
    pub fn impulses(&self) -> &[Impulse] {
        &self.impulses[..self.count]
    }

    /// Delay the shaper adds: time of its last impulse, s.
    pub fn duration(&self) -> f64 {
        self.impulses[self.count - 1].time
    }

    /// Residual vibration left on `plant` by this shaper, as a share of the vibration an
    /// unshaped impulse leaves (Singer & Seering 1990):
    /// `V = e^(−ζωₙ t_N) √((Σ Aᵢ e^(ζωₙ tᵢ) cos ω_d tᵢ)² + (Σ Aᵢ e^(ζωₙ tᵢ) sin ω_d tᵢ)²)`.
    /// A plant with ζ ≥ 1 does not vibrate: 0.
    pub fn residual_vibration(&self, plant: &SecondOrder) -> f64 {
        let damped = plant.damped_frequency();
        if damped <= 0.0 {
            return 0.0;
        }
        let decay = plant.damping_ratio() * plant.natural_frequency();
        let last = self.duration();
        let (mut cosine, mut sine) = (0.0, 0.0);
        for impulse in self.impulses() {
            // e^(ζωₙ tᵢ) e^(−ζωₙ t_N) folded together to avoid overflow.
            let weight = impulse.amplitude * (decay * (impulse.time - last)).exp();
            cosine += weight * (damped * impulse.time).cos();
            sine += weight * (damped * impulse.time).sin();
        }
        cosine.hypot(sine)
    }

    /// The shaped value of a command `command` at time `t` (s): `Σ Aᵢ command(t − tᵢ)`.
    pub fn shape(&self, t: f64, command: impl Fn(f64) -> f64) -> f64 {
        self.impulses()
            .iter()
            .map(|impulse| impulse.amplitude * command(t - impulse.time))
            .sum()
    }

    /// `profile` convolved with this shaper.
    pub fn apply(&self, profile: &Profile) -> ShapedProfile {
        ShapedProfile {
            profile: *profile,
            shaper: *self,
        }
    }
}

/// A profile convolved with a shaper: shaped position = Σ Aᵢ q(t − tᵢ).
///
/// Because the amplitudes are positive and sum to 1, the shaped profile starts and ends where
/// the profile does and never exceeds the profile's velocity, acceleration or jerk limits. It
/// lasts the profile's duration plus the shaper's.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ShapedProfile {
    profile: Profile,
    shaper: Shaper,
}

impl ShapedProfile {
    /// Duration, s: the profile's plus the shaper's delay.
    pub fn duration(&self) -> f64 {
        self.profile.duration() + self.shaper.duration()
    }

    /// The unshaped profile.
    pub fn profile(&self) -> &Profile {
        &self.profile
    }

    /// The shaper.
    pub fn shaper(&self) -> &Shaper {
        &self.shaper
    }

    /// Shaped position, velocity, acceleration and jerk at time `t` (s), clamped to the move.
    pub fn state_at(&self, t: f64) -> JointState {
        // The amplitudes sum to 1 only to rounding: outside the move, give the ends exactly.
        if t <= 0.0 || t.is_nan() || t >= self.duration() {
            return self.profile.state_at(t);
        }
        let mut sum = JointState::default();
        for impulse in self.shaper.impulses() {
            let state = self.profile.state_at(t - impulse.time);
            sum.position += impulse.amplitude * state.position;
            sum.velocity += impulse.amplitude * state.velocity;
            sum.acceleration += impulse.amplitude * state.acceleration;
            sum.jerk += impulse.amplitude * state.jerk;
        }
        sum
    }
}
