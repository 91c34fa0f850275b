"""Fits xgboost's histogram method on a benchmark set written by make_hypercube.py, on one
thread, and prints JSON with the fit and prediction seconds (wall clock and CPU) and the test average
precision, so the TypeScript benchmark can report ratios measured on the same rows.

usage: /usr/bin/python3 bench/lib/xgboost_fit.py PREFIX [ROUNDS] [MAX_DEPTH] [ETA]
The first 80% of rows train, the last 20% are scored (the split of bench/lib/hypercube.ts).
"""
import json
import sys
import time

import numpy as np
import sklearn
import xgboost as xgb
from sklearn.metrics import average_precision_score

prefix = sys.argv[1]
rounds = int(sys.argv[2]) if len(sys.argv) > 2 else 200
max_depth = int(sys.argv[3]) if len(sys.argv) > 3 else 6
eta = float(sys.argv[4]) if len(sys.argv) > 4 else 0.1

x = np.fromfile(prefix + ".x.f32", dtype=np.float32).reshape(-1, 30)
y = np.fromfile(prefix + ".y.u8", dtype=np.uint8)
cut = int(len(y) * 0.8)
params = {
    "objective": "binary:logistic", "tree_method": "hist", "nthread": 1, "max_depth": max_depth,
    "eta": eta, "lambda": 1.0, "min_child_weight": 1.0, "max_bin": 256,
    "base_score": float(y[:cut].mean()),
}
start = time.perf_counter()
cpu_start = time.process_time()
train = xgb.DMatrix(x[:cut], label=y[:cut], nthread=1)
booster = xgb.train(params, train, num_boost_round=rounds)
fit_seconds = time.perf_counter() - start
fit_cpu_seconds = time.process_time() - cpu_start
start = time.perf_counter()
cpu_start = time.process_time()
test = xgb.DMatrix(x[cut:], nthread=1)
scores = booster.predict(test)
predict_seconds = time.perf_counter() - start
predict_cpu_seconds = time.process_time() - cpu_start
print(json.dumps({
    "fit_seconds": fit_seconds, "fit_cpu_seconds": fit_cpu_seconds,
    "predict_seconds": predict_seconds, "predict_cpu_seconds": predict_cpu_seconds, "test_rows": int(len(y) - cut),
    "average_precision": float(average_precision_score(y[cut:], scores)),
    "rounds": rounds, "max_depth": max_depth, "eta": eta,
    "xgboost": xgb.__version__, "sklearn": sklearn.__version__, "numpy": np.__version__,
}))
