//! Fuzzy c-means and Gustafson–Kessel against outside references.
//!
//! - scikit-fuzzy `cmeans`: fixture `fixtures/fcm_skfuzzy.json` from
//!   `scripts/fixtures/clustering_reference.py` (library versions inside the fixture).
//! - A published worked example: fuzzy c-means on Iris with R's ppclust, m = 2, initial prototypes
//!   (4.9,2.5,4.5,1.7), (6.7,3.3,5.7,2.1), (5.0,3.2,1.2,0.2); printed output of a public R tutorial
//!   citing "Fuzzy C-Means Clustering" (rpubs.com/rahulSaha/Fuzzy-CMeansClustering).
//! - scikit-learn `GaussianMixture(covariance_type="full")`: fixture `fixtures/gk_gmm.json`.

use regimix_builder::regimes::kernel::Columns;
use regimix_builder::regimes::validity::coefficient_and_entropy;
use regimix_builder::regimes::{cluster, fuzzy_c_means, RegimeParams, Start};
use serde_json::Value;

fn matrix(v: &Value) -> Vec<Vec<f64>> {
    v.as_array()
        .expect("array")
        .iter()
        .map(|r| {
            r.as_array()
                .expect("row")
                .iter()
                .map(|x| x.as_f64().expect("number"))
                .collect()
        })
        .collect()
}

fn columns(rows: &[Vec<f64>]) -> Columns {
    let dim = rows[0].len();
    let flat: Vec<f64> = rows.iter().flatten().copied().collect();
    Columns::from_rows(&flat, dim)
}

#[test]
fn fuzzy_c_means_matches_scikit_fuzzy() {
    let fixture: Value =
        serde_json::from_str(include_str!("fixtures/fcm_skfuzzy.json")).expect("json");
    for case in fixture["cases"].as_array().expect("cases") {
        let name = case["name"].as_str().expect("name");
        let c = case["c"].as_u64().expect("c") as usize;
        let m = case["m"].as_f64().expect("m");
        let data = columns(&matrix(&case["data"]));
        // The fixture is point-major; the engine takes regime-major memberships.
        let u0_rows = matrix(&case["initial_memberships"]);
        let u0: Vec<f64> = (0..c)
            .flat_map(|i| u0_rows.iter().map(move |r| r[i]))
            .collect();
        let p = fuzzy_c_means(&data, c, m, Start::Memberships(u0), 1e-12, 20_000);
        assert!(p.converged, "{name}");
        for (i, expected) in matrix(&case["centers"]).iter().enumerate() {
            for (a, b) in p.centers[i].iter().zip(expected) {
                assert!((a - b).abs() < 1e-6, "{name} center {i}: {a} vs {b}");
            }
        }
        for (k, expected) in matrix(&case["memberships"]).iter().enumerate() {
            for (i, b) in expected.iter().enumerate() {
                let a = p.membership(k, i);
                assert!(
                    (a - b).abs() < 1e-6,
                    "{name} membership {k},{i}: {a} vs {b}"
                );
            }
        }
        let (pc, _) = coefficient_and_entropy(&p.memberships, c);
        let fpc = case["partition_coefficient"].as_f64().expect("fpc");
        assert!((pc - fpc).abs() < 1e-6, "{name} PC {pc} vs {fpc}");
    }
}

#[test]
fn fuzzy_c_means_on_iris_matches_the_published_example() {
    let fixture: Value =
        serde_json::from_str(include_str!("fixtures/fcm_skfuzzy.json")).expect("json");
    let iris = matrix(&fixture["cases"][0]["data"]);
    assert_eq!(iris.len(), 150);
    let data = columns(&iris);
    let start = vec![
        vec![4.9, 2.5, 4.5, 1.7],
        vec![6.7, 3.3, 5.7, 2.1],
        vec![5.0, 3.2, 1.2, 0.2],
    ];
    let p = fuzzy_c_means(&data, 3, 2.0, Start::Centers(start), 1e-12, 10_000);
    // Published final prototypes (printed to 6–7 significant digits).
    let published = [
        [5.888932, 2.761069, 4.363952, 1.3973150],
        [6.775011, 3.052382, 5.646782, 2.0535467],
        [5.003966, 3.414089, 1.482816, 0.2535463],
    ];
    for (center, expected) in p.centers.iter().zip(published) {
        for (a, b) in center.iter().zip(expected) {
            assert!((a - b).abs() < 1e-6, "{a} vs {b}");
        }
    }
    // Published memberships of rows 1 and 150, and Dunn's fuzziness coefficient (= PC).
    let row1 = [0.002304380, 0.001072034, 0.9966236];
    let row150 = [0.5817811, 0.3913, 0.02691888];
    for i in 0..3 {
        assert!((p.membership(0, i) - row1[i]).abs() < 1e-6);
        assert!((p.membership(149, i) - row150[i]).abs() < 1e-4);
    }
    let (pc, _) = coefficient_and_entropy(&p.memberships, 3);
    assert!((pc - 0.7833975).abs() < 1e-7, "{pc}");
}

fn unit_determinant(cov: &[f64], d: usize) -> Vec<f64> {
    let det = nalgebra::DMatrix::from_row_slice(d, d, cov).determinant();
    cov.iter().map(|v| v / det.powf(1.0 / d as f64)).collect()
}

/// Clusters about 20 standard deviations apart. (Measured while writing this test: with clusters
/// only about 6 standard deviations apart, the μ² weights of fuzzy covariances down-weight each
/// cluster's tails and GK's unit-determinant shapes differ from the maximum-likelihood ones by
/// about 11 %; that is the fuzzy estimator's nature, not an error.)
#[test]
fn gustafson_kessel_agrees_with_a_full_gaussian_mixture() {
    let fixture: Value = serde_json::from_str(include_str!("fixtures/gk_gmm.json")).expect("json");
    let data = columns(&matrix(&fixture["data"]));
    let mut params = RegimeParams::new(3);
    params.regularization.shrinkage = 0.0;
    params.tolerance = 1e-9;
    params.max_iterations = 1000;
    let p = cluster(&data, &params).expect("cluster");
    let means = matrix(&fixture["means"]);
    let covs: Vec<Vec<f64>> = fixture["covariances"]
        .as_array()
        .expect("covariances")
        .iter()
        .map(|c| matrix(c).into_iter().flatten().collect())
        .collect();
    for (mean, cov) in means.iter().zip(&covs) {
        // The GK regime whose center is nearest this mixture component.
        let (i, dist) = p
            .centers
            .iter()
            .enumerate()
            .map(|(i, c)| {
                (
                    i,
                    c.iter()
                        .zip(mean)
                        .map(|(a, b)| (a - b).powi(2))
                        .sum::<f64>()
                        .sqrt(),
                )
            })
            .min_by(|a, b| a.1.total_cmp(&b.1))
            .expect("regimes");
        let spread = nalgebra::DMatrix::from_row_slice(3, 3, cov)
            .symmetric_eigenvalues()
            .max()
            .sqrt();
        assert!(
            dist < 0.02 * spread,
            "center off by {dist}, spread {spread}"
        );
        let a = unit_determinant(&p.fuzzy_covariances[i], 3);
        let b = unit_determinant(cov, 3);
        let diff: f64 = a
            .iter()
            .zip(&b)
            .map(|(x, y)| (x - y).powi(2))
            .sum::<f64>()
            .sqrt();
        let norm: f64 = b.iter().map(|y| y * y).sum::<f64>().sqrt();
        assert!(
            diff < 0.05 * norm,
            "shape differs by {:.2} %",
            100.0 * diff / norm
        );
    }
}
