"""Side-by-side clustering speed: regimix against scikit-learn and scikit-fuzzy, one run.

For the same seeded data (N x d, c clusters) it measures, per iteration:
  - regimix Gustafson-Kessel and fuzzy c-means (both cores; builder/examples/gk_timing.rs),
  - scikit-learn GaussianMixture(covariance_type="full") EM,
  - scikit-fuzzy cmeans,
and this machine's matrix-multiply rate (numpy/OpenBLAS dgemm, 4096^3, both cores), from which
the arithmetic bound of one GK iteration, 2*N*c*(2d^2 + d) flops, is converted to seconds.

Usage:  python3 scripts/bench/compare_clustering.py [N D C]      (default 1000000 8 6)
It creates .venv-bench/ with numpy, scikit-learn, scikit-fuzzy, packaging and threadpoolctl.
"""
import json
import os
import pathlib
import subprocess
import sys
import time

sys.path.insert(0, str(pathlib.Path(__file__).resolve().parent))
import bench_env  # noqa: E402  (scripts/bench/bench_env.py)

ROOT = pathlib.Path(__file__).resolve().parents[2]
# scikit-fuzzy imports `packaging` without declaring it.
PACKAGES = ["numpy", "scikit-learn", "scikit-fuzzy", "packaging", "threadpoolctl"]


def main():
    bench_env.enter(__file__, PACKAGES, {"OMP_NUM_THREADS": "2", "OPENBLAS_NUM_THREADS": "2"})

    import numpy as np
    import sklearn
    import skfuzzy
    from sklearn.mixture import GaussianMixture
    from threadpoolctl import threadpool_info

    n, d, c = (int(a) for a in (sys.argv[1:4] if len(sys.argv) >= 4 else ("1000000", "8", "6")))
    rng = np.random.RandomState(7)
    centers = rng.uniform(-5, 5, size=(c, d))
    scales = rng.uniform(0.2, 1.5, size=(c, d))
    labels = np.arange(n) % c
    data = centers[labels] + scales[labels] * rng.normal(size=(n, d))
    path = ROOT / "target" / f"cluster-bench-{n}-{d}-{c}.f64"
    path.parent.mkdir(exist_ok=True)
    data.astype("<f8").tofile(path)

    subprocess.run(["cargo", "build", "--release", "-q", "-p", "regimix-builder", "--example", "gk_timing"], cwd=ROOT, check=True)
    ours = json.loads(
        subprocess.run(
            [str(ROOT / "target/release/examples/gk_timing"), str(path), str(n), str(d), str(c), "5"],
            check=True, capture_output=True, text=True,
        ).stdout
    )

    a = np.random.rand(4096, 4096)
    b = np.random.rand(4096, 4096)
    a @ b
    t0 = time.perf_counter()
    a @ b
    gemm_seconds = time.perf_counter() - t0
    gflops = 2 * 4096**3 / gemm_seconds / 1e9
    bound_seconds = 2 * n * c * (2 * d * d + d) / (gflops * 1e9)

    def per_iteration(fit, lo=2, hi=7):
        t0 = time.perf_counter(); fit(lo); t1 = time.perf_counter(); fit(hi); t2 = time.perf_counter()
        return ((t2 - t1) - (t1 - t0)) / (hi - lo)

    gmm = per_iteration(lambda k: GaussianMixture(c, covariance_type="full", max_iter=k, tol=0.0, n_init=1,
                                                   init_params="random_from_data", random_state=0).fit(data))
    fcm = per_iteration(lambda k: skfuzzy.cmeans(data.T, c, 2.0, error=0.0, maxiter=k, seed=0))

    blas = [f"{i.get('internal_api')} {i.get('version')} {i.get('architecture')} threads={i.get('num_threads')}"
            for i in threadpool_info()]
    print(f"data: N={n} d={d} c={c}; numpy {np.__version__}, scikit-learn {sklearn.__version__}, "
          f"scikit-fuzzy {skfuzzy.__version__}; BLAS: {'; '.join(blas)}")
    print(f"matrix multiply (dgemm 4096^3, 2 threads): {gflops:.1f} GFLOP/s")
    print(f"GK arithmetic bound 2*N*c*(2d^2+d) flops: {bound_seconds*1e3:.1f} ms/iteration")
    print(f"regimix GK:                 {ours['gk_seconds_per_iteration']*1e3:8.1f} ms/iteration "
          f"({ours['gk_seconds_per_iteration']/bound_seconds:.2f}x the bound, {ours['threads']} threads)")
    print(f"scikit-learn GMM full (EM): {gmm*1e3:8.1f} ms/iteration "
          f"-> regimix GK is {gmm/ours['gk_seconds_per_iteration']:.1f}x faster")
    print(f"regimix FCM:                {ours['fcm_seconds_per_iteration']*1e3:8.1f} ms/iteration")
    print(f"scikit-fuzzy cmeans:        {fcm*1e3:8.1f} ms/iteration "
          f"-> regimix FCM is {fcm/ours['fcm_seconds_per_iteration']:.1f}x faster")


if __name__ == "__main__":
    main()
