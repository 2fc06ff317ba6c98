//! Small deterministic generators, so every run of a test or benchmark sees the same inputs.
//! Three, because the checks written against each were tuned on its sequence: [`Seeded`] for
//! the arms and poses, [`XorShift`] for the trajectory crate's random moves, [`Lcg32`] for the
//! link's pulse widths and line noise.

use armwright_kinematics::Arm;

/// SplitMix64 (Steele, Lea & Flood, OOPSLA 2014): random poses and arms.
pub struct Seeded(u64);

impl Seeded {
    /// A generator from `seed`.
    pub fn new(seed: u64) -> Seeded {
        Seeded(seed)
    }

    /// The next 64 random bits.
    pub fn next_u64(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }

    /// Uniform in `[low, high)`.
    pub fn uniform(&mut self, low: f64, high: f64) -> f64 {
        let unit = (self.next_u64() >> 11) as f64 / (1u64 << 53) as f64;
        low + (high - low) * unit
    }

    /// A random in-limit pose of `arm` (rad or m per joint).
    pub fn pose(&mut self, arm: &Arm) -> Vec<f64> {
        arm.joints()
            .iter()
            .map(|joint| self.uniform(joint.min, joint.max))
            .collect()
    }
}

/// xorshift64* (Vigna, 2016): the trajectory crate's random moves and limits.
pub struct XorShift(u64);

impl XorShift {
    /// A generator from `seed` (a zero seed is made odd: xorshift never leaves zero).
    pub fn new(seed: u64) -> Self {
        Self(seed | 1)
    }

    /// Uniform in `[low, high)`.
    pub fn uniform(&mut self, low: f64, high: f64) -> f64 {
        let mut x = self.0;
        x ^= x >> 12;
        x ^= x << 25;
        x ^= x >> 27;
        self.0 = x;
        let unit = (x.wrapping_mul(0x2545_F491_4F6C_DD1D) >> 11) as f64 / (1u64 << 53) as f64;
        low + unit * (high - low)
    }

    /// Log-uniform in `[low, high)`, for quantities spanning decades.
    pub fn log_uniform(&mut self, low: f64, high: f64) -> f64 {
        self.uniform(low.ln(), high.ln()).exp()
    }
}

/// A 32-bit linear congruential sequence (the multiplier and increment of *Numerical Recipes*,
/// Press et al., 2nd ed., §7.1): cheap bytes and pulse widths for the link's tests and benches.
pub struct Lcg32(u32);

impl Lcg32 {
    /// A sequence from `seed`.
    pub fn new(seed: u32) -> Self {
        Self(seed)
    }

    /// The next state: use its high bits (the low ones repeat quickly).
    pub fn next_u32(&mut self) -> u32 {
        self.0 = self.0.wrapping_mul(1_664_525).wrapping_add(1_013_904_223);
        self.0
    }
}
