#!/usr/bin/env python3
"""Write tests/reference/evidence_values.json: seeded synthetic predictions plus reference values
for the per-example evidence in src/stats (metrics, McNemar, paired and corrected t-tests).

The Rust test tests/evidence_reference.rs reads the JSON; CI does not run this script. Re-run it
by hand after changing a case, in a virtual environment with exactly these versions:

    python3 -m venv /tmp/venv && /tmp/venv/bin/pip install scikit-learn==1.9.1 \
        scipy==1.17.1 statsmodels==0.15.0 numpy==2.4.6
    /tmp/venv/bin/python tests/reference/generate_evidence.py

Every reference number is produced by a named library function below (scikit-learn, statsmodels,
scipy); nothing is copied from the Rust code. DeLong variances are not here: the Rust test checks
them against its own direct O(m*n) implementation of DeLong's structural components.
"""

import json
import platform
import sys
from pathlib import Path

import numpy as np
import scipy
import sklearn
import statsmodels
from scipy import stats
from sklearn.metrics import (
    accuracy_score,
    balanced_accuracy_score,
    f1_score,
    log_loss,
    mean_absolute_error,
    mean_squared_error,
    r2_score,
    roc_auc_score,
)
from statsmodels.stats.contingency_tables import mcnemar

PINNED = {"scikit-learn": "1.9.1", "scipy": "1.17.1", "statsmodels": "0.15.0", "numpy": "2.4.6"}
for name, module in (("scikit-learn", sklearn), ("scipy", scipy), ("statsmodels", statsmodels),
                     ("numpy", np)):
    if module.__version__ != PINNED[name]:
        sys.exit(f"{name} {module.__version__} installed, {PINNED[name]} pinned")

RNG = np.random.default_rng(20260401)


def floats(a):
    return [float(v) for v in a]


def ints(a):
    return [int(v) for v in a]


def t_interval(values, confidence=0.95):
    """scipy.stats.ttest_1samp(...).confidence_interval: the one-sample t interval of the mean."""
    ci = stats.ttest_1samp(values, 0.0).confidence_interval(confidence_level=confidence)
    return [float(ci.low), float(ci.high)]


def binary_case(n, tie_decimals, name):
    """Two models' scores for one binary label vector; scores rounded to create ties."""
    y = RNG.random(n) < 0.4
    latent = RNG.normal(size=n)
    score_a = 1 / (1 + np.exp(-(1.2 * y - 0.6 + latent)))
    score_b = 1 / (1 + np.exp(-(0.9 * y - 0.45 + 0.7 * latent + 0.7 * RNG.normal(size=n))))
    score_a = np.round(score_a, tie_decimals)
    score_b = np.round(score_b, tie_decimals)
    # A few exact 0/1 probabilities exercise log_loss's clipping.
    score_a[:3] = [0.0, 1.0, 0.0]
    pred_a = (score_a >= 0.5).astype(int)
    pred_b = (score_b >= 0.5).astype(int)
    yi = y.astype(int)
    right_a, right_b = pred_a == yi, pred_b == yi
    b = int(np.sum(right_a & ~right_b))
    c = int(np.sum(~right_a & right_b))
    # Per-row log losses (same clipping as sklearn) for the paired t-test.
    eps = np.finfo(float).eps
    loss_a = -np.log(np.clip(np.where(y, score_a, 1 - score_a), eps, 1 - eps))
    loss_b = -np.log(np.clip(np.where(y, score_b, 1 - score_b), eps, 1 - eps))
    paired = stats.ttest_rel(loss_a, loss_b)
    paired_ci = paired.confidence_interval(confidence_level=0.95)
    return {
        "name": name,
        "labels": [bool(v) for v in y],
        "scores_a": floats(score_a),
        "scores_b": floats(score_b),
        "pred_a": ints(pred_a),
        "accuracy": float(accuracy_score(yi, pred_a)),
        "balanced_accuracy": float(balanced_accuracy_score(yi, pred_a)),
        "f1_binary": float(f1_score(yi, pred_a, average="binary", pos_label=1)),
        "f1_binary_neg": float(f1_score(yi, pred_a, average="binary", pos_label=0)),
        "f1_macro": float(f1_score(yi, pred_a, average="macro")),
        "f1_micro": float(f1_score(yi, pred_a, average="micro")),
        "roc_auc_a": float(roc_auc_score(yi, score_a)),
        "roc_auc_b": float(roc_auc_score(yi, score_b)),
        "log_loss_a": float(log_loss(yi, score_a)),
        "log_loss_a_interval": t_interval(loss_a),
        "mcnemar_b": b,
        "mcnemar_c": c,
        "ttest_rel": {"t": float(paired.statistic), "p": float(paired.pvalue),
                      "df": float(paired.df), "ci95": [float(paired_ci.low),
                                                       float(paired_ci.high)]},
    }


def multiclass_case():
    """Five classes; class 4 is predicted a few times but never true (sklearn's label-set edge)."""
    n, k = 250, 5
    y = RNG.choice(4, size=n, p=[0.4, 0.3, 0.2, 0.1])
    pred = np.where(RNG.random(n) < 0.7, y, RNG.integers(0, 4, size=n))
    pred[RNG.choice(n, size=6, replace=False)] = 4
    proba = RNG.dirichlet(np.ones(k), size=n)
    proba[np.arange(n), y] += 1.5
    proba /= proba.sum(axis=1, keepdims=True)
    labels = list(range(k))
    return {
        "classes": k,
        "actual": ints(y),
        "predicted": ints(pred),
        "prob_of_true_class": floats(proba[np.arange(n), y]),
        "accuracy": float(accuracy_score(y, pred)),
        "balanced_accuracy": float(balanced_accuracy_score(y, pred)),
        "f1_macro": float(f1_score(y, pred, average="macro", zero_division=0)),
        "f1_micro": float(f1_score(y, pred, average="micro", zero_division=0)),
        "f1_per_class": floats(f1_score(y, pred, average=None, labels=labels, zero_division=0)),
        "log_loss": float(log_loss(y, proba, labels=labels)),
    }


def regression_case():
    n = 200
    x = RNG.normal(size=n)
    target = 50 + 3 * x + RNG.standard_t(4, size=n)
    prediction = 50 + 2.8 * x + 0.2
    err = target - prediction
    return {
        "target": floats(target),
        "prediction": floats(prediction),
        "rmse": float(np.sqrt(mean_squared_error(target, prediction))),
        "mse": float(mean_squared_error(target, prediction)),
        "mae": float(mean_absolute_error(target, prediction)),
        "r2": float(r2_score(target, prediction)),
        "mae_interval": t_interval(np.abs(err)),
        "mse_interval": t_interval(err**2),
        "constant_target_r2": {
            "perfect": float(r2_score([2.0, 2.0, 2.0], [2.0, 2.0, 2.0])),
            "imperfect": float(r2_score([2.0, 2.0, 2.0], [2.0, 2.5, 2.0])),
        },
    }


def mcnemar_cases(extra):
    """statsmodels mcnemar on [[a, b], [c, d]] (the diagonal does not enter)."""
    out = []
    for b, c in [(150, 86), (10, 2), (0, 5), (7, 3), (12, 13), (40, 25), (1, 0), (300, 251)] + extra:
        table = [[100, b], [c, 100]]
        exact = mcnemar(table, exact=True)
        cc = mcnemar(table, exact=False, correction=True)
        plain = mcnemar(table, exact=False, correction=False)
        out.append({"b": b, "c": c, "exact_p": float(exact.pvalue),
                    "chi2_cc": float(cc.statistic), "chi2_cc_p": float(cc.pvalue),
                    "chi2": float(plain.statistic), "chi2_p": float(plain.pvalue)})
    return out


def nadeau_bengio():
    """Corrected resampled t (Nadeau & Bengio 2003) with scipy's t distribution, plus the plain
    one-sample t from scipy.stats.ttest_1samp for the same differences."""
    d = np.array([0.02, 0.05, -0.01, 0.03, 0.04, 0.0, 0.02, 0.06, 0.01, 0.03])
    j, ratio = len(d), 1 / 9
    se = np.sqrt((1 / j + ratio) * np.var(d, ddof=1))
    t = d.mean() / se
    p = 2 * stats.t.sf(abs(t), j - 1)
    q = stats.t.ppf(0.975, j - 1)
    plain = stats.ttest_1samp(d, 0.0)
    return {"diffs": floats(d), "ratio": ratio, "mean": float(d.mean()), "std_error": float(se),
            "t": float(t), "p": float(p), "ci95": [float(d.mean() - q * se),
                                                  float(d.mean() + q * se)],
            "plain_t": float(plain.statistic), "plain_p": float(plain.pvalue)}


def main():
    cases = [binary_case(300, 2, "two_decimals"), binary_case(200, 1, "one_decimal")]
    data = {
        "generator": "tests/reference/generate_evidence.py",
        "versions": {"python": platform.python_version(), "scikit-learn": sklearn.__version__,
                     "scipy": scipy.__version__, "statsmodels": statsmodels.__version__,
                     "numpy": np.__version__},
        "binary": cases,
        "multiclass": multiclass_case(),
        "regression": regression_case(),
        "mcnemar": mcnemar_cases([(c["mcnemar_b"], c["mcnemar_c"]) for c in cases]),
        "nadeau_bengio": nadeau_bengio(),
    }
    path = Path(__file__).with_name("evidence_values.json")
    path.write_text(json.dumps(data, separators=(",", ":")) + "\n")


if __name__ == "__main__":
    main()
