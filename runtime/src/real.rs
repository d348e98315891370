//! The floating-point type the estimator computes in: `f64`, or `f32` for controllers with a
//! single-precision FPU. Transcendentals come from `libm`, so results do not depend on a
//! platform math library.

use core::ops::{Add, Div, Mul, Neg, Sub};

/// A float the estimator can run on.
pub trait Real:
    Copy
    + PartialOrd
    + Add<Output = Self>
    + Sub<Output = Self>
    + Mul<Output = Self>
    + Div<Output = Self>
    + Neg<Output = Self>
    + core::fmt::Debug
{
    /// Zero.
    const ZERO: Self;
    /// One.
    const ONE: Self;
    /// Not a number.
    const NAN: Self;
    /// Converts from the file's `f64` (rounding for `f32`).
    fn from_f64(v: f64) -> Self;
    /// Widens to `f64`.
    fn to_f64(self) -> f64;
    /// Finite (not NaN, not infinite).
    fn is_finite(self) -> bool;
    /// `self^e` (libm).
    fn powf(self, e: Self) -> Self;
    /// Absolute value.
    fn abs(self) -> Self;
}

impl Real for f64 {
    const ZERO: Self = 0.0;
    const ONE: Self = 1.0;
    const NAN: Self = f64::NAN;
    fn from_f64(v: f64) -> Self {
        v
    }
    fn to_f64(self) -> f64 {
        self
    }
    fn is_finite(self) -> bool {
        f64::is_finite(self)
    }
    fn powf(self, e: Self) -> Self {
        libm::pow(self, e)
    }
    fn abs(self) -> Self {
        libm::fabs(self)
    }
}

impl Real for f32 {
    const ZERO: Self = 0.0;
    const ONE: Self = 1.0;
    const NAN: Self = f32::NAN;
    fn from_f64(v: f64) -> Self {
        v as f32
    }
    fn to_f64(self) -> f64 {
        f64::from(self)
    }
    fn is_finite(self) -> bool {
        f32::is_finite(self)
    }
    fn powf(self, e: Self) -> Self {
        libm::powf(self, e)
    }
    fn abs(self) -> Self {
        libm::fabsf(self)
    }
}
