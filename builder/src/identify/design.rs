//! Candidate regressors and the rows of the regression problem.
//!
//! A candidate is an input delayed by a number of samples, or the target's own past value. A row
//! `k` is usable when the target at `k` and every candidate's value are valid (finite): gaps and
//! invalid samples therefore cut the data into segments and the lags restart after each gap
//! without any special case.
//!
//! A past output reads the target's *history*, which may differ from the rows' target: with an
//! analyzer that holds each reading until the next, only the fresh readings are rows to fit and
//! score, while a past output is the reading available then (see [`Regressors`]).

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

/// All candidates: inputs with lags `0..=max_lag[j]`, then `max_output_lag` past outputs spaced
/// `output_step` samples apart (`output_step`, 2·`output_step`, …; a step of 0 counts as 1).
pub fn candidates(max_lag: &[usize], max_output_lag: usize, output_step: usize) -> Vec<Term> {
    let mut out = Vec::new();
    for (input, &max) in max_lag.iter().enumerate() {
        for lag in 0..=max {
            out.push(Term::Input { input, lag });
        }
    }
    for n in 1..=max_output_lag {
        out.push(Term::Output {
            lag: n * output_step.max(1),
        });
    }
    out
}

/// Where the regressors' values come from.
#[derive(Debug, Clone, Copy)]
pub struct Regressors<'a> {
    /// Inputs in engineering units, one series per input.
    pub inputs: &'a [Vec<f64>],
    /// What a past output reads, model domain: the target as measured (an analyzer's reading
    /// held until its next).
    pub history: &'a [f64],
}

impl<'a> Regressors<'a> {
    /// Inputs, with past outputs read from `history`.
    pub fn new(inputs: &'a [Vec<f64>], history: &'a [f64]) -> Self {
        Regressors { inputs, history }
    }

    /// Value of a term at row `k` (NaN when unavailable).
    pub fn value(&self, term: Term, k: usize) -> f64 {
        let (series, lag) = match term {
            Term::Input { input, lag } => (self.inputs.get(input).map(Vec::as_slice), lag),
            Term::Output { lag } => (Some(self.history), lag),
        };
        k.checked_sub(lag)
            .and_then(|at| series?.get(at))
            .copied()
            .unwrap_or(f64::NAN)
    }
}

/// Rows in `range` where the target and every term are finite.
pub fn usable_rows(
    terms: &[Term],
    regressors: Regressors<'_>,
    target: &[f64],
    range: std::ops::Range<usize>,
) -> Vec<usize> {
    range
        .filter(|&k| {
            target.get(k).is_some_and(|y| y.is_finite())
                && terms.iter().all(|&t| regressors.value(t, k).is_finite())
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
        let terms = candidates(&[1], 1, 1);
        assert_eq!(terms.len(), 3);
        let regressors = Regressors::new(&inputs, &target);
        assert_eq!(regressors.value(Term::Input { input: 0, lag: 1 }, 4), 4.0);
        assert_eq!(regressors.value(Term::Output { lag: 1 }, 1), 10.0);
        assert!(regressors.value(Term::Output { lag: 2 }, 1).is_nan());
        assert!(regressors
            .value(Term::Input { input: 1, lag: 0 }, 1)
            .is_nan());
        // Row 0 lacks lags; rows 2 and 3 touch the invalid input at 2.
        assert_eq!(usable_rows(&terms, regressors, &target, 0..5), vec![1, 4]);
    }

    /// An analyzer read every third sample: rows are the fresh readings, past outputs one cycle
    /// apart read the reading held then, so every fresh row after the first cycle is usable.
    #[test]
    fn past_outputs_read_the_held_history_one_cycle_apart() {
        let inputs = vec![vec![0.0; 9]];
        let history = vec![1.0, 1.0, 1.0, 4.0, 4.0, 4.0, 7.0, 7.0, 7.0];
        let fresh: Vec<f64> = history
            .iter()
            .enumerate()
            .map(|(k, &y)| if k % 3 == 0 { y } else { f64::NAN })
            .collect();
        let terms = candidates(&[0], 2, 3);
        assert_eq!(
            terms[1..],
            [Term::Output { lag: 3 }, Term::Output { lag: 6 }]
        );
        let regressors = Regressors::new(&inputs, &history);
        assert_eq!(
            usable_rows(&terms[..2], regressors, &fresh, 0..9),
            vec![3, 6]
        );
        assert_eq!(regressors.value(terms[1], 6), 4.0);
        assert_eq!(usable_rows(&terms, regressors, &fresh, 0..9), vec![6]);
    }
}
