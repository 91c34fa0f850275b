"""Reference cross-validated scores for every learner family, computed with scikit-learn and xgboost.

usage: /usr/bin/python3 test/reference/families_reference.py

Three tables, read from the same source files as the TypeScript side:
- breast cancer: test/fixtures/breast-cancer-wisconsin.csv (UCI Wisconsin Diagnostic, Street,
  Wolberg & Mangasarian 1993; 569 rows, 30 numeric features), binary, malignant is the positive
  class; scored by average precision of P(malignant).
- penguins: node_modules/vega-datasets/data/penguins.json (Palmer penguins, Gorman et al. 2014;
  vega-datasets 3.2.1, CC0), multiclass Species from Island, the four measurements and Sex. The 2
  rows without measurements are dropped (342 left); Sex is missing in 9 of those (JSON null, and
  one "."), written as an empty field and treated as missing on both sides (no category: all zeros
  in a one-hot encoding, a missing value for the native categorical splits of boosting). Scored by
  accuracy (most probable class) and log loss.
- cars: node_modules/vega-datasets/data/cars.json (the UCI Auto MPG data, Quinlan 1993), regression
  of Miles_per_Gallon from Cylinders, Displacement, Horsepower, Weight_in_lbs, Acceleration, Year
  (the year of its "1970-01-01"-style date, as a number) and Origin (categorical). Rows without
  Miles_per_Gallon (8) or Horsepower (6 more) are dropped: 392 left. Scored by RMSE.
The penguins and cars tables are written to test/reference/penguins.csv and cars.csv (numbers as
the shortest text that reads back to the same double), which is what the TypeScript test reads.

Folds: StratifiedKFold(5, shuffle=True, random_state=0) on the class for the two classification
tables, KFold(5, shuffle=True, random_state=0) for cars; the fold of every row is in the JSON and
the TypeScript test uses exactly that assignment. Everything fitted from data (scaling, one-hot
categories, boosting's bins, base scores) is fitted on the four training folds only.

Writes test/reference/families_reference.json: versions, the folds, and per family the settings
on both sides and the per-fold scores. For the randomised references (tree, forest, extra trees)
it also records the mean score over folds for random_state 0..4, the spread that a change of
random stream alone causes.
"""
import csv
import json
import os
import platform
import re

import numpy as np
import sklearn
import xgboost as xgb
from sklearn.ensemble import (
    ExtraTreesClassifier,
    ExtraTreesRegressor,
    HistGradientBoostingClassifier,
    HistGradientBoostingRegressor,
    RandomForestClassifier,
    RandomForestRegressor,
)
from sklearn.linear_model import LogisticRegression, Ridge
from sklearn.metrics import accuracy_score, average_precision_score, log_loss, mean_squared_error
from sklearn.model_selection import KFold, StratifiedKFold
from sklearn.neighbors import KNeighborsClassifier, KNeighborsRegressor
from sklearn.impute import SimpleImputer
from sklearn.preprocessing import StandardScaler
from sklearn.tree import DecisionTreeClassifier, DecisionTreeRegressor

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(os.path.dirname(HERE))
CANCER_CSV = "test/fixtures/breast-cancer-wisconsin.csv"
PENGUINS_JSON = "node_modules/vega-datasets/data/penguins.json"
CARS_JSON = "node_modules/vega-datasets/data/cars.json"
SEEDS = [0, 1, 2, 3, 4]
TREES = 50
ROUNDS = 100


class Table:
    """Rows of one data set: numeric features (float, NaN = missing), categorical ones (str, "" = missing), target."""

    def __init__(self, name, file, target, task, numeric_names, numeric, categorical_names, categorical, y, labels=None):
        self.name, self.file, self.target, self.task = name, file, target, task
        self.numeric_names, self.numeric = numeric_names, numeric
        self.categorical_names, self.categorical = categorical_names, categorical
        self.y, self.labels = y, labels


def number_text(v):
    """Shortest decimal text that reads back to the same double; integers without a point."""
    return str(int(v)) if float(v).is_integer() else repr(float(v))


def write_csv(path, header, rows):
    with open(path, "w", newline="") as f:
        out = csv.writer(f, lineterminator="\n")
        out.writerow(header)
        out.writerows(rows)


def breast_cancer():
    with open(os.path.join(ROOT, CANCER_CSV)) as f:
        rows = list(csv.reader(f))
    header, body = rows[0], rows[1:]
    target = header.index("diagnosis")
    names = [h for j, h in enumerate(header) if j != target]
    x = np.array([[float(r[j]) for j in range(len(header)) if j != target] for r in body])
    # Classes in sorted label order, as our ingest codes them: benign = 0, malignant = 1.
    labels = sorted({r[target] for r in body})
    y = np.array([labels.index(r[target]) for r in body])
    return Table("breast_cancer", CANCER_CSV, "diagnosis", "binary", names, x, [], np.empty((len(y), 0), dtype=object), y, labels)


def penguins():
    with open(os.path.join(ROOT, PENGUINS_JSON)) as f:
        records = json.load(f)
    measures = ["Beak Length (mm)", "Beak Depth (mm)", "Flipper Length (mm)", "Body Mass (g)"]
    kept = [r for r in records if all(r[m] is not None for m in measures)]
    sex = ["" if r["Sex"] in (None, ".") else r["Sex"] for r in kept]
    header = ["Species", "Island", *measures, "Sex"]
    write_csv(os.path.join(HERE, "penguins.csv"), header,
              [[r["Species"], r["Island"], *[number_text(r[m]) for m in measures], s] for r, s in zip(kept, sex)])
    labels = sorted({r["Species"] for r in kept})
    y = np.array([labels.index(r["Species"]) for r in kept])
    x = np.array([[float(r[m]) for m in measures] for r in kept])
    cat = np.array([[r["Island"], s] for r, s in zip(kept, sex)], dtype=object)
    return Table("penguins", "test/reference/penguins.csv", "Species", "multiclass", measures, x, ["Island", "Sex"], cat, y, labels)


def cars():
    with open(os.path.join(ROOT, CARS_JSON)) as f:
        records = json.load(f)
    numeric = ["Cylinders", "Displacement", "Horsepower", "Weight_in_lbs", "Acceleration"]
    kept = [r for r in records if r["Miles_per_Gallon"] is not None and r["Horsepower"] is not None]
    year = [int(r["Year"][:4]) for r in kept]
    header = [*numeric, "Year", "Origin", "Miles_per_Gallon"]
    write_csv(os.path.join(HERE, "cars.csv"), header,
              [[*[number_text(r[c]) for c in numeric], str(t), r["Origin"], number_text(r["Miles_per_Gallon"])] for r, t in zip(kept, year)])
    x = np.array([[float(r[c]) for c in numeric] + [float(t)] for r, t in zip(kept, year)])
    cat = np.array([[r["Origin"]] for r in kept], dtype=object)
    y = np.array([float(r["Miles_per_Gallon"]) for r in kept])
    return Table("cars", "test/reference/cars.csv", "Miles_per_Gallon", "regression", [*numeric, "Year"], x, ["Origin"], cat, y)


def fold_of_rows(table):
    folds = np.zeros(len(table.y), dtype=np.int64)
    splitter = KFold(5, shuffle=True, random_state=0) if table.task == "regression" else StratifiedKFold(5, shuffle=True, random_state=0)
    for k, (_, test) in enumerate(splitter.split(table.numeric, table.y)):
        folds[test] = k
    return folds


# --- encodings, each fitted on the training rows of a fold -------------------------------------------

def training_categories(table, train):
    """Per categorical column, the categories present in the training rows (missing excluded), sorted."""
    return [sorted({v for v in table.categorical[train, j] if v != ""}) for j in range(len(table.categorical_names))]


def one_hot(table, cats, rows):
    """One 0/1 column per training category; missing or unseen categories are all zeros."""
    blocks = [(table.categorical[rows, j][:, None] == np.array(c, dtype=object)[None, :]).astype(float) for j, c in enumerate(cats)]
    return np.hstack(blocks) if blocks else np.empty((len(rows), 0))


def ordinal(table, cats, rows):
    """Index of the category among the training categories; NaN for missing or unseen."""
    out = np.full((len(rows), len(cats)), np.nan)
    for j, c in enumerate(cats):
        index = {v: i for i, v in enumerate(c)}
        out[:, j] = [index.get(v, np.nan) for v in table.categorical[rows, j]]
    return out


def scaled_design(table, train, test):
    """Mean imputation and standardisation of numeric columns, unscaled one-hot categories (our design matrix)."""
    imputer = SimpleImputer(strategy="mean").fit(table.numeric[train])
    scaler = StandardScaler().fit(imputer.transform(table.numeric[train]))
    cats = training_categories(table, train)
    side = lambda rows: np.hstack([scaler.transform(imputer.transform(table.numeric[rows])), one_hot(table, cats, rows)])
    return side(train), side(test)


def raw_one_hot(table, train, test):
    cats = training_categories(table, train)
    side = lambda rows: np.hstack([table.numeric[rows], one_hot(table, cats, rows)])
    return side(train), side(test)


def raw_ordinal(table, train, test):
    cats = training_categories(table, train)
    side = lambda rows: np.hstack([table.numeric[rows], ordinal(table, cats, rows)])
    return side(train), side(test)


# --- the reference of each family ---------------------------------------------------------------------

def sklearn_model(make, encode):
    def fit_predict(table, train, test, seed):
        x_train, x_test = encode(table, train, test)
        model = make(table.task, seed, table).fit(x_train, table.y[train])
        return model.predict_proba(x_test) if table.task != "regression" else model.predict(x_test)
    return fit_predict


def hgb(task, seed, table):
    settings = dict(learning_rate=0.1, max_iter=ROUNDS, max_leaf_nodes=31, max_depth=None, min_samples_leaf=20,
                    l2_regularization=0.0, max_bins=255, early_stopping=False, random_state=seed,
                    categorical_features=[False] * len(table.numeric_names) + [True] * len(table.categorical_names) or None)
    return HistGradientBoostingRegressor(**settings) if task == "regression" else HistGradientBoostingClassifier(**settings)


XGB_SETTINGS = {"tree_method": "hist", "grow_policy": "lossguide", "max_leaves": 31, "max_depth": 0, "eta": 0.1,
                "lambda": 1.0, "alpha": 0.0, "gamma": 0.0, "min_child_weight": 1.0, "max_bin": 255,
                "max_cat_to_onehot": 4, "nthread": 1}


def xgboost_hist(table, train, test, seed):
    """xgboost's histogram method, native categorical splits, starting from the training prior / mean (as ours)."""
    x_train, x_test = raw_ordinal(table, train, test)
    types = ["q"] * len(table.numeric_names) + ["c"] * len(table.categorical_names)
    y = table.y[train]
    if table.task == "regression":
        params, start = dict(objective="reg:squarederror"), np.full(1, y.mean())
    elif table.task == "binary":
        prior = y.mean()
        params, start = dict(objective="binary:logistic"), np.full(1, np.log(prior / (1 - prior)))
    else:
        classes = len(table.labels)
        params, start = dict(objective="multi:softprob", num_class=classes), np.log(np.bincount(y, minlength=classes) / len(y))
    margin = lambda n: np.tile(start, (n, 1)).reshape(-1) if len(start) > 1 else np.full(n, start[0])
    d_train = xgb.DMatrix(x_train, label=y, base_margin=margin(len(train)), feature_types=types, enable_categorical=True)
    d_test = xgb.DMatrix(x_test, base_margin=margin(len(test)), feature_types=types, enable_categorical=True)
    booster = xgb.train(dict(XGB_SETTINGS, seed=seed, **params), d_train, num_boost_round=ROUNDS)
    p = booster.predict(d_test)
    if table.task == "binary":
        return np.column_stack([1 - p, p])
    return p


def logistic(task, seed, table):
    return Ridge(alpha=1.0) if task == "regression" else LogisticRegression(C=1.0, solver="lbfgs", tol=1e-10, max_iter=10_000)


def knn(task, seed, table):
    return KNeighborsRegressor(15, weights="uniform", algorithm="brute") if task == "regression" else KNeighborsClassifier(15, weights="uniform", algorithm="brute")


def tree(task, seed, table):
    return DecisionTreeRegressor(random_state=seed) if task == "regression" else DecisionTreeClassifier(criterion="gini", random_state=seed)


def forest(task, seed, table):
    if task == "regression":
        return RandomForestRegressor(TREES, max_features=1.0, bootstrap=True, random_state=seed, n_jobs=1)
    return RandomForestClassifier(TREES, criterion="gini", max_features="sqrt", bootstrap=True, random_state=seed, n_jobs=1)


def extra_trees(task, seed, table):
    if task == "regression":
        return ExtraTreesRegressor(TREES, max_features=1.0, bootstrap=False, random_state=seed, n_jobs=1)
    return ExtraTreesClassifier(TREES, criterion="gini", max_features="sqrt", bootstrap=False, random_state=seed, n_jobs=1)


FAMILIES = [
    {
        "id": "logistic",
        "family": "logistic",
        "ours": {"l2": 1},
        "reference": "scikit-learn LogisticRegression(C=1/l2=1, lbfgs, multinomial for 3 classes, tol=1e-10, max_iter=10000) / Ridge(alpha=l2=1)",
        "encoding": "numeric: mean imputation + StandardScaler; categorical: one-hot, missing = all zeros, unscaled",
        "randomised": False,
        "run": sklearn_model(logistic, scaled_design),
    },
    {
        "id": "tree",
        "family": "tree",
        "ours": {"criterion": "gini", "depth": None, "min_leaf": 1, "min_split": 2},
        "reference": "scikit-learn DecisionTreeClassifier(gini) / DecisionTreeRegressor(squared_error), max_depth=None, min_samples_leaf=1, min_samples_split=2; exact thresholds",
        "encoding": "numeric as is; categorical: one-hot, missing = all zeros (ours: native category-set splits, missing its own bin)",
        "randomised": True,
        "run": sklearn_model(tree, raw_one_hot),
    },
    {
        "id": "forest",
        "family": "forest",
        "ours": {"trees": TREES, "criterion": "gini", "depth": None, "min_leaf": 1, "bootstrap": True},
        "reference": f"scikit-learn RandomForestClassifier({TREES} trees, max_features='sqrt', bootstrap) / RandomForestRegressor({TREES} trees, max_features=1.0, bootstrap)",
        "encoding": "numeric as is; categorical: one-hot, missing = all zeros (ours: native; sqrt of 6 columns = 2 tried on penguins vs sqrt of 9 one-hot columns = 3)",
        "randomised": True,
        "run": sklearn_model(forest, raw_one_hot),
    },
    {
        "id": "extra_trees",
        "family": "extra_trees",
        "ours": {"trees": TREES, "criterion": "gini", "depth": None, "min_leaf": 1, "bootstrap": False},
        "reference": f"scikit-learn ExtraTreesClassifier({TREES} trees, max_features='sqrt', no bootstrap) / ExtraTreesRegressor({TREES} trees, max_features=1.0, no bootstrap)",
        "encoding": "numeric as is; categorical: one-hot, missing = all zeros (ours: native)",
        "randomised": True,
        "run": sklearn_model(extra_trees, raw_one_hot),
    },
    {
        "id": "boosted_hgb",
        "family": "boosted",
        "ours": {"rounds": ROUNDS, "learning_rate": 0.1, "leaves": 31, "depth": None, "min_leaf": 20, "min_hessian": 1e-3, "l2": 0, "bins": 255},
        "reference": f"scikit-learn HistGradientBoosting{{Classifier,Regressor}}(max_iter={ROUNDS}, learning_rate=0.1, max_leaf_nodes=31, max_depth=None, min_samples_leaf=20, l2_regularization=0, max_bins=255, early_stopping=False)",
        "encoding": "numeric as is; categorical: native (categorical_features), missing = NaN",
        "randomised": False,
        "run": sklearn_model(hgb, raw_ordinal),
    },
    {
        "id": "boosted_xgboost",
        "family": "boosted",
        "ours": {"rounds": ROUNDS, "learning_rate": 0.1, "leaves": 31, "depth": None, "min_leaf": 1, "min_hessian": 1, "l2": 1, "bins": 255},
        # xgboost's multi:softprob takes the hessian as 2·p(1 − p) (checked: a custom objective with that
        # hessian gives its margins to 1e-7, one with p(1 − p) does not). Its leaf −G/(2H + λ) and gain
        # G²/(2H + λ) are ours with half the learning rate, half of λ and half the minimum hessian.
        "ours_overrides": {"penguins": {"learning_rate": 0.05, "l2": 0.5, "min_hessian": 0.5}},
        "reference": f"xgboost train({XGB_SETTINGS}, num_boost_round={ROUNDS}), base_margin = training log-odds / log priors / mean",
        "encoding": "numeric as is; categorical: native (feature_types 'c'), missing = NaN",
        "randomised": False,
        "run": xgboost_hist,
    },
    {
        "id": "knn",
        "family": "knn",
        "ours": {"k": 15, "weights": "uniform"},
        "reference": "scikit-learn KNeighborsClassifier / KNeighborsRegressor(n_neighbors=15, weights='uniform', algorithm='brute', euclidean)",
        "encoding": "numeric: mean imputation + StandardScaler; categorical: one-hot, missing = all zeros, unscaled",
        "randomised": False,
        "run": sklearn_model(knn, scaled_design),
    },
]


def scores(table, p, rows):
    y = table.y[rows]
    if table.task == "binary":
        return {"average_precision": float(average_precision_score(y, p[:, 1]))}
    if table.task == "multiclass":
        # Accuracy of the most probable class (lowest index among equals, as ours); log loss clipped at
        # float64 machine epsilon (scikit-learn 1.2's eps="auto").
        return {"accuracy": float(accuracy_score(y, np.argmax(p, axis=1))),
                "log_loss": float(log_loss(y, p, labels=list(range(len(table.labels)))))}
    return {"rmse": float(np.sqrt(mean_squared_error(y, p)))}


def cross_validate(entry, table, folds, seed):
    per_fold = {}
    for k in range(5):
        train, test = np.flatnonzero(folds != k), np.flatnonzero(folds == k)
        for metric, value in scores(table, entry["run"](table, train, test, seed), test).items():
            per_fold.setdefault(metric, []).append(value)
    return per_fold


def main():
    tables = [breast_cancer(), penguins(), cars()]
    folds = {t.name: fold_of_rows(t) for t in tables}
    families = []
    for entry in FAMILIES:
        results = {}
        for table in tables:
            result = {"folds": cross_validate(entry, table, folds[table.name], SEEDS[0])}
            result["mean"] = {m: float(np.mean(v)) for m, v in result["folds"].items()}
            if entry["randomised"]:
                by_seed = [cross_validate(entry, table, folds[table.name], s) for s in SEEDS]
                result["mean_by_seed"] = {m: [float(np.mean(r[m])) for r in by_seed] for m in result["folds"]}
            results[table.name] = result
            print(entry["id"], table.name, {m: round(v, 4) for m, v in result["mean"].items()},
                  {m: [round(min(v), 4), round(max(v), 4)] for m, v in result.get("mean_by_seed", {}).items()})
        families.append({key: entry[key] for key in ("id", "family", "ours", "ours_overrides", "reference", "encoding", "randomised") if key in entry} | {"scores": results})

    output = {
        "generated_by": "test/reference/families_reference.py",
        "versions": {"python": platform.python_version(), "sklearn": sklearn.__version__, "xgboost": xgb.__version__, "numpy": np.__version__},
        "seeds": {"primary": SEEDS[0], "spread": SEEDS},
        "datasets": {
            t.name: {
                "file": t.file,
                "target": t.target,
                "task": t.task,
                "labels": t.labels,
                "rows": int(len(t.y)),
                "numeric": t.numeric_names,
                "categorical": t.categorical_names,
                "folds": folds[t.name].tolist(),
            }
            for t in tables
        },
        "families": families,
    }
    text = json.dumps(output, indent=1)
    # Lists of numbers on one line each, so the fold assignment does not take a line per row.
    text = re.sub(r"\[\s*(-?[0-9.e+-]+(?:,\s*-?[0-9.e+-]+)*)\s*\]", lambda m: "[" + ", ".join(v.strip() for v in m.group(1).split(",")) + "]", text)
    with open(os.path.join(HERE, "families_reference.json"), "w") as f:
        f.write(text + "\n")


if __name__ == "__main__":
    main()
