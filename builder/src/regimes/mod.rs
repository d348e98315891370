//! Operating regimes: fuzzy c-means, Gustafson–Kessel clustering, validity measures and
//! possibilistic typicality.
//!
//! ## The algorithm
//! 1. Scale each clustering variable to zero mean and unit variance ([`scaling`]).
//! 2. Seed `c` centers k-means++-style from a seeded generator ([`init`]).
//! 3. Fuzzy c-means (Euclidean) until the largest membership change is below the tolerance.
//! 4. Gustafson–Kessel from that partition: each regime's fuzzy covariance, regularized
//!    (Babuška et al. 2002, [`covariance`]), defines its own distance `d² = (z−v)ᵀ A (z−v)` with
//!    `det A = ρ`; memberships `μ_ik = 1 / Σ_j (d²_ik / d²_jk)^(1/(m−1))`; repeat to convergence.
//! 5. Repeat from several seeds; keep the partition with the lowest objective `Σ μ^m d²`.
//!
//! [`validity`] scores a partition for choosing the regime count; [`typicality`] gives the
//! possibilistic typicality that tells when data leave the trained domain; [`antecedent`]
//! projects regimes onto the variables known at run time.

pub mod antecedent;
pub mod covariance;
pub mod init;
pub mod kernel;
pub mod scaling;
pub mod typicality;
pub mod validity;

use covariance::Regularization;
use kernel::{pass, Columns, Norm, Sums};

/// Why clustering could not run.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum RegimeError {
    /// Fewer than two regimes requested.
    #[error("regime count {0} must be at least 2")]
    TooFewRegimes(usize),
    /// Fuzziness m must exceed 1.
    #[error("fuzziness {0} must be greater than 1 (2 is the usual choice)")]
    Fuzziness(f64),
    /// Shrinkage outside [0, 1].
    #[error("shrinkage {0} must be between 0 and 1")]
    Shrinkage(f64),
    /// Eigenvalue-ratio cap below 1.
    #[error("max-condition {0} must be at least 1")]
    MaxCondition(f64),
    /// Volumes not positive, or the wrong count.
    #[error("regime volumes must be {expected} positive numbers")]
    Volumes {
        /// Regime count.
        expected: usize,
    },
    /// Tolerance or iteration cap unusable.
    #[error("tolerance must be positive and max-iterations at least 1")]
    Stopping,
    /// Restarts must be ≥ 1.
    #[error("restarts must be at least 1")]
    Restarts,
    /// Not enough rows for the number of regimes and variables.
    #[error("{rows} usable rows are too few for {regimes} regimes in {dims} variables: need at least {needed} (5 per regime and parameter); use fewer regimes or variables, or more data")]
    TooFewRows {
        /// Usable rows.
        rows: usize,
        /// Regimes.
        regimes: usize,
        /// Variables.
        dims: usize,
        /// Rows needed.
        needed: usize,
    },
    /// A NaN or infinite value.
    #[error("clustering data contain a non-finite value (row {row}, variable {column})")]
    NonFinite {
        /// Row index.
        row: usize,
        /// Column index.
        column: usize,
    },
    /// A variable that does not vary.
    #[error("clustering variable {column} is constant over the data: it cannot separate regimes")]
    Constant {
        /// Column index.
        column: usize,
    },
    /// A covariance that stayed singular despite regularization.
    #[error("regime {regime} collapsed to a singular covariance; use fewer regimes or raise the shrinkage")]
    SingularCovariance {
        /// Regime index.
        regime: usize,
    },
}

/// Clustering settings, checked by [`RegimeParams::check`].
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct RegimeParams {
    /// Number of regimes c.
    pub count: usize,
    /// Fuzziness m (> 1).
    pub fuzziness: f64,
    /// Babuška regularization.
    pub regularization: Regularization,
    /// Cluster volumes ρ_i (all 1 when `None`).
    pub volumes: Option<Vec<f64>>,
    /// Independent starts; the lowest objective wins.
    pub restarts: usize,
    /// Seed of the first start; start `r` uses `seed + r`.
    pub seed: u64,
    /// Iteration cap for each of the FCM and GK phases.
    pub max_iterations: usize,
    /// Stop when the largest membership change falls below this.
    pub tolerance: f64,
}

impl RegimeParams {
    /// Defaults: m = 2, γ = 0.01, β = 1e15, ρ = 1, 3 restarts, seed 1, 300 iterations, tol 1e-6.
    pub fn new(count: usize) -> Self {
        RegimeParams {
            count,
            fuzziness: 2.0,
            regularization: Regularization {
                shrinkage: 0.01,
                max_condition: 1e15,
            },
            volumes: None,
            restarts: 3,
            seed: 1,
            max_iterations: 300,
            tolerance: 1e-6,
        }
    }

    /// Checks every rule against data of `rows × dims`.
    pub fn check(&self, rows: usize, dims: usize) -> Result<(), RegimeError> {
        if self.count < 2 {
            return Err(RegimeError::TooFewRegimes(self.count));
        }
        if !(self.fuzziness > 1.0 && self.fuzziness.is_finite()) {
            return Err(RegimeError::Fuzziness(self.fuzziness));
        }
        let reg = self.regularization;
        if !(0.0..=1.0).contains(&reg.shrinkage) {
            return Err(RegimeError::Shrinkage(reg.shrinkage));
        }
        if !(reg.max_condition >= 1.0) {
            return Err(RegimeError::MaxCondition(reg.max_condition));
        }
        if let Some(v) = &self.volumes {
            if v.len() != self.count || v.iter().any(|r| !(r.is_finite() && *r > 0.0)) {
                return Err(RegimeError::Volumes {
                    expected: self.count,
                });
            }
        }
        if !(self.tolerance > 0.0) || self.max_iterations == 0 {
            return Err(RegimeError::Stopping);
        }
        if self.restarts == 0 {
            return Err(RegimeError::Restarts);
        }
        let needed = 5 * self.count * (dims + 1);
        if rows < needed {
            return Err(RegimeError::TooFewRows {
                rows,
                regimes: self.count,
                dims,
                needed,
            });
        }
        Ok(())
    }

    fn volume(&self, i: usize) -> f64 {
        self.volumes.as_ref().map_or(1.0, |v| v[i])
    }
}

/// A fuzzy partition of scaled data.
#[derive(Debug, Clone, PartialEq)]
pub struct Partition {
    /// Centers, `c` vectors of `dim`.
    pub centers: Vec<Vec<f64>>,
    /// Fuzzy covariances as used by the norms (regularized for GK), row-major `dim × dim` each.
    pub covariances: Vec<Vec<f64>>,
    /// Fuzzy covariances before regularization (what the validity measures use).
    pub fuzzy_covariances: Vec<Vec<f64>>,
    /// Distance of each regime (Euclidean for FCM, GK norm otherwise).
    pub norms: Vec<Norm>,
    /// Memberships, regime-major (`c × len`): regime `i`'s row is `[i·len, (i+1)·len)`.
    pub memberships: Vec<f64>,
    /// Objective after each iteration.
    pub objective_history: Vec<f64>,
    /// Iterations run.
    pub iterations: usize,
    /// Whether the tolerance was reached before the cap.
    pub converged: bool,
    /// Fuzziness used.
    pub fuzziness: f64,
    /// Covariance shrinkage γ the norms were built with: the configured one, or a larger one
    /// [`cluster`] stepped up to because the regimes fell onto one point.
    pub shrinkage: f64,
}

impl Partition {
    /// Number of regimes.
    pub fn count(&self) -> usize {
        self.centers.len()
    }

    /// Final objective Σ μ^m d².
    pub fn objective(&self) -> f64 {
        self.objective_history
            .last()
            .copied()
            .unwrap_or(f64::INFINITY)
    }

    /// Number of rows.
    pub fn len(&self) -> usize {
        self.memberships.len() / self.count().max(1)
    }

    /// Whether the partition has no rows.
    pub fn is_empty(&self) -> bool {
        self.memberships.is_empty()
    }

    /// Membership of row `k` in regime `i`.
    pub fn membership(&self, k: usize, i: usize) -> f64 {
        self.memberships[i * self.len() + k]
    }

    /// Memberships of row `k`.
    pub fn row(&self, k: usize) -> Vec<f64> {
        (0..self.count()).map(|i| self.membership(k, i)).collect()
    }

    /// Two regimes' centers closer than [`SAME_POINT`] (scaled units): the partition has fallen
    /// onto fewer operating points than it has regimes.
    pub fn collapsed(&self) -> bool {
        centers_collapsed(&self.centers)
    }
}

/// Two of `centers` closer than [`SAME_POINT`].
fn centers_collapsed(centers: &[Vec<f64>]) -> bool {
    centers.iter().enumerate().any(|(i, a)| {
        centers[i + 1..].iter().any(|b| {
            let d2: f64 = a.iter().zip(b).map(|(x, y)| (x - y) * (x - y)).sum();
            d2 < SAME_POINT * SAME_POINT
        })
    })
}

/// Centers closer than this (in standard deviations of the scaled data, Euclidean) are one
/// operating point: no membership can tell them apart.
pub const SAME_POINT: f64 = 0.1;

/// Shrinkages [`cluster`] steps up to when the GK regimes fall onto one point; 1 makes every
/// norm the scaled identity (fuzzy c-means' distance).
pub const SHRINKAGE_STEPS: [f64; 4] = [0.1, 0.3, 0.6, 1.0];

fn moments(sums: &[Sums], refs: &[Vec<f64>]) -> (Vec<Vec<f64>>, Vec<Vec<f64>>) {
    sums.iter()
        .zip(refs)
        .map(|(s, r)| s.mean_and_covariance(r))
        .unzip()
}

/// How fuzzy c-means starts.
#[derive(Debug, Clone, PartialEq)]
pub enum Start {
    /// From these centers.
    Centers(Vec<Vec<f64>>),
    /// From this partition (regime-major `c × len`).
    Memberships(Vec<f64>),
}

/// Fuzzy c-means (Bezdek) with the Euclidean distance.
pub fn fuzzy_c_means(
    data: &Columns,
    c: usize,
    m: f64,
    start: Start,
    tolerance: f64,
    max_iterations: usize,
) -> Partition {
    let d = data.dim;
    let mut u = vec![0.0; data.len * c];
    let (mut centers, mut covariances) = match start {
        Start::Centers(centers) => {
            let covs = vec![vec![0.0; d * d]; c];
            (centers, covs)
        }
        Start::Memberships(init) => {
            u = init;
            let refs = vec![vec![0.0; d]; c];
            let r = pass(data, &[], m, &mut u, &refs, false);
            moments(&r.sums, &refs)
        }
    };
    let mut history = Vec::new();
    let mut converged = false;
    let mut iterations = 0;
    while iterations < max_iterations {
        let norms: Vec<Norm> = centers.iter().cloned().map(Norm::euclidean).collect();
        let r = pass(data, &norms, m, &mut u, &centers, true);
        iterations += 1;
        history.push(r.objective);
        (centers, covariances) = moments(&r.sums, &centers);
        if r.max_change < tolerance {
            converged = true;
            break;
        }
    }
    Partition {
        norms: centers.iter().cloned().map(Norm::euclidean).collect(),
        centers,
        fuzzy_covariances: covariances.clone(),
        covariances,
        memberships: u,
        objective_history: history,
        iterations,
        converged,
        fuzziness: m,
        shrinkage: 1.0, // Euclidean norms: the identity
    }
}

/// The state GK iterates on: centers and unregularized fuzzy covariances from the last
/// memberships, and the memberships themselves (point-major).
#[derive(Debug, Clone, PartialEq)]
pub struct GkState {
    /// Centers.
    pub centers: Vec<Vec<f64>>,
    /// Fuzzy covariances before regularization.
    pub fuzzy_covariances: Vec<Vec<f64>>,
    /// Memberships, regime-major (`c × len`).
    pub memberships: Vec<f64>,
}

/// Regularized covariances and GK norms for the current centers and fuzzy covariances.
pub fn gk_norms(
    state: &GkState,
    params: &RegimeParams,
    global_scale: f64,
) -> Result<(Vec<Vec<f64>>, Vec<Norm>), RegimeError> {
    let d = state.centers.first().map_or(0, Vec::len);
    let mut covs = Vec::with_capacity(state.centers.len());
    let mut norms = Vec::with_capacity(state.centers.len());
    for (i, (center, raw)) in state
        .centers
        .iter()
        .zip(&state.fuzzy_covariances)
        .enumerate()
    {
        let f = covariance::regularize(raw, d, global_scale, params.regularization);
        let (norm, _) = covariance::gk_norm(center, &f, params.volume(i), i)?;
        covs.push(f);
        norms.push(norm);
    }
    Ok((covs, norms))
}

/// One Gustafson–Kessel iteration: norms from the state, then one data pass giving new
/// memberships, centers and fuzzy covariances. Returns (objective, largest membership change).
pub fn gk_step(
    data: &Columns,
    state: &mut GkState,
    params: &RegimeParams,
    global_scale: f64,
) -> Result<(f64, f64), RegimeError> {
    let (_, norms) = gk_norms(state, params, global_scale)?;
    let r = pass(
        data,
        &norms,
        params.fuzziness,
        &mut state.memberships,
        &state.centers,
        true,
    );
    (state.centers, state.fuzzy_covariances) = moments(&r.sums, &state.centers);
    Ok((r.objective, r.max_change))
}

/// Gustafson–Kessel from a starting partition (normally converged fuzzy c-means).
pub fn gustafson_kessel(
    data: &Columns,
    start: Partition,
    params: &RegimeParams,
    global_scale: f64,
) -> Result<Partition, RegimeError> {
    let mut state = GkState {
        centers: start.centers,
        fuzzy_covariances: start.fuzzy_covariances,
        memberships: start.memberships,
    };
    let mut history = Vec::new();
    let mut converged = false;
    let mut iterations = 0;
    while iterations < params.max_iterations {
        let (objective, change) = gk_step(data, &mut state, params, global_scale)?;
        iterations += 1;
        history.push(objective);
        if change < params.tolerance {
            converged = true;
            break;
        }
        // Regimes that have fallen onto one point do not come apart again (the grand mean
        // attracts them): stop, and let `cluster` try a larger shrinkage.
        if centers_collapsed(&state.centers) {
            break;
        }
    }
    let (covariances, norms) = gk_norms(&state, params, global_scale)?;
    Ok(Partition {
        centers: state.centers,
        covariances,
        fuzzy_covariances: state.fuzzy_covariances,
        norms,
        memberships: state.memberships,
        objective_history: history,
        iterations,
        converged,
        fuzziness: params.fuzziness,
        shrinkage: params.regularization.shrinkage,
    })
}

/// The shrinkage target scale `(det F₀)^(1/d)` of data (after the eigenvalue cap); also checks
/// that the data are finite and that no variable is constant.
pub fn data_scale(data: &Columns, params: &RegimeParams) -> Result<f64, RegimeError> {
    let global = check_data(data)?;
    Ok(covariance::global_scale(
        &global,
        data.dim,
        params.regularization.max_condition,
    ))
}

/// Checks the data are finite and non-constant; returns the covariance of all data.
fn check_data(data: &Columns) -> Result<Vec<f64>, RegimeError> {
    let d = data.dim;
    let n = data.len as f64;
    let mut means = vec![0.0; d];
    for j in 0..d {
        let col = data.column(j);
        if let Some(row) = col.iter().position(|v| !v.is_finite()) {
            return Err(RegimeError::NonFinite { row, column: j });
        }
        means[j] = col.iter().sum::<f64>() / n;
    }
    let mut cov = vec![0.0; d * d];
    for j in 0..d {
        for l in 0..=j {
            let (a, b) = (data.column(j), data.column(l));
            let s: f64 = a
                .iter()
                .zip(b)
                .map(|(x, y)| (x - means[j]) * (y - means[l]))
                .sum::<f64>()
                / n;
            cov[j * d + l] = s;
            cov[l * d + j] = s;
        }
        if !(cov[j * d + j] > 0.0) {
            return Err(RegimeError::Constant { column: j });
        }
    }
    Ok(cov)
}

/// Clusters scaled data: for each restart, k-means++ seeding → FCM → GK; keeps the lowest
/// objective among the partitions whose regimes stay apart. In many dimensions GK can fall onto
/// the grand mean (every regime on one point, every membership 1/c) from a fuzzy c-means start
/// that had separated the regimes: its norms whiten the data, which removes the spread that
/// keeps fuzzy c-means off that point. Then the covariance shrinkage is stepped up through
/// [`SHRINKAGE_STEPS`] (toward fuzzy c-means' distance) until the regimes stay apart; the
/// partition records the shrinkage used. If they fall together at every step, the last
/// partition is returned ([`Partition::collapsed`] tells).
pub fn cluster(data: &Columns, params: &RegimeParams) -> Result<Partition, RegimeError> {
    params.check(data.len, data.dim)?;
    let starts = fcm_starts(data, params);
    let configured = params.regularization.shrinkage;
    let steps = SHRINKAGE_STEPS.into_iter().filter(|&g| g > configured);
    let mut last = None;
    for shrinkage in std::iter::once(configured).chain(steps) {
        let mut p = params.clone();
        p.regularization.shrinkage = shrinkage;
        let part = cluster_from(data, &starts, &p)?;
        if !part.collapsed() {
            return Ok(part);
        }
        last = Some(part);
    }
    last.ok_or(RegimeError::Restarts)
}

/// The converged fuzzy c-means partition of each restart (seed `seed + r`, k-means++ centers):
/// GK's starts, the same whatever the shrinkage.
fn fcm_starts(data: &Columns, params: &RegimeParams) -> Vec<Partition> {
    (0..params.restarts)
        .map(|restart| {
            let seed = params.seed.wrapping_add(restart as u64);
            let centers = init::kmeans_plus_plus(data, params.count, seed);
            fuzzy_c_means(
                data,
                params.count,
                params.fuzziness,
                Start::Centers(centers),
                params.tolerance,
                params.max_iterations,
            )
        })
        .collect()
}

/// GK from each start at `params`' shrinkage: the lowest objective, preferring regimes that
/// stay apart.
fn cluster_from(
    data: &Columns,
    starts: &[Partition],
    params: &RegimeParams,
) -> Result<Partition, RegimeError> {
    let scale = data_scale(data, params)?;
    let mut best: Option<Partition> = None;
    for fcm in starts {
        let gk = gustafson_kessel(data, fcm.clone(), params, scale)?;
        let better = best
            .as_ref()
            .is_none_or(|b| (gk.collapsed(), gk.objective()) < (b.collapsed(), b.objective()));
        if better {
            best = Some(gk);
        }
    }
    best.ok_or(RegimeError::Restarts)
}

#[cfg(test)]
mod tests;
