"""Writes real scikit-learn search results (cv_results_ through pandas) and manifests that use
them, with the values tests/sklearn_results.rs expects, computed here with numpy.

Pinned: scikit-learn 1.9.1, pandas 3.1.1, numpy 2.4.6 (Python 3.11). Run from the repository root:
    /tmp/vs-venv/bin/python tests/sklearn/generate.py
"""
import json
import pathlib

import numpy as np
import pandas as pd
import sklearn
from sklearn.datasets import load_breast_cancer, load_diabetes, load_iris
from sklearn.linear_model import Ridge
from sklearn.model_selection import GridSearchCV, KFold, StratifiedKFold, train_test_split
from sklearn.svm import SVC

OUT = pathlib.Path(__file__).parent
expected = {"versions": {"scikit-learn": sklearn.__version__, "pandas": pd.__version__, "numpy": np.__version__}}


def tt_bias(split_scores, selected):
    """Tibshirani & Tibshirani (2009) for the selected row, in the metric's own direction."""
    fold_max = split_scores.max(axis=0)
    return float(np.mean(fold_max - split_scores[selected]))


def folds_of(cv, X, y, scores, proportion):
    folds = []
    for k, (_, test) in enumerate(cv.split(X, y)):
        fold = {"rows": int(len(test)), "score": float(scores[k])}
        if proportion:
            fold["correct"] = int(round(scores[k] * len(test)))
        folds.append(fold)
    return folds


def manifest(name, task, metric, train_rows, test_rows, folds, trials_file, scorer=None, configurations=None):
    search = {"method": "grid", "trials_file": trials_file, "cv": {"scheme": "k_fold", "folds": folds}}
    if scorer:
        search["scorer"] = scorer
    return {
        "format_version": 1,
        "models": [{
            "name": name, "task": task, "metric": metric, "seed": 0,
            "data": {"train_rows": train_rows, "test_rows": test_rows, "test_fingerprint": "fp-" + name},
            "search": search,
            "claim": {"value": folds[0]["score"], "basis": "cv"},
        }],
    }


def write(name, doc):
    (OUT / name).write_text(json.dumps(doc, indent=1) + "\n")


# 1. The case: 5-fold stratified, a 6x6 SVC grid, default scoring (accuracy).
X, y = load_breast_cancer(return_X_y=True)
X_tr, X_te, y_tr, y_te = train_test_split(X, y, test_size=0.25, stratify=y, random_state=0)
cv = StratifiedKFold(5, shuffle=True, random_state=0)
grid = {"C": np.logspace(-2, 3, 6).tolist(), "gamma": np.logspace(-6, -1, 6).tolist()}
search = GridSearchCV(SVC(), grid, cv=cv).fit(X_tr, y_tr)
df = pd.DataFrame(search.cv_results_)
df.to_csv(OUT / "svc_grid.csv")
df.to_json(OUT / "svc_grid.json")
splits = np.array([search.cv_results_[f"split{k}_test_score"] for k in range(5)]).T
best = int(search.best_index_)
folds = folds_of(cv, X_tr, y_tr, splits[best], True)
for fmt in ("csv", "json"):
    write(f"svc_grid_{fmt}.manifest.json",
          manifest(f"cancer-svc-{fmt}", "binary", "accuracy", len(y_tr), len(y_te), folds, f"svc_grid.{fmt}"))
expected["svc_grid"] = {
    "trials": len(df), "best_index": best,
    "ties_at_rank_1": int((search.cv_results_["rank_test_score"] == 1).sum()),
    "tt_bias": tt_bias(splits, best),
}

# 2. A loss: RMSE, stored negated (neg_root_mean_squared_error), regression on load_diabetes.
X, y = load_diabetes(return_X_y=True)
cv = KFold(5, shuffle=True, random_state=1)
search = GridSearchCV(Ridge(), {"alpha": np.logspace(-4, 2, 12).tolist()}, cv=cv,
                      scoring="neg_root_mean_squared_error").fit(X, y)
df = pd.DataFrame(search.cv_results_)
df.to_json(OUT / "ridge_rmse.json")
splits = -np.array([search.cv_results_[f"split{k}_test_score"] for k in range(5)]).T
best = int(search.best_index_)
folds = [{"rows": int(len(t)), "score": float(splits[best][k])} for k, (_, t) in enumerate(cv.split(X, y))]
doc = manifest("diabetes-ridge", "regression", "rmse", len(y), 100, folds, "ridge_rmse.json",
               scorer="neg_root_mean_squared_error")
write("ridge_rmse.manifest.json", doc)
# A scorer vetscore has no metric for (MSE) must be refused, not guessed.
doc["models"][0]["search"]["scorer"] = "neg_mean_squared_error"
write("ridge_mse.manifest.json", doc)
# The same file read without naming the scorer must be refused (the columns are `_score`).
del doc["models"][0]["search"]["scorer"]
write("ridge_rmse_unnamed.manifest.json", doc)
# Lower is better: B = mean_k(s_k(best) - min_theta s_k(theta)).
expected["ridge_rmse"] = {
    "trials": len(df), "best_index": best,
    "tt_bias": float(np.mean(splits[best] - splits.min(axis=0))),
}

# 3. Several scorers: the manifest must say which one the trials are.
X, y = load_iris(return_X_y=True)
cv = StratifiedKFold(4, shuffle=True, random_state=2)
search = GridSearchCV(SVC(), {"C": [0.1, 1.0, 10.0, 100.0]}, cv=cv,
                      scoring=["accuracy", "balanced_accuracy"], refit="balanced_accuracy").fit(X, y)
df = pd.DataFrame(search.cv_results_)
df.to_csv(OUT / "iris_multi.csv")
splits = np.array([search.cv_results_[f"split{k}_test_balanced_accuracy"] for k in range(4)]).T
best = int(search.best_index_)
folds = [{"rows": int(len(t)), "score": float(splits[best][k])} for k, (_, t) in enumerate(cv.split(X, y))]
doc = manifest("iris-svc", "multiclass", "balanced_accuracy", len(y), 30, folds, "iris_multi.csv",
               scorer="balanced_accuracy")
write("iris_multi.manifest.json", doc)
del doc["models"][0]["search"]["scorer"]
write("iris_multi_unnamed.manifest.json", doc)
expected["iris_multi"] = {"trials": len(df), "best_index": best, "tt_bias": tt_bias(splits, best)}

(OUT / "expected.json").write_text(json.dumps(expected, indent=1) + "\n")
print(json.dumps(expected, indent=1))
