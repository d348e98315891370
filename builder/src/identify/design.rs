//! Candidate regressors and the rows of the regression problem.
//!
//! A candidate is an input delayed by a number of samples, or the target's own past value. A row
//! `k` is usable when the target at `k` and every candidate's value are valid (finite): gaps and
//! invalid samples therefore cut the data into segments and the lags restart after each gap
//! without any special case.

/// Where a candidate regressor comes from.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, serde::Serialize)]
pub enum Term {
    /// Input `j` delayed by `lag` samples.
    Input {
        /// Input index.
        input: usize,
        /// Delay in samples.
        lag: usize,
    },
    /// The target delayed by `lag ≥ 1` samples.
    Output {
        /// Delay in samples.
        lag: usize,
    },
}

impl Term {
    /// The delay in samples.
    pub fn lag(self) -> usize {
        match self {
            Term::Input { lag, .. } | Term::Output { lag } => lag,
        }
    }
}

/// All candidates: inputs with lags `0..=max_lag[j]`, then outputs `1..=max_output_lag`.
pub fn candidates(max_lag: &[usize], max_output_lag: usize) -> Vec<Term> {
    let mut out = Vec::new();
    for (input, &max) in max_lag.iter().enumerate() {
        for lag in 0..=max {
            out.push(Term::Input { input, lag });
        }
    }
    for lag in 1..=max_output_lag {
        out.push(Term::Output { lag });
    }
    out
}

/// Value of a term at row `k` (NaN when unavailable).
pub fn value(term: Term, k: usize, inputs: &[Vec<f64>], target: &[f64]) -> f64 {
    match term {
        Term::Input { input, lag } => {
            if k < lag {
                return f64::NAN;
            }
            inputs
                .get(input)
                .and_then(|s| s.get(k - lag))
                .copied()
                .unwrap_or(f64::NAN)
        }
        Term::Output { lag } => {
            if k < lag {
                return f64::NAN;
            }
            target.get(k - lag).copied().unwrap_or(f64::NAN)
        }
    }
}

/// Rows in `range` where the target and every term are finite.
pub fn usable_rows(
    terms: &[Term],
    inputs: &[Vec<f64>],
    target: &[f64],
    range: std::ops::Range<usize>,
) -> Vec<usize> {
    range
        .filter(|&k| {
            target.get(k).is_some_and(|y| y.is_finite())
                && terms
                    .iter()
                    .all(|&t| value(t, k, inputs, target).is_finite())
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn lags_and_gaps() {
        let inputs = vec![vec![1.0, 2.0, f64::NAN, 4.0, 5.0]];
        let target = vec![10.0, 20.0, 30.0, 40.0, 50.0];
        let terms = candidates(&[1], 1);
        assert_eq!(terms.len(), 3);
        assert_eq!(
            value(Term::Input { input: 0, lag: 1 }, 4, &inputs, &target),
            4.0
        );
        assert_eq!(value(Term::Output { lag: 1 }, 1, &inputs, &target), 10.0);
        // Row 0 lacks lags; rows 2 and 3 touch the invalid input at 2.
        assert_eq!(usable_rows(&terms, &inputs, &target, 0..5), vec![1, 4]);
    }
}
