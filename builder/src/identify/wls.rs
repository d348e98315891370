//! Weighted least squares from accumulated Gram matrices.
//!
//! For a regime with weights `w_k` (its memberships) and an augmented row `a_k = [1, x_k, y_k]`,
//! the Gram matrix `G = Σ_k w_k a_k a_kᵀ` holds everything a fit of any subset of the regressors
//! needs: `XᵀWX`, `XᵀWy` and `yᵀWy`. It is accumulated once over all candidates; each subset is
//! then a small Cholesky solve. A ridge `λ` (never on the offset) guards against collinear tags.

use nalgebra::{DMatrix, DVector};
use rayon::prelude::*;

/// Weighted Gram matrix of `[1, candidates…, y]`, row-major `(p + 2)²`.
#[derive(Debug, Clone, PartialEq)]
pub struct Gram {
    /// Number of candidate regressors.
    pub p: usize,
    /// Entries.
    pub g: Vec<f64>,
    /// Σ w.
    pub weight: f64,
    /// Σ w² (for the effective sample size (Σw)²/Σw²).
    pub weight2: f64,
}

impl Gram {
    fn zero(p: usize) -> Gram {
        Gram {
            p,
            g: vec![0.0; (p + 2) * (p + 2)],
            weight: 0.0,
            weight2: 0.0,
        }
    }

    fn at(&self, a: usize, b: usize) -> f64 {
        self.g[a * (self.p + 2) + b]
    }

    /// Effective number of samples `(Σw)² / Σw²`.
    pub fn effective_samples(&self) -> f64 {
        if self.weight2 > 0.0 {
            self.weight * self.weight / self.weight2
        } else {
            0.0
        }
    }
}

/// Rows per block when accumulating.
const BLOCK: usize = 2048;

/// Accumulates one Gram matrix per weight row. `row(k, out)` writes the `p` candidate values of
/// data row `k`; `y[k]` is the target; `weights[i][k]` regime `i`'s weight of row `k`.
pub fn accumulate(
    rows: &[usize],
    p: usize,
    row: &(dyn Fn(usize, &mut [f64]) + Sync),
    y: &[f64],
    weights: &[Vec<f64>],
) -> Vec<Gram> {
    let c = weights.len();
    let q = p + 2;
    let partials: Vec<Vec<Gram>> = rows
        .par_chunks(BLOCK)
        .map(|block| {
            let mut grams: Vec<Gram> = (0..c).map(|_| Gram::zero(p)).collect();
            let mut a = vec![0.0; block.len() * q];
            for (r, &k) in block.iter().enumerate() {
                let slot = &mut a[r * q..(r + 1) * q];
                slot[0] = 1.0;
                row(k, &mut slot[1..=p]);
                slot[p + 1] = y[k];
            }
            let a = DMatrix::from_row_slice(block.len(), q, &a);
            for (i, gram) in grams.iter_mut().enumerate() {
                let w: Vec<f64> = block.iter().map(|&k| weights[i][k]).collect();
                let mut aw = a.clone();
                for (r, wr) in w.iter().enumerate() {
                    aw.row_mut(r).scale_mut(*wr);
                }
                let g = aw.transpose() * &a;
                for x in 0..q {
                    for z in 0..q {
                        gram.g[x * q + z] = g[(x, z)];
                    }
                }
                gram.weight = w.iter().sum();
                gram.weight2 = w.iter().map(|v| v * v).sum();
            }
            grams
        })
        .collect();
    let mut total: Vec<Gram> = (0..c).map(|_| Gram::zero(p)).collect();
    for part in partials {
        for (t, g) in total.iter_mut().zip(part) {
            for (a, b) in t.g.iter_mut().zip(&g.g) {
                *a += b;
            }
            t.weight += g.weight;
            t.weight2 += g.weight2;
        }
    }
    total
}

/// A weighted fit of a subset of the candidates.
#[derive(Debug, Clone, PartialEq)]
pub struct Fit {
    /// Offset then one coefficient per selected candidate.
    pub theta: Vec<f64>,
    /// Weighted residual sum of squares.
    pub rss: f64,
    /// Covariance of `theta`: `σ² (XᵀWX + λR)⁻¹` with `σ² = rss / (Σw − k)`.
    pub covariance: Vec<f64>,
    /// Condition number of the normal matrix (largest / smallest eigenvalue).
    pub condition: f64,
}

/// Why a fit failed.
#[derive(Debug, Clone, Copy, PartialEq, thiserror::Error)]
pub enum FitError {
    /// The normal equations are singular even with the ridge.
    #[error("the regressors are linearly dependent in a regime (singular normal equations); add ridge regularization or drop collinear tags")]
    Singular,
    /// Fewer weighted samples than parameters.
    #[error("a regime has fewer effective samples ({samples:.0}) than parameters ({parameters})")]
    TooFewSamples {
        /// Effective samples.
        samples: f64,
        /// Parameters.
        parameters: usize,
    },
}

/// Solves the weighted least-squares problem for `subset` (candidate indices) with ridge `lambda`
/// (scaled by the mean diagonal of `XᵀWX`, never applied to the offset).
pub fn solve(gram: &Gram, subset: &[usize], lambda: f64) -> Result<Fit, FitError> {
    let k = subset.len() + 1;
    if gram.weight <= k as f64 {
        return Err(FitError::TooFewSamples {
            samples: gram.weight,
            parameters: k,
        });
    }
    let index = |s: usize| if s == 0 { 0 } else { subset[s - 1] + 1 };
    let yi = gram.p + 1;
    let mut a = DMatrix::<f64>::zeros(k, k);
    let mut b = DVector::<f64>::zeros(k);
    for r in 0..k {
        for s in 0..k {
            a[(r, s)] = gram.at(index(r), index(s));
        }
        b[r] = gram.at(index(r), yi);
    }
    if lambda > 0.0 && k > 1 {
        let mean_diag = (1..k).map(|r| a[(r, r)]).sum::<f64>() / (k - 1) as f64;
        for r in 1..k {
            a[(r, r)] += lambda * mean_diag;
        }
    }
    let eig = a.clone().symmetric_eigenvalues();
    let (lo, hi) = (eig.min(), eig.max());
    let condition = if lo > 0.0 { hi / lo } else { f64::INFINITY };
    if !(condition < 1e14) {
        return Err(FitError::Singular);
    }
    let chol = a.clone().cholesky().ok_or(FitError::Singular)?;
    let theta = chol.solve(&b);
    // Weighted RSS = yᵀWy − 2θᵀXᵀWy + θᵀXᵀWXθ (without the ridge term).
    let mut xtx = DMatrix::<f64>::zeros(k, k);
    for r in 0..k {
        for s in 0..k {
            xtx[(r, s)] = gram.at(index(r), index(s));
        }
    }
    let rss = (gram.at(yi, yi) - 2.0 * theta.dot(&b) + theta.dot(&(&xtx * &theta))).max(0.0);
    let sigma2 = rss / (gram.weight - k as f64);
    let inverse = chol.inverse();
    Ok(Fit {
        theta: theta.iter().copied().collect(),
        rss,
        covariance: inverse.iter().map(|v| v * sigma2).collect::<Vec<f64>>(),
        condition,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    /// linfa-linear's hand-checkable example: (0, 0), (1, 0), (2, 2) have the least-squares line
    /// y = −1/3 + x. With weights all 1, WLS is OLS.
    #[test]
    fn ordinary_least_squares_hand_example() {
        let xs = [0.0, 1.0, 2.0];
        let ys = [0.0, 0.0, 2.0];
        let grams = accumulate(
            &[0, 1, 2],
            1,
            &|k, out| out[0] = xs[k],
            &ys,
            &[vec![1.0; 3]],
        );
        let fit = solve(&grams[0], &[0], 0.0).expect("fit");
        assert!((fit.theta[0] + 1.0 / 3.0).abs() < 1e-12 && (fit.theta[1] - 1.0).abs() < 1e-12);
        // Residuals 1/3, −2/3, 1/3: RSS = 2/3.
        assert!((fit.rss - 2.0 / 3.0).abs() < 1e-12);
    }

    #[test]
    fn scaling_all_weights_changes_nothing_but_the_weight() {
        let xs = [0.0, 1.0, 2.0, 3.5];
        let ys = [0.1, 0.9, 2.2, 3.4];
        let w = vec![0.2, 0.5, 1.0, 0.7];
        let w3: Vec<f64> = w.iter().map(|v| 3.0 * v).collect();
        let g = accumulate(&[0, 1, 2, 3], 1, &|k, out| out[0] = xs[k], &ys, &[w, w3]);
        let a = solve(&g[0], &[0], 0.0).expect("fit");
        let b = solve(&g[1], &[0], 0.0).expect("fit");
        for (x, y) in a.theta.iter().zip(&b.theta) {
            assert!((x - y).abs() < 1e-12);
        }
    }

    #[test]
    fn collinear_regressors_need_the_ridge() {
        let xs = [0.0, 1.0, 2.0, 3.0, 4.0];
        let ys = [1.0, 3.0, 5.0, 7.0, 9.0];
        let g = accumulate(
            &[0, 1, 2, 3, 4],
            2,
            &|k, out| {
                out[0] = xs[k];
                out[1] = 2.0 * xs[k];
            },
            &ys,
            &[vec![1.0; 5]],
        );
        assert_eq!(solve(&g[0], &[0, 1], 0.0), Err(FitError::Singular));
        let fit = solve(&g[0], &[0, 1], 1e-6).expect("ridge");
        // The ridge splits the slope 2 between the two copies: θ₁ + 2θ₂ ≈ 2.
        assert!((fit.theta[1] + 2.0 * fit.theta[2] - 2.0).abs() < 1e-4);
    }
}
