"""Reference values for stats::weighted (the metrics BBC-CV recomputes on resampled rows).

Run with numpy 2.4.6 and scikit-learn 1.9.1 (Python 3.11):

    python tests/reference/weighted_metrics.py > tests/reference/weighted_values.json

A bootstrap resample counts row i w_i times; the metric of the resample is scikit-learn's on the
rows repeated by their weights (`np.repeat`), so rows of weight 0 are left out altogether. Each
case draws its rows and weights from a fixed seed and stores them with the values. CI does not
run this script; tests/weighted_reference.rs reads its output.
"""

import json
import sys

import numpy as np
import sklearn
from sklearn.metrics import (
    balanced_accuracy_score,
    f1_score,
    r2_score,
    roc_auc_score,
    root_mean_squared_error,
)

rng = np.random.default_rng(20261202)
cases = []
for case in range(6):
    n = 40
    weights = rng.integers(0, 4, size=n)
    weights[rng.integers(0, n)] = 0  # at least one row left out
    three = rng.integers(0, 3, size=n)
    # Predictions agree with the truth about two times in three.
    pred3 = np.where(rng.random(n) < 0.65, three, rng.integers(0, 3, size=n))
    binary = rng.integers(0, 2, size=n)
    predb = np.where(rng.random(n) < 0.7, binary, 1 - binary)
    # Scores on a coarse grid so that ties between positives and negatives occur.
    scores = np.round(0.3 * binary + 0.7 * rng.random(n), 1)
    target = rng.normal(10.0, 3.0, size=n)
    predicted = target + rng.normal(0.0, 1.5, size=n)
    rep = lambda a: np.repeat(a, weights)
    cases.append(
        {
            "weights": weights.tolist(),
            "three": three.tolist(),
            "pred3": pred3.tolist(),
            "binary": binary.tolist(),
            "predb": predb.tolist(),
            "scores": scores.tolist(),
            "target": target.tolist(),
            "predicted": predicted.tolist(),
            "balanced_accuracy_3": balanced_accuracy_score(rep(three), rep(pred3)),
            "f1_macro_3": f1_score(rep(three), rep(pred3), average="macro"),
            "f1_micro_3": f1_score(rep(three), rep(pred3), average="micro"),
            "f1_binary": f1_score(rep(binary), rep(predb), pos_label=1),
            "roc_auc": roc_auc_score(rep(binary), rep(scores)),
            "rmse": root_mean_squared_error(rep(target), rep(predicted)),
            "r2": r2_score(rep(target), rep(predicted)),
        }
    )
json.dump(
    {
        "generator": "tests/reference/weighted_metrics.py",
        "versions": {"numpy": np.__version__, "scikit-learn": sklearn.__version__},
        "cases": cases,
    },
    sys.stdout,
    indent=1,
)
