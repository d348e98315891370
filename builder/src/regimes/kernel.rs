//! The one data pass every clustering iteration makes.
//!
//! Given each regime's center `v_i` and a lower-triangular factor `M_i` of its norm matrix
//! (`A_i = M_iᵀ M_i`, so `d²_ik = ‖M_i (z_k − v_i)‖²`), the pass computes the squared distances,
//! the new fuzzy memberships, and — for the next iteration — each regime's weighted sums
//! (`Σ w`, `Σ w e`, `Σ w e eᵀ` with `w = μ^m` and `e = z − r_i` around a reference point `r_i`).
//! Fuzzy c-means is the special case `M_i = I`.
//!
//! The data are read once per iteration, column-major, in blocks small enough for the cache, so
//! the inner loops run over contiguous rows and vectorize. Rows are cut into fixed chunks processed
//! in parallel; the chunks' partial sums are added in chunk order, so the result is identical
//! for any number of threads.

use rayon::prelude::*;

/// Rows per parallel chunk (fixed, so results do not depend on the thread count).
const CHUNK: usize = 8192;
/// Rows per cache block inside a chunk.
const BLOCK: usize = 256;
/// Distances below this count as zero (a point on a center takes that regime fully).
pub const MIN_DISTANCE2: f64 = 1e-250;

/// Data for clustering: `dim` columns of `len` values each, column-major.
#[derive(Debug, Clone, PartialEq)]
pub struct Columns {
    /// Number of variables.
    pub dim: usize,
    /// Number of rows.
    pub len: usize,
    /// `dim × len` values, column after column.
    pub values: Vec<f64>,
}

impl Columns {
    /// Builds from row-major data (`len` rows of `dim` values).
    pub fn from_rows(rows: &[f64], dim: usize) -> Columns {
        let len = rows.len().checked_div(dim).unwrap_or(0);
        let mut values = vec![0.0; dim * len];
        for k in 0..len {
            for j in 0..dim {
                values[j * len + k] = rows[k * dim + j];
            }
        }
        Columns { dim, len, values }
    }

    /// Column `j`.
    pub fn column(&self, j: usize) -> &[f64] {
        &self.values[j * self.len..(j + 1) * self.len]
    }

    /// Row `k` as a vector.
    pub fn row(&self, k: usize) -> Vec<f64> {
        (0..self.dim)
            .map(|j| self.values[j * self.len + k])
            .collect()
    }
}

/// A regime's distance: center and lower-triangular factor `M` (row-major `dim × dim`).
#[derive(Debug, Clone, PartialEq)]
pub struct Norm {
    /// Center.
    pub center: Vec<f64>,
    /// Lower-triangular factor; entries above the diagonal are ignored.
    pub factor: Vec<f64>,
}

impl Norm {
    /// The Euclidean norm around `center`.
    pub fn euclidean(center: Vec<f64>) -> Norm {
        let d = center.len();
        let mut factor = vec![0.0; d * d];
        for j in 0..d {
            factor[j * d + j] = 1.0;
        }
        Norm { center, factor }
    }

    /// Squared distance of one point.
    pub fn distance2(&self, z: &[f64]) -> f64 {
        let d = self.center.len();
        let mut total = 0.0;
        for j in 0..d {
            let mut y = 0.0;
            for l in 0..=j {
                y += self.factor[j * d + l] * (z[l] - self.center[l]);
            }
            total += y * y;
        }
        total
    }
}

/// Weighted sums of one regime around its reference point.
#[derive(Debug, Clone, PartialEq)]
pub struct Sums {
    /// Σ w.
    pub weight: f64,
    /// Σ w e (length `dim`).
    pub first: Vec<f64>,
    /// Σ w e eᵀ, lower triangle row-major (`dim × dim`, upper part zero).
    pub second: Vec<f64>,
}

impl Sums {
    fn zero(d: usize) -> Sums {
        Sums {
            weight: 0.0,
            first: vec![0.0; d],
            second: vec![0.0; d * d],
        }
    }

    fn add(&mut self, other: &Sums) {
        self.weight += other.weight;
        for (a, b) in self.first.iter_mut().zip(&other.first) {
            *a += b;
        }
        for (a, b) in self.second.iter_mut().zip(&other.second) {
            *a += b;
        }
    }

    /// Weighted mean and covariance (full symmetric, row-major) implied by the sums around `reference`.
    pub fn mean_and_covariance(&self, reference: &[f64]) -> (Vec<f64>, Vec<f64>) {
        let d = reference.len();
        let w = self.weight.max(f64::MIN_POSITIVE);
        let shift: Vec<f64> = self.first.iter().map(|s| s / w).collect();
        let mean = reference.iter().zip(&shift).map(|(r, s)| r + s).collect();
        let mut cov = vec![0.0; d * d];
        for j in 0..d {
            for l in 0..=j {
                let c = self.second[j * d + l] / w - shift[j] * shift[l];
                cov[j * d + l] = c;
                cov[l * d + j] = c;
            }
        }
        (mean, cov)
    }
}

/// What a pass returns.
#[derive(Debug, Clone, PartialEq)]
pub struct PassResult {
    /// Per-regime sums of the new memberships (around the references given).
    pub sums: Vec<Sums>,
    /// Σ μ^m d² with the new memberships and the given norms.
    pub objective: f64,
    /// Largest |μ_new − μ_old|.
    pub max_change: f64,
}

/// `dot` with eight independent accumulators (vectorizes; fixed order, so deterministic).
#[inline]
fn dot(a: &[f64], b: &[f64]) -> f64 {
    let mut acc = [0.0f64; 8];
    let chunks = a.len() / 8;
    for c in 0..chunks {
        for lane in 0..8 {
            acc[lane] += a[c * 8 + lane] * b[c * 8 + lane];
        }
    }
    let mut total =
        ((acc[0] + acc[1]) + (acc[2] + acc[3])) + ((acc[4] + acc[5]) + (acc[6] + acc[7]));
    for i in chunks * 8..a.len() {
        total += a[i] * b[i];
    }
    total
}

#[inline]
fn sum(a: &[f64]) -> f64 {
    let mut acc = [0.0f64; 8];
    let chunks = a.len() / 8;
    for c in 0..chunks {
        for lane in 0..8 {
            acc[lane] += a[c * 8 + lane];
        }
    }
    let mut total =
        ((acc[0] + acc[1]) + (acc[2] + acc[3])) + ((acc[4] + acc[5]) + (acc[6] + acc[7]));
    for v in &a[chunks * 8..] {
        total += v;
    }
    total
}

/// Scratch space for one block.
struct Scratch {
    diff: Vec<f64>,  // dim × BLOCK
    y: Vec<f64>,     // BLOCK
    d2: Vec<f64>,    // c × BLOCK
    u: Vec<f64>,     // c × BLOCK
    w: Vec<f64>,     // BLOCK
    we: Vec<f64>,    // dim × BLOCK
    e: Vec<f64>,     // dim × BLOCK
    dmin: Vec<f64>,  // BLOCK
    total: Vec<f64>, // BLOCK
}

/// Memberships from distances (`d2`, regime-major `c × b`) into `u`, for fuzziness `m`:
/// `μ_i = t_i / Σ_j t_j` with `t_i = (d²_min / d²_i)^(1/(m−1))`, which equals the textbook
/// `1 / Σ_j (d²_i / d²_j)^(1/(m−1))` but cannot overflow. Distances below [`MIN_DISTANCE2`] count
/// as that value, so a point on one center belongs to it and ties share equally.
pub fn memberships(
    d2: &[f64],
    u: &mut [f64],
    c: usize,
    b: usize,
    m: f64,
    dmin: &mut [f64],
    total: &mut [f64],
) {
    let d2 = &d2[..c * b];
    dmin[..b].fill(f64::INFINITY);
    for i in 0..c {
        for (lo, v) in dmin[..b].iter_mut().zip(&d2[i * b..(i + 1) * b]) {
            *lo = lo.min(v.max(MIN_DISTANCE2));
        }
    }
    total[..b].fill(0.0);
    let exponent = 1.0 / (m - 1.0);
    for i in 0..c {
        let ui = &mut u[i * b..(i + 1) * b];
        let di = &d2[i * b..(i + 1) * b];
        if m == 2.0 {
            for k in 0..b {
                ui[k] = dmin[k] / di[k].max(MIN_DISTANCE2);
            }
        } else {
            for k in 0..b {
                ui[k] = (dmin[k] / di[k].max(MIN_DISTANCE2)).powf(exponent);
            }
        }
        for k in 0..b {
            total[k] += ui[k];
        }
    }
    for i in 0..c {
        for k in 0..b {
            u[i * b + k] /= total[k];
        }
    }
}

/// One pass. `u` holds memberships point-major (`len × c`); with `update` it is overwritten with
/// the memberships under `norms`, otherwise it is only read. Sums are taken around `references`.
pub fn pass(
    data: &Columns,
    norms: &[Norm],
    m: f64,
    u: &mut [f64],
    references: &[Vec<f64>],
    update: bool,
) -> PassResult {
    let c = references.len();
    let d = data.dim;
    let n = data.len;
    let partials: Vec<(Vec<Sums>, f64, f64)> = u
        .par_chunks_mut(CHUNK * c)
        .enumerate()
        .map(|(chunk, u_chunk)| {
            let start = chunk * CHUNK;
            let rows = u_chunk.len() / c.max(1);
            let mut sums: Vec<Sums> = (0..c).map(|_| Sums::zero(d)).collect();
            let mut objective = 0.0;
            let mut max_change = 0.0f64;
            let mut s = Scratch {
                diff: vec![0.0; d * BLOCK],
                y: vec![0.0; BLOCK],
                d2: vec![0.0; c * BLOCK],
                u: vec![0.0; c * BLOCK],
                w: vec![0.0; BLOCK],
                we: vec![0.0; d * BLOCK],
                e: vec![0.0; d * BLOCK],
                dmin: vec![0.0; BLOCK],
                total: vec![0.0; BLOCK],
            };
            let mut b0 = 0;
            while b0 < rows {
                let b = BLOCK.min(rows - b0);
                let k0 = start + b0;
                if update {
                    for (i, norm) in norms.iter().enumerate() {
                        for j in 0..d {
                            let z = &data.values[j * n + k0..j * n + k0 + b];
                            let v = norm.center[j];
                            for (out, zk) in s.diff[j * BLOCK..j * BLOCK + b].iter_mut().zip(z) {
                                *out = zk - v;
                            }
                        }
                        let d2 = &mut s.d2[i * b..(i + 1) * b];
                        d2.fill(0.0);
                        for j in 0..d {
                            let y = &mut s.y[..b];
                            y.fill(0.0);
                            for l in 0..=j {
                                let f = norm.factor[j * d + l];
                                if f == 0.0 {
                                    continue;
                                }
                                for (yk, dk) in y.iter_mut().zip(&s.diff[l * BLOCK..l * BLOCK + b])
                                {
                                    *yk += f * dk;
                                }
                            }
                            for (acc, yk) in d2.iter_mut().zip(y.iter()) {
                                *acc += yk * yk;
                            }
                        }
                    }
                    memberships(&s.d2, &mut s.u, c, b, m, &mut s.dmin, &mut s.total);
                    for i in 0..c {
                        for k in 0..b {
                            let row = b0 + k;
                            let new = s.u[i * b + k];
                            let old = u_chunk[row * c + i];
                            max_change = max_change.max((new - old).abs());
                            u_chunk[row * c + i] = new;
                        }
                        // Objective with the new memberships: Σ μ^m d².
                        let ui = &s.u[i * b..(i + 1) * b];
                        let wi = &mut s.w[..b];
                        for (wk, uk) in wi.iter_mut().zip(ui) {
                            *wk = if m == 2.0 { uk * uk } else { uk.powf(m) };
                        }
                        objective += dot(wi, &s.d2[i * b..(i + 1) * b]);
                    }
                } else {
                    for i in 0..c {
                        for k in 0..b {
                            s.u[i * b + k] = u_chunk[(b0 + k) * c + i];
                        }
                    }
                }
                for (i, sum_i) in sums.iter_mut().enumerate() {
                    let ui = &s.u[i * b..(i + 1) * b];
                    let wi = &mut s.w[..b];
                    for (wk, uk) in wi.iter_mut().zip(ui) {
                        *wk = if m == 2.0 { uk * uk } else { uk.powf(m) };
                    }
                    let r = &references[i];
                    for j in 0..d {
                        let z = &data.values[j * n + k0..j * n + k0 + b];
                        let e = &mut s.e[j * BLOCK..j * BLOCK + b];
                        for (ek, zk) in e.iter_mut().zip(z) {
                            *ek = zk - r[j];
                        }
                        let we = &mut s.we[j * BLOCK..j * BLOCK + b];
                        for ((o, ek), wk) in we.iter_mut().zip(e.iter()).zip(wi.iter()) {
                            *o = wk * ek;
                        }
                    }
                    sum_i.weight += sum(wi);
                    for j in 0..d {
                        let we_j = &s.we[j * BLOCK..j * BLOCK + b];
                        sum_i.first[j] += sum(we_j);
                        for l in 0..=j {
                            sum_i.second[j * d + l] += dot(we_j, &s.e[l * BLOCK..l * BLOCK + b]);
                        }
                    }
                }
                b0 += b;
            }
            (sums, objective, max_change)
        })
        .collect();
    let mut total: Vec<Sums> = (0..c).map(|_| Sums::zero(d)).collect();
    let mut objective = 0.0;
    let mut max_change = 0.0f64;
    for (sums, obj, change) in &partials {
        for (t, s) in total.iter_mut().zip(sums) {
            t.add(s);
        }
        objective += obj;
        max_change = max_change.max(*change);
    }
    PassResult {
        sums: total,
        objective,
        max_change,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn memberships_follow_the_fcm_formula() {
        // Two regimes, one point at squared distances 1 and 4 (m = 2): μ = (1/1)/(1/1 + 1/4) = 0.8.
        let d2 = vec![1.0, 4.0];
        let mut u = vec![0.0; 2];
        let (mut a, mut b) = (vec![0.0; 1], vec![0.0; 1]);
        memberships(&d2, &mut u, 2, 1, 2.0, &mut a, &mut b);
        assert!((u[0] - 0.8).abs() < 1e-15 && (u[1] - 0.2).abs() < 1e-15);
        // m = 3: exponent 1/2: (1/1)^(1/2) / (1 + (1/4)^(1/2)) = 2/3.
        memberships(&d2, &mut u, 2, 1, 3.0, &mut a, &mut b);
        assert!((u[0] - 2.0 / 3.0).abs() < 1e-15);
    }

    #[test]
    fn a_point_on_a_center_belongs_to_it() {
        let d2 = vec![0.0, 4.0, 0.0];
        let mut u = vec![0.0; 3];
        let (mut a, mut b) = (vec![0.0; 1], vec![0.0; 1]);
        memberships(&d2, &mut u, 3, 1, 2.0, &mut a, &mut b);
        assert!((u[0] - 0.5).abs() < 1e-12 && u[1] < 1e-200 && (u[2] - 0.5).abs() < 1e-12);
    }

    #[test]
    fn sums_give_weighted_mean_and_covariance() {
        // Points 0, 2, 4 on one axis with full membership: mean 2, variance 8/3.
        let data = Columns::from_rows(&[0.0, 2.0, 4.0], 1);
        let mut u = vec![1.0; 3];
        let r = pass(&data, &[], 2.0, &mut u, &[vec![1.0]], false);
        let (mean, cov) = r.sums[0].mean_and_covariance(&[1.0]);
        assert!((mean[0] - 2.0).abs() < 1e-15);
        assert!((cov[0] - 8.0 / 3.0).abs() < 1e-15);
    }

    #[test]
    fn result_does_not_depend_on_thread_count() {
        let n = 3 * CHUNK + 517;
        let rows: Vec<f64> = (0..n * 2)
            .map(|i| ((i * 7919) % 1000) as f64 / 100.0)
            .collect();
        let data = Columns::from_rows(&rows, 2);
        let norms = vec![
            Norm::euclidean(vec![2.0, 3.0]),
            Norm::euclidean(vec![7.0, 6.0]),
        ];
        let refs = vec![vec![2.0, 3.0], vec![7.0, 6.0]];
        let run = |threads: usize| {
            let pool = rayon::ThreadPoolBuilder::new()
                .num_threads(threads)
                .build()
                .expect("pool");
            let mut u = vec![0.5; n * 2];
            pool.install(|| pass(&data, &norms, 2.0, &mut u, &refs, true))
        };
        assert_eq!(run(1), run(3));
    }
}
