//! regimix builder: turns historian exports into a fuzzy multi-model soft sensor.
//!
//! Stages, each a module with one job:
//! - [`config`]: the YAML project config, raw then checked;
//! - [`prepare`]: historian CSV → aligned [`prepare::Dataset`] plus an [`prepare::audit::Audit`];
//! - [`timestamp`], [`duration`]: time parsing and units.
//!
//! The command-line tool `regimix` (in `main.rs`) is a thin layer over these modules.

pub mod analysis;
pub mod build;
pub mod config;
pub mod duration;
pub mod error;
pub mod export;
pub mod identify;
pub mod output;
pub mod prepare;
pub mod regimes;
pub mod replay;
pub mod report;
pub mod suggest;
pub mod timestamp;

#[cfg(test)]
mod test_support;
