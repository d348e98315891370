//! Helpers shared by the builder's unit tests.

/// Deterministic pseudo-random numbers in [-1, 1) for synthetic test data (a 64-bit linear
/// congruential generator with Knuth's MMIX constants).
pub struct Lcg(pub u64);

impl Lcg {
    /// Next value in [-1, 1).
    pub fn next(&mut self) -> f64 {
        self.0 = self
            .0
            .wrapping_mul(6_364_136_223_846_793_005)
            .wrapping_add(1_442_695_040_888_963_407);
        ((self.0 >> 11) as f64 / (1u64 << 53) as f64) * 2.0 - 1.0
    }
}
