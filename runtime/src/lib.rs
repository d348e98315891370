//! regimix runtime: evaluates a regimix soft-sensor model once per sample.
//!
//! `#![no_std]` without `alloc`: everything lives in caller-provided storage. This crate depends
//! only on [`regimix_format`], the model-file format crate.
//!
//! Present so far: the target transforms the runtime applies to its estimates
//! ([`Transform`]), shared with the builder so both compute the same numbers.
#![no_std]

pub use regimix_format::transform::Transform;
