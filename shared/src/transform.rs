//! Target transforms and their inverses, shared by the builder and the runtime.
//!
//! High-purity impurities respond to temperatures roughly exponentially; modelling `ln(x)` or
//! the logit `ln(p / (1 - p))`, `p = x / full_scale`, makes the relation closer to linear.

use crate::exp::exp;

/// A target transform.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Transform {
    /// The value itself.
    Identity,
    /// Natural logarithm; defined for `x > 0`.
    Log,
    /// Logit of `x / full_scale`; defined for `0 < x < full_scale`.
    Logit {
        /// The value that means fraction 1 (100 for percent).
        full_scale: f64,
    },
}

impl Transform {
    /// Model-domain value of `x`, or `None` outside the transform's domain.
    pub fn forward(self, x: f64) -> Option<f64> {
        match self {
            Transform::Identity => x.is_finite().then_some(x),
            Transform::Log => (x > 0.0 && x.is_finite()).then(|| libm::log(x)),
            Transform::Logit { full_scale } => {
                let p = x / full_scale;
                (p > 0.0 && p < 1.0).then(|| libm::log(p / (1.0 - p)))
            }
        }
    }

    /// Engineering-unit value of a model-domain value `z`.
    #[inline]
    pub fn inverse(self, z: f64) -> f64 {
        match self {
            Transform::Identity => z,
            Transform::Log => exp(z),
            Transform::Logit { full_scale } => {
                // Written so that large |z| saturates at 0 or full scale instead of giving NaN.
                if z >= 0.0 {
                    full_scale / (1.0 + exp(-z))
                } else {
                    let e = exp(z);
                    full_scale * e / (1.0 + e)
                }
            }
        }
    }

    /// d(inverse)/dz at `z`: converts a model-domain gain into engineering units.
    pub fn inverse_slope(self, z: f64) -> f64 {
        match self {
            Transform::Identity => 1.0,
            Transform::Log => exp(z),
            Transform::Logit { full_scale } => {
                let p = self.inverse(z) / full_scale;
                full_scale * p * (1.0 - p)
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn round_trips_inside_the_domain() {
        for t in [
            Transform::Identity,
            Transform::Log,
            Transform::Logit { full_scale: 100.0 },
        ] {
            for x in [0.001, 0.5, 12.0, 99.0] {
                let z = t.forward(x).expect("in domain");
                assert!((t.inverse(z) - x).abs() < 1e-12 * x.max(1.0), "{t:?} {x}");
            }
        }
    }

    #[test]
    fn rejects_values_outside_the_domain() {
        assert_eq!(Transform::Log.forward(0.0), None);
        assert_eq!(Transform::Log.forward(-1.0), None);
        let logit = Transform::Logit { full_scale: 1.0 };
        assert_eq!(logit.forward(1.0), None);
        assert_eq!(logit.forward(0.0), None);
        assert_eq!(Transform::Identity.forward(f64::NAN), None);
    }

    #[test]
    fn logit_inverse_saturates_without_nan() {
        let logit = Transform::Logit { full_scale: 100.0 };
        assert_eq!(logit.inverse(1e6), 100.0);
        assert_eq!(logit.inverse(-1e6), 0.0);
        // logit(0.5) = 0 and the slope of the logistic at 0 is 1/4 (textbook identity).
        assert_eq!(logit.inverse(0.0), 50.0);
        assert!((logit.inverse_slope(0.0) - 25.0).abs() < 1e-12);
    }

    #[test]
    fn slope_matches_a_finite_difference() {
        for t in [Transform::Log, Transform::Logit { full_scale: 100.0 }] {
            let z = -1.3;
            let h = 1e-6;
            let fd = (t.inverse(z + h) - t.inverse(z - h)) / (2.0 * h);
            assert!((fd - t.inverse_slope(z)).abs() < 1e-6, "{t:?}");
        }
    }
}
