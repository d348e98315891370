//! Which inputs say where one linear model goes wrong: ranking candidate scheduling variables.
//!
//! A plant whose gain changes with its throughput shows no linear effect of the throughput, so
//! a linear model's structure does not use it and clustering on the inputs that structure uses
//! misses the change. The ranking asks each candidate input directly: the linear model's
//! structure is fitted again over three soft ranges of that input (piecewise-linear
//! memberships on its 1/6, 1/2 and 5/6 quantiles, which sum to one), the three fits are
//! blended and scored on the validation block as the search scores a structure (in free run
//! when past outputs are used). An input whose ranges predict much better than the one model
//! marks where the plant's behaviour changes: a scheduling variable. This is the split test of
//! local linear model trees (LOLIMOT; Nelles, *Nonlinear System Identification*, 2001, §13.3,
//! cited from memory), one split per input into three ranges, scored on held-out data instead
//! of the training error.

use super::design::{Regressors, Term};
use super::stepwise::{blocks, mean_squared_error, predict, Blocks, Selection, StructureParams};
use super::wls::{accumulate, solve};

/// One input's ranking.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Ranked {
    /// Input index.
    pub input: usize,
    /// Validation RMSE with the structure fitted over the input's three ranges, over the one
    /// linear model's (below 1: the ranges predict better).
    pub ratio: f64,
}

/// Weighted samples each range needs per parameter of the structure (the build's rule for a
/// regime).
const SAMPLES_PER_PARAMETER: f64 = 5.0;

/// Ranks `candidates` (input indices) against `linear`, the one-regime selection found with
/// `params` on `target` (model domain, NaN where not fitted). Returns the inputs that could be
/// scored (ranges with data enough for the structure), best first.
pub fn rank_inputs(
    linear: &Selection,
    params: &StructureParams,
    regressors: Regressors<'_>,
    target: &[f64],
    candidates: &[usize],
) -> Vec<Ranked> {
    let Ok(split) = blocks(params, regressors, target, 1) else {
        return Vec::new();
    };
    let one = [vec![1.0; target.len()]];
    let base = mean_squared_error(
        &predict(
            &linear.terms,
            &linear.fits,
            &one,
            regressors,
            split.validation.clone(),
        ),
        target,
    );
    if !(base > 0.0 && base.is_finite()) {
        return Vec::new();
    }
    let mut out: Vec<Ranked> = candidates
        .iter()
        .filter_map(|&input| {
            let series = regressors.inputs.get(input)?;
            let weights = ranges(series, &split.train)?;
            let mse = ranged_mse(linear, regressors, target, &split, &weights)?;
            Some(Ranked {
                input,
                ratio: (mse / base).sqrt(),
            })
        })
        .collect();
    out.sort_by(|a, b| a.ratio.total_cmp(&b.ratio).then(a.input.cmp(&b.input)));
    out
}

/// The inputs to schedule on from a ranking: none unless the best lowers the validation
/// RMSE by `least` (a share) at least; then every input that brings half the best's improvement,
/// at most `max` of them, in input order.
pub fn scheduling_inputs(ranked: &[Ranked], least: f64, max: usize) -> Vec<usize> {
    let Some(best) = ranked.first().filter(|s| s.ratio <= 1.0 - least) else {
        return Vec::new();
    };
    let gain = 1.0 - best.ratio;
    let mut inputs: Vec<usize> = ranked
        .iter()
        .filter(|s| 1.0 - s.ratio >= 0.5 * gain)
        .take(max)
        .map(|s| s.input)
        .collect();
    inputs.sort_unstable();
    inputs
}

/// Memberships of every row in three ranges of `series`: 1 below the 1/6 quantile of the
/// training rows' values, falling linearly to 0 at the median, and so on (two ranges when a
/// quantile repeats, as on a variable with few levels); equal where the value is missing.
/// `None` when the training values do not spread over two distinct knots.
fn ranges(series: &[f64], train: &[usize]) -> Option<Vec<Vec<f64>>> {
    let mut values: Vec<f64> = train
        .iter()
        .filter_map(|&k| series.get(k).copied())
        .filter(|v| v.is_finite())
        .collect();
    if values.len() < 6 {
        return None;
    }
    values.sort_by(f64::total_cmp);
    let quantile = |q: f64| values[((values.len() - 1) as f64 * q).round() as usize];
    let mut knots = vec![quantile(1.0 / 6.0), quantile(0.5), quantile(5.0 / 6.0)];
    knots.dedup();
    if knots.len() < 2 {
        return None;
    }
    let r = knots.len();
    let mut weights = vec![vec![0.0; series.len()]; r];
    for (k, &v) in series.iter().enumerate() {
        if !v.is_finite() {
            for w in &mut weights {
                w[k] = 1.0 / r as f64;
            }
            continue;
        }
        // The segment between knots i and i + 1 that holds v (clamped at the ends).
        let i = knots.partition_point(|&c| c <= v).clamp(1, r - 1) - 1;
        let t = ((v - knots[i]) / (knots[i + 1] - knots[i])).clamp(0.0, 1.0);
        weights[i][k] = 1.0 - t;
        weights[i + 1][k] = t;
    }
    Some(weights)
}

/// Validation MSE of `linear`'s structure fitted once per range (`weights`) and blended;
/// `None` when a range has too few weighted samples or a fit fails.
fn ranged_mse(
    linear: &Selection,
    regressors: Regressors<'_>,
    target: &[f64],
    split: &Blocks,
    weights: &[Vec<f64>],
) -> Option<f64> {
    let terms: &[Term] = &linear.terms;
    let row = |k: usize, out: &mut [f64]| {
        for (o, &t) in out.iter_mut().zip(terms) {
            *o = regressors.value(t, k);
        }
    };
    // The training rows have every candidate regressor valid, so every term of the structure.
    let grams = accumulate(&split.train, terms.len(), &row, target, weights);
    let needed = SAMPLES_PER_PARAMETER * (terms.len() + 1) as f64;
    if grams.iter().any(|g| g.weight < needed) {
        return None;
    }
    let subset: Vec<usize> = (0..terms.len()).collect();
    let fits = grams
        .iter()
        .map(|g| solve(g, &subset, linear.ridge.max(1e-10)))
        .collect::<Result<Vec<_>, _>>()
        .ok()?;
    let mse = mean_squared_error(
        &predict(terms, &fits, weights, regressors, split.validation.clone()),
        target,
    );
    mse.is_finite().then_some(mse)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::identify::stepwise::select;
    use crate::test_support::Lcg;

    #[test]
    fn ranges_sum_to_one_and_follow_the_quantiles() {
        let series: Vec<f64> = (0..600).map(|k| k as f64).collect();
        let train: Vec<usize> = (0..600).collect();
        let w = ranges(&series, &train).expect("ranges");
        assert_eq!(w.len(), 3);
        for k in 0..600 {
            let total: f64 = w.iter().map(|r| r[k]).sum();
            assert!((total - 1.0).abs() < 1e-12, "row {k}: {total}");
        }
        // Knots at the 1/6, 1/2 and 5/6 quantiles: 100, 300 (rounded from 299.5) and 499.
        assert_eq!((w[0][50], w[1][300], w[2][550]), (1.0, 1.0, 1.0));
        assert!((w[0][200] - 0.5).abs() < 1e-12 && (w[1][200] - 0.5).abs() < 1e-12);
        // Two levels: two ranges; one level: nothing to split.
        let levels: Vec<f64> = (0..600).map(|k| if k < 300 { 1.0 } else { 2.0 }).collect();
        assert_eq!(ranges(&levels, &train).map(|w| w.len()), Some(2));
        assert_eq!(ranges(&[3.0; 600], &train), None);
    }

    /// y = g(s)·x with the gain g rising from 0.2 to 2.2 over s, and a third input that does
    /// nothing: the linear model sees only x (s has no effect on average, x being centred), the
    /// ranking puts s first with a large improvement (0.22 when written) and proposes it alone;
    /// splitting on x itself does not help (y is linear in x).
    #[test]
    fn a_gain_that_changes_with_an_input_is_found() {
        let n = 4000;
        let mut rng = Lcg(7);
        let mut r = move || rng.next();
        let (mut x, mut s) = (0.0, 0.5);
        let mut inputs = vec![vec![0.0; n], vec![0.0; n], vec![0.0; n]];
        let mut y = vec![0.0; n];
        for k in 0..n {
            if k % 37 == 0 {
                x = r();
            }
            if k % 211 == 0 {
                s = 0.5 + 0.5 * r();
            }
            inputs[0][k] = x;
            inputs[1][k] = 300.0 + 10.0 * s;
            inputs[2][k] = 5.0 + r();
            y[k] = (0.2 + 2.0 * s * s) * x + 0.01 * r();
        }
        let regressors = Regressors::new(&inputs, &y);
        let params = StructureParams::new(vec![2, 2, 2], 0);
        let linear = select(&params, &[vec![1.0; n]], regressors, &y).expect("linear");
        assert!(linear
            .terms
            .iter()
            .all(|t| matches!(t, Term::Input { input: 0, .. })));
        let ranked = rank_inputs(&linear, &params, regressors, &y, &[0, 1, 2]);
        assert_eq!(ranked.len(), 3);
        assert_eq!(ranked[0].input, 1, "{ranked:?}");
        assert!(ranked[0].ratio < 0.5, "{ranked:?}");
        assert!(
            ranked.iter().all(|s| s.input == 1 || s.ratio > 0.9),
            "{ranked:?}"
        );
        assert_eq!(scheduling_inputs(&ranked, 0.05, 12), vec![1]);
    }

    #[test]
    fn no_input_is_proposed_without_an_improvement() {
        let flat = [
            Ranked {
                input: 2,
                ratio: 0.97,
            },
            Ranked {
                input: 0,
                ratio: 1.0,
            },
        ];
        assert!(scheduling_inputs(&flat, 0.05, 12).is_empty());
        let two = [
            Ranked {
                input: 3,
                ratio: 0.5,
            },
            Ranked {
                input: 1,
                ratio: 0.7,
            },
            Ranked {
                input: 0,
                ratio: 0.8,
            },
        ];
        // Half the best's improvement (0.25) is reached by input 1 (0.3), not by input 0 (0.2).
        assert_eq!(scheduling_inputs(&two, 0.05, 12), vec![1, 3]);
        assert_eq!(scheduling_inputs(&two, 0.05, 1), vec![3]);
    }
}
