//! The regimix model file format.
//!
//! This crate holds what the builder and the runtime must agree on. It is `#![no_std]` and has no
//! allocation on the decode side.
//!
//! - [`transform`]: target transforms (log, logit) and their inverses.
#![cfg_attr(not(any(test, feature = "std")), no_std)]

pub mod transform;
