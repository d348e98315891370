//! `regimix build`: prepare → regimes → structure → local models → model file → validation
//! through the runtime on the encoded bytes.
//!
//! The last `test-share` of the time span is the test block. Nothing in it is used for
//! clustering, structure selection or fitting; a gap of the largest lag separates it from the
//! training rows. Metrics are computed on it from the runtime's estimates, so what is validated
//! is exactly what runs.

use regimix_format::encode::{InputSpec, ModelSpec, RegimeSpec};
use regimix_format::transform::Transform;
use regimix_format::{InputSettings, Regressor, Source, TargetSettings};
use regimix_runtime::Status;

use crate::config::{Config, Estimation, RegimeCount};
use crate::duration::Span;
use crate::error::DataError;
use crate::identify::design::{self, Regressors};
use crate::identify::global::{fit_baseline, fit_global};
use crate::identify::refine::{refine, simulation_mse};
use crate::identify::scheduling::{rank_inputs, scheduling_inputs, Ranked};
use crate::identify::stepwise::{
    self, predict, select, select_from, Selection, SelectionError, Step, StructureParams,
};
use crate::identify::wls::{Fit, FitError};
use crate::identify::Term;
use crate::prepare::{prepare, CellStatus, Prepared};
use crate::regimes::antecedent::Antecedent;
use crate::regimes::covariance::Regularization;
use crate::regimes::kernel::Columns;
use crate::regimes::scaling::Scaling;
use crate::regimes::validity::{choose_count, measures, sweep, Validity};
use crate::regimes::{cluster, Partition, RegimeError, RegimeParams};
use crate::replay::{replay, ReplayRow};

/// Why a build failed.
#[derive(Debug, thiserror::Error)]
pub enum BuildError {
    /// Reading or preparing the data.
    #[error(transparent)]
    Data(#[from] DataError),
    /// A regime with too little data for its parameters.
    #[error("regime {regime} of {count} has only {samples:.0} effective training samples for {parameters} parameters (at least {needed} needed); use fewer regimes (`regimes.count`) or more data")]
    RegimeTooThin {
        /// Regime number (1-based).
        regime: usize,
        /// Regimes.
        count: usize,
        /// Effective samples (Σ μ^m).
        samples: f64,
        /// Parameters per regime.
        parameters: usize,
        /// Needed.
        needed: usize,
    },
    /// The target has no usable value.
    #[error("the target `{0}` has no usable values (all missing, bad, or outside the transform's domain)")]
    TargetAllMissing(String),
    /// An input that does not vary on the training rows.
    #[error("input `{0}` is constant over the training data: it carries no information; remove it from `inputs`")]
    ConstantInput(String),
    /// Too little data for the model asked for.
    #[error("{0}")]
    TooLittleData(String),
    /// More inputs than the regimes can take, and the linear pre-selection used too many too.
    #[error("`regimes.variables` is not set and the {inputs} inputs are more than the regimes take ({max}); one linear model uses {used} of them, so list under `regimes.variables` the tags that say where the plant operates (key temperatures, throughput)")]
    TooManyVariables {
        /// Inputs in the config.
        inputs: usize,
        /// Inputs the linear model uses.
        used: usize,
        /// The most scheduling variables.
        max: usize,
    },
    /// Clustering.
    #[error("regime clustering: {0}")]
    Regimes(RegimeError),
    /// Structure selection.
    #[error("structure selection: {0}")]
    Selection(SelectionError),
    /// A least-squares fit.
    #[error("fitting: {0}")]
    Fit(FitError),
    /// Writing the model file.
    #[error("model file: {0}")]
    Encode(regimix_format::encode::EncodeError),
    /// Replaying the model file.
    #[error("validation: {0}")]
    Replay(regimix_format::DecodeError),
}

// Conversions without `source`: the messages above already include the inner error, so a
// printed error chain does not repeat it.
impl From<RegimeError> for BuildError {
    fn from(e: RegimeError) -> Self {
        BuildError::Regimes(e)
    }
}
impl From<SelectionError> for BuildError {
    fn from(e: SelectionError) -> Self {
        BuildError::Selection(e)
    }
}
impl From<FitError> for BuildError {
    fn from(e: FitError) -> Self {
        BuildError::Fit(e)
    }
}
impl From<regimix_format::encode::EncodeError> for BuildError {
    fn from(e: regimix_format::encode::EncodeError) -> Self {
        BuildError::Encode(e)
    }
}
impl From<regimix_format::DecodeError> for BuildError {
    fn from(e: regimix_format::DecodeError) -> Self {
        BuildError::Replay(e)
    }
}

/// Accuracy on a set of rows, engineering units.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct Metrics {
    /// Samples scored.
    pub samples: usize,
    /// Root-mean-square error.
    pub rmse: f64,
    /// Mean absolute error.
    pub mae: f64,
    /// Coefficient of determination.
    pub r2: f64,
    /// Mean of estimate − measured.
    pub bias: f64,
}

/// Scores `pairs` of (measured, estimate).
pub fn metrics(pairs: &[(f64, f64)]) -> Metrics {
    let n = pairs.len().max(1) as f64;
    let mean_y = pairs.iter().map(|p| p.0).sum::<f64>() / n;
    let sse: f64 = pairs.iter().map(|(y, e)| (e - y).powi(2)).sum();
    let sst: f64 = pairs.iter().map(|(y, _)| (y - mean_y).powi(2)).sum();
    Metrics {
        samples: pairs.len(),
        rmse: (sse / n).sqrt(),
        mae: pairs.iter().map(|(y, e)| (e - y).abs()).sum::<f64>() / n,
        r2: if sst > 0.0 { 1.0 - sse / sst } else { f64::NAN },
        bias: pairs.iter().map(|(y, e)| e - y).sum::<f64>() / n,
    }
}

/// Everything a build produced.
#[derive(Debug, Clone)]
pub struct Built {
    /// Prepared data and its audit.
    pub prepared: Prepared,
    /// The model, owned.
    pub spec: ModelSpec,
    /// The model file.
    pub bytes: Vec<u8>,
    /// Runtime estimates for every grid row.
    pub estimates: Vec<ReplayRow>,
    /// First row of the test block.
    pub test_start: usize,
    /// Validity measures by regime count (empty for a fixed count's single entry).
    pub validity: Vec<Validity>,
    /// The clustering partition (scaled space).
    pub partition: Partition,
    /// Selected terms.
    pub terms: Vec<Term>,
    /// Local fits (model domain).
    pub fits: Vec<Fit>,
    /// Stepwise path.
    pub path: Vec<Step>,
    /// Blended model on the test block.
    pub test: Metrics,
    /// Global linear baseline on the same test rows.
    pub baseline: Metrics,
    /// Share of test samples flagged out of the trained domain.
    pub out_of_domain: f64,
    /// Baseline estimates (units) on the test rows, for plots: (row, estimate).
    pub baseline_estimates: Vec<(usize, f64)>,
    /// Training rows used for fitting.
    pub training_rows: usize,
    /// Rows the regimes were clustered on.
    pub clustering_rows: usize,
    /// Whether output-error refinement was applied (and kept).
    pub refined: bool,
    /// The inputs ranked as scheduling variables, best first ([`rank_inputs`]); empty when
    /// `regimes.variables` is set.
    pub ranking: Vec<Ranked>,
    /// Advice on the result for the engineer ([`structure_notes`]).
    pub notes: Vec<String>,
}

fn column_stats(values: impl Iterator<Item = f64>) -> (f64, f64, f64, f64) {
    let v: Vec<f64> = values.filter(|x| x.is_finite()).collect();
    let n = v.len().max(1) as f64;
    let mean = v.iter().sum::<f64>() / n;
    let std = (v.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / n).sqrt();
    let lo = v.iter().copied().fold(f64::INFINITY, f64::min);
    let hi = v.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    (mean, std, lo, hi)
}

/// Most rows used for clustering (an evenly spaced subsample beyond this).
pub const CLUSTER_ROWS: usize = 50_000;

/// Runs the whole job for a checked config. `progress` receives one line per stage.
pub fn build(config: &Config, progress: &dyn Fn(&str)) -> Result<Built, BuildError> {
    let m = &config.modelling;
    progress("preparing data");
    let prepared = prepare(config)?;
    let ds = &prepared.dataset;
    let n = ds.grid.len;
    let target_tag = config.target.spec.tag.clone();
    if ds.usable_target_rows() == 0 {
        return Err(BuildError::TargetAllMissing(target_tag));
    }
    let test_start = n - ((n as f64) * m.test_share) as usize;
    let p = config.inputs.len();
    let inputs: Vec<Vec<f64>> = (0..p).map(|j| ds.inputs.column(j).to_vec()).collect();
    let structure = structure_params(m, ds.reading_cycle);
    let gap = m
        .max_lag
        .iter()
        .copied()
        .max()
        .unwrap_or(0)
        .max(structure.max_output_lag * structure.output_step)
        + 1;
    let train_end = test_start.saturating_sub(gap);
    for (j, spec) in config.inputs.iter().enumerate() {
        let (_, std, _, _) = column_stats(inputs[j][..train_end].iter().copied());
        if !(std > spec.resolution.max(1e-12)) {
            return Err(BuildError::ConstantInput(spec.tag.clone()));
        }
    }

    // Rows are fitted and scored at fresh readings only; a past output reads the target as
    // measured (an analyzer's reading held until its next). The inputs are the runtime's: an
    // invalid sample takes the last good value for up to the hold limit, so a scattered bad
    // sample does not cost every row whose lags reach it.
    let fresh = ds.fresh_target_model();
    let target_model = &fresh;
    let held: Vec<Vec<f64>> = inputs
        .iter()
        .map(|x| hold_last_good(x, usize::from(m.hold_limit)))
        .collect();
    let regressors = Regressors::new(&held, &ds.target_model);
    let mut notes = Vec::new();
    notes.extend(reading_note(ds.reading_cycle, target_model, config));
    notes.extend(
        prepared
            .audit
            .target
            .interpolated_every
            .as_deref()
            .map(|every| {
                crate::prepare::audit::interpolated_warning(&config.target.spec.tag, every)
            }),
    );
    let max = regimix_format::limits::MAX_ANTECEDENT;
    // One linear model says which inputs matter (the regimes start on those when there are more
    // inputs than they take) and is the reference the inputs are ranked against.
    // Also the structure the regimes' search starts from, besides nothing (see `select_from`).
    progress("fitting one linear model");
    let linear = {
        let fitted = linear_model(&structure, regressors, target_model, train_end);
        if !m.variables_given && m.variables.len() > max {
            Some(fitted?)
        } else {
            fitted.ok()
        }
    };

    let first = match &linear {
        Some(linear) if m.variables.len() > max => {
            let used = used_inputs(&linear.selection.terms);
            if used.is_empty() || used.len() > max {
                return Err(BuildError::TooManyVariables {
                    inputs: p,
                    used: used.len(),
                    max,
                });
            }
            notes.push(format!(
                "{p} inputs are more than the regimes take ({max}): they start on the {} one linear model uses ({}); `regimes.variables` fixes the choice",
                used.len(),
                tag_list(&used, config)
            ));
            used
        }
        _ => m.variables.clone(),
    };
    progress("clustering operating regimes");
    let fitting = Fitting {
        config,
        structure: &structure,
        regressors,
        target_model,
        train_end,
        linear: linear
            .as_ref()
            .map(|l| (l.selection.terms.as_slice(), l.selection.validation_rmse)),
        progress,
    };
    let (scheduled, ranking) = choose_schedule(&fitting, &first, linear.as_ref(), &mut notes)?;
    let Scheduled {
        vars,
        scaling,
        partition,
        validity,
        antecedent,
        weights,
        selection_target,
        selection,
        train_rows,
        clustering_rows,
        note,
    } = scheduled;
    notes.extend(note);
    let vars = &vars;
    let c = partition.count();
    let terms = selection.terms.clone();
    let fits = match m.estimation {
        Estimation::Local => selection.fits.clone(),
        Estimation::Global => fit_global(
            &terms,
            &weights,
            regressors,
            &selection_target,
            &train_rows,
            selection.ridge.max(1e-10),
        )?,
    };
    // Optional output-error refinement, kept only if the selection's hold-out block improves.
    let mut refined = false;
    let fits = if m.refine_output_error && terms.iter().any(|t| matches!(t, Term::Output { .. })) {
        progress("refining on the simulation error");
        let fit_rows = 0..selection.validation_start;
        let hold_out = selection.validation_start..train_end;
        match refine(
            &terms,
            &fits,
            &weights,
            regressors,
            &selection_target,
            fit_rows,
            40,
        ) {
            Some(better)
                if simulation_mse(
                    &terms,
                    &better,
                    &weights,
                    regressors,
                    &selection_target,
                    hold_out.clone(),
                ) < simulation_mse(
                    &terms,
                    &fits,
                    &weights,
                    regressors,
                    &selection_target,
                    hold_out,
                ) =>
            {
                refined = true;
                better
            }
            _ => fits,
        }
    } else {
        fits
    };
    progress("fitting the global linear baseline");
    let baseline_fit = fit_baseline(
        &terms,
        regressors,
        &selection_target,
        &train_rows,
        selection.ridge,
    )?;

    // The model file.
    progress("writing the model file");
    let transform = crate::prepare::transform_of(config);
    let (_, _, tlo, thi) = column_stats(ds.target.iter().copied());
    let (low, high) = config.target.spec.range.unwrap_or(match transform {
        Transform::Identity => (tlo - (thi - tlo), thi + (thi - tlo)),
        Transform::Log => (tlo / 10.0, thi * 10.0),
        Transform::Logit { full_scale } => (tlo / 10.0, full_scale - (full_scale - thi) / 10.0),
    });
    let input_specs: Vec<InputSpec> = config
        .inputs
        .iter()
        .enumerate()
        .map(|(j, spec)| {
            let (mean, std, lo, hi) = column_stats(inputs[j][..train_end].iter().copied());
            let (mean, std) = match vars.iter().position(|&v| v == j) {
                Some(a) => (scaling.means[a], scaling.stds[a]),
                None => (mean, std.max(1e-12)),
            };
            let (low, high) = spec
                .range
                .unwrap_or((lo - 0.1 * (hi - lo), hi + 0.1 * (hi - lo)));
            InputSpec {
                tag: spec.tag.clone(),
                unit: spec.unit.clone(),
                settings: InputSettings {
                    low,
                    high,
                    mean,
                    std,
                },
            }
        })
        .collect();
    let regimes = (0..c)
        .map(|i| {
            let norm = &antecedent.norms[i];
            let pa = vars.len();
            RegimeSpec {
                center: norm.center.clone(),
                factor: (0..pa)
                    .flat_map(|r| (0..=r).map(move |col| (r, col)))
                    .map(|(r, col)| norm.factor[r * pa + col])
                    .collect(),
                eta: antecedent.typicality.eta[i],
                offset: fits[i].theta[0],
                coefficients: fits[i].theta[1..].to_vec(),
            }
        })
        .collect();
    let residual_sd = selection.validation_rmse.max(1e-9);
    let spec = ModelSpec {
        builder_version: env!("CARGO_PKG_VERSION").to_string(),
        target_tag,
        target_unit: config.target.spec.unit.clone(),
        sample_time: config.sample_time.as_secs_f64(),
        transform,
        target: TargetSettings {
            full_scale: config.target.full_scale,
            low,
            high,
            fuzziness: m.fuzziness,
            domain_threshold: antecedent.domain_threshold.clamp(0.0, 0.999),
            residual_sd,
            bias_gain: m.bias_gain,
            bias_limit: 5.0 * residual_sd,
            outlier_k: m.outlier_k,
        },
        hold_limit: m.hold_limit,
        lab_window: m.lab_window,
        inputs: input_specs,
        regressors: terms
            .iter()
            .map(|t| match *t {
                Term::Input { input, lag } => Regressor {
                    source: Source::Input(input as u8),
                    lag: lag as u16,
                },
                Term::Output { lag } => Regressor {
                    source: Source::Output,
                    lag: lag as u16,
                },
            })
            .collect(),
        antecedent: vars.iter().map(|&j| j as u16).collect(),
        regimes,
    };
    let bytes = spec.to_bytes()?;

    // Validation through the runtime, on the encoded bytes.
    progress("validating through the runtime");
    let times: Vec<i64> = (0..n).map(|k| ds.time(k)).collect();
    let rows_in: Vec<Vec<f64>> = (0..n)
        .map(|k| (0..p).map(|j| inputs[j][k]).collect())
        .collect();
    let estimates = replay(&bytes, &times, &rows_in)?;
    let scored: Vec<usize> = (test_start..n)
        .filter(|&k| {
            ds.target_status[k] == CellStatus::Valid
                && fresh[k].is_finite()
                && estimates[k].value.is_finite()
                && estimates[k].status & Status::FALLBACK == 0
        })
        .collect();
    if scored.is_empty() {
        return Err(BuildError::TooLittleData("the test block has no usable target samples; lower validation.test-share or export more data".into()));
    }
    let test = metrics(
        &scored
            .iter()
            .map(|&k| (ds.target[k], estimates[k].value))
            .collect::<Vec<_>>(),
    );
    let ood = (test_start..n)
        .filter(|&k| estimates[k].status & Status::OUT_OF_DOMAIN != 0)
        .count() as f64
        / (n - test_start).max(1) as f64;
    let ones = vec![vec![1.0; n]];
    let base_pred: Vec<(usize, f64)> = predict(
        &terms,
        std::slice::from_ref(&baseline_fit),
        &ones,
        regressors,
        test_start..n,
    )
    .into_iter()
    .map(|(k, z)| (k, transform.inverse(z).clamp(low, high)))
    .collect();
    let base_map: std::collections::HashMap<usize, f64> = base_pred.iter().copied().collect();
    let both: Vec<usize> = scored
        .iter()
        .copied()
        .filter(|k| base_map.contains_key(k))
        .collect();
    let baseline = metrics(
        &both
            .iter()
            .map(|&k| (ds.target[k], base_map[&k]))
            .collect::<Vec<_>>(),
    );
    let test = if both.len() == scored.len() {
        test
    } else {
        metrics(
            &both
                .iter()
                .map(|&k| (ds.target[k], estimates[k].value))
                .collect::<Vec<_>>(),
        )
    };
    notes.extend(structure_notes(
        &terms,
        &m.max_lag,
        &config
            .inputs
            .iter()
            .map(|i| i.tag.as_str())
            .collect::<Vec<_>>(),
        config.sample_time,
    ));
    notes.extend(regime_note(
        partition.collapsed(),
        partition.shrinkage,
        m.shrinkage,
        vars.len(),
    ));
    notes.extend(accuracy_note(&test, &baseline));
    Ok(Built {
        prepared: prepared.clone(),
        spec,
        bytes,
        estimates,
        test_start,
        validity,
        partition,
        terms,
        fits,
        path: selection.path,
        test,
        baseline,
        out_of_domain: ood,
        baseline_estimates: base_pred,
        training_rows: train_rows.len(),
        clustering_rows,
        refined,
        ranking,
        notes,
    })
}

/// What every regime partition is fitted against: the settings, the regressors, the target
/// (model domain, NaN where not fitted) and the end of the training rows.
#[derive(Clone, Copy)]
struct Fitting<'a> {
    config: &'a Config,
    structure: &'a StructureParams,
    regressors: Regressors<'a>,
    target_model: &'a [f64],
    train_end: usize,
    /// The structure one linear model selected and its validation RMSE: the regimes' search
    /// also starts from it when it would validate worse (`stepwise::select_from`).
    linear: Option<(&'a [Term], f64)>,
    progress: &'a dyn Fn(&str),
}

/// Regimes on a set of scheduling variables and the structure selected with their memberships.
struct Scheduled {
    /// The scheduling variables (indices into the inputs).
    vars: Vec<usize>,
    scaling: Scaling,
    partition: Partition,
    validity: Vec<Validity>,
    antecedent: Antecedent,
    /// Memberships of every grid row, regime-major.
    weights: Vec<Vec<f64>>,
    /// The target where it may be used for fitting (NaN in the test block and where a
    /// scheduling variable is missing).
    selection_target: Vec<f64>,
    selection: Selection,
    train_rows: Vec<usize>,
    clustering_rows: usize,
    /// Why fewer regimes than the validity rule chose were used, if they were.
    note: Option<String>,
}

/// Clusters the training rows on `vars` (and the target, in product space), evaluates every
/// row's memberships, selects lags and dead times, and checks every regime has data enough for
/// its parameters.
fn schedule(fitting: &Fitting<'_>, vars: &[usize]) -> Result<Scheduled, BuildError> {
    let m = &fitting.config.modelling;
    let (inputs, target_model) = (fitting.regressors.inputs, fitting.target_model);
    let (train_end, progress) = (fitting.train_end, fitting.progress);
    // Regimes on the scheduling variables (and the target, in product space), training rows only.
    let rows: Vec<usize> = (0..train_end)
        .filter(|&k| {
            vars.iter().all(|&j| inputs[j][k].is_finite())
                && (!m.include_target || target_model[k].is_finite())
        })
        .collect();
    let dim = vars.len() + usize::from(m.include_target);
    let mut raw = Vec::with_capacity(rows.len() * dim);
    for &k in &rows {
        raw.extend(vars.iter().map(|&j| inputs[j][k]));
        if m.include_target {
            raw.push(target_model[k]);
        }
    }
    let scaling = Scaling::fit(&raw, dim);
    for row in raw.chunks_exact_mut(dim) {
        scaling.apply(row);
    }
    let data = Columns::from_rows(&raw, dim);
    let mut params = RegimeParams::new(2);
    params.fuzziness = m.fuzziness;
    params.regularization = Regularization {
        shrinkage: m.shrinkage,
        max_condition: m.max_condition,
    };
    params.restarts = m.restarts;
    params.seed = m.seed;
    // The partitions to try, best first: the fixed count; or the count the validity rule
    // chooses, then the smaller ones, should a regime hold too few target samples for its
    // parameters (lab samples are sparse next to the rows the regimes are found on).
    let (candidates, validity, chosen) = match m.count {
        RegimeCount::Fixed(c) => {
            params.count = c;
            let part = cluster(&data, &params)?;
            let v = measures(&data, &part)?;
            (vec![part], vec![v], c)
        }
        RegimeCount::Auto => {
            // A regime needs target samples of its own: cap the count at about 40 per regime
            // (sparse lab targets support fewer regimes than the inputs alone would suggest).
            let target_rows = (0..train_end)
                .filter(|&k| target_model[k].is_finite())
                .count();
            let cap = (target_rows / 40).max(m.count_range.0);
            let high = m.count_range.1.min(cap);
            if high < m.count_range.1 {
                progress(&format!(
                    "{target_rows} training target samples: trying at most {high} regimes"
                ));
            }
            let table = sweep(&data, m.count_range.0..=high, &params)?;
            let validity: Vec<Validity> = table.iter().map(|(_, v)| v.clone()).collect();
            let chosen = choose_count(&validity).unwrap_or(m.count_range.0);
            let mut parts: Vec<Partition> = table
                .into_iter()
                .map(|(p, _)| p)
                .filter(|p| p.count() <= chosen)
                .collect();
            parts.sort_by_key(|p| std::cmp::Reverse(p.count()));
            if parts.first().is_none_or(|p| p.count() != chosen) {
                return Err(RegimeError::TooFewRegimes(chosen).into());
            }
            (parts, validity, chosen)
        }
    };
    let last = candidates.len() - 1;
    for (attempt, partition) in candidates.into_iter().enumerate() {
        match fit_regimes(fitting, vars, (&data, &scaling, rows.len()), partition) {
            Err(BuildError::RegimeTooThin {
                regime,
                count,
                samples,
                ..
            }) if attempt < last => progress(&format!(
                "regime {regime} of {count} has only {samples:.0} effective training samples: trying {} regimes",
                count - 1
            )),
            Ok(mut scheduled) => {
                let c = scheduled.partition.count();
                if c < chosen {
                    scheduled.note = Some(format!(
                        "the validity rule chose {chosen} regimes, but with more than {c} a regime had too few target samples for its parameters: {c} regimes used"
                    ));
                }
                scheduled.validity = validity;
                return Ok(scheduled);
            }
            Err(e) => return Err(e),
        }
    }
    Err(RegimeError::TooFewRegimes(chosen).into())
}

/// `series` with each invalid (NaN) sample replaced by the last valid one, for at most `hold`
/// samples in a row: the runtime's substitution of an invalid input. Invalid samples before the
/// first valid one, and from the `hold + 1`-th of a run on, stay NaN.
pub fn hold_last_good(series: &[f64], hold: usize) -> Vec<f64> {
    let mut out = series.to_vec();
    let mut last = f64::NAN;
    let mut age = 0;
    for v in &mut out {
        if v.is_finite() {
            last = *v;
            age = 0;
        } else {
            age += 1;
            if age <= hold {
                *v = last;
            }
        }
    }
    out
}

/// Effective training samples (Σ μ^m over the rows with a target) a regime needs per parameter
/// of its local model (rule of thumb, common practice).
const SAMPLES_PER_PARAMETER: usize = 5;

/// Memberships of every row in `partition`'s regimes, the structure selected with them, and the
/// check that every regime has data enough for its parameters.
fn fit_regimes(
    fitting: &Fitting<'_>,
    vars: &[usize],
    (data, scaling, clustering_rows): (&Columns, &Scaling, usize),
    partition: Partition,
) -> Result<Scheduled, BuildError> {
    let Fitting {
        config,
        structure,
        regressors,
        target_model,
        train_end,
        progress,
        ..
    } = *fitting;
    let m = &config.modelling;
    let inputs = regressors.inputs;
    let n = target_model.len();
    let c = partition.count();
    let antecedent = Antecedent::project(
        &partition,
        data,
        &(0..vars.len()).collect::<Vec<_>>(),
        None,
        m.domain_quantile,
    )?;

    // Memberships of every row.
    let mut weights = vec![vec![0.0; n]; c];
    let mut selection_target = target_model.to_vec();
    let mut x = vec![0.0; vars.len()];
    for k in 0..n {
        if vars.iter().all(|&j| inputs[j][k].is_finite()) {
            for (a, &j) in vars.iter().enumerate() {
                x[a] = (inputs[j][k] - scaling.means[a]) / scaling.stds[a];
            }
            let e = antecedent.evaluate(&x);
            for i in 0..c {
                weights[i][k] = e.memberships[i];
            }
        } else {
            selection_target[k] = f64::NAN;
        }
        if k >= train_end {
            selection_target[k] = f64::NAN; // the test block is never seen while fitting
        }
    }

    // Before the search: every regime needs target samples enough for an offset and one
    // regressor among the rows the search fits on (lab samples may miss a regime the inputs
    // visit; a regime the plant only reaches late in the period has no rows before the
    // validation block).
    let fitted = stepwise::blocks(structure, regressors, &selection_target, c)?.train;
    for (i, w) in weights.iter().enumerate() {
        let samples: f64 = fitted.iter().map(|&k| w[k].powf(m.fuzziness)).sum();
        if samples < (SAMPLES_PER_PARAMETER * 2) as f64 {
            return Err(BuildError::RegimeTooThin {
                regime: i + 1,
                count: c,
                samples,
                parameters: 2,
                needed: SAMPLES_PER_PARAMETER * 2,
            });
        }
    }
    progress("selecting lags and dead times");
    // The rows the structure fits on, if they are enough for its parameters overall and in every
    // regime.
    let enough = |terms: &[Term]| -> Result<Vec<usize>, BuildError> {
        let train_rows = design::usable_rows(terms, regressors, &selection_target, 0..train_end);
        let parameters = terms.len() + 1;
        if train_rows.len() < 10 * c * parameters {
            return Err(BuildError::TooLittleData(format!(
                "only {} usable training rows for {c} regimes × {parameters} parameters; use fewer regimes or inputs, or more data",
                train_rows.len(),
            )));
        }
        let needed = SAMPLES_PER_PARAMETER * parameters;
        for (i, w) in weights.iter().enumerate() {
            let samples: f64 = train_rows.iter().map(|&k| w[k].powf(m.fuzziness)).sum();
            if samples < needed as f64 {
                return Err(BuildError::RegimeTooThin {
                    regime: i + 1,
                    count: c,
                    samples,
                    parameters,
                    needed,
                });
            }
        }
        Ok(train_rows)
    };
    let mut selection = select_from(
        structure,
        &weights,
        regressors,
        &selection_target,
        fitting.linear,
    )?;
    let mut checked = enough(&selection.terms);
    if checked.is_err() && selection.from_linear {
        // The linear model's structure may hold more terms than the regimes have data for: the
        // searches from nothing and from the past output alone, as before.
        selection = select(structure, &weights, regressors, &selection_target)?;
        checked = enough(&selection.terms);
    }
    let train_rows = checked?;
    Ok(Scheduled {
        vars: vars.to_vec(),
        scaling: scaling.clone(),
        partition,
        validity: Vec::new(),
        antecedent,
        weights,
        selection_target,
        selection,
        train_rows,
        clustering_rows,
        note: None,
    })
}

/// The structure search's settings from the config, with past outputs one reading cycle apart
/// (as many as the format's longest lag allows).
fn structure_params(m: &crate::config::Modelling, reading_cycle: usize) -> StructureParams {
    let step = reading_cycle.max(1);
    let most = m.max_output_lag.min(regimix_format::limits::MAX_LAG / step);
    let mut sp = StructureParams::new(m.max_lag.clone(), most);
    sp.output_step = step;
    sp.min_improvement = m.min_improvement;
    sp.weight_power = m.fuzziness;
    sp
}

/// Says that an analyzer's held readings are left out of the fit and the scores, and that past
/// estimates are one cycle apart (none when every sample is a reading).
fn reading_note(reading_cycle: usize, fresh: &[f64], config: &Config) -> Option<String> {
    if reading_cycle < 2 {
        return None;
    }
    let readings = fresh.iter().filter(|v| v.is_finite()).count();
    let every = Span::from_micros(reading_cycle as i64 * config.sample_time.micros());
    let feedback = if config.modelling.max_output_lag > 0 {
        format!("; past estimates, when fed back, are one cycle ({reading_cycle} samples) apart")
    } else {
        String::new()
    };
    Some(format!(
        "the export holds each analyzer reading for about {every} ({reading_cycle} samples): only the {readings} fresh readings are fitted and scored, as the held repeats lag the process by up to one cycle{feedback}"
    ))
}

/// One linear model over the training rows, and the target it was selected on (NaN from the
/// test block on).
struct LinearModel {
    selection: Selection,
    target: Vec<f64>,
}

/// The structure search with a single regime (every weight 1) on the training rows.
fn linear_model(
    structure: &StructureParams,
    regressors: Regressors<'_>,
    target_model: &[f64],
    train_end: usize,
) -> Result<LinearModel, BuildError> {
    let n = target_model.len();
    let target: Vec<f64> = (0..n)
        .map(|k| {
            if k < train_end {
                target_model[k]
            } else {
                f64::NAN
            }
        })
        .collect();
    let selection = select(structure, &[vec![1.0; n]], regressors, &target)?;
    Ok(LinearModel { selection, target })
}

/// A ranked input must lower the one linear model's validation RMSE by this share at least to
/// be proposed as a scheduling variable (our choice: an input that does nothing scores within
/// a few per cent of 1 by chance, see [`rank_inputs`]' tests).
const RANKED_LEAST: f64 = 0.1;

/// The regimes on `first`; then, unless `regimes.variables` is set, on the inputs the selected
/// structure uses and on the inputs ranked against the one linear model ([`rank_inputs`]).
/// Each later partition is kept if the selection's validation block says it predicts better
/// (common practice: schedule on the variables that carry the nonlinearity), with a note.
/// Returns the partition kept and the ranking (empty when none was made).
fn choose_schedule(
    fitting: &Fitting<'_>,
    first: &[usize],
    linear: Option<&LinearModel>,
    notes: &mut Vec<String>,
) -> Result<(Scheduled, Vec<Ranked>), BuildError> {
    let (config, progress) = (fitting.config, fitting.progress);
    let m = &config.modelling;
    let mut scheduled = schedule(fitting, first)?;
    // In product space the target is one of the clustering variables: kept as configured.
    if m.variables_given || m.include_target {
        return Ok((scheduled, Vec::new()));
    }
    let max = regimix_format::limits::MAX_ANTECEDENT;
    let mut tried = vec![scheduled.vars.clone()];
    // `what` names the new variables in the note, given their tags.
    let mut consider =
        |vars: Vec<usize>, what: &dyn Fn(&str) -> String, scheduled: &mut Scheduled| {
            if vars.is_empty() || vars.len() > max || tried.contains(&vars) {
                return;
            }
            progress(&format!("clustering again on {}", tag_list(&vars, config)));
            tried.push(vars.clone());
            if let Ok(other) = schedule(fitting, &vars) {
                if other.selection.validation_rmse < scheduled.selection.validation_rmse {
                    let what = what(&tag_list(&vars, config));
                    notes.push(scheduling_note(scheduled, &other, &what, config));
                    *scheduled = other;
                }
            }
        };
    let used = used_inputs(&scheduled.selection.terms);
    consider(
        used,
        &|tags| format!("the inputs the model uses ({tags})"),
        &mut scheduled,
    );
    let Some(linear) = linear else {
        return Ok((scheduled, Vec::new()));
    };
    progress("ranking the inputs as scheduling variables");
    let all: Vec<usize> = (0..config.inputs.len()).collect();
    let ranked = rank_inputs(
        &linear.selection,
        fitting.structure,
        fitting.regressors,
        &linear.target,
        &all,
    );
    let proposed = scheduling_inputs(&ranked, RANKED_LEAST, max);
    let best = ranked.first().map_or(1.0, |r| r.ratio);
    consider(
        proposed,
        &|tags| {
            format!("{tags}, where one linear model's behaviour changes most (fitted over their ranges it validates at {best:.2}× its RMSE)")
        },
        &mut scheduled,
    );
    Ok((scheduled, ranked))
}

/// The tags of `inputs`, comma-separated.
fn tag_list(inputs: &[usize], config: &Config) -> String {
    inputs
        .iter()
        .map(|&j| config.inputs[j].tag.as_str())
        .collect::<Vec<_>>()
        .join(", ")
}

/// The inputs (indices, ascending) that `terms` use.
fn used_inputs(terms: &[Term]) -> Vec<usize> {
    let mut used: Vec<usize> = terms
        .iter()
        .filter_map(|t| match *t {
            Term::Input { input, .. } => Some(input),
            Term::Output { .. } => None,
        })
        .collect();
    used.sort_unstable();
    used.dedup();
    used
}

/// The note when the regimes were found again on other inputs (`what` names them).
fn scheduling_note(first: &Scheduled, second: &Scheduled, what: &str, config: &Config) -> String {
    let before = if first.vars.len() == config.inputs.len() {
        format!("all {}", first.vars.len())
    } else {
        tag_list(&first.vars, config)
    };
    format!(
        "the regimes are scheduled on {what}, not on {before}: validation RMSE {:.4} against {:.4} (model domain); `regimes.variables` fixes the choice",
        second.selection.validation_rmse,
        first.selection.validation_rmse
    )
}

/// A note when the clustering had to raise the covariance shrinkage from `configured` to `used`
/// to keep the regimes apart, or when they fell onto one point even so ([`crate::regimes::cluster`]).
pub fn regime_note(
    collapsed: bool,
    used: f64,
    configured: f64,
    variables: usize,
) -> Option<String> {
    let advice = "list under `regimes.variables` the few tags that say where the plant operates (throughput, feed quality, a key temperature)";
    if collapsed {
        Some(format!(
            "the regimes fell onto one operating point on the {variables} scheduling variables at every covariance shrinkage up to {used}: the data show no separate operating regions there, so the blend is one linear model; {advice}"
        ))
    } else if used > configured {
        Some(format!(
            "the Gustafson–Kessel regimes fell onto one point (every membership equal) with shrinkage {configured} on {variables} scheduling variables; they stay apart with {used}, which the model uses. To schedule on what separates the regimes, {advice}"
        ))
    } else {
        None
    }
}

/// A note when the blend is no more accurate than the global linear model on the test block.
pub fn accuracy_note(test: &Metrics, baseline: &Metrics) -> Option<String> {
    let ratio = test.rmse / baseline.rmse;
    (ratio >= 1.0).then(|| {
        format!(
            "the test RMSE is {ratio:.2}× the global linear model's on {} test samples: the regimes do not improve on a linear model here; more data over a wider operating range, fewer regimes (`regimes.count`) or other regime variables may help",
            test.samples
        )
    })
}

/// Inputs whose longest chosen delay is the longest searched: the best delay may lie beyond the
/// search (an optimum on the edge of a search range is no optimum; common practice is to widen
/// the range and search again). One note per such input, naming the keys to raise.
pub fn structure_notes(
    terms: &[Term],
    max_lag: &[usize],
    tags: &[&str],
    sample_time: Span,
) -> Vec<String> {
    let mut notes = Vec::new();
    for (j, (&limit, tag)) in max_lag.iter().zip(tags).enumerate() {
        let longest = terms
            .iter()
            .filter_map(|t| match *t {
                Term::Input { input, lag } if input == j => Some(lag),
                _ => None,
            })
            .max();
        if limit > 0 && longest == Some(limit) {
            let span = Span::from_micros(sample_time.micros().saturating_mul(limit as i64));
            notes.push(format!(
                "{tag}: the chosen delay, {limit} samples ({span}), is the longest searched; a longer dead time or a slower response may fit better: raise `structure.max-lag` or this input's `max-lag` and build again"
            ));
        }
    }
    notes
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The runtime's substitution: up to `hold` invalid samples in a row take the last valid
    /// value; the rest of a longer run, and what comes before the first valid value, stay
    /// invalid.
    #[test]
    fn invalid_samples_take_the_last_good_value_for_the_hold_limit() {
        let nan = f64::NAN;
        let held = hold_last_good(&[nan, 1.0, nan, 2.0, nan, nan, nan, 3.0], 2);
        let expected = [nan, 1.0, 1.0, 2.0, 2.0, 2.0, nan, 3.0];
        assert_eq!(held.len(), expected.len());
        for (h, e) in held.iter().zip(&expected) {
            assert!(h == e || (h.is_nan() && e.is_nan()), "{held:?}");
        }
        assert!(hold_last_good(&[1.0, nan], 0)[1].is_nan());
    }

    #[test]
    fn raised_or_failed_shrinkage_gets_a_note() {
        assert_eq!(regime_note(false, 0.01, 0.01, 9), None);
        let raised = regime_note(false, 0.3, 0.01, 12).expect("raised");
        assert!(
            raised.contains("with shrinkage 0.01 on 12 scheduling variables"),
            "{raised}"
        );
        assert!(raised.contains("stay apart with 0.3"), "{raised}");
        let failed = regime_note(true, 1.0, 0.01, 12).expect("collapsed");
        assert!(failed.contains("one linear model"), "{failed}");
        assert!(failed.contains("`regimes.variables`"), "{failed}");
    }

    #[test]
    fn a_delay_on_the_search_limit_gets_a_note() {
        let terms = [
            Term::Input { input: 0, lag: 3 },
            Term::Input { input: 0, lag: 30 },
            Term::Input { input: 1, lag: 29 },
            Term::Output { lag: 2 },
        ];
        let notes = structure_notes(
            &terms,
            &[30, 30, 30],
            &["TI-1", "TI-2", "TI-3"],
            Span::from_secs(30),
        );
        assert_eq!(notes.len(), 1, "{notes:?}");
        assert!(
            notes[0].starts_with("TI-1: the chosen delay, 30 samples (15min)"),
            "{}",
            notes[0]
        );
        assert!(notes[0].contains("`structure.max-lag`"));
        // No search (limit 0) is no limit reached.
        assert!(structure_notes(
            &[Term::Input { input: 0, lag: 0 }],
            &[0],
            &["TI-1"],
            Span::from_secs(60)
        )
        .is_empty());
    }

    #[test]
    fn no_gain_over_the_linear_model_gets_a_note() {
        let worse = metrics(&[(1.0, 2.0), (3.0, 3.0)]);
        let better = metrics(&[(1.0, 1.5), (3.0, 3.0)]);
        let note = accuracy_note(&worse, &better).expect("note");
        assert!(
            note.starts_with("the test RMSE is 2.00× the global linear model's on 2 test samples"),
            "{note}"
        );
        assert!(accuracy_note(&better, &worse).is_none());
    }

    #[test]
    fn metrics_of_a_known_error() {
        let m = metrics(&[(1.0, 2.0), (3.0, 3.0), (5.0, 4.0)]);
        assert_eq!(m.samples, 3);
        assert!((m.rmse - (2.0f64 / 3.0).sqrt()).abs() < 1e-15);
        assert!((m.mae - 2.0 / 3.0).abs() < 1e-15);
        assert_eq!(m.bias, 0.0);
        // SST = 8, SSE = 2 → R² = 0.75.
        assert!((m.r2 - 0.75).abs() < 1e-15);
    }
}
