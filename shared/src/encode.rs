//! Writing model files (feature `encode`, needs `std`).

use std::vec::Vec;

use crate::crc32::{crc32, fnv1a64};
use crate::limits::*;
use crate::transform::Transform;
use crate::view::{
    InputSettings, ModelView, Regressor, Source, TargetSettings, FLAG_OUTPUT_LAGS, FORMAT_VERSION,
    HEADER_LEN, MAGIC,
};

/// One regime's parameters.
#[derive(Debug, Clone, PartialEq)]
pub struct RegimeSpec {
    /// Antecedent center (scaled units), one per antecedent variable.
    pub center: Vec<f64>,
    /// Lower-triangular distance factor, row-major (`p(p+1)/2` values).
    pub factor: Vec<f64>,
    /// Typicality scale η (> 0).
    pub eta: f64,
    /// Consequent offset.
    pub offset: f64,
    /// Consequent coefficients, one per regressor.
    pub coefficients: Vec<f64>,
}

/// One measured input.
#[derive(Debug, Clone, PartialEq)]
pub struct InputSpec {
    /// Tag.
    pub tag: String,
    /// Engineering unit.
    pub unit: String,
    /// Range and scaling.
    pub settings: InputSettings,
}

/// Everything a model file holds, owned.
#[derive(Debug, Clone, PartialEq)]
pub struct ModelSpec {
    /// Builder version.
    pub builder_version: String,
    /// Target tag.
    pub target_tag: String,
    /// Target unit.
    pub target_unit: String,
    /// Sample time, seconds.
    pub sample_time: f64,
    /// Target transform (its full scale is taken from `target.full_scale` for logit).
    pub transform: Transform,
    /// Target settings.
    pub target: TargetSettings,
    /// Samples an invalid input is replaced by its last good value.
    pub hold_limit: u16,
    /// Oldest lab result accepted, samples.
    pub lab_window: u16,
    /// Inputs.
    pub inputs: Vec<InputSpec>,
    /// Consequent regressors.
    pub regressors: Vec<Regressor>,
    /// Antecedent variables (input indices).
    pub antecedent: Vec<u16>,
    /// Regimes.
    pub regimes: Vec<RegimeSpec>,
}

/// Why a spec could not be written.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum EncodeError {
    /// A count above its limit, or zero where one is needed.
    Limit(&'static str),
    /// A string longer than 255 bytes.
    StringTooLong,
    /// A vector whose length does not match the counts.
    Shape(&'static str),
    /// The written bytes did not pass the decoder (a value outside what the format allows).
    Invalid(crate::error::DecodeError),
}

impl core::fmt::Display for EncodeError {
    fn fmt(&self, f: &mut core::fmt::Formatter<'_>) -> core::fmt::Result {
        match self {
            EncodeError::Limit(what) => write!(f, "model exceeds the format limit on {what}"),
            EncodeError::StringTooLong => write!(
                f,
                "a tag, unit or version is longer than {MAX_STRING} bytes"
            ),
            EncodeError::Shape(what) => write!(f, "model parameters have the wrong shape ({what})"),
            EncodeError::Invalid(e) => write!(f, "model does not pass its own format checks: {e}"),
        }
    }
}

impl std::error::Error for EncodeError {}

fn push_f64(out: &mut Vec<u8>, v: f64) {
    out.extend_from_slice(&v.to_le_bytes());
}

impl ModelSpec {
    /// Encodes to bytes, then decodes them again to prove the file is valid.
    pub fn to_bytes(&self) -> Result<Vec<u8>, EncodeError> {
        let p = self.antecedent.len();
        let r = self.regressors.len();
        if self.inputs.is_empty() || self.inputs.len() > MAX_INPUTS {
            return Err(EncodeError::Limit("inputs"));
        }
        if self.regimes.is_empty() || self.regimes.len() > MAX_REGIMES {
            return Err(EncodeError::Limit("regimes"));
        }
        if r > MAX_REGRESSORS {
            return Err(EncodeError::Limit("regressors"));
        }
        if p == 0 || p > MAX_ANTECEDENT {
            return Err(EncodeError::Limit("antecedent variables"));
        }
        if self.lab_window as usize > MAX_LAB_WINDOW {
            return Err(EncodeError::Limit("lab window"));
        }
        for reg in &self.regimes {
            if reg.center.len() != p
                || reg.factor.len() != p * (p + 1) / 2
                || reg.coefficients.len() != r
            {
                return Err(EncodeError::Shape("regime"));
            }
        }
        let uses_output = self.regressors.iter().any(|g| g.source == Source::Output);
        let mut out = Vec::with_capacity(4096);
        out.extend_from_slice(&MAGIC);
        out.extend_from_slice(&FORMAT_VERSION.to_le_bytes());
        out.extend_from_slice(&(HEADER_LEN as u16).to_le_bytes());
        out.extend_from_slice(&0u32.to_le_bytes()); // total length, patched below
        for n in [self.inputs.len(), self.regimes.len(), r, p] {
            out.extend_from_slice(&(n as u16).to_le_bytes());
        }
        out.extend_from_slice(&0u16.to_le_bytes());
        out.extend_from_slice(&self.lab_window.to_le_bytes());
        out.extend_from_slice(&self.hold_limit.to_le_bytes());
        out.push(match self.transform {
            Transform::Identity => 0,
            Transform::Log => 1,
            Transform::Logit { .. } => 2,
        });
        out.push(if uses_output { FLAG_OUTPUT_LAGS } else { 0 });
        out.extend_from_slice(&0u32.to_le_bytes());
        out.extend_from_slice(&0u64.to_le_bytes()); // model id, patched below
        push_f64(&mut out, self.sample_time);
        debug_assert_eq!(out.len(), HEADER_LEN);
        let mut strings: Vec<&str> =
            vec![&self.builder_version, &self.target_tag, &self.target_unit];
        for input in &self.inputs {
            strings.push(&input.tag);
            strings.push(&input.unit);
        }
        for s in strings {
            if s.len() > MAX_STRING {
                return Err(EncodeError::StringTooLong);
            }
            out.push(s.len() as u8);
            out.extend_from_slice(s.as_bytes());
        }
        while out.len() % 8 != 0 {
            out.push(0);
        }
        let t = &self.target;
        let full_scale = match self.transform {
            Transform::Logit { full_scale } => full_scale,
            _ => t.full_scale,
        };
        for v in [
            full_scale,
            t.low,
            t.high,
            t.fuzziness,
            t.domain_threshold,
            t.residual_sd,
            t.bias_gain,
            t.bias_limit,
            t.outlier_k,
        ] {
            push_f64(&mut out, v);
        }
        for input in &self.inputs {
            let s = &input.settings;
            for v in [s.low, s.high, s.mean, s.std] {
                push_f64(&mut out, v);
            }
        }
        for g in &self.regressors {
            let (source, index) = match g.source {
                Source::Input(j) => (0u8, j),
                Source::Output => (1u8, 0u8),
            };
            out.push(source);
            out.push(index);
            out.extend_from_slice(&g.lag.to_le_bytes());
        }
        for &a in &self.antecedent {
            out.extend_from_slice(&a.to_le_bytes());
            out.extend_from_slice(&0u16.to_le_bytes());
        }
        // Section F: regimes in interleaved pairs (each word of regime 2j, then the same word
        // of regime 2j + 1); an odd count padded with a zero regime.
        let words = |reg: &RegimeSpec| -> Vec<f64> {
            let mut w = reg.center.clone();
            w.extend_from_slice(&reg.factor);
            w.extend_from_slice(&[reg.eta, reg.offset]);
            w.extend_from_slice(&reg.coefficients);
            w
        };
        for pair in self.regimes.chunks(2) {
            let mut pair: Vec<Vec<f64>> = pair.iter().map(words).collect();
            if pair.len() == 1 {
                pair.push(vec![0.0; pair[0].len()]);
            }
            for k in 0..pair[0].len() {
                for regime in &pair {
                    push_f64(&mut out, regime[k]);
                }
            }
        }
        let total = out.len() + 4;
        out[8..12].copy_from_slice(&(total as u32).to_le_bytes());
        let id = fnv1a64(&out[HEADER_LEN..]);
        out[32..40].copy_from_slice(&id.to_le_bytes());
        let crc = crc32(&out);
        out.extend_from_slice(&crc.to_le_bytes());
        ModelView::parse(&out).map_err(EncodeError::Invalid)?;
        Ok(out)
    }

    /// Reads a view back into an owned spec.
    pub fn from_view(view: &ModelView<'_>) -> ModelSpec {
        let p = view.n_antecedent();
        let r = view.n_regressors();
        ModelSpec {
            builder_version: view.builder_version().into(),
            target_tag: view.target_tag().into(),
            target_unit: view.target_unit().into(),
            sample_time: view.sample_time(),
            transform: view.transform(),
            target: view.target(),
            hold_limit: view.hold_limit(),
            lab_window: view.lab_window(),
            inputs: (0..view.n_inputs())
                .filter_map(|j| {
                    view.input(j).map(|settings| InputSpec {
                        tag: view.input_tag(j).into(),
                        unit: view.input_unit(j).into(),
                        settings,
                    })
                })
                .collect(),
            regressors: (0..r).filter_map(|k| view.regressor(k)).collect(),
            antecedent: (0..p).map(|a| view.antecedent_input(a) as u16).collect(),
            regimes: (0..view.n_regimes())
                .map(|i| RegimeSpec {
                    center: (0..p).map(|a| view.center(i, a)).collect(),
                    factor: (0..p)
                        .flat_map(|row| (0..=row).map(move |col| (row, col)))
                        .map(|(row, col)| view.factor(i, row, col))
                        .collect(),
                    eta: view.eta(i),
                    offset: view.offset(i),
                    coefficients: (0..r).map(|k| view.coefficient(i, k)).collect(),
                })
                .collect(),
        }
    }
}
