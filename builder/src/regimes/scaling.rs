//! Standardization of clustering variables (zero mean, unit variance), so that fuzzy c-means and
//! the shrinkage target treat every variable alike regardless of its engineering unit.

/// Per-variable mean and standard deviation.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Scaling {
    /// Means in engineering units.
    pub means: Vec<f64>,
    /// Standard deviations in engineering units (> 0).
    pub stds: Vec<f64>,
}

impl Scaling {
    /// Fits on row-major data (`rows × dim`); a constant variable gets std 1 (the clustering
    /// check then reports it).
    pub fn fit(rows: &[f64], dim: usize) -> Scaling {
        let n = (rows.len() / dim.max(1)).max(1) as f64;
        let mut means = vec![0.0; dim];
        for row in rows.chunks_exact(dim) {
            for (m, v) in means.iter_mut().zip(row) {
                *m += v;
            }
        }
        means.iter_mut().for_each(|m| *m /= n);
        let mut stds = vec![0.0; dim];
        for row in rows.chunks_exact(dim) {
            for j in 0..dim {
                stds[j] += (row[j] - means[j]).powi(2);
            }
        }
        for s in &mut stds {
            *s = (*s / n).sqrt();
            if !(*s > 0.0) {
                *s = 1.0;
            }
        }
        Scaling { means, stds }
    }

    /// Scales one row in place.
    pub fn apply(&self, row: &mut [f64]) {
        for ((v, m), s) in row.iter_mut().zip(&self.means).zip(&self.stds) {
            *v = (*v - m) / s;
        }
    }

    /// Engineering units of a scaled row.
    pub fn undo(&self, row: &[f64]) -> Vec<f64> {
        row.iter()
            .zip(&self.means)
            .zip(&self.stds)
            .map(|((v, m), s)| v * s + m)
            .collect()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn scales_to_zero_mean_unit_variance_and_back() {
        let rows = [1.0, 10.0, 3.0, 30.0];
        let s = Scaling::fit(&rows, 2);
        assert_eq!(s.means, vec![2.0, 20.0]);
        assert_eq!(s.stds, vec![1.0, 10.0]);
        let mut r = [3.0, 30.0];
        s.apply(&mut r);
        assert_eq!(r, [1.0, 1.0]);
        assert_eq!(s.undo(&r), vec![3.0, 30.0]);
    }
}
