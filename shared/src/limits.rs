//! Size limits every model file must respect. They bound the runtime's state and loops, so an
//! embedded build can size its buffers at compile time.

/// Most measured inputs.
pub const MAX_INPUTS: usize = 32;
/// Most regimes (rules).
pub const MAX_REGIMES: usize = 16;
/// Most regressors in a consequent (without the offset).
pub const MAX_REGRESSORS: usize = 96;
/// Most antecedent variables.
pub const MAX_ANTECEDENT: usize = 12;
/// Largest lag in samples.
pub const MAX_LAG: usize = 1024;
/// Largest lab-result age the bias update looks back, in samples.
pub const MAX_LAB_WINDOW: usize = 4096;
/// Longest string (tag, unit, version) in bytes.
pub const MAX_STRING: usize = 255;
