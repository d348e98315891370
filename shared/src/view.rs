//! The validating, zero-copy decoder: [`ModelView::parse`] checks a byte slice once and then
//! reads fields from it on demand. No allocation, no panics: every read is bounds-checked and
//! every value was validated in `parse`.
//!
//! The byte layout is specified in `docs/model-format.md`; [`HEADER_LEN`] and the section order
//! below follow it.

use crate::crc32::{crc32, fnv1a64};
use crate::error::DecodeError;
use crate::limits::*;
use crate::transform::Transform;

/// First four bytes of every model file.
pub const MAGIC: [u8; 4] = *b"RGMX";
/// The format version this crate writes and reads.
pub const FORMAT_VERSION: u16 = 2;
/// Bytes in the fixed header.
pub const HEADER_LEN: usize = 48;
/// Bytes in the CRC trailer.
pub const TRAILER_LEN: usize = 4;
/// Flag bit: consequents use past outputs (the model runs in simulation mode).
pub const FLAG_OUTPUT_LAGS: u8 = 1;
/// Number of f64 target settings in section B.
pub const TARGET_SETTINGS: usize = 9;

/// Where a regressor's value comes from.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Source {
    /// Measured input `index`.
    Input(u8),
    /// The model's own past output (model domain).
    Output,
}

/// One consequent regressor: a source delayed by `lag` samples.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Regressor {
    /// Input or past output.
    pub source: Source,
    /// Delay in samples (≥ 1 for outputs).
    pub lag: u16,
}

/// Target settings (section B).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TargetSettings {
    /// Full scale for the logit transform (1 otherwise).
    pub full_scale: f64,
    /// Lowest estimate in engineering units (estimates are clipped).
    pub low: f64,
    /// Highest estimate in engineering units.
    pub high: f64,
    /// Fuzziness m of the memberships.
    pub fuzziness: f64,
    /// Largest-typicality threshold below which a sample is out of the trained domain.
    pub domain_threshold: f64,
    /// Standard deviation of validation residuals, model domain.
    pub residual_sd: f64,
    /// Bias-update filter gain, in (0, 1].
    pub bias_gain: f64,
    /// Largest |bias|, model domain.
    pub bias_limit: f64,
    /// Lab residuals beyond `outlier_k · residual_sd` are rejected.
    pub outlier_k: f64,
}

/// Per-input settings (section C).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct InputSettings {
    /// Lowest valid value.
    pub low: f64,
    /// Highest valid value.
    pub high: f64,
    /// Training mean (antecedent scaling).
    pub mean: f64,
    /// Training standard deviation (> 0).
    pub std: f64,
}

#[inline]
fn read_u16(b: &[u8], at: usize) -> Result<u16, DecodeError> {
    b.get(at..at + 2)
        .map(|s| u16::from_le_bytes([s[0], s[1]]))
        .ok_or(DecodeError::BadLayout)
}

#[inline]
fn read_u32(b: &[u8], at: usize) -> Result<u32, DecodeError> {
    b.get(at..at + 4)
        .map(|s| u32::from_le_bytes([s[0], s[1], s[2], s[3]]))
        .ok_or(DecodeError::BadLayout)
}

#[inline]
fn read_u64(b: &[u8], at: usize) -> Result<u64, DecodeError> {
    match at.checked_add(8).and_then(|end| b.get(at..end)) {
        Some(s) => {
            let mut a = [0u8; 8];
            a.copy_from_slice(s);
            Ok(u64::from_le_bytes(a))
        }
        None => Err(DecodeError::BadLayout),
    }
}

#[inline]
fn read_f64(b: &[u8], at: usize) -> Result<f64, DecodeError> {
    read_u64(b, at).map(f64::from_bits)
}

/// A validated model: a view over the file's bytes.
#[derive(Debug, Clone, Copy)]
pub struct ModelView<'a> {
    bytes: &'a [u8],
    n_inputs: usize,
    n_regimes: usize,
    n_regressors: usize,
    n_antecedent: usize,
    hold_limit: u16,
    lab_window: u16,
    transform: Transform,
    flags: u8,
    model_id: u64,
    sample_time: f64,
    strings: usize,
    target: usize,
    inputs: usize,
    regressors: usize,
    antecedent: usize,
    regimes: usize,
    max_lag: [u16; MAX_INPUTS],
    max_output_lag: u16,
}

/// Bytes of one regime's record (section F).
pub const fn regime_len(p: usize, r: usize) -> usize {
    8 * (p + p * (p + 1) / 2 + 1 + 1 + r)
}

impl<'a> ModelView<'a> {
    /// Checks magic, version, length, CRC-32, model id, limits and every field.
    pub fn parse(bytes: &'a [u8]) -> Result<ModelView<'a>, DecodeError> {
        if bytes.len() < HEADER_LEN + TRAILER_LEN {
            return Err(DecodeError::Truncated);
        }
        if bytes.get(0..4) != Some(&MAGIC[..]) {
            return Err(DecodeError::BadMagic);
        }
        let version = read_u16(bytes, 4)?;
        if version != FORMAT_VERSION {
            return Err(DecodeError::UnsupportedVersion(version));
        }
        if read_u16(bytes, 6)? as usize != HEADER_LEN {
            return Err(DecodeError::BadLayout);
        }
        if read_u32(bytes, 8)? as usize != bytes.len() {
            return Err(DecodeError::LengthMismatch);
        }
        let body_end = bytes.len() - TRAILER_LEN;
        if read_u32(bytes, body_end)? != crc32(bytes.get(..body_end).ok_or(DecodeError::Truncated)?)
        {
            return Err(DecodeError::BadCrc);
        }
        Self::parse_checked(bytes)
    }

    /// [`parse`](Self::parse) without the CRC-32, model-id, UTF-8 and number checks, for bytes
    /// already validated once (the C interface re-opens its model on every call). The layout and
    /// index checks still run, so any input is still safe: a string that is not UTF-8 reads as
    /// empty, a non-finite number gives a flagged estimate.
    pub fn parse_trusted(bytes: &'a [u8]) -> Result<ModelView<'a>, DecodeError> {
        if bytes.len() < HEADER_LEN + TRAILER_LEN || bytes.get(0..4) != Some(&MAGIC[..]) {
            return Err(DecodeError::BadMagic);
        }
        if read_u32(bytes, 8)? as usize != bytes.len() {
            return Err(DecodeError::LengthMismatch);
        }
        let mut view = Self::layout(bytes, false)?;
        view.model_id = read_u64(bytes, 32)?;
        Ok(view)
    }

    fn parse_checked(bytes: &'a [u8]) -> Result<ModelView<'a>, DecodeError> {
        let view = Self::layout(bytes, true)?;
        let body_end = bytes.len() - TRAILER_LEN;
        let body = bytes
            .get(HEADER_LEN..body_end)
            .ok_or(DecodeError::BadLayout)?;
        if fnv1a64(body) != view.model_id {
            return Err(DecodeError::BadModelId);
        }
        view.validate()?;
        Ok(view)
    }

    /// Section offsets and the checks that keep every accessor in bounds; `check_text` also
    /// requires the strings to be UTF-8.
    fn layout(bytes: &'a [u8], check_text: bool) -> Result<ModelView<'a>, DecodeError> {
        let n_inputs = read_u16(bytes, 12)? as usize;
        let n_regimes = read_u16(bytes, 14)? as usize;
        let n_regressors = read_u16(bytes, 16)? as usize;
        let n_antecedent = read_u16(bytes, 18)? as usize;
        let lab_window = read_u16(bytes, 22)?;
        let hold_limit = read_u16(bytes, 24)?;
        if !(1..=MAX_INPUTS).contains(&n_inputs)
            || !(1..=MAX_REGIMES).contains(&n_regimes)
            || n_regressors > MAX_REGRESSORS
            || !(1..=MAX_ANTECEDENT).contains(&n_antecedent)
            || lab_window as usize > MAX_LAB_WINDOW
        {
            return Err(DecodeError::LimitExceeded);
        }
        let transform_code = *bytes.get(26).ok_or(DecodeError::Truncated)?;
        let flags = *bytes.get(27).ok_or(DecodeError::Truncated)?;
        if flags & !FLAG_OUTPUT_LAGS != 0 || read_u16(bytes, 20)? != 0 || read_u32(bytes, 28)? != 0
        {
            return Err(DecodeError::InvalidField);
        }
        let model_id = read_u64(bytes, 32)?;
        let sample_time = read_f64(bytes, 40)?;
        if !(sample_time.is_finite() && sample_time > 0.0) {
            return Err(DecodeError::InvalidField);
        }
        // Section A: strings (3 + 2 per input), each a length byte and UTF-8, padded to 8 bytes.
        let strings = HEADER_LEN;
        let mut at = strings;
        for _ in 0..(3 + 2 * n_inputs) {
            let len = *bytes.get(at).ok_or(DecodeError::BadLayout)? as usize;
            let text = bytes
                .get(at + 1..at + 1 + len)
                .ok_or(DecodeError::BadLayout)?;
            if check_text && core::str::from_utf8(text).is_err() {
                return Err(DecodeError::BadString);
            }
            at += 1 + len;
        }
        let padded = at.div_ceil(8) * 8;
        if bytes
            .get(at..padded)
            .ok_or(DecodeError::BadLayout)?
            .iter()
            .any(|b| *b != 0)
        {
            return Err(DecodeError::InvalidField);
        }
        let target = padded;
        let full_scale = read_f64(bytes, target)?;
        let transform = match transform_code {
            0 => Transform::Identity,
            1 => Transform::Log,
            2 => Transform::Logit { full_scale },
            _ => return Err(DecodeError::InvalidField),
        };
        let inputs = target + 8 * TARGET_SETTINGS;
        let regressors = inputs + 32 * n_inputs;
        let antecedent = regressors + 4 * n_regressors;
        let regimes = antecedent + 4 * n_antecedent;
        // Section F: the regimes in pairs, an odd count padded with a zero regime.
        let end = regimes + n_regimes.next_multiple_of(2) * regime_len(n_antecedent, n_regressors);
        if end + TRAILER_LEN != bytes.len() {
            return Err(DecodeError::BadLayout);
        }
        let mut view = ModelView {
            bytes,
            n_inputs,
            n_regimes,
            n_regressors,
            n_antecedent,
            hold_limit,
            lab_window,
            transform,
            flags,
            model_id,
            sample_time,
            strings,
            target,
            inputs,
            regressors,
            antecedent,
            regimes,
            max_lag: [0; MAX_INPUTS],
            max_output_lag: 0,
        };
        for r in 0..n_regressors {
            let reg = view.regressor_raw(r)?;
            match reg.source {
                Source::Input(j) => {
                    let slot = view
                        .max_lag
                        .get_mut(j as usize)
                        .ok_or(DecodeError::InvalidField)?;
                    if j as usize >= n_inputs {
                        return Err(DecodeError::InvalidField);
                    }
                    *slot = (*slot).max(reg.lag);
                }
                Source::Output => {
                    if reg.lag == 0 || flags & FLAG_OUTPUT_LAGS == 0 {
                        return Err(DecodeError::InvalidField);
                    }
                    view.max_output_lag = view.max_output_lag.max(reg.lag);
                }
            }
            if reg.lag as usize > MAX_LAG {
                return Err(DecodeError::LimitExceeded);
            }
        }
        if flags & FLAG_OUTPUT_LAGS != 0 && view.max_output_lag == 0 {
            return Err(DecodeError::InvalidField);
        }
        for a in 0..n_antecedent {
            let j = read_u16(bytes, antecedent + 4 * a)? as usize;
            if j >= n_inputs || read_u16(bytes, antecedent + 4 * a + 2)? != 0 {
                return Err(DecodeError::InvalidField);
            }
        }
        Ok(view)
    }

    /// Checks every number: finite, ordered ranges, positive scales.
    fn validate(&self) -> Result<(), DecodeError> {
        let t = self.target();
        let ok = t.full_scale > 0.0
            && t.low < t.high
            && t.fuzziness > 1.0
            && (0.0..1.0).contains(&t.domain_threshold)
            && t.residual_sd > 0.0
            && t.bias_gain > 0.0
            && t.bias_gain <= 1.0
            && t.bias_limit >= 0.0
            && t.outlier_k > 0.0;
        if !ok
            || !t.low.is_finite()
            || !t.high.is_finite()
            || !t.residual_sd.is_finite()
            || !t.bias_limit.is_finite()
            || !t.outlier_k.is_finite()
            || !t.full_scale.is_finite()
            || !t.fuzziness.is_finite()
        {
            return Err(DecodeError::InvalidField);
        }
        for j in 0..self.n_inputs {
            let s = self.input(j).ok_or(DecodeError::BadLayout)?;
            if !(s.low.is_finite()
                && s.high.is_finite()
                && s.low < s.high
                && s.mean.is_finite()
                && s.std.is_finite()
                && s.std > 0.0)
            {
                return Err(DecodeError::InvalidField);
            }
        }
        // Every regime's words finite; an odd count's padding regime all zero.
        let words = regime_len(self.n_antecedent, self.n_regressors) / 8;
        for i in 0..self.n_regimes.next_multiple_of(2) {
            for k in 0..words {
                let v = read_f64(self.bytes, self.regime_word(i, k))?;
                let valid = if i < self.n_regimes {
                    v.is_finite()
                } else {
                    v.to_bits() == 0
                };
                if !valid {
                    return Err(DecodeError::InvalidField);
                }
            }
        }
        for i in 0..self.n_regimes {
            if !(self.eta(i) > 0.0) {
                return Err(DecodeError::InvalidField);
            }
        }
        Ok(())
    }

    fn string(&self, index: usize) -> &'a str {
        let mut at = self.strings;
        for _ in 0..index {
            at += 1 + self.bytes.get(at).copied().unwrap_or(0) as usize;
        }
        let len = self.bytes.get(at).copied().unwrap_or(0) as usize;
        self.bytes
            .get(at + 1..at + 1 + len)
            .and_then(|b| core::str::from_utf8(b).ok())
            .unwrap_or("")
    }

    #[inline]
    fn f64_at(&self, at: usize) -> f64 {
        read_f64(self.bytes, at).unwrap_or(f64::NAN)
    }

    /// The raw bytes.
    #[inline]
    pub fn bytes(&self) -> &'a [u8] {
        self.bytes
    }
    /// Measured inputs.
    #[inline]
    pub fn n_inputs(&self) -> usize {
        self.n_inputs
    }
    /// Regimes.
    #[inline]
    pub fn n_regimes(&self) -> usize {
        self.n_regimes
    }
    /// Consequent regressors (without the offset).
    #[inline]
    pub fn n_regressors(&self) -> usize {
        self.n_regressors
    }
    /// Antecedent variables.
    #[inline]
    pub fn n_antecedent(&self) -> usize {
        self.n_antecedent
    }
    /// Samples an invalid input is replaced by its last good value.
    #[inline]
    pub fn hold_limit(&self) -> u16 {
        self.hold_limit
    }
    /// Oldest lab result (in samples) the bias update accepts.
    #[inline]
    pub fn lab_window(&self) -> u16 {
        self.lab_window
    }
    /// Target transform.
    #[inline]
    pub fn transform(&self) -> Transform {
        self.transform
    }
    /// Whether consequents use past outputs.
    #[inline]
    pub fn uses_output_lags(&self) -> bool {
        self.flags & FLAG_OUTPUT_LAGS != 0
    }
    /// Format version the file declares (bytes 4–5 of the header; `parse` accepts only
    /// [`FORMAT_VERSION`]).
    #[inline]
    pub fn format_version(&self) -> u16 {
        read_u16(self.bytes, 4).unwrap_or(0)
    }
    /// Content hash of the body.
    #[inline]
    pub fn model_id(&self) -> u64 {
        self.model_id
    }
    /// Sample time in seconds.
    #[inline]
    pub fn sample_time(&self) -> f64 {
        self.sample_time
    }
    /// Builder version that wrote the file.
    #[inline]
    pub fn builder_version(&self) -> &'a str {
        self.string(0)
    }
    /// Target tag.
    #[inline]
    pub fn target_tag(&self) -> &'a str {
        self.string(1)
    }
    /// Target unit.
    #[inline]
    pub fn target_unit(&self) -> &'a str {
        self.string(2)
    }
    /// Tag of input `j` (empty past the end).
    #[inline]
    pub fn input_tag(&self, j: usize) -> &'a str {
        if j < self.n_inputs {
            self.string(3 + 2 * j)
        } else {
            ""
        }
    }
    /// Unit of input `j`.
    #[inline]
    pub fn input_unit(&self, j: usize) -> &'a str {
        if j < self.n_inputs {
            self.string(4 + 2 * j)
        } else {
            ""
        }
    }
    /// Target settings.
    #[inline]
    pub fn target(&self) -> TargetSettings {
        let f = |k: usize| self.f64_at(self.target + 8 * k);
        TargetSettings {
            full_scale: f(0),
            low: f(1),
            high: f(2),
            fuzziness: f(3),
            domain_threshold: f(4),
            residual_sd: f(5),
            bias_gain: f(6),
            bias_limit: f(7),
            outlier_k: f(8),
        }
    }
    /// Settings of input `j`.
    #[inline]
    pub fn input(&self, j: usize) -> Option<InputSettings> {
        if j >= self.n_inputs {
            return None;
        }
        let at = self.inputs + 32 * j;
        Some(InputSettings {
            low: self.f64_at(at),
            high: self.f64_at(at + 8),
            mean: self.f64_at(at + 16),
            std: self.f64_at(at + 24),
        })
    }
    #[inline]
    fn regressor_raw(&self, r: usize) -> Result<Regressor, DecodeError> {
        let at = self.regressors + 4 * r;
        let source = *self.bytes.get(at).ok_or(DecodeError::BadLayout)?;
        let index = *self.bytes.get(at + 1).ok_or(DecodeError::BadLayout)?;
        let lag = read_u16(self.bytes, at + 2)?;
        let source = match (source, index) {
            (0, j) => Source::Input(j),
            (1, 0) => Source::Output,
            _ => return Err(DecodeError::InvalidField),
        };
        Ok(Regressor { source, lag })
    }
    /// Regressor `r`.
    #[inline]
    pub fn regressor(&self, r: usize) -> Option<Regressor> {
        if r < self.n_regressors {
            self.regressor_raw(r).ok()
        } else {
            None
        }
    }
    /// Input index of antecedent variable `a`.
    #[inline]
    pub fn antecedent_input(&self, a: usize) -> usize {
        read_u16(self.bytes, self.antecedent + 4 * a).map_or(0, usize::from)
    }
    /// Largest lag of input `j` among the regressors (0 if unused).
    #[inline]
    pub fn max_input_lag(&self, j: usize) -> u16 {
        self.max_lag.get(j).copied().unwrap_or(0)
    }
    /// Largest output lag (0 without output lags).
    #[inline]
    pub fn max_output_lag(&self) -> u16 {
        self.max_output_lag
    }
    /// Offset of word `k` of regime `i`'s parameters (center, factor, η, offset,
    /// coefficients): regimes 2j and 2j + 1 share a block with their words interleaved (an odd
    /// count is padded with a zero regime). Past the padding: `usize::MAX` (reads NaN).
    #[inline]
    fn regime_word(&self, i: usize, k: usize) -> usize {
        if i >= self.n_regimes.next_multiple_of(2) {
            return usize::MAX;
        }
        let len = regime_len(self.n_antecedent, self.n_regressors);
        self.regimes + (i / 2) * 2 * len + 8 * (2 * k + i % 2)
    }
    /// Section C: one 32-byte record per input (low, high, mean, std as little-endian f64), for
    /// the runtime's hot path. The fields were validated by [`parse`](Self::parse).
    #[inline]
    pub fn input_records(&self) -> core::slice::ChunksExact<'a, u8> {
        self.input_section().chunks_exact(32)
    }
    /// Section C's bytes, [`input_records`](Self::input_records) not yet split: kept by the
    /// runtime, which splits it with a constant record size on every sample.
    #[inline]
    pub fn input_section(&self) -> &'a [u8] {
        self.section(self.inputs, 32 * self.n_inputs)
    }
    /// Input `j`'s 32-byte record of section C (empty past the last input).
    #[inline]
    pub fn input_record(&self, j: usize) -> &'a [u8] {
        if j < self.n_inputs {
            self.section(self.inputs + 32 * j, 32)
        } else {
            &[]
        }
    }
    /// Section B: the target settings record (full scale, low, high, fuzziness, domain
    /// threshold, … as little-endian f64), for the runtime's hot path.
    #[inline]
    pub fn target_record(&self) -> &'a [u8] {
        self.section(self.target, 72)
    }
    /// Section E: one 4-byte record per antecedent variable (input index as little-endian u16,
    /// then two zero bytes), for the runtime's hot path.
    #[inline]
    pub fn antecedent_records(&self) -> core::slice::ChunksExact<'a, u8> {
        self.section(self.antecedent, 4 * self.n_antecedent)
            .chunks_exact(4)
    }
    /// Section D: one 4-byte record per regressor (source, input index, lag as little-endian
    /// u16), for the runtime's hot path.
    #[inline]
    pub fn regressor_records(&self) -> core::slice::ChunksExact<'a, u8> {
        self.section(self.regressors, 4 * self.n_regressors)
            .chunks_exact(4)
    }
    /// Section F in blocks of two regimes with their words interleaved (center, factor, η,
    /// offset, coefficients as little-endian f64; `2 · regime_len` bytes each; an odd count's
    /// last block ends with a zero regime), for the runtime's hot path.
    #[inline]
    pub fn regime_pairs(&self) -> core::slice::ChunksExact<'a, u8> {
        let len = regime_len(self.n_antecedent, self.n_regressors);
        self.regime_section().chunks_exact(2 * len.max(1))
    }
    /// Section F whole: the blocks of [`regime_pairs`](Self::regime_pairs) back to back.
    #[inline]
    pub fn regime_section(&self) -> &'a [u8] {
        let len = regime_len(self.n_antecedent, self.n_regressors);
        self.section(self.regimes, 2 * len * self.n_regimes.div_ceil(2))
    }
    #[inline]
    fn section(&self, start: usize, len: usize) -> &'a [u8] {
        self.bytes.get(start..start + len).unwrap_or(&[])
    }

    /// Antecedent center of regime `i`, variable `a` (scaled units).
    #[inline]
    pub fn center(&self, i: usize, a: usize) -> f64 {
        self.f64_at(self.regime_word(i, a))
    }
    /// Entry (row, col ≤ row) of regime `i`'s lower-triangular distance factor.
    #[inline]
    pub fn factor(&self, i: usize, row: usize, col: usize) -> f64 {
        let p = self.n_antecedent;
        self.f64_at(self.regime_word(i, p + row * (row + 1) / 2 + col))
    }
    /// Typicality scale η of regime `i`.
    #[inline]
    pub fn eta(&self, i: usize) -> f64 {
        let p = self.n_antecedent;
        self.f64_at(self.regime_word(i, p + p * (p + 1) / 2))
    }
    /// Consequent offset of regime `i` (model domain).
    #[inline]
    pub fn offset(&self, i: usize) -> f64 {
        let p = self.n_antecedent;
        self.f64_at(self.regime_word(i, p + p * (p + 1) / 2 + 1))
    }
    /// Consequent coefficient of regressor `r` in regime `i`.
    #[inline]
    pub fn coefficient(&self, i: usize, r: usize) -> f64 {
        let p = self.n_antecedent;
        self.f64_at(self.regime_word(i, p + p * (p + 1) / 2 + 2 + r))
    }
}
