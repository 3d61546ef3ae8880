"""The ROC AUC check a user would write without vetscore (run by scripts/bench_auc.sh).

Reads a model's and a baseline's predictions (CSV: id, label, prediction, score), recomputes the
model's ROC AUC with scikit-learn and its DeLong interval, pairs the two files by id and runs
DeLong's paired test (DeLong, DeLong & Clarke-Pearson 1988) in numpy with the midrank algorithm
of Sun & Xu (2014). Prints one JSON object.

Usage: python benches/auc_python.py MODEL.csv BASELINE.csv
Tested with numpy 2.4.6, scikit-learn 1.9.1, scipy 1.17.1.
"""

import json
import sys

import numpy as np
from scipy.stats import norm, rankdata
from sklearn.metrics import roc_auc_score


def load(path):
    table = np.loadtxt(
        path,
        delimiter=",",
        skiprows=1,
        usecols=(0, 1, 3),
        dtype=[("id", "S32"), ("label", "S8"), ("score", "f8")],
    )
    return table["id"], table["label"] == b"yes", table["score"]


def placements(scores, positive):
    """DeLong's structural components of one model: V10 per positive, V01 per negative."""
    x, y = scores[positive], scores[~positive]
    m, n = len(x), len(y)
    tz = rankdata(np.concatenate([x, y]))
    tx, ty = rankdata(x), rankdata(y)
    auc = (tz[:m].sum() - m * (m + 1) / 2) / (m * n)
    return auc, (tz[:m] - tx) / n, 1.0 - (tz[m:] - ty) / m


def main():
    ids_a, pos_a, score_a = load(sys.argv[1])
    ids_b, _, score_b = load(sys.argv[2])

    auc = roc_auc_score(pos_a, score_a)
    auc_dl, v10, v01 = placements(score_a, pos_a)
    m, n = len(v10), len(v01)
    variance = v10.var(ddof=1) / m + v01.var(ddof=1) / n
    half = norm.ppf(0.975) * np.sqrt(variance)

    _, ia, ib = np.intersect1d(ids_a, ids_b, assume_unique=True, return_indices=True)
    labels = pos_a[ia]
    auc_a, a10, a01 = placements(score_a[ia], labels)
    auc_b, b10, b01 = placements(score_b[ib], labels)
    diff_var = (a10 - b10).var(ddof=1) / len(a10) + (a01 - b01).var(ddof=1) / len(a01)
    difference = auc_a - auc_b
    z = difference / np.sqrt(diff_var)
    print(
        json.dumps(
            {
                "auc": float(auc),
                "auc_delong": float(auc_dl),
                "lower": float(max(0.0, auc - half)),
                "upper": float(min(1.0, auc + half)),
                "paired_rows": int(len(ia)),
                "difference": float(difference),
                "p_value": float(min(1.0, 2 * norm.sf(abs(z)))),
            }
        )
    )


if __name__ == "__main__":
    main()
