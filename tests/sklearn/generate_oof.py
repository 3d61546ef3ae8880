"""Writes an out-of-fold file from a real scikit-learn grid search (every configuration's
cross_val_predict on the search's own folds), a manifest naming it, and the expected accuracy of
each configuration (sklearn.metrics.accuracy_score) that tests/out_of_fold.rs compares with what
vetscore reads.

Pinned: scikit-learn 1.9.1, numpy 2.4.6 (Python 3.11). Run from the repository root:
    /tmp/vs-venv/bin/python tests/sklearn/generate_oof.py
"""
import csv
import json
import pathlib

import numpy as np
import sklearn
from sklearn.base import clone
from sklearn.datasets import load_breast_cancer
from sklearn.metrics import accuracy_score
from sklearn.model_selection import GridSearchCV, StratifiedKFold, cross_val_predict
from sklearn.neighbors import KNeighborsClassifier

OUT = pathlib.Path(__file__).parent
X, y = load_breast_cancer(return_X_y=True)
X, y = X[:200], y[:200]
cv = StratifiedKFold(4, shuffle=True, random_state=0)
search = GridSearchCV(KNeighborsClassifier(), {"n_neighbors": [1, 3, 5, 9, 15]}, cv=cv).fit(X, y)
ids = [f"leaf-{i:03d}" for i in range(len(y))]
folds = np.empty(len(y), dtype=int)
for k, (_, test) in enumerate(cv.split(X, y)):
    folds[test] = k

expected = {"versions": {"scikit-learn": sklearn.__version__, "numpy": np.__version__},
            "best_index": int(search.best_index_), "accuracy": {}, "fold_correct": {}}
rows = []
for i, params in enumerate(search.cv_results_["params"]):
    pred = cross_val_predict(clone(search.estimator).set_params(**params), X, y, cv=cv)
    proba = cross_val_predict(clone(search.estimator).set_params(**params), X, y, cv=cv,
                              method="predict_proba")[:, 1]
    expected["accuracy"][str(i)] = float(accuracy_score(y, pred))
    expected["fold_correct"][str(i)] = [int(np.sum((pred == y)[folds == k])) for k in range(4)]
    # Rows written in a shuffled order: the reader must not depend on the file's order.
    for j in np.random.default_rng(i).permutation(len(y)):
        rows.append([str(i), ids[j], int(folds[j]), int(y[j]), int(pred[j]), repr(float(proba[j]))])

with open(OUT / "knn_oof.csv", "w", newline="", encoding="utf-8") as out:
    writer = csv.writer(out, lineterminator="\n")
    writer.writerow(["configuration", "row", "fold", "label", "prediction", "score"])
    writer.writerows(rows)

best = search.best_index_
cv_folds = []
for k, (_, test) in enumerate(cv.split(X, y)):
    score = float(search.cv_results_[f"split{k}_test_score"][best])
    cv_folds.append({"rows": int(len(test)), "score": score, "correct": int(round(score * len(test)))})
counts = {str(c): int(n) for c, n in zip(*np.unique(y, return_counts=True))}
manifest = {
    "format_version": 1,
    "models": [{
        "name": "leaf-knn", "task": "binary", "metric": "accuracy", "seed": 0,
        "data": {"train_rows": len(y), "test_rows": 100, "test_fingerprint": "fp-leaf-knn",
                 "class_counts": {"train": counts, "test": {"0": 40, "1": 60}}},
        "search": {"method": "grid", "configurations": len(search.cv_results_["params"]),
                   "out_of_fold": "knn_oof.csv", "cv": {"scheme": "stratified_k_fold", "folds": cv_folds}},
        "claim": {"value": float(search.best_score_), "basis": "cv"},
    }],
}
(OUT / "knn_oof.manifest.json").write_text(json.dumps(manifest, indent=1) + "\n")
(OUT / "knn_oof.expected.json").write_text(json.dumps(expected, indent=1) + "\n")
