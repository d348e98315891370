"""Every side-by-side comparison in one run (about 6 minutes on the CI machine):

1. compare_clustering.py — regimix GK and FCM per iteration against scikit-learn
   GaussianMixture(full) and scikit-fuzzy cmeans on the same generated data (N = 1,000,000,
   d = 8, c = 6), with the arithmetic bound from this machine's dgemm rate;
2. compare_accuracy.py — the demo plant's test block: regimix against linear, PLS, gradient
   boosting and an MLP on the same lagged inputs, and regimix's runtime per sample against a
   per-sample Python predict.

Usage: python3 scripts/bench/compare_all.py
"""
import pathlib
import subprocess
import sys
import time

HERE = pathlib.Path(__file__).resolve().parent
start = time.time()
for script in ("compare_clustering.py", "compare_accuracy.py"):
    print(f"== {script}", flush=True)
    code = subprocess.run([sys.executable, str(HERE / script)]).returncode
    if code != 0:
        sys.exit(code)
print(f"== all comparisons in {time.time() - start:.0f} s")
