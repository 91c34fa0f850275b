"""Reference timings for bench/linear-knn.bench.ts: scikit-learn's LogisticRegression (lbfgs) and
KNeighborsClassifier (brute force) on the shared hypercube set, one thread.

usage: OMP_NUM_THREADS=1 OPENBLAS_NUM_THREADS=1 /usr/bin/python3 bench/lib/sklearn_linear_knn.py PREFIX L2 K [REPEATS]
reads PREFIX.x.f32 / PREFIX.y.u8 (first 80% of rows train, the rest are predicted, as the TS side);
prints one JSON object with seconds, iterations and test average precision.
"""
import json
import sys
import time

import numpy as np
import scipy
import sklearn
from sklearn.linear_model import LogisticRegression
from sklearn.metrics import average_precision_score
from sklearn.neighbors import KNeighborsClassifier
from sklearn.pipeline import make_pipeline
from sklearn.preprocessing import StandardScaler

prefix, l2, k = sys.argv[1], float(sys.argv[2]), int(sys.argv[3])
repeats = int(sys.argv[4]) if len(sys.argv) > 4 else 3
x = np.fromfile(prefix + ".x.f32", dtype=np.float32).reshape(-1, 30).astype(np.float64)
y = np.fromfile(prefix + ".y.u8", dtype=np.uint8)
cut = int(len(y) * 0.8)
x_train, y_train, x_test, y_test = x[:cut], y[:cut], x[cut:], y[cut:]


def best_of(fn, n):
    """Best wall-clock and best process CPU seconds over n runs, and the last result."""
    best_wall, best_cpu, result = float("inf"), float("inf"), None
    for _ in range(n):
        wall, cpu = time.perf_counter(), time.process_time()
        result = fn()
        best_cpu = min(best_cpu, time.process_time() - cpu)
        best_wall = min(best_wall, time.perf_counter() - wall)
    return (best_wall, best_cpu), result


# Our objective is (summed log loss + l2/2 ||w||^2) / n; scikit-learn's is summed log loss + ||w||^2 / (2C).
c = 1.0 / l2
logistic_s, logistic = best_of(lambda: make_pipeline(StandardScaler(), LogisticRegression(C=c, solver="lbfgs", max_iter=500)).fit(x_train, y_train), repeats)
logistic_ap = average_precision_score(y_test, logistic.predict_proba(x_test)[:, 1])

knn = make_pipeline(StandardScaler(), KNeighborsClassifier(n_neighbors=k, algorithm="brute")).fit(x_train, y_train)
knn_s, knn_proba = best_of(lambda: knn.predict_proba(x_test), 1)
knn_ap = average_precision_score(y_test, knn_proba[:, 1])

print(json.dumps({
    "logistic": {"fit_s": logistic_s[0], "fit_cpu_s": logistic_s[1], "iterations": int(logistic[-1].n_iter_[0]), "test_ap": logistic_ap},
    "knn": {"predict_s": knn_s[0], "predict_cpu_s": knn_s[1], "test_ap": knn_ap},
    "versions": {"sklearn": sklearn.__version__, "numpy": np.__version__, "scipy": scipy.__version__},
}))
