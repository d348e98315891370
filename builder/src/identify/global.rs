//! Global least squares over all regimes at once, and the one-regime linear baseline.
//!
//! Global: with `z_k = [β_1k (1, x_k), …, β_ck (1, x_k)]` the blended prediction is linear in all
//! regimes' parameters, `ŷ_k = z_kᵀ θ`, so one least-squares problem minimizes the blended error
//! directly (best accuracy; the local models then need not look like local linearizations).
//! Baseline: the same regressors in one linear model (every weight 1), always reported beside
//! the blend.

use super::design::{Regressors, Term};
use super::wls::{accumulate, solve, Fit, FitError};

/// Fits all regimes in one problem. `weights` are the blending memberships.
pub fn fit_global(
    terms: &[Term],
    weights: &[Vec<f64>],
    regressors: Regressors<'_>,
    target: &[f64],
    rows: &[usize],
    ridge: f64,
) -> Result<Vec<Fit>, FitError> {
    let c = weights.len();
    let k = terms.len() + 1;
    let p = c * k - 1;
    let row = |r: usize, out: &mut [f64]| {
        // Slots: [β_1 x…, β_2, β_2 x…, …, β_c, β_c x…].
        let mut at = 0;
        for (i, w) in weights.iter().enumerate() {
            if i > 0 {
                out[at] = w[r];
                at += 1;
            }
            for &t in terms {
                out[at] = w[r] * regressors.value(t, r);
                at += 1;
            }
        }
    };
    // The Gram prepends a constant column of ones, which equals Σ_i β_i; so its coefficient is
    // regime 1's offset and each β_i column (i > 1) carries offset_i − offset_1.
    let grams = accumulate(rows, p, &row, target, &[vec![1.0; target.len()]]);
    let subset: Vec<usize> = (0..p).collect();
    let fit = solve(&grams[0], &subset, ridge)?;
    let mut fits = Vec::with_capacity(c);
    let base = fit.theta[0];
    let mut at = 1;
    for i in 0..c {
        let offset = if i == 0 {
            base
        } else {
            let d = fit.theta[at];
            at += 1;
            base + d
        };
        let mut theta = vec![offset];
        theta.extend_from_slice(&fit.theta[at..at + terms.len()]);
        at += terms.len();
        fits.push(Fit {
            theta,
            rss: fit.rss,
            covariance: vec![0.0; k * k],
            condition: fit.condition,
        });
    }
    Ok(fits)
}

/// The one-regime linear model on the same terms (every weight 1).
pub fn fit_baseline(
    terms: &[Term],
    regressors: Regressors<'_>,
    target: &[f64],
    rows: &[usize],
    ridge: f64,
) -> Result<Fit, FitError> {
    let row = |r: usize, out: &mut [f64]| {
        for (o, &t) in out.iter_mut().zip(terms) {
            *o = regressors.value(t, r);
        }
    };
    let grams = accumulate(rows, terms.len(), &row, target, &[vec![1.0; target.len()]]);
    solve(&grams[0], &(0..terms.len()).collect::<Vec<_>>(), ridge)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::identify::stepwise::predict;

    /// Two regimes with crisp-ish memberships and different static lines; the global fit's blend
    /// reproduces the data, and with one regime equals the baseline.
    #[test]
    fn global_fit_recovers_two_lines() {
        let n = 400;
        let x: Vec<f64> = (0..n).map(|k| (k as f64 / n as f64) * 4.0 - 2.0).collect();
        let w1: Vec<f64> = x.iter().map(|v| 1.0 / (1.0 + (4.0 * v).exp())).collect();
        let w2: Vec<f64> = w1.iter().map(|v| 1.0 - v).collect();
        let y: Vec<f64> = (0..n)
            .map(|k| w1[k] * (1.0 + 2.0 * x[k]) + w2[k] * (-1.0 + 0.5 * x[k]))
            .collect();
        let terms = [Term::Input { input: 0, lag: 0 }];
        let rows: Vec<usize> = (0..n).collect();
        let weights = vec![w1, w2];
        let inputs = [x];
        let regressors = Regressors::new(&inputs, &y);
        let fits = fit_global(&terms, &weights, regressors, &y, &rows, 0.0).expect("fit");
        assert!(
            (fits[0].theta[0] - 1.0).abs() < 1e-9 && (fits[0].theta[1] - 2.0).abs() < 1e-9,
            "{:?}",
            fits[0].theta
        );
        assert!(
            (fits[1].theta[0] + 1.0).abs() < 1e-9 && (fits[1].theta[1] - 0.5).abs() < 1e-9,
            "{:?}",
            fits[1].theta
        );
        let pred = predict(&terms, &fits, &weights, regressors, 0..n);
        assert!(pred.iter().all(|(k, p)| (p - y[*k]).abs() < 1e-9));
        let base = fit_baseline(&terms, regressors, &y, &rows, 0.0).expect("baseline");
        assert_eq!(base.theta.len(), 2);
    }
}
