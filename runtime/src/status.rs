//! Status flags published with every estimate, and outcomes of lab feedback.

/// Bit set describing an estimate. Zero means good.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct Status(pub u16);

impl Status {
    /// An input was invalid (NaN, infinite or out of range) and its last good value was used.
    pub const INPUT_SUBSTITUTED: u16 = 1 << 0;
    /// An input has been invalid for longer than the hold limit (or never valid).
    pub const INPUT_INVALID: u16 = 1 << 1;
    /// No regime is typical of the inputs: the plant is outside the trained domain.
    pub const OUT_OF_DOMAIN: u16 = 1 << 2;
    /// Lag buffers are not yet full of real history.
    pub const WARMING_UP: u16 = 1 << 3;
    /// The value is not a model estimate but the held last estimate (or NaN before the first).
    pub const FALLBACK: u16 = 1 << 4;
    /// The caller passed the wrong number of inputs.
    pub const WRONG_INPUT_COUNT: u16 = 1 << 5;
    /// The estimate was clipped to the target's range.
    pub const CLIPPED: u16 = 1 << 6;

    /// No flag set.
    pub fn is_good(self) -> bool {
        self.0 == 0
    }
    /// Whether `flag` is set.
    pub fn has(self, flag: u16) -> bool {
        self.0 & flag != 0
    }
    /// Flags that make a sample unfit for the bias update and for trust.
    pub const UNTRUSTED: u16 = Self::INPUT_SUBSTITUTED
        | Self::INPUT_INVALID
        | Self::OUT_OF_DOMAIN
        | Self::WARMING_UP
        | Self::FALLBACK
        | Self::WRONG_INPUT_COUNT;
}

/// What happened to a lab result fed back with [`crate::Estimator::lab_result`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum LabOutcome {
    /// The bias was updated to this value (model domain).
    Applied(f64),
    /// Older than the model's lab window or than the estimator's history.
    RejectedAge,
    /// The estimate at the sample time was not trusted (see [`Status::UNTRUSTED`]).
    RejectedStatus,
    /// The value is outside the target transform's domain or not finite.
    RejectedValue,
    /// The residual differs from the current bias by more than `outlier_k · residual_sd`.
    RejectedOutlier,
}

impl LabOutcome {
    /// Fixed integer code (C interface): 0 applied, then 1..=4 for the rejections.
    pub const fn code(self) -> i32 {
        match self {
            LabOutcome::Applied(_) => 0,
            LabOutcome::RejectedAge => 1,
            LabOutcome::RejectedStatus => 2,
            LabOutcome::RejectedValue => 3,
            LabOutcome::RejectedOutlier => 4,
        }
    }
}
