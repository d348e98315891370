//! Regimes seen from the variables known at run time.
//!
//! Clustering may use the target too (product-space clustering), but the runtime only knows the
//! inputs. Each regime is projected onto the antecedent variables `x`: center `v_iˣ`, covariance
//! block `F_iˣˣ` (a principal block of a positive definite matrix, so positive definite), and norm
//! `A_iˣ = (ρ_i det F_iˣˣ)^(1/p) (F_iˣˣ)⁻¹`. Memberships use the same formula as clustering,
//! and typicality scales and the trained-domain threshold are re-estimated in this space.

use super::covariance::gk_norm;
use super::kernel::{memberships, Columns, Norm};
use super::typicality::{domain_threshold, Typicality};
use super::{Partition, RegimeError};

/// Regime memberships and typicality from antecedent variables (scaled space).
#[derive(Debug, Clone, PartialEq)]
pub struct Antecedent {
    /// Indices of the antecedent variables within the clustering variables.
    pub variables: Vec<usize>,
    /// Projected norms (center and factor), scaled space.
    pub norms: Vec<Norm>,
    /// Typicality scales in the projected space.
    pub typicality: Typicality,
    /// Below this largest typicality a sample is outside the trained domain.
    pub domain_threshold: f64,
    /// Fuzziness m.
    pub fuzziness: f64,
}

/// Memberships and typicality of one sample.
#[derive(Debug, Clone, PartialEq)]
pub struct Evaluation {
    /// Fuzzy memberships (sum to 1).
    pub memberships: Vec<f64>,
    /// Typicality per regime.
    pub typicality: Vec<f64>,
}

impl Antecedent {
    /// Projects `partition` (fitted on `data`) onto `variables`; `quantile` sets the threshold.
    pub fn project(
        partition: &Partition,
        data: &Columns,
        variables: &[usize],
        volumes: Option<&[f64]>,
        quantile: f64,
    ) -> Result<Antecedent, RegimeError> {
        let d = data.dim;
        let p = variables.len();
        let mut norms = Vec::with_capacity(partition.count());
        for (i, (center, cov)) in partition
            .centers
            .iter()
            .zip(&partition.covariances)
            .enumerate()
        {
            let sub_center: Vec<f64> = variables.iter().map(|&j| center[j]).collect();
            let mut sub_cov = vec![0.0; p * p];
            for (a, &ja) in variables.iter().enumerate() {
                for (b, &jb) in variables.iter().enumerate() {
                    sub_cov[a * p + b] = cov[ja * d + jb];
                }
            }
            let rho = volumes.map_or(1.0, |v| v[i]);
            norms.push(gk_norm(&sub_center, &sub_cov, rho, i)?.0);
        }
        let projected = Columns {
            dim: p,
            len: data.len,
            values: variables
                .iter()
                .flat_map(|&j| data.column(j).iter().copied())
                .collect(),
        };
        let typicality = Typicality::estimate(
            &projected,
            &norms,
            &partition.memberships,
            partition.fuzziness,
        );
        let threshold = domain_threshold(typicality.max_over_rows(&projected, &norms), quantile);
        Ok(Antecedent {
            variables: variables.to_vec(),
            norms,
            typicality,
            domain_threshold: threshold,
            fuzziness: partition.fuzziness,
        })
    }

    /// Memberships and typicality of a scaled antecedent sample.
    pub fn evaluate(&self, x: &[f64]) -> Evaluation {
        let c = self.norms.len();
        let d2: Vec<f64> = self.norms.iter().map(|n| n.distance2(x)).collect();
        let mut u = vec![0.0; c];
        let (mut a, mut b) = ([0.0], [0.0]);
        memberships(&d2, &mut u, c, 1, self.fuzziness, &mut a, &mut b);
        let typicality = d2
            .iter()
            .enumerate()
            .map(|(i, d)| self.typicality.of(i, *d))
            .collect();
        Evaluation {
            memberships: u,
            typicality,
        }
    }
}
