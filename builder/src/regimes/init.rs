//! Seeded k-means++-style choice of initial centers (Arthur & Vassilvitskii, 2007): the first
//! center is a uniformly random row; each next one is a row drawn with probability proportional to
//! its squared distance from the nearest center chosen so far.

use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;

use super::kernel::Columns;

/// `c` initial centers from the rows of `data`, deterministic for a given `seed`.
pub fn kmeans_plus_plus(data: &Columns, c: usize, seed: u64) -> Vec<Vec<f64>> {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let n = data.len;
    let mut centers = Vec::with_capacity(c);
    if n == 0 {
        return centers;
    }
    centers.push(data.row(rng.gen_range(0..n)));
    let mut nearest = vec![f64::INFINITY; n];
    while centers.len() < c {
        let last = centers.last().cloned().unwrap_or_default();
        for (k, best) in nearest.iter_mut().enumerate() {
            let mut dist = 0.0;
            for (j, v) in last.iter().enumerate() {
                let e = data.values[j * n + k] - v;
                dist += e * e;
            }
            *best = best.min(dist);
        }
        let total: f64 = nearest.iter().sum();
        let pick = if total > 0.0 {
            let target = rng.gen::<f64>() * total;
            let mut acc = 0.0;
            nearest
                .iter()
                .position(|d| {
                    acc += d;
                    acc >= target
                })
                .unwrap_or(n - 1)
        } else {
            rng.gen_range(0..n)
        };
        centers.push(data.row(pick));
    }
    centers
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn same_seed_same_centers_and_spread_out() {
        let mut rows = Vec::new();
        for k in 0..300 {
            let base = [0.0, 10.0, 20.0][k % 3];
            rows.extend([base + (k as f64 * 0.01).sin(), base]);
        }
        let data = Columns::from_rows(&rows, 2);
        let a = kmeans_plus_plus(&data, 3, 9);
        assert_eq!(a, kmeans_plus_plus(&data, 3, 9));
        let mut groups: Vec<i64> = a.iter().map(|c| (c[1] / 10.0).round() as i64).collect();
        groups.sort();
        assert_eq!(
            groups,
            vec![0, 1, 2],
            "one seed in each well-separated group: {a:?}"
        );
    }
}
