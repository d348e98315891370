//! Cluster validity measures, for choosing how many regimes the data support.
//!
//! | measure | formula | better |
//! |---|---|---|
//! | partition coefficient (Bezdek) | `PC = (1/N) Σ_i Σ_k μ²` | higher, in [1/c, 1] |
//! | modified PC | `1 − c/(c−1)·(1 − PC)` | higher |
//! | partition entropy (Bezdek) | `PE = −(1/N) Σ Σ μ ln μ` | lower, in [0, ln c] |
//! | Xie–Beni | `Σ Σ μ^m ‖z−v_i‖² / (N · min_{i≠j} ‖v_i − v_j‖²)` | lower |
//! | fuzzy hypervolume (Gath & Geva 1989) | `FHV = Σ_i √det F_i` | lower |
//! | partition density (Gath & Geva) | `PD = Σ_i S_i / FHV`, `S_i = Σ_{k: (z−v_i)ᵀF_i⁻¹(z−v_i) < 1} μ_ik` | higher |
//! | average partition density | `APD = (1/c) Σ_i S_i / √det F_i` | higher |
//! | average within-regime distance | `AWCD = (1/c) Σ_i Σ_k μ^m d²_ik / Σ_k μ^m` | look for the knee |
//!
//! `F_i` are the fuzzy covariances before shrinkage (Gath & Geva's definition; shrinkage would give
//! every regime the same added thickness and flatten FHV across counts), with only the eigenvalue
//! cap applied so a collapsed regime cannot make the determinant zero; `d²_ik` are the GK distances.

use super::covariance::{gk_norm, regularize, Regularization};
use super::kernel::Columns;
use super::{cluster, Partition, RegimeError, RegimeParams};

/// Validity measures of one partition.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Validity {
    /// Regime count c.
    pub count: usize,
    /// Partition coefficient.
    pub partition_coefficient: f64,
    /// Modified partition coefficient.
    pub modified_partition_coefficient: f64,
    /// Partition entropy.
    pub partition_entropy: f64,
    /// Xie–Beni index.
    pub xie_beni: f64,
    /// Fuzzy hypervolume.
    pub fuzzy_hypervolume: f64,
    /// Partition density.
    pub partition_density: f64,
    /// Average partition density.
    pub average_partition_density: f64,
    /// Average within-regime distance.
    pub average_within_distance: f64,
    /// Final objective Σ μ^m d².
    pub objective: f64,
}

/// Partition coefficient and entropy of memberships (`c × len`, any order).
pub fn coefficient_and_entropy(memberships: &[f64], c: usize) -> (f64, f64) {
    let n = (memberships.len() / c.max(1)).max(1) as f64;
    let pc = memberships.iter().map(|u| u * u).sum::<f64>() / n;
    let pe = -memberships
        .iter()
        .filter(|u| **u > 0.0)
        .map(|u| u * u.ln())
        .sum::<f64>()
        / n;
    (pc, pe)
}

/// Xie–Beni index with Euclidean distances.
pub fn xie_beni(data: &Columns, memberships: &[f64], centers: &[Vec<f64>], m: f64) -> f64 {
    let c = centers.len();
    let n = data.len;
    let mut numerator = 0.0;
    for k in 0..n {
        for (i, v) in centers.iter().enumerate() {
            let d2: f64 = (0..data.dim)
                .map(|j| (data.values[j * n + k] - v[j]).powi(2))
                .sum();
            numerator += memberships[i * n + k].powf(m) * d2;
        }
    }
    let mut separation = f64::INFINITY;
    for i in 0..c {
        for j in 0..i {
            let d2: f64 = centers[i]
                .iter()
                .zip(&centers[j])
                .map(|(a, b)| (a - b).powi(2))
                .sum();
            separation = separation.min(d2);
        }
    }
    numerator / (n as f64 * separation)
}

/// All measures for a partition of `data`.
pub fn measures(data: &Columns, p: &Partition) -> Result<Validity, RegimeError> {
    let c = p.count();
    let n = data.len;
    let m = p.fuzziness;
    let (pc, pe) = coefficient_and_entropy(&p.memberships, c);
    let mut fhv = 0.0;
    let mut density_sum = 0.0;
    let mut apd = 0.0;
    let mut awcd = 0.0;
    let mut row = vec![0.0; data.dim];
    let cap = Regularization {
        shrinkage: 0.0,
        max_condition: 1e12,
    };
    for i in 0..c {
        let f = regularize(&p.fuzzy_covariances[i], data.dim, 1.0, cap);
        let (unit, log_det) = gk_norm(&p.centers[i], &f, 1.0, i)?;
        let kappa = (log_det / data.dim as f64).exp(); // Mahalanobis = unit-volume distance / κ
        let root_det = (0.5 * log_det).exp();
        let (mut central, mut weight, mut weighted) = (0.0, 0.0, 0.0);
        for k in 0..n {
            for (j, r) in row.iter_mut().enumerate() {
                *r = data.values[j * n + k];
            }
            let u = p.memberships[i * n + k];
            if unit.distance2(&row) / kappa < 1.0 {
                central += u;
            }
            let w = u.powf(m);
            weight += w;
            weighted += w * p.norms[i].distance2(&row);
        }
        fhv += root_det;
        density_sum += central;
        apd += central / root_det;
        awcd += weighted / weight.max(f64::MIN_POSITIVE);
    }
    Ok(Validity {
        count: c,
        partition_coefficient: pc,
        modified_partition_coefficient: 1.0 - c as f64 / (c as f64 - 1.0) * (1.0 - pc),
        partition_entropy: pe,
        xie_beni: xie_beni(data, &p.memberships, &p.centers, m),
        fuzzy_hypervolume: fhv,
        partition_density: density_sum / fhv,
        average_partition_density: apd / c as f64,
        average_within_distance: awcd / c as f64,
        objective: p.objective(),
    })
}

/// Clusters with every count in `counts` and scores each.
pub fn sweep(
    data: &Columns,
    counts: std::ops::RangeInclusive<usize>,
    params: &RegimeParams,
) -> Result<Vec<(Partition, Validity)>, RegimeError> {
    let mut out = Vec::new();
    for c in counts {
        let mut p = params.clone();
        p.count = c;
        p.volumes = None;
        let partition = cluster(data, &p)?;
        let validity = measures(data, &partition)?;
        out.push((partition, validity));
    }
    Ok(out)
}

/// The documented rule for `count: auto`: the count with the smallest fuzzy hypervolume (Gath &
/// Geva 1989) — the regimes that fill the data with the least volume, whatever their shape and
/// orientation, which is what GK's adaptive norms find. Splitting a regime that is already
/// compact barely lowers the hypervolume, so any count within 5 % of the smallest hypervolume
/// loses to the smallest such count (fewer regimes are easier to validate and interpret).
pub fn choose_count(table: &[Validity]) -> Option<usize> {
    let best = table
        .iter()
        .map(|v| v.fuzzy_hypervolume)
        .fold(f64::INFINITY, f64::min);
    table
        .iter()
        .filter(|v| v.fuzzy_hypervolume <= 1.05 * best)
        .map(|v| v.count)
        .min()
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Bezdek (1981): PC = 1 for a crisp partition, 1/c for uniform memberships; PE = 0 and ln c.
    #[test]
    fn partition_coefficient_and_entropy_bounds() {
        let crisp = [1.0, 0.0, 0.0, 0.0, 1.0, 0.0, 0.0, 0.0, 1.0, 1.0, 0.0, 0.0];
        let (pc, pe) = coefficient_and_entropy(&crisp, 3);
        assert_eq!((pc, pe), (1.0, 0.0));
        let uniform = [1.0 / 3.0; 12];
        let (pc, pe) = coefficient_and_entropy(&uniform, 3);
        assert!((pc - 1.0 / 3.0).abs() < 1e-15);
        assert!((pe - 3f64.ln()).abs() < 1e-15);
    }

    /// Xie–Beni on a hand-computed example: points 0, 1 (regime A, center 0.5) and 10, 11
    /// (regime B, center 10.5), crisp memberships, m = 2. Compactness Σ μ²‖z−v‖² = 4 × 0.25 = 1;
    /// separation min ‖v_i − v_j‖² = 100; XB = 1 / (4 × 100) = 0.0025.
    #[test]
    fn xie_beni_hand_example() {
        let data = Columns::from_rows(&[0.0, 1.0, 10.0, 11.0], 1);
        let u = [1.0, 1.0, 0.0, 0.0, 0.0, 0.0, 1.0, 1.0];
        let xb = xie_beni(&data, &u, &[vec![0.5], vec![10.5]], 2.0);
        assert!((xb - 0.0025).abs() < 1e-15);
    }

    #[test]
    fn smaller_count_wins_near_ties() {
        let row = |count, fhv| Validity {
            count,
            partition_coefficient: 0.0,
            modified_partition_coefficient: 0.0,
            partition_entropy: 0.0,
            xie_beni: 0.0,
            fuzzy_hypervolume: fhv,
            partition_density: 0.0,
            average_partition_density: 0.0,
            average_within_distance: 0.0,
            objective: 0.0,
        };
        assert_eq!(
            choose_count(&[row(2, 2.0), row(3, 1.0), row(4, 0.97)]),
            Some(3)
        );
        assert_eq!(
            choose_count(&[row(2, 2.0), row(3, 1.0), row(4, 0.8)]),
            Some(4)
        );
    }
}
