//! Possibilistic typicality (Krishnapuram & Keller, 1993): how typical a point is of each regime,
//! without the sum-to-one constraint that makes fuzzy memberships blind to extrapolation.
//!
//! `t_i = 1 / (1 + (d²_i / η_i)^(1/(m−1)))`, with the scale `η_i = Σ_k μ_ik^m d²_ik / Σ_k μ_ik^m`
//! estimated once from the converged fuzzy partition (K = 1). A point at a regime's center has
//! typicality 1; at distance² η_i, one half. The trained domain is where the largest typicality
//! reaches a threshold taken from the training data: a low quantile of the largest typicality.

use super::kernel::{Columns, Norm};

/// Per-regime typicality scales.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Typicality {
    /// η_i, in squared-distance units of the regime norms.
    pub eta: Vec<f64>,
    /// Fuzziness m.
    pub fuzziness: f64,
}

fn row_of(data: &Columns, k: usize, row: &mut [f64]) {
    for (j, r) in row.iter_mut().enumerate() {
        *r = data.values[j * data.len + k];
    }
}

impl Typicality {
    /// Estimates η from memberships (regime-major `c × len`) and the regimes' norms.
    pub fn estimate(data: &Columns, norms: &[Norm], memberships: &[f64], m: f64) -> Typicality {
        let c = norms.len();
        let mut num = vec![0.0; c];
        let mut den = vec![0.0; c];
        let mut row = vec![0.0; data.dim];
        for k in 0..data.len {
            row_of(data, k, &mut row);
            for (i, norm) in norms.iter().enumerate() {
                let w = memberships[i * data.len + k].powf(m);
                num[i] += w * norm.distance2(&row);
                den[i] += w;
            }
        }
        let eta = num
            .iter()
            .zip(&den)
            .map(|(a, b)| (a / b.max(f64::MIN_POSITIVE)).max(f64::MIN_POSITIVE))
            .collect();
        Typicality { eta, fuzziness: m }
    }

    /// Typicality of a point in regime `i` at squared distance `d2`.
    pub fn of(&self, i: usize, d2: f64) -> f64 {
        let ratio = d2 / self.eta[i];
        let power = if self.fuzziness == 2.0 {
            ratio
        } else {
            ratio.powf(1.0 / (self.fuzziness - 1.0))
        };
        1.0 / (1.0 + power)
    }

    /// Largest typicality of every row of `data`.
    pub fn max_over_rows(&self, data: &Columns, norms: &[Norm]) -> Vec<f64> {
        let mut row = vec![0.0; data.dim];
        (0..data.len)
            .map(|k| {
                row_of(data, k, &mut row);
                norms
                    .iter()
                    .enumerate()
                    .map(|(i, n)| self.of(i, n.distance2(&row)))
                    .fold(0.0, f64::max)
            })
            .collect()
    }
}

/// The `quantile` (e.g. 0.01) of the largest typicality over the training rows: below it, a
/// sample is outside the trained domain.
pub fn domain_threshold(mut max_typicality: Vec<f64>, quantile: f64) -> f64 {
    if max_typicality.is_empty() {
        return 0.0;
    }
    max_typicality.sort_by(f64::total_cmp);
    let q = quantile.clamp(0.0, 1.0);
    let index = ((max_typicality.len() - 1) as f64 * q).floor() as usize;
    max_typicality[index]
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn typicality_is_one_at_center_half_at_eta() {
        let t = Typicality {
            eta: vec![4.0],
            fuzziness: 2.0,
        };
        assert_eq!(t.of(0, 0.0), 1.0);
        assert_eq!(t.of(0, 4.0), 0.5);
        assert!(t.of(0, 400.0) < 0.01);
    }

    #[test]
    fn eta_is_the_weighted_mean_squared_distance() {
        // One regime at 0, crisp: points at distance² 1 and 9 → η = 5.
        let data = Columns::from_rows(&[1.0, -3.0], 1);
        let t = Typicality::estimate(&data, &[Norm::euclidean(vec![0.0])], &[1.0, 1.0], 2.0);
        assert_eq!(t.eta, vec![5.0]);
    }

    #[test]
    fn threshold_is_a_low_quantile() {
        let values: Vec<f64> = (0..101).map(|i| i as f64 / 100.0).collect();
        assert_eq!(domain_threshold(values.clone(), 0.01), 0.01);
        assert_eq!(domain_threshold(values, 0.5), 0.5);
    }
}
