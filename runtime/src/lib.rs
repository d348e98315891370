//! regimix runtime: evaluates a regimix soft-sensor model once per sample.
//!
//! `#![no_std]` without `alloc`. A model is a validated view over the bytes of a model file
//! ([`ModelView`]); the estimator's state lives in a slice the caller provides, sized by
//! [`state_words`] (`f64`) or [`state_words_for`] (an `f32` estimator also keeps the parameters
//! there, converted once, so that a single-precision FPU converts none per step). Per sample: inputs in, an [`Estimate`] out, with [`Status`] flags, the largest
//! typicality and the dominant regime; [`Estimator::weights`] gives every regime's weight. Lab
//! results are fed back with [`Estimator::lab_result`]. The estimator runs in `f64` or, for
//! controllers with a single-precision FPU, in `f32` (see [`Real`]).
//!
//! ```
//! # fn main() -> Result<(), Box<dyn std::error::Error>> {
//! # let bytes = include_bytes!("../../docs/examples/tiny-model.rgmx");
//! use regimix_runtime::{state_words, Estimator, ModelView};
//! let model = ModelView::parse(bytes)?;           // magic, version, CRC, limits checked
//! let mut state = vec![0.0f64; state_words(&model)]; // or a static [f64; N]
//! let mut sensor = Estimator::new(model, &mut state)?;
//! let estimate = sensor.step(&[1.0]);
//! assert!(estimate.value.is_finite());
//! # Ok(()) }
//! ```
#![cfg_attr(not(any(test, feature = "std")), no_std)]

/// The user guide's Rust example runs as a doctest.
#[cfg(doctest)]
#[doc = include_str!("../../docs/user-guide.md")]
pub struct UserGuide;

mod estimator;
#[cfg(feature = "ffi")]
pub mod ffi;
mod real;
mod status;
#[cfg(target_arch = "x86_64")]
mod wide;

pub use estimator::{state_words, state_words_for, Estimate, Estimator, InitError};
pub use real::Real;
pub use regimix_format::transform::Transform;
pub use regimix_format::{DecodeError, ModelView};
pub use status::{LabOutcome, Status};
