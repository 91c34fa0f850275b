"""Reference fit times and test average precision of scikit-learn's random forest and extra trees on
the benchmark rows written by make_hypercube.py, one thread (n_jobs=1), for bench/trees.bench.ts.

usage: /usr/bin/python3 bench/lib/sklearn_trees.py PREFIX TRAIN_ROWS TREES SEED [forest|extra_trees ...]
prints one JSON object: {"sklearn", "numpy", "trees", "seed", "train_rows", "results": [{"family", "fit_s", "fit_cpu_s", "ap", "mean_leaves"}]}
"""
import json
import sys
import time

import numpy as np
import sklearn
from sklearn.ensemble import ExtraTreesClassifier, RandomForestClassifier
from sklearn.metrics import average_precision_score

prefix = sys.argv[1]
train_rows = int(sys.argv[2])
trees = int(sys.argv[3])
seed = int(sys.argv[4])
families = sys.argv[5:] or ["forest", "extra_trees"]

x = np.fromfile(prefix + ".x.f32", dtype=np.float32).reshape(-1, 30)
y = np.fromfile(prefix + ".y.u8", dtype=np.uint8)
x_train, y_train = x[:train_rows], y[:train_rows]
x_test, y_test = x[train_rows:], y[train_rows:]

makers = {
    # Full depth, sqrt(p) features per split, bootstrap: the library defaults for classification.
    "forest": lambda: RandomForestClassifier(n_estimators=trees, max_features="sqrt", n_jobs=1, random_state=seed),
    "extra_trees": lambda: ExtraTreesClassifier(n_estimators=trees, max_features="sqrt", n_jobs=1, random_state=seed),
}
results = []
for family in families:
    model = makers[family]()
    start, cpu_start = time.perf_counter(), time.process_time()
    model.fit(x_train, y_train)
    fit_s, fit_cpu_s = time.perf_counter() - start, time.process_time() - cpu_start
    ap = average_precision_score(y_test, model.predict_proba(x_test)[:, 1])
    leaves = int(np.mean([e.tree_.n_leaves for e in model.estimators_]))
    results.append({"family": family, "fit_s": fit_s, "fit_cpu_s": fit_cpu_s, "ap": ap, "mean_leaves": leaves})
print(json.dumps({"sklearn": sklearn.__version__, "numpy": np.__version__, "trees": trees, "seed": seed,
                  "train_rows": train_rows, "results": results}))
