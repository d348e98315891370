//! What `regimix build` writes besides the model file: the summary, the readable YAML twin of the
//! model, and the validation table.

use std::fmt::Write as _;

use regimix_format::transform::Transform;
use regimix_format::Source;
use serde::Serialize;

use crate::build::{Built, Metrics};
use crate::identify::Term;
use crate::prepare::CellStatus;
use crate::replay::status_text;
use crate::timestamp::Rfc3339;

/// `summary.json` (fields documented in docs/outputs.md).
#[derive(Debug, Clone, Serialize)]
pub struct Summary {
    /// Builder version.
    pub builder_version: String,
    /// Model id (hex).
    pub model_id: String,
    /// Clustering seed.
    pub seed: u64,
    /// Regimes in the model.
    pub regime_count: usize,
    /// Selected regressors, e.g. `TI-3104(k-3)`.
    pub regressors: Vec<String>,
    /// Test block metrics of the model, engineering units.
    pub test: TestMetrics,
    /// The global linear baseline on the same test rows.
    pub baseline: Baseline,
    /// test.rmse / baseline.test.rmse.
    pub rmse_ratio: f64,
    /// First timestamp of the test block.
    pub test_start: String,
    /// Training rows used for fitting.
    pub training_rows: usize,
    /// Output-error refinement applied and kept.
    pub refined: bool,
    /// The inputs ranked as scheduling variables, best first: one linear model's validation
    /// RMSE with its structure fitted over three ranges of the input, over its own (empty when
    /// `regimes.variables` is set).
    pub input_ranking: Vec<InputRank>,
    /// Advice on the result (e.g. a delay on the search limit); empty when there is none.
    pub notes: Vec<String>,
}

/// One input's place in the ranking of scheduling variables.
#[derive(Debug, Clone, Serialize)]
pub struct InputRank {
    /// Input tag.
    pub tag: String,
    /// Validation RMSE over the input's ranges / one linear model's (below 1: its behaviour
    /// changes along the input).
    pub ratio: f64,
}

/// Model metrics on the test block.
#[derive(Debug, Clone, Serialize)]
pub struct TestMetrics {
    /// Samples scored.
    pub samples: usize,
    /// RMSE.
    pub rmse: f64,
    /// MAE.
    pub mae: f64,
    /// R².
    pub r2: f64,
    /// Mean of estimate − measured.
    pub bias: f64,
    /// Share of test samples out of the trained domain.
    pub out_of_domain_fraction: f64,
}

/// Baseline metrics.
#[derive(Debug, Clone, Serialize)]
pub struct Baseline {
    /// On the test block.
    pub test: Metrics,
}

/// Readable name of a term.
pub fn term_name(term: Term, input_tags: &[String], target: &str) -> String {
    match term {
        Term::Input { input, lag } => format!(
            "{}(k-{lag})",
            input_tags.get(input).map_or("?", String::as_str)
        ),
        Term::Output { lag } => format!("{target}(k-{lag})"),
    }
}

/// The summary of a build.
pub fn summary(b: &Built, seed: u64) -> Summary {
    let tags: Vec<String> = b.spec.inputs.iter().map(|i| i.tag.clone()).collect();
    Summary {
        builder_version: b.spec.builder_version.clone(),
        model_id: format!(
            "{:016x}",
            u64::from_le_bytes(b.bytes[32..40].try_into().unwrap_or([0; 8]))
        ),
        seed,
        regime_count: b.spec.regimes.len(),
        regressors: b
            .terms
            .iter()
            .map(|t| term_name(*t, &tags, &b.spec.target_tag))
            .collect(),
        test: TestMetrics {
            samples: b.test.samples,
            rmse: b.test.rmse,
            mae: b.test.mae,
            r2: b.test.r2,
            bias: b.test.bias,
            out_of_domain_fraction: b.out_of_domain,
        },
        baseline: Baseline { test: b.baseline },
        rmse_ratio: b.test.rmse / b.baseline.rmse,
        test_start: Rfc3339(b.prepared.dataset.time(b.test_start)).to_string(),
        training_rows: b.training_rows,
        refined: b.refined,
        input_ranking: b
            .ranking
            .iter()
            .map(|r| InputRank {
                tag: tags.get(r.input).cloned().unwrap_or_default(),
                ratio: r.ratio,
            })
            .collect(),
        notes: b.notes.clone(),
    }
}

#[derive(Serialize)]
struct YamlInput {
    tag: String,
    unit: String,
    valid_range: [f64; 2],
    mean: f64,
    std: f64,
}

#[derive(Serialize)]
struct YamlRegime {
    center_scaled: Vec<f64>,
    distance_factor: Vec<f64>,
    typicality_scale: f64,
    offset: f64,
    coefficients: Vec<(String, f64)>,
}

#[derive(Serialize)]
struct YamlModel {
    format_version: u16,
    builder_version: String,
    target: String,
    target_unit: String,
    transform: String,
    sample_time_s: f64,
    estimate_range: [f64; 2],
    fuzziness: f64,
    domain_threshold: f64,
    residual_sd: f64,
    bias_gain: f64,
    bias_limit: f64,
    outlier_k: f64,
    hold_limit_samples: u16,
    lab_window_samples: u16,
    inputs: Vec<YamlInput>,
    regressors: Vec<String>,
    scheduled_on: Vec<String>,
    regimes: Vec<YamlRegime>,
}

/// The readable YAML twin of the model file (same numbers; the binary file is what runs).
pub fn model_yaml(b: &Built) -> String {
    let s = &b.spec;
    let tags: Vec<String> = s.inputs.iter().map(|i| i.tag.clone()).collect();
    let names: Vec<String> = s
        .regressors
        .iter()
        .map(|r| match r.source {
            Source::Input(j) => format!("{}(k-{})", tags[j as usize], r.lag),
            Source::Output => format!("{}(k-{})", s.target_tag, r.lag),
        })
        .collect();
    let model = YamlModel {
        format_version: regimix_format::view::FORMAT_VERSION,
        builder_version: s.builder_version.clone(),
        target: s.target_tag.clone(),
        target_unit: s.target_unit.clone(),
        transform: match s.transform {
            Transform::Identity => "none".into(),
            Transform::Log => "log".into(),
            Transform::Logit { full_scale } => format!("logit, full scale {full_scale}"),
        },
        sample_time_s: s.sample_time,
        estimate_range: [s.target.low, s.target.high],
        fuzziness: s.target.fuzziness,
        domain_threshold: s.target.domain_threshold,
        residual_sd: s.target.residual_sd,
        bias_gain: s.target.bias_gain,
        bias_limit: s.target.bias_limit,
        outlier_k: s.target.outlier_k,
        hold_limit_samples: s.hold_limit,
        lab_window_samples: s.lab_window,
        inputs: s
            .inputs
            .iter()
            .map(|i| YamlInput {
                tag: i.tag.clone(),
                unit: i.unit.clone(),
                valid_range: [i.settings.low, i.settings.high],
                mean: i.settings.mean,
                std: i.settings.std,
            })
            .collect(),
        regressors: names.clone(),
        scheduled_on: s
            .antecedent
            .iter()
            .map(|&j| tags[j as usize].clone())
            .collect(),
        regimes: s
            .regimes
            .iter()
            .map(|r| YamlRegime {
                center_scaled: r.center.clone(),
                distance_factor: r.factor.clone(),
                typicality_scale: r.eta,
                offset: r.offset,
                coefficients: names
                    .iter()
                    .cloned()
                    .zip(r.coefficients.iter().copied())
                    .collect(),
            })
            .collect(),
    };
    let mut out = String::from(
        "# regimix model (readable twin of model.rgmx; the binary file is what runs)\n",
    );
    out.push_str(&serde_norway::to_string(&model).unwrap_or_default());
    out
}

/// `validation.csv`: timestamp, measured, estimate, status, flags, period (train/test), fresh
/// (1: a new reading, fitted and scored; 0: an analyzer reading held from before; empty: no
/// measured value).
pub fn validation_csv(b: &Built) -> String {
    let ds = &b.prepared.dataset;
    let fresh = ds.fresh_target_model();
    let mut out = String::from("timestamp,measured,estimate,status,flags,period,fresh\n");
    for (k, e) in b.estimates.iter().enumerate() {
        let (measured, new) = if ds.target_status[k] == CellStatus::Valid {
            let new = if fresh[k].is_finite() { "1" } else { "0" };
            (format!("{:?}", ds.target[k]), new)
        } else {
            (String::new(), "")
        };
        let estimate = if e.value.is_finite() {
            format!("{:?}", e.value)
        } else {
            String::new()
        };
        let _ = writeln!(
            out,
            "{},{measured},{estimate},{},{},{},{new}",
            Rfc3339(e.time),
            e.status,
            status_text(e.status),
            if k >= b.test_start { "test" } else { "train" }
        );
    }
    out
}
