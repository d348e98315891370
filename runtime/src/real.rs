//! The floating-point type the estimator computes in: `f64`, or `f32` for controllers with a
//! single-precision FPU. Transcendentals come from `libm`, so results do not depend on a
//! platform math library.

use core::ops::{Add, Div, Mul, Neg, Sub};

use regimix_format::transform::Transform;

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
    /// Finite and within `[low, high]`, for finite `low` and `high` as converted from the
    /// file's `f64` (the comparisons alone then reject NaN and ±∞; an `f32` bound can overflow
    /// to ±∞, so the `f32` check also tests finiteness).
    fn within(self, low: Self, high: Self) -> bool;
    /// `self^e` (libm).
    fn powf(self, e: Self) -> Self;
    /// Absolute value.
    fn abs(self) -> Self;
    /// A small index (a ring head) kept as the word's bit pattern. Never used as a number, so
    /// reading it back is one move instead of a checked float-to-integer conversion.
    fn from_index(i: u32) -> Self;
    /// The index [`from_index`](Real::from_index) stored; any other word gives some value the
    /// caller range-checks.
    fn to_index(self) -> usize;
    /// How the per-sample kernels read a model parameter: the file's little-endian `f64` bytes
    /// as they are (`f64`), or a copy converted once when the estimator is set up (`f32`: on a
    /// single-precision FPU every `f64` → `f32` conversion is a library call).
    #[doc(hidden)]
    type Word: Word<Self>;
    /// The target's inverse transform (model domain to engineering units) in this precision:
    /// exactly [`Transform::inverse`] for `f64`; with `libm`'s `expf` for `f32`.
    fn untransform(transform: Transform, z: Self) -> Self;
    /// Whether the estimator keeps a converted copy of the parameters in its state.
    #[doc(hidden)]
    const COPIES_PARAMETERS: bool;
    /// The words the kernels read: `bytes` (a section of the model file) as words for `f64`,
    /// `copy` (the same section converted) for `f32`.
    #[doc(hidden)]
    fn words<'a>(bytes: &'a [u8], copy: &'a [Self]) -> &'a [Self::Word];
}

/// A model parameter as the per-sample kernels read it ([`Real::Word`]).
#[doc(hidden)]
pub trait Word<T>: Copy + core::fmt::Debug {
    /// The parameter's value.
    fn get(self) -> T;
}

impl Word<f64> for [u8; 8] {
    #[inline(always)]
    fn get(self) -> f64 {
        f64::from_le_bytes(self)
    }
}

impl Word<f32> for f32 {
    #[inline(always)]
    fn get(self) -> f32 {
        self
    }
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
    fn within(self, low: Self, high: Self) -> bool {
        self >= low && self <= high
    }
    fn powf(self, e: Self) -> Self {
        libm::pow(self, e)
    }
    fn abs(self) -> Self {
        libm::fabs(self)
    }
    fn from_index(i: u32) -> Self {
        f64::from_bits(u64::from(i))
    }
    fn to_index(self) -> usize {
        // Truncates on 32-bit targets; the caller range-checks the result anyway.
        self.to_bits() as usize
    }
    fn untransform(transform: Transform, z: Self) -> Self {
        transform.inverse(z)
    }
    type Word = [u8; 8];
    const COPIES_PARAMETERS: bool = false;
    fn words<'a>(bytes: &'a [u8], _copy: &'a [Self]) -> &'a [[u8; 8]] {
        bytes.as_chunks::<8>().0
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
    fn within(self, low: Self, high: Self) -> bool {
        self.is_finite() && self >= low && self <= high
    }
    fn powf(self, e: Self) -> Self {
        libm::powf(self, e)
    }
    fn abs(self) -> Self {
        libm::fabsf(self)
    }
    fn from_index(i: u32) -> Self {
        f32::from_bits(i)
    }
    fn to_index(self) -> usize {
        self.to_bits() as usize
    }
    fn untransform(transform: Transform, z: Self) -> Self {
        // As `Transform::inverse`, in single precision.
        match transform {
            Transform::Identity => z,
            Transform::Log => libm::expf(z),
            Transform::Logit { full_scale } => {
                let full_scale = full_scale as f32;
                if z >= 0.0 {
                    full_scale / (1.0 + libm::expf(-z))
                } else {
                    let e = libm::expf(z);
                    full_scale * e / (1.0 + e)
                }
            }
        }
    }
    type Word = f32;
    const COPIES_PARAMETERS: bool = true;
    fn words<'a>(_bytes: &'a [u8], copy: &'a [Self]) -> &'a [f32] {
        copy
    }
}

#[cfg(test)]
mod tests {
    use super::Real;

    #[test]
    fn within_rejects_nan_and_infinities_for_finite_bounds() {
        for x in [f64::NAN, f64::INFINITY, f64::NEG_INFINITY, -0.5, 2.5] {
            assert!(!x.within(-0.25, 2.0), "{x}");
        }
        for x in [-0.25, 0.0, 1.0, 2.0] {
            assert!(x.within(-0.25, 2.0), "{x}");
        }
        // A finite f64 bound beyond f32's range converts to +∞ in f32: ∞ must still fail.
        let high = <f32 as Real>::from_f64(1e300);
        assert_eq!(high, f32::INFINITY);
        assert!(!f32::INFINITY.within(0.0, high));
        assert!(!f32::NAN.within(0.0, high));
        assert!(3.0e38f32.within(0.0, high));
    }
}
