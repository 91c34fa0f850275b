"""Writes the benchmark classification set shared by the TypeScript benchmarks and the
reference-library timings, so both sides fit exactly the same rows.

Design: the hypercube classification generator of Guyon (2003), "Design of experiments for the
NIPS 2003 variable selection benchmark", as implemented by scikit-learn's make_classification.

usage: /usr/bin/python3 bench/lib/make_hypercube.py ROWS OUT_PREFIX [SEED]
writes OUT_PREFIX.x.f32 (row-major float32, ROWS x 30), OUT_PREFIX.y.u8, OUT_PREFIX.json (meta)
"""
import json
import sys

import numpy as np
import sklearn
from sklearn.datasets import make_classification

rows = int(sys.argv[1])
prefix = sys.argv[2]
seed = int(sys.argv[3]) if len(sys.argv) > 3 else 0
x, y = make_classification(
    n_samples=rows, n_features=30, n_informative=12, n_redundant=6, n_repeated=0,
    n_classes=2, n_clusters_per_class=3, weights=[0.97], flip_y=0.01, class_sep=1.0,
    random_state=seed,
)
x.astype(np.float32).tofile(prefix + ".x.f32")
y.astype(np.uint8).tofile(prefix + ".y.u8")
with open(prefix + ".json", "w") as f:
    json.dump({"rows": rows, "features": 30, "positives": int(y.sum()), "seed": seed,
               "generator": "sklearn.datasets.make_classification (Guyon 2003 hypercube design)",
               "sklearn": sklearn.__version__, "numpy": np.__version__}, f)
print(f"{prefix}: {rows} rows, {int(y.sum())} positives ({y.mean():.2%})")
