"""Reference scores for the `boosted` family: xgboost's histogram method (Chen & Guestrin 2016)
fitted fold by fold on two small deterministic sets, with settings matching the TypeScript test
(test in packages/learners/test/boosted-reference.test.ts).

Data written next to this script, so both sides read the same rows:
- breast_cancer.csv: the Wisconsin diagnostic breast cancer data (Street, Wolberg & Mangasarian
  1993; UCI) as shipped by scikit-learn (its CSV's first line holds the counts and the class
  names, not column names), rewritten as x0..x29 and y (0 = malignant, 1 = benign).
- friedman1.csv: Friedman #1 regression design (Friedman 1991, "Multivariate adaptive regression
  splines"), sklearn.datasets.make_friedman1(600 rows, 10 features, noise 1, seed 0).

Folds: stratified 5-fold for the classification set, 5-fold for the regression set, both shuffled
with seed 0; the assignment is stored in the JSON. Per fold: fit on the other folds, score the fold
(average precision of P(benign); RMSE).

usage: /usr/bin/python3 test/reference/boosted_reference.py
writes test/reference/boosted_reference.json (+ the two CSV files)
"""
import csv
import json
import os

import numpy as np
import sklearn
import xgboost as xgb
from sklearn.datasets import make_friedman1
from sklearn.metrics import average_precision_score, mean_squared_error
from sklearn.model_selection import KFold, StratifiedKFold

HERE = os.path.dirname(os.path.abspath(__file__))
SKLEARN_CSV = "/usr/lib/python3/dist-packages/sklearn/datasets/data/breast_cancer.csv"

# The same settings on both sides: depth-3 trees (8 leaves), 50 rounds, shrinkage 0.1, λ = 1,
# min hessian per child 1, up to 255 bins, F_0 = training prior / mean, one thread.
ROUNDS = 50
SETTINGS = {"max_depth": 3, "eta": 0.1, "lambda": 1.0, "min_child_weight": 1.0, "max_bin": 255,
            "tree_method": "hist", "nthread": 1, "seed": 0}
OURS = {"rounds": ROUNDS, "learning_rate": 0.1, "depth": 3, "leaves": 8, "l2": 1, "min_hessian": 1,
        "min_leaf": 1, "bins": 255}


def write_csv(path, x, y):
    with open(path, "w", newline="") as f:
        out = csv.writer(f, lineterminator="\n")
        out.writerow([f"x{j}" for j in range(x.shape[1])] + ["y"])
        for row, target in zip(x, y):
            out.writerow([repr(float(v)) for v in row] + [repr(float(target)) if isinstance(target, float) else int(target)])


def breast_cancer():
    with open(SKLEARN_CSV) as f:
        rows = list(csv.reader(f))
    n, p = int(rows[0][0]), int(rows[0][1])
    data = np.array(rows[1:1 + n], dtype=np.float64)
    return data[:, :p], data[:, p].astype(np.int64)


def main():
    x_c, y_c = breast_cancer()
    write_csv(os.path.join(HERE, "breast_cancer.csv"), x_c, y_c)
    folds_c = np.zeros(len(y_c), dtype=np.int64)
    for k, (_, test) in enumerate(StratifiedKFold(5, shuffle=True, random_state=0).split(x_c, y_c)):
        folds_c[test] = k

    x_r, y_r = make_friedman1(n_samples=600, n_features=10, noise=1.0, random_state=0)
    # Round-trip through the CSV text so both sides fit exactly the same numbers.
    write_csv(os.path.join(HERE, "friedman1.csv"), x_r, [float(v) for v in y_r])
    folds_r = np.zeros(len(y_r), dtype=np.int64)
    for k, (_, test) in enumerate(KFold(5, shuffle=True, random_state=0).split(x_r)):
        folds_r[test] = k

    ap = []
    for k in range(5):
        train, test = folds_c != k, folds_c == k
        params = dict(SETTINGS, objective="binary:logistic", base_score=float(y_c[train].mean()))
        booster = xgb.train(params, xgb.DMatrix(x_c[train], label=y_c[train]), num_boost_round=ROUNDS)
        ap.append(float(average_precision_score(y_c[test], booster.predict(xgb.DMatrix(x_c[test])))))

    rmse = []
    for k in range(5):
        train, test = folds_r != k, folds_r == k
        params = dict(SETTINGS, objective="reg:squarederror", base_score=float(y_r[train].mean()))
        booster = xgb.train(params, xgb.DMatrix(x_r[train], label=y_r[train]), num_boost_round=ROUNDS)
        predicted = booster.predict(xgb.DMatrix(x_r[test]))
        rmse.append(float(np.sqrt(mean_squared_error(y_r[test], predicted))))

    result = {
        "generated_by": "test/reference/boosted_reference.py",
        "versions": {"xgboost": xgb.__version__, "sklearn": sklearn.__version__, "numpy": np.__version__},
        "xgboost_settings": dict(SETTINGS, num_boost_round=ROUNDS, base_score="training prior / mean of each fold"),
        "boosted_params": OURS,
        "classification": {"data": "breast_cancer.csv", "folds": folds_c.tolist(), "average_precision": ap},
        "regression": {"data": "friedman1.csv", "folds": folds_r.tolist(), "rmse": rmse},
    }
    with open(os.path.join(HERE, "boosted_reference.json"), "w") as f:
        json.dump(result, f, indent=1)
        f.write("\n")
    print("AP per fold", [round(v, 4) for v in ap], "RMSE per fold", [round(v, 4) for v in rmse])


if __name__ == "__main__":
    main()
