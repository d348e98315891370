//! Local dynamic models: weighted ARX per regime, with the structure (per-input dead time and
//! order, output order) chosen by stepwise validation.
//!
//! ## The algorithm
//! 1. Candidates: every input at lags `0..=max_lag_j`; up to `max_output_lag` past outputs (only
//!    for a frequent analyzer target — lab samples are too sparse to feed back), one sample
//!    apart, or one analyzer cycle apart when the export holds each reading until the next.
//! 2. Rows are split in time: a training block, a gap of the largest lag, a validation block.
//! 3. One pass accumulates, per regime, the weighted Gram matrix of all candidates on the
//!    training rows ([`wls::accumulate`]); every subset is then a small solve.
//! 4. Stepwise: each input's lags form one contiguous block `u_j(k−d_j) … u_j(k−d_j−n_j+1)`; a
//!    forward step may start a block at any lag (choosing the dead time) or extend one at either
//!    end; output lags extend `1..na`. Candidates pass a partial F-test (statrs, α = 0.05); the
//!    few with the largest F are scored on the validation block — in free-run simulation when
//!    output lags are used, as the sensor runs — and the best is kept if it lowers the validation
//!    RMSE by at least 1 %. A backward step then drops an end lag whose removal does not raise
//!    the validation RMSE.
//! 5. The ridge weight is chosen on the validation block; each regime is fitted by weighted least
//!    squares (local learning) with its memberships raised to m as weights — the clustering
//!    objective's weights — while the blend uses the memberships themselves (see
//!    [`StructureParams::weight_power`] for why).

pub mod design;
pub mod gains;
pub mod global;
pub mod refine;
pub mod scheduling;
pub mod stepwise;
pub mod wls;

pub use design::Term;
pub use stepwise::{select, Selection, StructureParams};
