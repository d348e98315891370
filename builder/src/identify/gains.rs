//! Steady-state gains of a fitted regime with confidence intervals (delta method, t-distribution).
//!
//! `K_j = Σ_l b_{j,l} / (1 − Σ_i a_i)`. Its gradient is `1/(1 − A)` for every `b_{j,l}` and
//! `B_j/(1 − A)²` for every `a_i`, so `Var K_j ≈ gᵀ Σ_θ g`; the interval is `K ± t_{0.975, ν} √Var`
//! with ν = effective samples − parameters.

use statrs::distribution::{ContinuousCDF, StudentsT};

use super::design::Term;
use super::wls::Fit;

/// A gain with its 95 % interval, in model-domain units per input unit.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct Gain {
    /// Input index.
    pub input: usize,
    /// Gain.
    pub value: f64,
    /// Standard error.
    pub std_error: f64,
    /// Lower end of the 95 % interval.
    pub low: f64,
    /// Upper end.
    pub high: f64,
}

/// Gains of every input that has terms, for one regime's fit.
pub fn gains(terms: &[Term], fit: &Fit, dof: f64) -> Vec<Gain> {
    let k = terms.len() + 1;
    let a: f64 = terms
        .iter()
        .enumerate()
        .filter(|(_, t)| matches!(t, Term::Output { .. }))
        .map(|(r, _)| fit.theta[r + 1])
        .sum();
    let t = StudentsT::new(0.0, 1.0, dof.max(1.0))
        .map(|d| d.inverse_cdf(0.975))
        .unwrap_or(1.96);
    let mut inputs: Vec<usize> = terms
        .iter()
        .filter_map(|t| match t {
            Term::Input { input, .. } => Some(*input),
            _ => None,
        })
        .collect();
    inputs.dedup();
    inputs
        .into_iter()
        .map(|input| {
            let b: f64 = terms
                .iter()
                .enumerate()
                .filter(|(_, t)| matches!(t, Term::Input { input: j, .. } if *j == input))
                .map(|(r, _)| fit.theta[r + 1])
                .sum();
            let value = b / (1.0 - a);
            let mut g = vec![0.0; k];
            for (r, term) in terms.iter().enumerate() {
                g[r + 1] = match term {
                    Term::Input { input: j, .. } if *j == input => 1.0 / (1.0 - a),
                    Term::Output { .. } => b / (1.0 - a).powi(2),
                    _ => 0.0,
                };
            }
            let mut var = 0.0;
            for r in 0..k {
                for s in 0..k {
                    var += g[r] * fit.covariance[r * k + s] * g[s];
                }
            }
            let se = var.max(0.0).sqrt();
            Gain {
                input,
                value,
                std_error: se,
                low: value - t * se,
                high: value + t * se,
            }
        })
        .collect()
}
