"""The whole-run benchmark's peer: the same protocol as dendrolog's one-cell recipe, written the
usual way with scikit-learn (Debian's python3-sklearn and python3-pandas).

Reads the CSV that whole-run-bench writes (x1..x10, y, t), holds out the rows with t >= cutoff,
and times each phase: 5-fold cross_val_predict, the final fit, holdout metrics with 1,000
bootstrap resamples, permutation_importance with 10 repeats on the holdout rows, and
partial_dependence of the 3 most important predictors on 500 training rows over 20 grid points.
Prints one JSON object with the seconds per phase and the holdout R².

Run: python3 test/bench/sklearn_protocol.py data.csv cutoff
"""
import json
import sys
import time

import numpy as np
import pandas as pd
from sklearn.ensemble import RandomForestRegressor
from sklearn.inspection import partial_dependence, permutation_importance
from sklearn.metrics import mean_squared_error, r2_score
from sklearn.model_selection import KFold, cross_val_predict


def main(path, cutoff):
    t0 = time.perf_counter()
    data = pd.read_csv(path)
    names = [f"x{i}" for i in range(1, 11)]
    train = data[data.t < cutoff]
    test = data[data.t >= cutoff]
    x, y = train[names].to_numpy(), train.y.to_numpy()
    xt, yt = test[names].to_numpy(), test.y.to_numpy()
    phases = {"read": time.perf_counter() - t0}

    def forest():
        return RandomForestRegressor(n_estimators=100, max_features=3, min_samples_leaf=3, n_jobs=2, random_state=1)

    t = time.perf_counter()
    cv = cross_val_predict(forest(), x, y, cv=KFold(5, shuffle=True, random_state=1), n_jobs=1)
    phases["cv"] = time.perf_counter() - t
    t = time.perf_counter()
    model = forest().fit(x, y)
    phases["fit"] = time.perf_counter() - t
    t = time.perf_counter()
    p = model.predict(xt)
    rng = np.random.default_rng(1)
    boot = []
    for _ in range(1000):
        i = rng.integers(0, len(yt), len(yt))
        boot.append((r2_score(yt[i], p[i]), mean_squared_error(yt[i], p[i]) ** 0.5))
    interval = np.percentile(np.array(boot), [5, 95], axis=0)
    phases["score"] = time.perf_counter() - t
    t = time.perf_counter()
    imp = permutation_importance(model, xt, yt, n_repeats=10, random_state=1, n_jobs=2, scoring="neg_mean_squared_error")
    top = np.argsort(-imp.importances_mean)[:3]
    sample = x[rng.choice(len(x), 500, replace=False)]
    for j in top:
        partial_dependence(model, sample, [int(j)], grid_resolution=20, kind="average")
    phases["explain"] = time.perf_counter() - t
    phases["total"] = time.perf_counter() - t0
    print(json.dumps({"phases": phases, "r2": r2_score(yt, p), "cv_r2": r2_score(y, cv), "interval": interval.tolist()}))


if __name__ == "__main__":
    main(sys.argv[1], float(sys.argv[2]))
