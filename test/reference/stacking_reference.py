"""Reference fits of the stacker (packages/aggregator/src/ensembles/stacking.ts) on out-of-fold
predictions of a few scikit-learn models, for packages/aggregator/test/stacking-reference.test.ts.

The out-of-fold matrices are made here (cross_val_predict, 5 folds, shuffled with seed 0) and
stored as float32 values, the precision nightshift stores predictions in; both sides fit on
exactly those values. The fold of each row is stored too, so the TypeScript side can also build
the ensembles (selection curve, nested estimates) on the same matrices. Features: logit of P(positive) clipped to [1e-6, 1 - 1e-6] (binary), log of
each class probability clipped the same way (multiclass), the values (regression). The penalty
is scikit-learn's default written per row: mean loss + (1 / 2n)·||w||^2, intercepts free.

- breast cancer (test/reference/breast_cancer.csv, Wisconsin diagnostic data as shipped by
  scikit-learn): LogisticRegression(C=1.0) on the logits, fitted to tol 1e-12, gives the
  unconstrained binary stacker; scipy L-BFGS-B with w >= 0 on the same objective gives the
  non-negative one.
- Palmer penguins (vega-datasets 3.2.1 data/penguins.json, rows with all four measurements):
  the shared-weight softmax z_c = b_c + sum_m w_m log p_mc is not a LogisticRegression model, so it
  is fitted by scipy L-BFGS-B (with and without w >= 0); intercepts are compared after centring
  (a softmax is unchanged by adding one constant to every class's intercept).
- Friedman #1 (test/reference/friedman1.csv): Ridge(alpha=1.0) on the members' values, and
  scipy L-BFGS-B with w >= 0 on the same objective.

usage: /usr/bin/python3 test/reference/stacking_reference.py
writes test/reference/stacking_reference.json
"""
import csv
import json
import os

import numpy as np
import scipy
import sklearn
from scipy.optimize import minimize
from scipy.special import expit, logsumexp
from sklearn.linear_model import LogisticRegression, Ridge
from sklearn.model_selection import KFold, StratifiedKFold, cross_val_predict
from sklearn.naive_bayes import GaussianNB
from sklearn.neighbors import KNeighborsClassifier, KNeighborsRegressor
from sklearn.pipeline import make_pipeline
from sklearn.preprocessing import StandardScaler
from sklearn.tree import DecisionTreeClassifier, DecisionTreeRegressor

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(os.path.dirname(HERE))
CLIP = 1e-6


def read_csv(name):
    with open(os.path.join(HERE, name)) as f:
        rows = list(csv.reader(f))
    header, body = rows[0], np.array(rows[1:], dtype=np.float64)
    return header, body


def fold_of_rows(folds, x, y):
    out = np.zeros(len(y), dtype=int)
    for f, (_, test) in enumerate(folds.split(x, y)):
        out[test] = f
    return out.tolist()


def oof(models, x, y, folds, method):
    out = []
    for model in models:
        p = cross_val_predict(model, x, y, cv=folds, method=method)
        out.append(np.asarray(p, dtype=np.float32))
    return out


def tight_minimize(fun, x0, bounds=None):
    result = minimize(fun, x0, jac=True, method="L-BFGS-B", bounds=bounds, options={"maxiter": 100000, "maxfun": 100000, "ftol": 1e-15, "gtol": 1e-12})
    return result.x, float(result.fun)


def binary_objective(features, y):
    n, m = features.shape

    def fun(theta):
        w, b = theta[:m], theta[m]
        z = features @ w + b
        loss = np.logaddexp(0, z) - y * z
        r = expit(z) - y
        value = loss.mean() + 0.5 / n * (w @ w)
        grad = np.concatenate([features.T @ r / n + w / n, [r.mean()]])
        return value, grad

    return fun


def softmax_objective(logs, y, classes):
    # logs: members x rows x classes
    m, n, k = logs.shape
    onehot = np.eye(k)[y]

    def fun(theta):
        w, b = theta[:m], theta[m:]
        z = np.tensordot(w, logs, axes=1) + b
        lse = logsumexp(z, axis=1)
        value = (lse - z[np.arange(n), y]).mean() + 0.5 / n * (w @ w)
        r = np.exp(z - lse[:, None]) - onehot
        grad_w = np.array([(r * logs[j]).sum() for j in range(m)]) / n + w / n
        grad_b = r.mean(axis=0)
        return value, np.concatenate([grad_w, grad_b])

    return fun


def ridge_objective(values, y):
    n, m = values.shape

    def fun(theta):
        w, b = theta[:m], theta[m]
        r = values @ w + b - y
        value = 0.5 * (r @ r) / n + 0.5 / n * (w @ w)
        grad = np.concatenate([values.T @ r / n + w / n, [r.mean()]])
        return value, grad

    return fun


def breast_cancer():
    header, body = read_csv("breast_cancer.csv")
    x, y = body[:, :-1], body[:, -1].astype(int)
    folds = StratifiedKFold(5, shuffle=True, random_state=0)
    models = [
        make_pipeline(StandardScaler(), LogisticRegression(C=0.05, max_iter=5000)),
        DecisionTreeClassifier(max_depth=3, random_state=0),
        make_pipeline(StandardScaler(), KNeighborsClassifier(15)),
        GaussianNB(),
    ]
    members = [p[:, 1] for p in oof(models, x, y, folds, "predict_proba")]
    features = np.column_stack([np.log(np.clip(p.astype(np.float64), CLIP, 1 - CLIP) / (1 - np.clip(p.astype(np.float64), CLIP, 1 - CLIP))) for p in members])
    lr = LogisticRegression(C=1.0, tol=1e-12, max_iter=100000).fit(features, y)
    m = features.shape[1]
    fun = binary_objective(features, y)
    nonneg, nonneg_value = tight_minimize(fun, np.zeros(m + 1), bounds=[(0, None)] * m + [(None, None)])
    return {
        "target": y.tolist(),
        "folds": fold_of_rows(folds, x, y),
        "members": [p.astype(np.float64).tolist() for p in members],
        "free": {"weights": lr.coef_[0].tolist(), "intercepts": lr.intercept_.tolist(), "objective": float(fun(np.concatenate([lr.coef_[0], lr.intercept_]))[0])},
        "non_negative": {"weights": nonneg[:m].tolist(), "intercepts": nonneg[m:].tolist(), "objective": nonneg_value},
    }


def penguins():
    with open(os.path.join(ROOT, "node_modules", "vega-datasets", "data", "penguins.json")) as f:
        records = json.load(f)
    names = ["Beak Length (mm)", "Beak Depth (mm)", "Flipper Length (mm)", "Body Mass (g)"]
    records = [r for r in records if all(r[k] is not None for k in names)]
    species = sorted({r["Species"] for r in records})
    x = np.array([[r[k] for k in names] for r in records], dtype=np.float64)
    y = np.array([species.index(r["Species"]) for r in records])
    folds = StratifiedKFold(5, shuffle=True, random_state=0)
    models = [
        make_pipeline(StandardScaler(), LogisticRegression(C=0.01, max_iter=5000)),
        DecisionTreeClassifier(max_depth=2, random_state=0),
        GaussianNB(),
        make_pipeline(StandardScaler(), KNeighborsClassifier(25)),
    ]
    members = oof(models, x, y, folds, "predict_proba")
    logs = np.stack([np.log(np.clip(p.astype(np.float64), CLIP, 1 - CLIP)) for p in members])
    m, k = len(members), len(species)
    fun = softmax_objective(logs, y, k)
    free, free_value = tight_minimize(fun, np.zeros(m + k))
    nonneg, nonneg_value = tight_minimize(fun, np.zeros(m + k), bounds=[(0, None)] * m + [(None, None)] * k)
    centre = lambda b: (b - b.mean()).tolist()
    return {
        "labels": species,
        "target": y.tolist(),
        "folds": fold_of_rows(folds, x, y),
        "members": [p.astype(np.float64).reshape(-1).tolist() for p in members],
        "free": {"weights": free[:m].tolist(), "intercepts_centred": centre(free[m:]), "objective": free_value},
        "non_negative": {"weights": nonneg[:m].tolist(), "intercepts_centred": centre(nonneg[m:]), "objective": nonneg_value},
    }


def friedman():
    header, body = read_csv("friedman1.csv")
    x, y = body[:, :-1], body[:, -1]
    folds = KFold(5, shuffle=True, random_state=0)
    models = [
        Ridge(alpha=10.0),
        DecisionTreeRegressor(max_depth=4, random_state=0),
        KNeighborsRegressor(10),
        DecisionTreeRegressor(max_depth=2, random_state=0),
    ]
    members = oof(models, x, y, folds, "predict")
    values = np.column_stack([p.astype(np.float64) for p in members])
    ridge = Ridge(alpha=1.0, tol=1e-12).fit(values, y)
    m = values.shape[1]
    fun = ridge_objective(values, y)
    nonneg, nonneg_value = tight_minimize(fun, np.zeros(m + 1), bounds=[(0, None)] * m + [(None, None)])
    return {
        "target": y.tolist(),
        "folds": fold_of_rows(folds, x, y),
        "members": [p.astype(np.float64).tolist() for p in members],
        "free": {"weights": ridge.coef_.tolist(), "intercepts": [float(ridge.intercept_)], "objective": float(fun(np.concatenate([ridge.coef_, [ridge.intercept_]]))[0])},
        "non_negative": {"weights": nonneg[:m].tolist(), "intercepts": nonneg[m:].tolist(), "objective": nonneg_value},
    }


def main():
    out = {
        "versions": {"sklearn": sklearn.__version__, "numpy": np.__version__, "scipy": scipy.__version__},
        "clip": CLIP,
        "breast_cancer": breast_cancer(),
        "penguins": penguins(),
        "friedman1": friedman(),
    }
    with open(os.path.join(HERE, "stacking_reference.json"), "w") as f:
        json.dump(out, f)


if __name__ == "__main__":
    main()
