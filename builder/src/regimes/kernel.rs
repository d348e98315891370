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

/// Eight rows of one variable: the unit the inner loops work on (maps onto SIMD registers).
type Lanes = [f64; 8];

#[inline(always)]
fn reduce(acc: &Lanes) -> f64 {
    ((acc[0] + acc[1]) + (acc[2] + acc[3])) + ((acc[4] + acc[5]) + (acc[6] + acc[7]))
}

/// Memberships from distances (`d2`, regime-major `c × b`) into `u`, for fuzziness `m`:
/// `μ_i = t_i / Σ_j t_j` with `t_i = (d²_min / d²_i)^(1/(m−1))`, which equals the textbook
/// `1 / Σ_j (d²_i / d²_j)^(1/(m−1))` but cannot overflow. Distances below [`MIN_DISTANCE2`] count
/// as that value, so a point on one center belongs to it and ties share equally.
#[inline(never)]
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

/// Largest number of clustering variables the pass supports.
pub const MAX_DIMENSIONS: usize = 32;

/// What one chunk contributes.
struct Partial {
    sums: Vec<Sums>,
    objective: f64,
    max_change: f64,
}

/// Read-only inputs of a pass.
struct PassInput<'a> {
    data: &'a Columns,
    norms: &'a [Norm],
    m: f64,
    references: &'a [Vec<f64>],
    update: bool,
}

/// `acc += a · b` lane-wise as a fused multiply-add: one instruction where the CPU has FMA, and
/// correctly rounded everywhere (software `fma` otherwise), so every CPU gets the same bits.
#[inline(always)]
fn lanes_fma(acc: &mut Lanes, a: &Lanes, b: &Lanes) {
    for k in 0..8 {
        acc[k] = a[k].mul_add(b[k], acc[k]);
    }
}

#[inline(always)]
fn lanes_add(acc: &mut Lanes, a: &Lanes) {
    for k in 0..8 {
        acc[k] += a[k];
    }
}

#[inline(always)]
fn lanes_minus(out: &mut Lanes, a: &Lanes, v: f64) {
    for k in 0..8 {
        out[k] = a[k] - v;
    }
}

#[inline(always)]
fn lanes_mul(out: &mut Lanes, a: &Lanes, b: &Lanes) {
    for k in 0..8 {
        out[k] = a[k] * b[k];
    }
}

/// `μ^m` lane-wise (a plain square for the usual m = 2).
#[inline(always)]
fn lanes_weight(u: &Lanes, m: f64) -> Lanes {
    let mut w = [0.0; 8];
    if m == 2.0 {
        lanes_mul(&mut w, u, u);
    } else {
        for k in 0..8 {
            w[k] = u[k].powf(m);
        }
    }
    w
}

/// One chunk of rows, in groups of eight. `D` is the dimension when `D <= 16` (loops then unroll
/// and the per-group vectors stay in registers); the `D = 32` instance serves any dimension up
/// to [`MAX_DIMENSIONS`] with runtime loop bounds. Lanes past the data carry zero weight.
#[inline(always)]
fn chunk_kernel<const D: usize>(
    input: &PassInput<'_>,
    start: usize,
    u_chunk: &mut [&mut [f64]],
) -> Partial {
    let data = input.data;
    let m = input.m;
    let d = if D <= 16 { D } else { data.dim };
    let n = data.len;
    let c = input.references.len();
    let rows = u_chunk.first().map_or(0, |r| r.len());
    // Per-regime parameters in fixed-size arrays: no bounds checks in the loops below.
    let to_array = |v: &[f64]| -> [f64; D] {
        let mut a = [0.0; D];
        a[..d].copy_from_slice(&v[..d]);
        a
    };
    let centers: Vec<[f64; D]> = input.norms.iter().map(|nm| to_array(&nm.center)).collect();
    let factors: Vec<[[f64; D]; D]> = input
        .norms
        .iter()
        .map(|nm| {
            let mut f = [[0.0; D]; D];
            for j in 0..d {
                f[j][..=j].copy_from_slice(&nm.factor[j * d..j * d + j + 1]);
            }
            f
        })
        .collect();
    let references: Vec<[f64; D]> = input.references.iter().map(|r| to_array(r)).collect();
    let mut acc_w = vec![[0.0f64; 8]; c];
    let mut acc1 = vec![[[0.0f64; 8]; D]; c];
    let mut acc2 = vec![[[[0.0f64; 8]; D]; D]; c];
    let mut objective = [0.0f64; 8];
    let mut max_change = [0.0f64; 8];
    let mut d2 = vec![[0.0f64; 8]; c];
    let mut us = vec![[0.0f64; 8]; c];
    let mut z_buf = [[[0.0f64; 8]; D]; BATCH];
    let mut us_buf = vec![[0.0f64; 8]; BATCH * c];
    let mut pending = 0usize;
    let mut g0 = 0;
    while g0 < rows {
        let valid = 8.min(rows - g0);
        let k0 = start + g0;
        let mut z = [[0.0f64; 8]; D];
        for (j, zj) in z.iter_mut().enumerate().take(d) {
            let column = &data.values[j * n + k0..j * n + k0 + valid];
            match <&[f64; 8]>::try_from(column) {
                Ok(full) => *zj = *full,
                Err(_) => zj[..valid].copy_from_slice(column),
            }
        }
        if input.update {
            for ((di, center), factor) in d2.iter_mut().zip(&centers).zip(&factors) {
                let mut diff = [[0.0f64; 8]; D];
                for j in 0..d {
                    lanes_minus(&mut diff[j], &z[j], center[j]);
                }
                let mut total = [0.0f64; 8];
                for j in 0..d {
                    let mut y = [0.0f64; 8];
                    // `0..j + 1`, not `0..=j`: inclusive ranges defeat unrolling here.
                    for l in 0..j + 1 {
                        let f = [factor[j][l]; 8];
                        lanes_fma(&mut y, &f, &diff[l]);
                    }
                    lanes_fma(&mut total, &y, &y);
                }
                *di = total;
            }
            lane_memberships(&d2, &mut us, m);
            for ((stored, ui), di) in u_chunk.iter_mut().zip(us.iter_mut()).zip(&d2) {
                let mut old = *ui; // padded lanes: no change
                match <&mut [f64; 8]>::try_from(&mut stored[g0..g0 + valid]) {
                    Ok(slot) => {
                        old = *slot;
                        *slot = *ui;
                    }
                    Err(_) => {
                        old[..valid].copy_from_slice(&stored[g0..g0 + valid]);
                        stored[g0..g0 + valid].copy_from_slice(&ui[..valid]);
                        ui[valid..].fill(0.0); // padded rows weigh nothing
                        old[valid..].fill(0.0);
                    }
                }
                for k in 0..8 {
                    max_change[k] = max_change[k].max((ui[k] - old[k]).abs());
                }
                lanes_fma(&mut objective, &lanes_weight(ui, m), di);
            }
        } else {
            for (stored, ui) in u_chunk.iter().zip(us.iter_mut()) {
                *ui = [0.0; 8];
                ui[..valid].copy_from_slice(&stored[g0..g0 + valid]);
            }
        }
        // Buffer BATCH groups, then fold them into the accumulators with one load and store of
        // each accumulator (the second moments dominate the memory traffic).
        z_buf[pending] = z;
        us_buf[pending * c..(pending + 1) * c].copy_from_slice(&us);
        pending += 1;
        if pending == BATCH || g0 + 8 >= rows {
            accumulate::<D>(
                d,
                m,
                &z_buf[..pending],
                &us_buf[..pending * c],
                &references,
                &mut acc_w,
                &mut acc1,
                &mut acc2,
            );
            pending = 0;
        }
        g0 += 8;
    }
    let sums = (0..c)
        .map(|i| {
            let mut second = vec![0.0; d * d];
            for j in 0..d {
                for l in 0..=j {
                    second[j * d + l] = reduce(&acc2[i][j][l]);
                }
            }
            Sums {
                weight: reduce(&acc_w[i]),
                first: (0..d).map(|j| reduce(&acc1[i][j])).collect(),
                second,
            }
        })
        .collect();
    Partial {
        sums,
        objective: reduce(&objective),
        max_change: max_change.iter().copied().fold(0.0, f64::max),
    }
}

/// Groups of eight rows folded into the accumulators at once.
const BATCH: usize = 4;

/// Folds up to [`BATCH`] buffered groups into the weighted sums of every regime.
#[inline(always)]
#[allow(clippy::too_many_arguments)]
fn accumulate<const D: usize>(
    d: usize,
    m: f64,
    z: &[[Lanes; D]],
    us: &[Lanes],
    references: &[[f64; D]],
    acc_w: &mut [Lanes],
    acc1: &mut [[Lanes; D]],
    acc2: &mut [[[Lanes; D]; D]],
) {
    let c = references.len();
    let groups = z.len();
    for (i, ((r, aw), (a1, a2))) in references
        .iter()
        .zip(acc_w.iter_mut())
        .zip(acc1.iter_mut().zip(acc2.iter_mut()))
        .enumerate()
    {
        let mut e = [[[0.0f64; 8]; D]; BATCH];
        let mut we = [[[0.0f64; 8]; D]; BATCH];
        for g in 0..groups {
            let w = lanes_weight(&us[g * c + i], m);
            lanes_add(aw, &w);
            for j in 0..d {
                lanes_minus(&mut e[g][j], &z[g][j], r[j]);
                lanes_mul(&mut we[g][j], &w, &e[g][j]);
                lanes_add(&mut a1[j], &we[g][j]);
            }
        }
        for j in 0..d {
            let row = &mut a2[j];
            for l in 0..j + 1 {
                let mut t = [0.0f64; 8];
                lanes_mul(&mut t, &we[0][j], &e[0][l]);
                for g in 1..groups {
                    lanes_fma(&mut t, &we[g][j], &e[g][l]);
                }
                lanes_add(&mut row[l], &t);
            }
        }
    }
}

/// Memberships of eight rows from their distances to every regime (see [`memberships`]).
#[inline(always)]
fn lane_memberships(d2: &[Lanes], u: &mut [Lanes], m: f64) {
    let mut dmin = [f64::INFINITY; 8];
    for di in d2 {
        for k in 0..8 {
            dmin[k] = dmin[k].min(di[k].max(MIN_DISTANCE2));
        }
    }
    let mut total = [0.0f64; 8];
    for (ui, di) in u.iter_mut().zip(d2) {
        for k in 0..8 {
            ui[k] = dmin[k] / di[k].max(MIN_DISTANCE2);
        }
        if m != 2.0 {
            let exponent = 1.0 / (m - 1.0);
            for k in 0..8 {
                ui[k] = ui[k].powf(exponent);
            }
        }
        lanes_add(&mut total, ui);
    }
    for ui in u.iter_mut() {
        for k in 0..8 {
            ui[k] /= total[k];
        }
    }
}

/// Runs [`chunk_kernel`] with the dimension as a compile-time constant where possible.
#[inline(always)]
fn chunk_dispatch(input: &PassInput<'_>, start: usize, u_chunk: &mut [&mut [f64]]) -> Partial {
    match input.data.dim {
        1 => chunk_kernel::<1>(input, start, u_chunk),
        2 => chunk_kernel::<2>(input, start, u_chunk),
        3 => chunk_kernel::<3>(input, start, u_chunk),
        4 => chunk_kernel::<4>(input, start, u_chunk),
        5 => chunk_kernel::<5>(input, start, u_chunk),
        6 => chunk_kernel::<6>(input, start, u_chunk),
        7 => chunk_kernel::<7>(input, start, u_chunk),
        8 => chunk_kernel::<8>(input, start, u_chunk),
        9 => chunk_kernel::<9>(input, start, u_chunk),
        10 => chunk_kernel::<10>(input, start, u_chunk),
        11 => chunk_kernel::<11>(input, start, u_chunk),
        12 => chunk_kernel::<12>(input, start, u_chunk),
        _ => chunk_kernel::<32>(input, start, u_chunk),
    }
}

/// [`chunk_dispatch`] compiled for the widest vector instructions this CPU has (AVX-512, or AVX2
/// with FMA, or the baseline). The arithmetic and its order are the same in every version (Rust
/// never fuses a multiply and an add on its own), so results are bit-identical on every CPU.
#[allow(unsafe_code)]
fn run_chunk(input: &PassInput<'_>, start: usize, u_chunk: &mut [&mut [f64]]) -> Partial {
    #[cfg(target_arch = "x86_64")]
    {
        if std::arch::is_x86_feature_detected!("avx512f")
            && std::arch::is_x86_feature_detected!("avx512vl")
            && std::arch::is_x86_feature_detected!("avx512dq")
        {
            // SAFETY: the CPU supports every feature `chunk_avx512` is compiled for (checked above).
            return unsafe { chunk_avx512(input, start, u_chunk) };
        }
        if std::arch::is_x86_feature_detected!("avx2") && std::arch::is_x86_feature_detected!("fma")
        {
            // SAFETY: the CPU supports AVX2 and FMA (checked above).
            return unsafe { chunk_avx2(input, start, u_chunk) };
        }
    }
    chunk_dispatch(input, start, u_chunk)
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx512f,avx512vl,avx512dq,avx2,fma")]
fn chunk_avx512(input: &PassInput<'_>, start: usize, u_chunk: &mut [&mut [f64]]) -> Partial {
    chunk_dispatch(input, start, u_chunk)
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2,fma")]
fn chunk_avx2(input: &PassInput<'_>, start: usize, u_chunk: &mut [&mut [f64]]) -> Partial {
    chunk_dispatch(input, start, u_chunk)
}

/// One pass. `u` holds memberships regime-major (`c × len`); with `update` it is overwritten with
/// the memberships under `norms`, otherwise it is only read. Sums are taken around `references`.
/// The data may have at most [`MAX_DIMENSIONS`] variables.
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
    let input = PassInput {
        data,
        norms,
        m,
        references,
        update,
    };
    // Cut every regime's row of memberships into the same fixed chunks of rows, then hand each
    // chunk (one slice per regime) to a worker.
    let mut chunks: Vec<Vec<&mut [f64]>> = (0..n.div_ceil(CHUNK))
        .map(|_| Vec::with_capacity(c))
        .collect();
    for regime_row in u.chunks_mut(n.max(1)).take(c) {
        for (chunk, piece) in chunks.iter_mut().zip(regime_row.chunks_mut(CHUNK)) {
            chunk.push(piece);
        }
    }
    let partials: Vec<Partial> = chunks
        .into_par_iter()
        .enumerate()
        .map(|(chunk, mut u_chunk)| run_chunk(&input, chunk * CHUNK, &mut u_chunk))
        .collect();
    let mut total: Vec<Sums> = (0..c).map(|_| Sums::zero(d)).collect();
    let mut objective = 0.0;
    let mut max_change = 0.0f64;
    for partial in &partials {
        for (t, s) in total.iter_mut().zip(&partial.sums) {
            t.add(s);
        }
        objective += partial.objective;
        max_change = max_change.max(partial.max_change);
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

#[cfg(test)]
mod pass_checks {
    use super::*;

    /// The pass's weighted moments equal a direct computation, for row counts that do and do not
    /// fill whole groups of eight, in several dimensions.
    #[test]
    fn moments_match_direct_sums() {
        for (n, d) in [(150usize, 4usize), (37, 3), (16, 8), (1003, 13)] {
            let rows: Vec<f64> = (0..n * d)
                .map(|i| ((i * 7919 + 13) % 101) as f64 / 10.0)
                .collect();
            let data = Columns::from_rows(&rows, d);
            let c = 2;
            let mut u: Vec<f64> = (0..c * n)
                .map(|i| {
                    if i < n {
                        (i % 5) as f64 / 5.0
                    } else {
                        1.0 - ((i - n) % 5) as f64 / 5.0
                    }
                })
                .collect();
            let refs = vec![vec![0.5; d], vec![-0.5; d]];
            let r = pass(&data, &[], 2.0, &mut u, &refs, false);
            for i in 0..c {
                let (mean, _) = r.sums[i].mean_and_covariance(&refs[i]);
                let w: Vec<f64> = (0..n).map(|k| u[i * n + k].powi(2)).collect();
                let total: f64 = w.iter().sum();
                for j in 0..d {
                    let direct: f64 = (0..n).map(|k| w[k] * rows[k * d + j]).sum::<f64>() / total;
                    assert!(
                        (mean[j] - direct).abs() < 1e-12,
                        "n={n} d={d} i={i} j={j}: {} vs {direct}",
                        mean[j]
                    );
                }
            }
        }
    }
}
