#!/usr/bin/python3
"""Reference values for nightshift's metrics and statistics, computed with Debian's scikit-learn/scipy.

Run with Debian's interpreter (it has python3-sklearn and python3-scipy):

    /usr/bin/python3 test/reference/metrics_reference.py

Writes test/reference/metrics_reference.json next to this file. The inputs are seeded random
cases with many tied scores (rounded to one or two decimals), small and large, balanced and
imbalanced, binary, multiclass (3-5 classes) and regression. Every value is computed by
scikit-learn 1.2.1 except where the entry's name says otherwise:
  - multiclass Brier: scikit-learn 1.2.1 has only the binary form, so the multiclass value is
    NumPy evaluating the definition of scikit-learn >= 1.7 (mean over rows of the squared
    distance between the one-hot row and the probability row, summed over classes, not halved);
  - multiclass average precision: label_binarize + average_precision_score(average="macro"),
    which is what scikit-learn >= 1.3 does for multiclass input;
  - expected calibration error: NumPy on the bins of calibration_curve (count-weighted mean gap);
  - Student t and incomplete beta values: scipy.stats.t / scipy.special.betainc;
  - corrected resampled t-test (Nadeau & Bengio 2003): NumPy for the statistic, scipy for p.
"""
import json
import os
import platform
import warnings

import numpy as np
import scipy
import scipy.special
import scipy.stats
import sklearn
from sklearn.calibration import calibration_curve
from sklearn.metrics import (
    accuracy_score,
    average_precision_score,
    balanced_accuracy_score,
    brier_score_loss,
    f1_score,
    log_loss,
    matthews_corrcoef,
    mean_absolute_error,
    mean_squared_error,
    precision_recall_curve,
    precision_score,
    r2_score,
    recall_score,
    roc_auc_score,
    roc_curve,
)
from sklearn.preprocessing import label_binarize

warnings.simplefilter("ignore")
rng = np.random.default_rng(20261201)


def floats(values):
    return [float(v) for v in values]


def sizes():
    """Mostly small cases, some medium, a few large: thousands of rows in total."""
    small = list(rng.integers(4, 40, size=60))
    medium = list(rng.integers(40, 400, size=25))
    large = [1000, 2000]
    return [int(n) for n in small + medium + large]


def binary_labels(n, rate):
    y = (rng.random(n) < rate).astype(np.int64)
    # Both classes must be present for ROC AUC to be defined.
    if y.sum() == 0:
        y[rng.integers(n)] = 1
    if y.sum() == n:
        y[rng.integers(n)] = 0
    return y


def binary_scores(y, decimals, kind):
    n = len(y)
    if kind == "constant":
        return np.full(n, 0.5)
    if kind == "extreme":
        return rng.choice([0.0, 0.05, 0.5, 0.95, 1.0], size=n)
    signal = rng.normal(size=n) + rng.uniform(0.0, 2.0) * (2 * y - 1)
    p = 1.0 / (1.0 + np.exp(-signal))
    return np.round(p, decimals)


def binary_case(n, rate, decimals, kind):
    y = binary_labels(n, rate)
    p = binary_scores(y, decimals, kind)
    proba = np.column_stack([1.0 - p, p])
    predicted = (p >= 0.5).astype(np.int64)
    case = {
        "task": "binary",
        "kind": kind,
        "y": [int(v) for v in y],
        "p": floats(p),
        "average_precision": float(average_precision_score(y, p)),
        "roc_auc": float(roc_auc_score(y, p)),
        "log_loss": float(log_loss(y, proba, labels=[0, 1])),
        "brier": float(brier_score_loss(y, p)),
        "accuracy": float(accuracy_score(y, predicted)),
        "balanced_accuracy": float(balanced_accuracy_score(y, predicted)),
        "f1": float(f1_score(y, predicted, zero_division=0)),
        "mcc": float(matthews_corrcoef(y, predicted)),
        "precision_at_half": float(precision_score(y, predicted, zero_division=0)),
        "recall_at_half": float(recall_score(y, predicted, zero_division=0)),
    }
    if n <= 300:
        precision, recall, thresholds = precision_recall_curve(y, p)
        case["pr_curve"] = {"precision": floats(precision), "recall": floats(recall), "thresholds": floats(thresholds)}
        fpr, tpr, roc_thresholds = roc_curve(y, p)
        # roc_thresholds[0] is max + 1 in 1.2.1 (+inf in later versions); only the rest is compared.
        case["roc_curve"] = {"fpr": floats(fpr), "tpr": floats(tpr), "thresholds_after_first": floats(roc_thresholds[1:])}
        calibration = []
        for strategy in ("uniform", "quantile"):
            for bins in (5, 10):
                fraction, mean = calibration_curve(y, p, n_bins=bins, strategy=strategy)
                edges = np.linspace(0.0, 1.0, bins + 1) if strategy == "uniform" else np.percentile(p, np.linspace(0, 1, bins + 1) * 100)
                counts = np.bincount(np.searchsorted(edges[1:-1], p), minlength=bins)
                counts = counts[counts != 0]
                ece = float(np.sum(counts * np.abs(fraction - mean)) / counts.sum())
                calibration.append({
                    "strategy": strategy,
                    "bins": bins,
                    "fraction_positive": floats(fraction),
                    "mean_predicted": floats(mean),
                    "count": [int(c) for c in counts],
                    "ece_numpy": ece,
                })
        case["calibration"] = calibration
    return case


def compositions(rows, classes, units):
    """Probability rows on a grid of 1/units (ties), each summing to units/units."""
    out = np.zeros((rows.shape[0], classes))
    for i, row in enumerate(rows):
        scaled = row * units
        whole = np.floor(scaled).astype(np.int64)
        short = units - whole.sum()
        order = np.argsort(-(scaled - whole), kind="stable")
        whole[order[:short]] += 1
        out[i] = whole / units
    return out


def multiclass_case(n, classes, units, skew):
    weights = np.exp(skew * np.arange(classes))
    weights /= weights.sum()
    y = rng.choice(classes, size=n, p=weights)
    # Every class must be present for one-vs-rest ROC AUC in scikit-learn 1.2.1.
    missing = [c for c in range(classes) if not np.any(y == c)]
    for slot, c in zip(rng.choice(n, size=len(missing), replace=False), missing):
        y[slot] = c
    missing = [c for c in range(classes) if not np.any(y == c)]
    if missing:
        return None
    logits = rng.normal(size=(n, classes)) * rng.uniform(0.5, 2.0)
    logits[np.arange(n), y] += rng.uniform(0.0, 2.5)
    soft = np.exp(logits - logits.max(axis=1, keepdims=True))
    soft /= soft.sum(axis=1, keepdims=True)
    proba = compositions(soft, classes, units)
    onehot = label_binarize(y, classes=list(range(classes)))
    predicted = proba.argmax(axis=1)
    return {
        "task": "multiclass",
        "classes": classes,
        "y": [int(v) for v in y],
        "p": floats(proba.ravel()),
        "average_precision": float(average_precision_score(onehot, proba, average="macro")),
        "roc_auc": float(roc_auc_score(y, proba, multi_class="ovr", average="macro")),
        "log_loss": float(log_loss(y, proba, labels=list(range(classes)))),
        "brier_numpy": float(np.mean(np.sum((onehot - proba) ** 2, axis=1))),
        "accuracy": float(accuracy_score(y, predicted)),
        "balanced_accuracy": float(balanced_accuracy_score(y, predicted)),
        "f1": float(f1_score(y, predicted, average="macro", zero_division=0)),
        "mcc": float(matthews_corrcoef(y, predicted)),
    }


def regression_case(n, scale, decimals, constant):
    if constant:
        y = np.full(n, 5.0)
    else:
        y = np.round(rng.normal(size=n) * scale + scale * rng.uniform(-2, 2), decimals)
    noise = rng.normal(size=n) * scale * rng.uniform(0.05, 1.5)
    prediction = np.round(y + noise, decimals)
    return {
        "task": "regression",
        "y": floats(y),
        "p": floats(prediction),
        "rmse": float(mean_squared_error(y, prediction, squared=False)),
        "mae": float(mean_absolute_error(y, prediction)),
        "r2": float(r2_score(y, prediction)),
    }


cases = []
for n in sizes():
    for rate in (0.5, 0.2, 0.04):
        kind = "signal"
        draw = rng.random()
        if draw < 0.05:
            kind = "constant"
        elif draw < 0.15:
            kind = "extreme"
        cases.append(binary_case(n, rate, int(rng.choice([1, 2])), kind))
for n in sizes():
    classes = int(rng.integers(3, 6))
    for skew in (0.0, 1.0):
        case = multiclass_case(max(n, classes), classes, int(rng.choice([10, 100])), skew)
        if case is not None:
            cases.append(case)
for n in sizes()[::2]:
    cases.append(regression_case(n, float(rng.choice([1.0, 1e3, 1e6])), int(rng.choice([1, 2])), False))
cases.append(regression_case(20, 1.0, 2, True))
constant_perfect = regression_case(10, 1.0, 2, True)
constant_perfect["p"] = constant_perfect["y"]
y_const = np.array(constant_perfect["y"])
constant_perfect.update(
    rmse=float(mean_squared_error(y_const, y_const, squared=False)),
    mae=float(mean_absolute_error(y_const, y_const)),
    r2=float(r2_score(y_const, y_const)),
)
cases.append(constant_perfect)

student_t = []
for df in (1, 2, 3, 4, 5, 9, 10, 19, 29, 49, 100, 1000):
    for t in (-40.0, -6.5, -3.005, -1.0, -0.1, 0.0, 0.25, 1.5, 2.262, 3.0, 4.367, 8.0, 25.0, 300.0):
        student_t.append({"df": df, "t": t, "cdf": float(scipy.stats.t.cdf(t, df)), "sf": float(scipy.stats.t.sf(t, df))})

incomplete_beta = []
for a in (0.5, 1.0, 2.5, 7.0, 40.0):
    for b in (0.5, 1.0, 3.0, 12.0):
        for x in (0.0, 1e-6, 0.05, 0.3, 0.5, 0.77, 0.999, 1.0):
            incomplete_beta.append({"a": a, "b": b, "x": x, "value": float(scipy.special.betainc(a, b, x))})

corrected_t = []
for folds in (2, 3, 5, 10, 20):
    for test_fraction in (0.0, 1.0 / 9.0, 0.25, 1.0 / (folds - 1) if folds > 1 else 0.0):
        base = rng.uniform(0.6, 0.9, size=folds)
        a = np.round(base + rng.normal(0.0, 0.01, size=folds), 4)
        b = np.round(base + rng.uniform(-0.01, 0.01) + rng.normal(0.0, 0.01, size=folds), 4)
        d = a - b
        mean = float(np.mean(d))
        variance = float(np.var(d, ddof=1))
        t = mean / np.sqrt((1.0 / folds + test_fraction) * variance)
        corrected_t.append({
            "a": floats(a),
            "b": floats(b),
            "test_fraction": test_fraction,
            "mean_difference": mean,
            "t": float(t),
            "df": folds - 1,
            "p_value": float(2.0 * scipy.stats.t.sf(abs(t), folds - 1)),
        })

output = {
    "generator": "test/reference/metrics_reference.py",
    "versions": {
        "sklearn": sklearn.__version__,
        "numpy": np.__version__,
        "scipy": scipy.__version__,
        "python": platform.python_version(),
    },
    "cases": cases,
    "student_t": student_t,
    "incomplete_beta": incomplete_beta,
    "corrected_t_test": corrected_t,
}
path = os.path.join(os.path.dirname(os.path.abspath(__file__)), "metrics_reference.json")
with open(path, "w") as handle:
    json.dump(output, handle, separators=(",", ":"))
rows = sum(len(case["y"]) for case in cases)
print(f"{len(cases)} cases, {rows} rows, {os.path.getsize(path) / 1e6:.2f} MB -> {path}")
