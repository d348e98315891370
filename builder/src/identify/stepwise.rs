//! Stepwise structure selection by partial F-tests and hold-out validation.

use statrs::distribution::{ContinuousCDF, FisherSnedecor};

use super::design::{candidates, usable_rows, Regressors, Term};
use super::wls::{accumulate, solve, Fit, FitError, Gram};

/// Settings of the structure search.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct StructureParams {
    /// Largest lag per input, in samples.
    pub max_lag: Vec<usize>,
    /// Most past outputs (0: static / FIR model, as for lab targets).
    pub max_output_lag: usize,
    /// Samples between past outputs: 1, or an analyzer's cycle when the export holds each
    /// reading until the next (only then is the output one cycle back a fresh reading).
    pub output_step: usize,
    /// Significance level of the partial F-test to enter.
    pub alpha_enter: f64,
    /// Candidates scored on the validation block per forward step.
    pub shortlist: usize,
    /// Relative validation improvement needed to add a regressor.
    pub min_improvement: f64,
    /// Most regressors.
    pub max_terms: usize,
    /// Share of the usable rows used for training (the rest, after a gap, validates).
    pub train_share: f64,
    /// Ridge weights tried on the final structure (relative to the mean diagonal).
    pub ridge_grid: Vec<f64>,
    /// Each local fit weighs rows by membership raised to this power (the fuzziness m, as in the
    /// clustering objective); the blend uses the memberships themselves. With plain memberships
    /// the long tails of a distant high-gain regime, whose samples have large values and so high
    /// leverage, bias a regime's fit (measured in the three-regime test: a fitted pole of 0.674
    /// instead of 0.6 with power 1, 0.600 with crisp weights).
    pub weight_power: f64,
}

impl StructureParams {
    /// Defaults: α = 0.05, 5 candidates scored per step, 1 % improvement, at most 24 terms,
    /// 70 % training, ridge grid 0 … 0.1, estimation weights μ².
    pub fn new(max_lag: Vec<usize>, max_output_lag: usize) -> Self {
        StructureParams {
            max_lag,
            max_output_lag,
            output_step: 1,
            alpha_enter: 0.05,
            shortlist: 5,
            min_improvement: 0.01,
            max_terms: 24,
            train_share: 0.7,
            ridge_grid: vec![0.0, 1e-8, 1e-6, 1e-4, 1e-3, 1e-2, 1e-1],
            weight_power: 2.0,
        }
    }
}

/// One accepted step of the search, for the report.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Step {
    /// `+` added or `-` removed.
    pub action: char,
    /// The term.
    pub term: Term,
    /// Validation RMSE after the step (model domain).
    pub validation_rmse: f64,
}

/// The selected structure and its local fits.
#[derive(Debug, Clone, PartialEq)]
pub struct Selection {
    /// Selected terms, in a canonical order.
    pub terms: Vec<Term>,
    /// One fit per regime (offset first, then one coefficient per term).
    pub fits: Vec<Fit>,
    /// Ridge weight chosen.
    pub ridge: f64,
    /// Validation RMSE of the final model (model domain).
    pub validation_rmse: f64,
    /// Accepted steps in order.
    pub path: Vec<Step>,
    /// Training rows (for parameter intervals: effective degrees of freedom).
    pub training_rows: usize,
    /// First validation row index.
    pub validation_start: usize,
    /// The search that won started from the linear model's structure ([`select_from`]).
    pub from_linear: bool,
}

/// Predictions of a blended model on `rows` (sorted) — free-run for output terms: a past output
/// is the model's own earlier prediction inside a run of consecutive rows, the measurement at the
/// start of a run (after a gap). Returns (row, prediction) for rows where one exists.
pub fn predict(
    terms: &[Term],
    fits: &[Fit],
    weights: &[Vec<f64>],
    regressors: Regressors<'_>,
    rows: std::ops::Range<usize>,
) -> Vec<(usize, f64)> {
    let free_run = terms.iter().any(|t| matches!(t, Term::Output { .. }));
    let mut own: Vec<f64> = vec![f64::NAN; rows.end];
    let mut out = Vec::new();
    for k in rows {
        let mut x = Vec::with_capacity(terms.len());
        let mut ok = true;
        for &t in terms {
            let v = match t {
                Term::Output { lag } if free_run && k >= lag && own[k - lag].is_finite() => {
                    own[k - lag]
                }
                _ => regressors.value(t, k),
            };
            ok &= v.is_finite();
            x.push(v);
        }
        if !ok {
            continue;
        }
        let mut y = 0.0;
        for (i, fit) in fits.iter().enumerate() {
            let local = fit.theta[0]
                + fit.theta[1..]
                    .iter()
                    .zip(&x)
                    .map(|(a, b)| a * b)
                    .sum::<f64>();
            y += weights[i][k] * local;
        }
        own[k] = y;
        out.push((k, y));
    }
    out
}

/// Mean squared error of predictions against the finite target values (∞ with none).
pub fn mean_squared_error(pred: &[(usize, f64)], target: &[f64]) -> f64 {
    let (mut s, mut n) = (0.0, 0usize);
    for &(k, p) in pred {
        if let Some(y) = target.get(k).filter(|y| y.is_finite()) {
            s += (y - p).powi(2);
            n += 1;
        }
    }
    if n == 0 {
        f64::INFINITY
    } else {
        s / n as f64
    }
}

fn rmse(pred: &[(usize, f64)], target: &[f64]) -> f64 {
    mean_squared_error(pred, target).sqrt()
}

/// Terms that keep every input's lags and the output lags contiguous when added.
fn extensions(selected: &[Term], params: &StructureParams) -> Vec<Term> {
    let mut out = Vec::new();
    for (input, &max) in params.max_lag.iter().enumerate() {
        let lags: Vec<usize> = selected
            .iter()
            .filter_map(|t| match t {
                Term::Input { input: j, lag } if *j == input => Some(*lag),
                _ => None,
            })
            .collect();
        match (lags.iter().min(), lags.iter().max()) {
            (Some(&lo), Some(&hi)) => {
                if lo > 0 {
                    out.push(Term::Input { input, lag: lo - 1 });
                }
                if hi < max {
                    out.push(Term::Input { input, lag: hi + 1 });
                }
            }
            _ => out.extend((0..=max).map(|lag| Term::Input { input, lag })),
        }
    }
    let na = selected
        .iter()
        .filter(|t| matches!(t, Term::Output { .. }))
        .count();
    if na < params.max_output_lag {
        out.push(Term::Output {
            lag: (na + 1) * params.output_step.max(1),
        });
    }
    out
}

/// Terms whose removal keeps the blocks contiguous (the ends of each block, the last output lag).
fn removable(selected: &[Term]) -> Vec<Term> {
    let mut out = Vec::new();
    for &t in selected {
        match t {
            Term::Input { input, lag } => {
                let has = |l: usize| selected.contains(&Term::Input { input, lag: l });
                let below = lag > 0 && has(lag - 1);
                if !(below && has(lag + 1)) {
                    out.push(t);
                }
            }
            Term::Output { lag } => {
                let longer = |u: &Term| matches!(u, Term::Output { lag: l } if *l > lag);
                if !selected.iter().any(longer) {
                    out.push(t);
                }
            }
        }
    }
    out
}

struct Problem<'a> {
    all: Vec<Term>,
    grams: Vec<Gram>,
    weights: &'a [Vec<f64>],
    regressors: Regressors<'a>,
    target: &'a [f64],
    validation: std::ops::Range<usize>,
}

impl Problem<'_> {
    fn index(&self, t: Term) -> usize {
        self.all.iter().position(|a| *a == t).unwrap_or(0)
    }

    fn fit(&self, terms: &[Term], ridge: f64) -> Result<Vec<Fit>, FitError> {
        let subset: Vec<usize> = terms.iter().map(|t| self.index(*t)).collect();
        self.grams
            .iter()
            .map(|g| solve(g, &subset, ridge))
            .collect()
    }

    fn try_score(&self, terms: &[Term], ridge: f64) -> Result<(Vec<Fit>, f64), FitError> {
        let fits = self.fit(terms, ridge)?;
        let pred = predict(
            terms,
            &fits,
            self.weights,
            self.regressors,
            self.validation.clone(),
        );
        Ok((fits, rmse(&pred, self.target)))
    }

    fn score(&self, terms: &[Term], ridge: f64) -> Option<(Vec<Fit>, f64)> {
        self.try_score(terms, ridge)
            .ok()
            .filter(|(_, e)| e.is_finite())
    }

    fn rss(fits: &[Fit]) -> f64 {
        fits.iter().map(|f| f.rss).sum()
    }
}

/// Why structure selection failed.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum SelectionError {
    /// Not enough usable rows.
    #[error("only {rows} rows have the target and every candidate regressor valid; {regimes} regimes need at least {needed} (20 plus 6 per regime): add target data (more lab results, a longer period){}", if *regimes > 2 { ", or set fewer regimes (`regimes.count`)" } else { "" })]
    TooFewRows {
        /// Usable rows.
        rows: usize,
        /// Regimes to fit.
        regimes: usize,
        /// Needed.
        needed: usize,
    },
    /// The validation block has no target samples to score candidates on.
    #[error("the validation block (the last 30 % of the training rows) has only {samples} usable target samples; export a longer period or lower validation.test-share")]
    NoValidation {
        /// Usable target samples there.
        samples: usize,
    },
    /// No structure could be fitted.
    #[error("no regressor structure could be fitted: {0}")]
    Fit(FitError),
}

impl From<FitError> for SelectionError {
    fn from(e: FitError) -> Self {
        SelectionError::Fit(e)
    }
}

/// Partial F statistic of a candidate: `((RSS₀ − RSS₁)/q) / (RSS₁/ν)` for `q` added parameters
/// and `ν` residual degrees of freedom. A candidate that leaves (next to) no residual explains
/// everything left: its F is unbounded, not the NaN or negative value rounding would give.
fn partial_f(rss_before: f64, rss_after: f64, q: f64, dof: f64) -> f64 {
    if rss_after <= 1e-12 * rss_before {
        f64::INFINITY
    } else {
        ((rss_before - rss_after) / q) / (rss_after / dof)
    }
}

/// Accepted steps (additions and removals) of the search per allowed term, at most.
const MAX_STEPS_PER_TERM: usize = 4;

/// The rows the search fits on and the block it validates on.
#[derive(Debug, Clone, PartialEq)]
pub struct Blocks {
    /// Rows where the target and every candidate regressor are valid, before the split.
    pub train: Vec<usize>,
    /// The validation block: after the split and a gap of the longest lag.
    pub validation: std::ops::Range<usize>,
}

/// Splits the usable rows (target and every candidate valid) into the training rows (the first
/// `train_share`) and the validation block that follows after a gap of the longest candidate
/// lag, for `regimes` regimes. Errors when there are too few rows to fit or to validate.
pub fn blocks(
    params: &StructureParams,
    regressors: Regressors<'_>,
    target: &[f64],
    regimes: usize,
) -> Result<Blocks, SelectionError> {
    let all = candidates(&params.max_lag, params.max_output_lag, params.output_step);
    let n = target.len();
    let usable = usable_rows(&all, regressors, target, 0..n);
    // Enough rows to fit an offset and a couple of regressors per regime, and to validate.
    let needed = 20 + 6 * regimes;
    if usable.len() < needed {
        return Err(SelectionError::TooFewRows {
            rows: usable.len(),
            regimes,
            needed,
        });
    }
    let split = usable[(usable.len() as f64 * params.train_share) as usize];
    let gap = all.iter().map(|t| t.lag()).max().unwrap_or(0) + 1;
    let train: Vec<usize> = usable.iter().copied().filter(|&k| k < split).collect();
    let validation = (split + gap).min(n)..n;
    let validation_samples = validation
        .clone()
        .filter(|&k| target[k].is_finite())
        .count();
    if validation_samples < 5 {
        return Err(SelectionError::NoValidation {
            samples: validation_samples,
        });
    }
    Ok(Blocks { train, validation })
}

/// Chooses the structure and fits every regime. `weights[i][k]` is regime `i`'s membership of row
/// `k`; `regressors` the inputs and the target's history; `target[k]` the model-domain target
/// of row `k` (NaN: not fitted nor scored).
pub fn select(
    params: &StructureParams,
    weights: &[Vec<f64>],
    regressors: Regressors<'_>,
    target: &[f64],
) -> Result<Selection, SelectionError> {
    select_from(params, weights, regressors, target, None)
}

/// [`select`], also searching from `linear`'s terms (the structure one linear model selected)
/// when the searches from nothing and from the past output validate worse than its RMSE:
/// regimes should at least match one linear model. A forward search adds one term at a time,
/// and with many regimes their offsets alone can validate as well as any one term though a few
/// terms together do far better: the search then stops at once, with a model of offsets.
pub fn select_from(
    params: &StructureParams,
    weights: &[Vec<f64>],
    regressors: Regressors<'_>,
    target: &[f64],
    linear: Option<(&[Term], f64)>,
) -> Result<Selection, SelectionError> {
    let all = candidates(&params.max_lag, params.max_output_lag, params.output_step);
    let Blocks { train, validation } = blocks(params, regressors, target, weights.len())?;
    let p = all.len();
    let row = |k: usize, out: &mut [f64]| {
        for (o, &t) in out.iter_mut().zip(&all) {
            *o = regressors.value(t, k);
        }
    };
    let estimation: Vec<Vec<f64>> = weights
        .iter()
        .map(|w| w.iter().map(|v| v.powf(params.weight_power)).collect())
        .collect();
    let grams = accumulate(&train, p, &row, target, &estimation);
    let problem = Problem {
        all: all.clone(),
        grams,
        weights,
        regressors,
        target,
        validation: validation.clone(),
    };
    let guard = 1e-10; // keeps selection solves regular; the final ridge is chosen below
                       // Two searches when past outputs are allowed: from nothing, and from the nearest past output.
                       // Fitted by equation error, a past output often simulates worse than an input lag until the
                       // inputs that drive the output are in, so a search from nothing may never take it; the one
                       // that validates better wins (on a tie, the one without forced feedback).
    let mut found = search(&problem, params, guard, &[])?;
    if params.max_output_lag > 0 {
        let start = [Term::Output {
            lag: params.output_step.max(1),
        }];
        if let Ok(other) = search(&problem, params, guard, &start) {
            if other.current < found.current {
                found = other;
            }
        }
    }
    let mut from_linear = false;
    if let Some((start, _)) = linear.filter(|(t, rmse)| !t.is_empty() && found.current > *rmse) {
        if let Ok(other) = search(&problem, params, guard, start) {
            if other.current < found.current {
                found = other;
                from_linear = true;
            }
        }
    }
    let Search {
        mut selected,
        fits,
        current,
        path,
    } = found;
    selected.sort();
    // Ridge chosen on the validation block.
    let mut best_ridge = (0.0, fits.clone(), f64::INFINITY);
    for &lambda in &params.ridge_grid {
        if let Some((f, e)) = problem.score(&selected, lambda) {
            if e < best_ridge.2 {
                best_ridge = (lambda, f, e);
            }
        }
    }
    let (ridge, fits, validation_rmse) = if best_ridge.2.is_finite() {
        best_ridge
    } else {
        (guard, problem.fit(&selected, guard)?, current)
    };
    Ok(Selection {
        terms: selected,
        fits,
        ridge,
        validation_rmse,
        path,
        training_rows: train.len(),
        validation_start: validation.start,
        from_linear,
    })
}

/// The best forward step from `selected` (whose fits are `fits`): among the extensions that
/// pass the partial F-test, the `shortlist` with the largest F are scored on the validation
/// block and the lowest error wins. `None` when no candidate passes or can be scored.
fn forward(
    problem: &Problem<'_>,
    params: &StructureParams,
    guard: f64,
    selected: &[Term],
    fits: &[Fit],
) -> Option<(Term, Vec<Fit>, f64)> {
    let c = problem.weights.len() as f64;
    let total_weight: f64 = problem.grams.iter().map(|g| g.weight).sum();
    let rss_now = Problem::rss(fits);
    let k = selected.len() + 2;
    let df2 = total_weight - c * k as f64;
    if df2 <= 1.0 {
        return None;
    }
    let f_dist = FisherSnedecor::new(c, df2).ok()?;
    let mut scored: Vec<(f64, Term)> = Vec::new();
    for term in extensions(selected, params) {
        let mut trial = selected.to_vec();
        trial.push(term);
        let Ok(trial_fits) = problem.fit(&trial, guard) else {
            continue;
        };
        let rss = Problem::rss(&trial_fits);
        let f = partial_f(rss_now, rss, c, df2);
        let significant =
            f == f64::INFINITY || (f.is_finite() && 1.0 - f_dist.cdf(f) < params.alpha_enter);
        if significant {
            scored.push((f, term));
        }
    }
    scored.sort_by(|a, b| b.0.total_cmp(&a.0).then(a.1.cmp(&b.1)));
    let mut best: Option<(Term, Vec<Fit>, f64)> = None;
    for &(_, term) in scored.iter().take(params.shortlist) {
        let mut trial = selected.to_vec();
        trial.push(term);
        if let Some((f, e)) = problem.score(&trial, guard) {
            if best.as_ref().is_none_or(|b| e < b.2) {
                best = Some((term, f, e));
            }
        }
    }
    best
}

/// Where one stepwise search ended.
struct Search {
    selected: Vec<Term>,
    fits: Vec<Fit>,
    current: f64,
    path: Vec<Step>,
}

/// The forward–backward search from the terms `start` (recorded as the path's first steps).
fn search(
    problem: &Problem<'_>,
    params: &StructureParams,
    guard: f64,
    start: &[Term],
) -> Result<Search, FitError> {
    let mut selected: Vec<Term> = start.to_vec();
    let (mut fits, mut current) = problem.try_score(&selected, guard)?;
    let mut path: Vec<Step> = start
        .iter()
        .map(|&term| Step {
            action: '+',
            term,
            validation_rmse: current,
        })
        .collect();
    // An addition lowers the validation error by `min_improvement` at least, but the removals
    // after it may each give back half of that, so the search could cycle: the path is capped.
    while selected.len() < params.max_terms && path.len() < MAX_STEPS_PER_TERM * params.max_terms {
        let Some((term, new_fits, e)) = forward(problem, params, guard, &selected, &fits) else {
            break;
        };
        let mut added = vec![(term, new_fits, e)];
        // Strictly better (with `min_improvement` 0 an equal error would not be progress).
        if e >= current * (1.0 - params.min_improvement) {
            // Look one step ahead: a lag that helps little alone may be what the next term
            // needs (a block of lags that follows a slow response only pays once it is two
            // lags long). Both are taken if together they bring the improvement two steps need.
            if !(e < current) || selected.len() + 2 > params.max_terms {
                break;
            }
            let mut trial = selected.clone();
            trial.push(term);
            let Some((next, next_fits, next_e)) =
                forward(problem, params, guard, &trial, &added[0].1)
            else {
                break;
            };
            if next_e >= current * (1.0 - params.min_improvement).powi(2) {
                break;
            }
            added.push((next, next_fits, next_e));
        }
        for (term, new_fits, e) in added {
            selected.push(term);
            (fits, current) = (new_fits, e);
            path.push(Step {
                action: '+',
                term,
                validation_rmse: e,
            });
        }
        // Backward: drop an end lag whose removal raises the validation error by less than half
        // the improvement needed to enter (parsimony: lags that only polish the sixth digit go).
        loop {
            let mut drop: Option<(Term, Vec<Fit>, f64)> = None;
            for term in removable(&selected) {
                if Some(term) == path.last().map(|s| s.term)
                    && path.last().is_some_and(|s| s.action == '+')
                {
                    continue;
                }
                let trial: Vec<Term> = selected.iter().copied().filter(|t| *t != term).collect();
                if let Some((f, e)) = problem.score(&trial, guard) {
                    if e <= current * (1.0 + 0.5 * params.min_improvement)
                        && drop.as_ref().is_none_or(|d| e < d.2)
                    {
                        drop = Some((term, f, e));
                    }
                }
            }
            let Some((term, f, e)) = drop else { break };
            selected.retain(|t| *t != term);
            (fits, current) = (f, e);
            path.push(Step {
                action: '-',
                term,
                validation_rmse: e,
            });
        }
    }
    Ok(Search {
        selected,
        fits,
        current,
        path,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn extensions_keep_blocks_contiguous() {
        let params = StructureParams::new(vec![5, 2], 2);
        let selected = vec![
            Term::Input { input: 0, lag: 2 },
            Term::Input { input: 0, lag: 3 },
            Term::Output { lag: 1 },
        ];
        let ext = extensions(&selected, &params);
        assert!(ext.contains(&Term::Input { input: 0, lag: 1 }));
        assert!(ext.contains(&Term::Input { input: 0, lag: 4 }));
        assert!(!ext.contains(&Term::Input { input: 0, lag: 5 }));
        assert_eq!(
            ext.iter()
                .filter(|t| matches!(t, Term::Input { input: 1, .. }))
                .count(),
            3
        );
        assert!(ext.contains(&Term::Output { lag: 2 }));
        let sel3 = vec![
            Term::Input { input: 0, lag: 1 },
            Term::Input { input: 0, lag: 2 },
            Term::Input { input: 0, lag: 3 },
        ];
        assert_eq!(
            removable(&sel3),
            vec![
                Term::Input { input: 0, lag: 1 },
                Term::Input { input: 0, lag: 3 }
            ]
        );
    }

    /// Past outputs one analyzer cycle apart: the next candidate is one more cycle back, and
    /// only the longest may go.
    #[test]
    fn past_outputs_step_by_the_output_step() {
        let mut params = StructureParams::new(vec![1], 3);
        params.output_step = 5;
        let selected = vec![
            Term::Input { input: 0, lag: 0 },
            Term::Output { lag: 5 },
            Term::Output { lag: 10 },
        ];
        let ext = extensions(&selected, &params);
        assert!(ext.contains(&Term::Output { lag: 15 }), "{ext:?}");
        assert!(!ext
            .iter()
            .any(|t| matches!(t, Term::Output { lag } if *lag != 15)));
        assert_eq!(
            removable(&selected),
            vec![Term::Input { input: 0, lag: 0 }, Term::Output { lag: 10 }]
        );
    }

    /// The partial F by its definition (e.g. Draper & Smith, *Applied Regression Analysis*, the
    /// extra-sum-of-squares principle); a residual of zero, or below zero from rounding, gives an
    /// unbounded F, not the 0/0 = NaN or negative value that failed the test before.
    #[test]
    fn partial_f_by_definition_and_without_residual() {
        // (10 − 4)/2 = 3 over 4/30: 22.5.
        assert!((partial_f(10.0, 4.0, 2.0, 30.0) - 22.5).abs() < 1e-12);
        assert_eq!(partial_f(10.0, 0.0, 2.0, 30.0), f64::INFINITY);
        assert_eq!(partial_f(10.0, -1e-20, 2.0, 30.0), f64::INFINITY);
        assert_eq!(partial_f(0.0, 0.0, 2.0, 30.0), f64::INFINITY);
    }

    /// A target one lagged input gives exactly: that candidate leaves no residual and enters
    /// first (a seeded uniform input and an unrelated one).
    #[test]
    fn a_regressor_that_explains_the_target_exactly_is_taken() {
        use rand::{Rng, SeedableRng};
        use rand_chacha::ChaCha8Rng;
        let params = StructureParams::new(vec![6, 6], 2);
        let n = 600;
        let mut rng = ChaCha8Rng::seed_from_u64(11);
        let u: Vec<f64> = (0..n).map(|_| rng.gen()).collect();
        let v: Vec<f64> = (0..n).map(|_| rng.gen()).collect();
        let y: Vec<f64> = (0..n)
            .map(|k| if k >= 2 { 3.0 * u[k - 2] } else { 0.0 })
            .collect();
        let inputs = [u, v];
        let weights = vec![vec![1.0; n]];
        let sel = select(&params, &weights, Regressors::new(&inputs, &y), &y).expect("select");
        assert_eq!(
            sel.path.first().map(|s| s.term),
            Some(Term::Input { input: 0, lag: 2 }),
            "{:?}",
            sel.path
        );
        assert!(sel.validation_rmse < 1e-9, "{}", sel.validation_rmse);
    }

    /// Two tags that share a large common swing and differ by small independent deviations
    /// (two thermocouples in one bed), with the target their difference: either tag alone
    /// explains almost nothing (validation RMSE down by 0.35 %, below the 1 % an addition
    /// needs), both together explain everything. The one-step look-ahead takes both; without
    /// it the search ends with no terms.
    #[test]
    fn a_pair_that_only_helps_together_is_taken() {
        use rand::{Rng, SeedableRng};
        use rand_chacha::ChaCha8Rng;
        let params = StructureParams::new(vec![0, 0], 0);
        let n = 2000;
        let mut rng = ChaCha8Rng::seed_from_u64(5);
        let common: Vec<f64> = (0..n).map(|_| 10.0 * rng.gen::<f64>()).collect();
        let a: Vec<f64> = common.iter().map(|c| c + rng.gen::<f64>()).collect();
        let b: Vec<f64> = common.iter().map(|c| c + rng.gen::<f64>()).collect();
        let y: Vec<f64> = a
            .iter()
            .zip(&b)
            .map(|(a, b)| 10.0 * (a - b) + 0.01 * rng.gen::<f64>())
            .collect();
        let inputs = [a, b];
        let weights = vec![vec![1.0; n]];
        let sel = select(&params, &weights, Regressors::new(&inputs, &y), &y).expect("select");
        let mut nothing = params.clone();
        nothing.max_terms = 0;
        let offset_only = select(&nothing, &weights, Regressors::new(&inputs, &y), &y)
            .expect("offset only")
            .validation_rmse;
        assert_eq!(
            sel.terms,
            vec![
                Term::Input { input: 0, lag: 0 },
                Term::Input { input: 1, lag: 0 }
            ],
            "{:?}",
            sel.path
        );
        let (first, second) = (sel.path[0].validation_rmse, sel.path[1].validation_rmse);
        assert!(
            first > (1.0 - params.min_improvement) * offset_only,
            "{first} {offset_only}"
        );
        assert!(second < 0.01 * first, "{:?}", sel.path);
    }

    /// Too few target rows: the message names the count and what helps (fewer regimes only
    /// while more than the smallest count, 2, are asked for).
    #[test]
    fn too_few_target_rows_say_what_helps() {
        let params = StructureParams::new(vec![2], 0);
        let n = 40;
        let inputs = vec![(0..n).map(|k| k as f64).collect::<Vec<_>>()];
        let target: Vec<f64> = (0..n)
            .map(|k| if k % 2 == 0 { k as f64 } else { f64::NAN })
            .collect();
        for (c, fewer) in [(2, false), (3, true)] {
            let weights = vec![vec![1.0 / c as f64; n]; c];
            let regressors = Regressors::new(&inputs, &target);
            let err = select(&params, &weights, regressors, &target).expect_err("too few");
            assert_eq!(
                err,
                SelectionError::TooFewRows {
                    rows: 19,
                    regimes: c,
                    needed: 20 + 6 * c
                }
            );
            let text = err.to_string();
            assert!(text.contains("add target data"), "{text}");
            assert_eq!(text.contains("set fewer regimes"), fewer, "{text}");
        }
    }
}
