"""Accuracy and per-sample speed on the demo plant: the regimix blend against general-purpose
regressors from scikit-learn on the same lagged inputs and the same time split.

1. Builds the demo model (`regimix build demo-data/c301.yaml --out target/accuracy`).
2. Rebuilds the same lagged inputs in pandas from the raw exports (1-minute grid, last value held
   up to 3 minutes, analyzer dead time removed, log target), using the regressors the build
   selected (summary.json) and its train/test split (validation.csv, `period`).
3. Fits a global linear model, PLS, gradient boosting and a small MLP on the training rows and
   scores all of them on the test rows, both at the analyzer's fresh readings only (validation.csv,
   `fresh`; the export holds each reading for five minutes, and regimix fits and scores the fresh
   ones): RMSE, MAE, R² in mol %. A past output (`AI-3010(k-5)`) is treated as regimix treats it:
   fitted from the measured history (equation error), and on the test block fed back from the
   model's own estimate five minutes earlier (free run), the measured value only where a run of
   valid inputs starts.
4. Times regimix's runtime per sample (builder/examples/step_timing.rs) against a per-sample
   Python `predict` of each regressor.

Usage: python3 scripts/bench/compare_accuracy.py   (creates .venv-bench/ itself; ~5 minutes)
"""
import json
import os
import pathlib
import re
import subprocess
import sys
import time

sys.path.insert(0, str(pathlib.Path(__file__).resolve().parent))
import bench_env  # noqa: E402  (scripts/bench/bench_env.py)

ROOT = pathlib.Path(__file__).resolve().parents[2]
PACKAGES = ["numpy", "pandas", "scikit-learn"]


def main():
    bench_env.enter(__file__, PACKAGES, None)
    import numpy as np
    import pandas as pd
    import sklearn
    from sklearn.cross_decomposition import PLSRegression
    from sklearn.ensemble import HistGradientBoostingRegressor
    from sklearn.linear_model import LinearRegression
    from sklearn.neural_network import MLPRegressor
    from sklearn.pipeline import make_pipeline
    from sklearn.preprocessing import StandardScaler

    out = ROOT / "target" / "accuracy"
    subprocess.run(["cargo", "build", "--release", "-q", "-p", "regimix-builder", "--bin", "regimix", "--example", "step_timing"], cwd=ROOT, check=True)
    subprocess.run([str(ROOT / "target/release/regimix"), "build", "demo-data/c301.yaml", "--out", str(out), "--quiet"], cwd=ROOT, check=True)
    summary = json.loads((out / "summary.json").read_text())
    regressors = summary["regressors"]

    raw = pd.concat([pd.read_csv(ROOT / "demo-data" / f) for f in ("c301-export-1.csv", "c301-export-2.csv")])
    raw["time"] = pd.to_datetime(raw["time"], utc=True)
    raw = raw.drop_duplicates("time", keep="last").set_index("time").sort_index()
    raw = raw.apply(pd.to_numeric, errors="coerce")
    grid = raw.resample("1min").last().ffill(limit=3)
    target = grid["AI-3010"].shift(-10)  # analyzer dead time 10 min: process-time target
    history = np.log(target.where(target > 0))  # what a past output reads (model domain)
    features = {}
    feedback = {}  # past-output column -> lag
    for r in regressors:
        tag, lag = re.fullmatch(r"(.+)\(k-(\d+)\)", r).groups()
        if tag == "AI-3010":
            features[r] = history.shift(int(lag))
            feedback[r] = int(lag)
        else:
            features[r] = grid[tag].shift(int(lag))
    X = pd.DataFrame(features)
    validation = pd.read_csv(out / "validation.csv")
    validation["timestamp"] = pd.to_datetime(validation["timestamp"], utc=True)
    period = validation.set_index("timestamp")["period"].reindex(X.index)
    regimix_estimate = validation.set_index("timestamp")["estimate"].reindex(X.index)
    measured = validation.set_index("timestamp")["measured"].reindex(X.index)
    fresh = validation.set_index("timestamp")["fresh"].reindex(X.index).eq(1)
    ok = X.notna().all(axis=1) & target.gt(0) & fresh
    train = ok & period.eq("train")
    test = ok & period.eq("test") & measured.notna() & regimix_estimate.notna()
    y_train = np.log(target[train])
    models = {
        "global linear": make_pipeline(StandardScaler(), LinearRegression()),
        "PLS (4 components)": make_pipeline(StandardScaler(), PLSRegression(n_components=min(4, X.shape[1]))),
        "gradient boosting": HistGradientBoostingRegressor(random_state=0),
        "MLP (32, 32)": make_pipeline(StandardScaler(), MLPRegressor(hidden_layer_sizes=(32, 32), max_iter=400, random_state=0)),
    }
    y_test = measured[test].to_numpy()

    def score(estimate):
        e = estimate - y_test
        return np.sqrt(np.mean(e ** 2)), np.mean(np.abs(e)), 1 - np.sum(e ** 2) / np.sum((y_test - y_test.mean()) ** 2)

    def free_run(model):
        # Over the test block in time order: a past output is the model's own estimate `lag`
        # rows back, or the measurement where there is none (the start of a run).
        values = X.to_numpy().copy()
        columns = [list(X.columns).index(r) for r in feedback]
        lags = list(feedback.values())
        h = history.to_numpy()
        inputs_ok = X.drop(columns=list(feedback)).notna().all(axis=1).to_numpy()
        own = np.full(len(values), np.nan)
        for k in np.flatnonzero(period.eq("test").to_numpy()):
            if not inputs_ok[k]:
                continue
            row = values[k]
            for c, lag in zip(columns, lags):
                row[c] = own[k - lag] if np.isfinite(own[k - lag]) else h[k - lag]
            if np.all(np.isfinite(row)):
                own[k] = model.predict(row[None, :])[0]
        return own[test.to_numpy()]

    rows = [("regimix blend (runtime)", *score(regimix_estimate[test].to_numpy()))]
    timings = {}
    for name, model in models.items():
        model.fit(X[train].to_numpy(), y_train.to_numpy())
        if feedback:
            estimate = np.exp(np.ravel(free_run(model)))
        else:
            estimate = np.exp(np.ravel(model.predict(X[test].to_numpy())))
        rows.append((name, *score(estimate)))
        one = X[test].to_numpy()[:1]
        t0 = time.perf_counter()
        for _ in range(300):
            model.predict(one)
        timings[name] = (time.perf_counter() - t0) / 300
    ours = json.loads(subprocess.run([str(ROOT / "target/release/examples/step_timing"), str(out / "model.rgmx"), "2000000"], capture_output=True, text=True, check=True).stdout)

    print(f"demo plant test block: {int(test.sum())} samples; numpy {np.__version__}, pandas {pd.__version__}, scikit-learn {sklearn.__version__}")
    print(f"{'model':28s} {'RMSE':>8s} {'MAE':>8s} {'R2':>8s}   (mol %)")
    for name, rmse, mae, r2 in rows:
        print(f"{name:28s} {rmse:8.4f} {mae:8.4f} {r2:8.4f}")
    print(f"\nper sample: regimix runtime step {ours['ns_per_step']:.0f} ns (f64, one core)")
    for name, t in timings.items():
        print(f"  {name:26s} predict on one sample {t * 1e6:8.1f} µs -> {t * 1e9 / ours['ns_per_step']:8.0f}x slower")


if __name__ == "__main__":
    main()
