//! Gustafson–Kessel norm matrices with the improved covariance estimation of Babuška,
//! van der Veen & Kaymak (2002).
//!
//! 1. Shrinkage: `F ← (1 − γ) F + γ (det F₀)^(1/d) I`, with `F₀` the covariance of all the data.
//! 2. Eigenvalue-ratio cap: with `F = Φ Λ Φᵀ`, every `λ_j < λ_max / β` is raised to `λ_max / β`.
//! 3. Norm: `A = (ρ det F)^(1/d) F⁻¹` (so `det A = ρ`), used as `d² = ‖M (z − v)‖²` with
//!    `M = √κ · L⁻¹`, `κ = (ρ det F)^(1/d)` and `F = L Lᵀ` (Cholesky). `det F` comes from the
//!    Cholesky diagonal, so it neither under- nor overflows in high dimension.

use nalgebra::{DMatrix, SymmetricEigen};

use super::kernel::Norm;
use super::RegimeError;

/// Babuška et al. regularization settings.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct Regularization {
    /// Shrinkage weight γ ∈ [0, 1] toward the scaled identity.
    pub shrinkage: f64,
    /// Largest allowed eigenvalue ratio β (≥ 1).
    pub max_condition: f64,
}

/// `(det F)^(1/d)` of the covariance of all data after the eigenvalue cap: the geometric mean of
/// its eigenvalues, the scale of the shrinkage target.
pub fn global_scale(cov: &[f64], d: usize, max_condition: f64) -> f64 {
    let capped = cap_eigenvalues(&DMatrix::from_row_slice(d, d, cov), max_condition);
    let eig = SymmetricEigen::new(capped);
    let log_sum: f64 = eig
        .eigenvalues
        .iter()
        .map(|l| l.max(f64::MIN_POSITIVE).ln())
        .sum();
    (log_sum / d as f64).exp()
}

fn cap_eigenvalues(f: &DMatrix<f64>, max_condition: f64) -> DMatrix<f64> {
    let eig = SymmetricEigen::new(f.clone());
    let top = eig
        .eigenvalues
        .iter()
        .copied()
        .fold(f64::NEG_INFINITY, f64::max);
    if !(top > 0.0) {
        return f.clone();
    }
    let floor = top / max_condition;
    if eig.eigenvalues.iter().all(|&l| l >= floor) {
        return f.clone();
    }
    let lambda = eig.eigenvalues.map(|l| l.max(floor));
    let q = &eig.eigenvectors;
    let rebuilt = q * DMatrix::from_diagonal(&lambda) * q.transpose();
    // Symmetrize against rounding.
    (&rebuilt + rebuilt.transpose()) * 0.5
}

/// Applies shrinkage then the eigenvalue cap to a fuzzy covariance (row-major `d × d`).
pub fn regularize(cov: &[f64], d: usize, scale: f64, reg: Regularization) -> Vec<f64> {
    let mut f = DMatrix::from_row_slice(d, d, cov);
    if reg.shrinkage > 0.0 {
        f *= 1.0 - reg.shrinkage;
        for j in 0..d {
            f[(j, j)] += reg.shrinkage * scale;
        }
    }
    let f = cap_eigenvalues(&f, reg.max_condition);
    let mut out = vec![0.0; d * d];
    for j in 0..d {
        for l in 0..d {
            out[j * d + l] = f[(j, l)];
        }
    }
    out
}

/// The GK norm of a regime from its center and (regularized) covariance, with volume `rho`.
/// Returns the norm and `ln det F`.
pub fn gk_norm(
    center: &[f64],
    cov: &[f64],
    rho: f64,
    regime: usize,
) -> Result<(Norm, f64), RegimeError> {
    let d = center.len();
    let f = DMatrix::from_row_slice(d, d, cov);
    let chol = f
        .cholesky()
        .ok_or(RegimeError::SingularCovariance { regime })?;
    let l = chol.l();
    let log_det: f64 = 2.0 * (0..d).map(|j| l[(j, j)].ln()).sum::<f64>();
    if !log_det.is_finite() {
        return Err(RegimeError::SingularCovariance { regime });
    }
    let kappa = ((rho.ln() + log_det) / d as f64).exp();
    let l_inv = l
        .solve_lower_triangular(&DMatrix::identity(d, d))
        .ok_or(RegimeError::SingularCovariance { regime })?;
    let root = kappa.sqrt();
    let mut factor = vec![0.0; d * d];
    for j in 0..d {
        for c in 0..=j {
            factor[j * d + c] = root * l_inv[(j, c)];
        }
    }
    Ok((
        Norm {
            center: center.to_vec(),
            factor,
        },
        log_det,
    ))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn norm_matrix_has_determinant_rho() {
        // A = Mᵀ M must have det A = ρ (the GK volume constraint).
        let cov = [4.0, 1.0, 0.5, 1.0, 2.0, 0.3, 0.5, 0.3, 1.0];
        let (norm, log_det) = gk_norm(&[0.0; 3], &cov, 2.5, 0).expect("pd");
        let m = DMatrix::from_row_slice(3, 3, &norm.factor);
        let a = m.transpose() * &m;
        assert!((a.determinant() - 2.5).abs() < 1e-12);
        let det = DMatrix::from_row_slice(3, 3, &cov).determinant();
        assert!((log_det - det.ln()).abs() < 1e-12);
        // d² = κ (z−v)ᵀ F⁻¹ (z−v) with κ = (ρ det F)^(1/3).
        let z = [1.0, -0.5, 0.25];
        let finv = DMatrix::from_row_slice(3, 3, &cov)
            .try_inverse()
            .expect("inverse");
        let zv = nalgebra::DVector::from_column_slice(&z);
        let maha = (zv.transpose() * finv * &zv)[(0, 0)];
        let kappa = (2.5 * det).powf(1.0 / 3.0);
        assert!((norm.distance2(&z) - kappa * maha).abs() < 1e-12);
    }

    #[test]
    fn collinear_covariance_is_capped_not_singular() {
        // Two perfectly collinear variables: rank 1. Plain GK would fail; the cap fixes it.
        let cov = [1.0, 1.0, 1.0, 1.0];
        assert!(gk_norm(&[0.0, 0.0], &cov, 1.0, 0).is_err());
        let reg = Regularization {
            shrinkage: 0.0,
            max_condition: 1e6,
        };
        let fixed = regularize(&cov, 2, 1.0, reg);
        let eig = SymmetricEigen::new(DMatrix::from_row_slice(2, 2, &fixed));
        let (lo, hi) = (eig.eigenvalues.min(), eig.eigenvalues.max());
        assert!((hi / lo - 1e6).abs() < 1e-3, "ratio {}", hi / lo);
        assert!(gk_norm(&[0.0, 0.0], &fixed, 1.0, 0).is_ok());
    }

    #[test]
    fn shrinkage_blends_toward_scaled_identity() {
        let cov = [4.0, 0.0, 0.0, 1.0];
        let reg = Regularization {
            shrinkage: 0.5,
            max_condition: 1e15,
        };
        let out = regularize(&cov, 2, 2.0, reg);
        assert_eq!(out, vec![3.0, 0.0, 0.0, 1.5]);
        assert!((global_scale(&cov, 2, 1e15) - 2.0).abs() < 1e-12);
    }
}
