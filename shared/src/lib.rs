//! The regimix model file format.
//!
//! What the builder and the runtime must agree on. `#![no_std]`; decoding never allocates.
//!
//! - [`ModelView::parse`]: validate a model file and read it in place (zero-copy).
//! - [`encode::ModelSpec::to_bytes`] (feature `encode`): write one.
//! - [`transform`]: target transforms (log, logit) and their inverses.
//! - [`exp`]: a table-driven `e^x` with a short dependency chain for those inverses.
//! - [`crc32`]: the CRC-32/ISO-HDLC trailer and the FNV-1a model id.
//! - [`limits`]: size limits every model respects.
//!
//! The byte layout is specified in `docs/model-format.md`:
//!
//! | spec section | decode | encode |
//! |---|---|---|
//! | 1 header | [`ModelView::parse`] | [`encode::ModelSpec::to_bytes`] |
//! | 2 A strings | [`ModelView::input_tag`] … | same |
//! | 3 B target settings | [`ModelView::target`] | same |
//! | 4 C inputs | [`ModelView::input`] | same |
//! | 5 D regressors | [`ModelView::regressor`] | same |
//! | 6 E antecedent | [`ModelView::antecedent_input`] | same |
//! | 7 F regimes | [`ModelView::center`], [`ModelView::factor`], [`ModelView::coefficient`] | same |
#![cfg_attr(not(any(test, feature = "std")), no_std)]

pub mod crc32;
#[cfg(feature = "encode")]
pub mod encode;
pub mod error;
pub mod exp;
mod exp_table;
pub mod limits;
pub mod transform;
pub mod view;

pub use error::DecodeError;
pub use view::{InputSettings, ModelView, Regressor, Source, TargetSettings};
