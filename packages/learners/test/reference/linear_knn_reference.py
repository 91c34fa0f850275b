"""Reference values for the logistic and knn families, computed with scikit-learn.

usage: /usr/bin/python3 packages/learners/test/reference/linear_knn_reference.py

Writes, next to this script:
- breast_cancer.csv, wine.csv: copies of the data files shipped with scikit-learn (Wolberg et al.
  1995, Wisconsin Diagnostic Breast Cancer; Forina et al., UCI Wine), lines copied verbatim with a
  plain header, so both sides parse the same decimal text;
- friedman1.csv: sklearn.datasets.make_friedman1 (Friedman 1991), 200 rows, seed 0, written with
  shortest round-trip decimals;
- linear_knn_reference.json: a fixed 5-fold assignment of each set and, per fold, what
  StandardScaler + LogisticRegression (lbfgs), KNeighborsClassifier (brute force) and Ridge fitted
  on the other folds give: coefficients, intercepts, held-out probabilities / predictions,
  average precision and RMSE, with the library versions.

Our `l2` maps to C = 1 / l2 of LogisticRegression and alpha = l2 of Ridge (both on standardised
features; see packages/learners/src/linear/params.ts).
"""
import json
import os
import sys

import numpy as np
import scipy
import sklearn
from sklearn.datasets import make_friedman1
from sklearn.linear_model import LogisticRegression, Ridge
from sklearn.metrics import average_precision_score
from sklearn.model_selection import KFold, StratifiedKFold
from sklearn.neighbors import KNeighborsClassifier
from sklearn.preprocessing import StandardScaler

here = os.path.dirname(os.path.abspath(__file__))
data_dir = os.path.join(os.path.dirname(sklearn.__file__), "datasets", "data")


def copy_shipped(source, target, prefix):
    """scikit-learn's files start with 'rows,features,label names...'; replace it with a plain header."""
    with open(os.path.join(data_dir, source)) as f:
        lines = f.read().splitlines()
    features = int(lines[0].split(",")[1])
    header = ",".join([f"{prefix}{j}" for j in range(features)] + ["target"])
    with open(os.path.join(here, target), "w") as f:
        f.write("\n".join([header] + lines[1:]) + "\n")


def read_csv(name):
    table = np.loadtxt(os.path.join(here, name), delimiter=",", skiprows=1)
    return table[:, :-1], table[:, -1]


copy_shipped("breast_cancer.csv", "breast_cancer.csv", "x")
copy_shipped("wine_data.csv", "wine.csv", "x")
fx, fy = make_friedman1(n_samples=200, n_features=10, noise=1.0, random_state=0)
with open(os.path.join(here, "friedman1.csv"), "w") as f:
    f.write(",".join([f"x{j}" for j in range(10)] + ["target"]) + "\n")
    for row, target in zip(fx, fy):
        f.write(",".join(repr(float(v)) for v in list(row) + [target]) + "\n")

cancer_x, cancer_y = read_csv("breast_cancer.csv")
cancer_y = cancer_y.astype(int)
wine_x, wine_y = read_csv("wine.csv")
wine_y = wine_y.astype(int)
friedman_x, friedman_y = read_csv("friedman1.csv")


def fold_ids(splitter, x, y):
    folds = np.zeros(len(x), dtype=int)
    for f, (_, test) in enumerate(splitter.split(x, y)):
        folds[test] = f
    return folds


cancer_folds = fold_ids(StratifiedKFold(5, shuffle=True, random_state=0), cancer_x, cancer_y)
wine_folds = fold_ids(StratifiedKFold(5, shuffle=True, random_state=0), wine_x, wine_y)
friedman_folds = fold_ids(KFold(5, shuffle=True, random_state=0), friedman_x, friedman_y)


def split(x, y, folds, f):
    train, test = folds != f, folds == f
    scaler = StandardScaler().fit(x[train])
    return scaler.transform(x[train]), y[train], scaler.transform(x[test]), y[test]


def logistic_cases(x, y, folds, settings):
    out = []
    for l2, class_weight in settings:
        for f in range(5):
            xtr, ytr, xte, yte = split(x, y, folds, f)
            model = LogisticRegression(C=1.0 / l2, solver="lbfgs", tol=1e-12, max_iter=100_000, class_weight=class_weight).fit(xtr, ytr)
            # lbfgs (scipy's L-BFGS-B) also stops on a relative decrease of the objective (ftol
            # 2.2e-9), which LogisticRegression does not expose, so its coefficients are only close to
            # the optimum; the same convex problem solved by Newton-CG shows how close.
            check = LogisticRegression(C=1.0 / l2, solver="newton-cg", tol=1e-9, max_iter=200, class_weight=class_weight).fit(xtr, ytr)
            proba = model.predict_proba(xte)
            case = {
                "l2": l2,
                "class_weight": class_weight or "none",
                "fold": f,
                "coef": model.coef_.tolist(),
                "intercept": model.intercept_.tolist(),
                "iterations": int(model.n_iter_[0]),
                "lbfgs_vs_newton_cg_max_coef_difference": float(np.max(np.abs(model.coef_ - check.coef_))),
                "newton_cg": {"coef": check.coef_.tolist(), "intercept": check.intercept_.tolist(), "test_proba": check.predict_proba(xte).tolist()},
                "test_proba": proba.tolist(),
            }
            if proba.shape[1] == 2:
                case["test_ap"] = float(average_precision_score(yte, proba[:, 1]))
            out.append(case)
    return out


def knn_cases(x, y, folds):
    out = []
    for weights in ["uniform", "distance"]:
        for f in range(5):
            xtr, ytr, xte, yte = split(x, y, folds, f)
            proba = KNeighborsClassifier(n_neighbors=15, weights=weights, algorithm="brute").fit(xtr, ytr).predict_proba(xte)
            out.append({"k": 15, "weights": weights, "fold": f, "test_proba": proba.tolist(), "test_ap": float(average_precision_score(yte, proba[:, 1]))})
    return out


def ridge_cases(x, y, folds):
    out = []
    for l2 in [1.0, 10.0]:
        for f in range(5):
            xtr, ytr, xte, yte = split(x, y, folds, f)
            model = Ridge(alpha=l2).fit(xtr, ytr)
            predicted = model.predict(xte)
            out.append({
                "l2": l2,
                "fold": f,
                "coef": model.coef_.tolist(),
                "intercept": float(model.intercept_),
                "test_predictions": predicted.tolist(),
                "test_rmse": float(np.sqrt(np.mean((predicted - yte) ** 2))),
            })
    return out


result = {
    "generated_by": "packages/learners/test/reference/linear_knn_reference.py",
    "versions": {"python": sys.version.split()[0], "sklearn": sklearn.__version__, "numpy": np.__version__, "scipy": scipy.__version__},
    "data": {
        "breast_cancer": {"file": "breast_cancer.csv", "folds": cancer_folds.tolist(), "splitter": "StratifiedKFold(5, shuffle=True, random_state=0)"},
        "wine": {"file": "wine.csv", "folds": wine_folds.tolist(), "splitter": "StratifiedKFold(5, shuffle=True, random_state=0)"},
        "friedman1": {"file": "friedman1.csv", "folds": friedman_folds.tolist(), "splitter": "KFold(5, shuffle=True, random_state=0)"},
    },
    "logistic_breast_cancer": logistic_cases(cancer_x, cancer_y, cancer_folds, [(1.0, None), (0.1, None), (1.0, "balanced")]),
    "softmax_wine": logistic_cases(wine_x, wine_y, wine_folds, [(1.0, None), (3.0, "balanced")]),
    "knn_breast_cancer": knn_cases(cancer_x, cancer_y, cancer_folds),
    "ridge_friedman1": ridge_cases(friedman_x, friedman_y, friedman_folds),
}
with open(os.path.join(here, "linear_knn_reference.json"), "w") as f:
    json.dump(result, f, indent=1)
print("wrote linear_knn_reference.json; lbfgs vs newton-cg max coefficient difference:",
      max(c["lbfgs_vs_newton_cg_max_coef_difference"] for c in result["logistic_breast_cancer"] + result["softmax_wine"]))
