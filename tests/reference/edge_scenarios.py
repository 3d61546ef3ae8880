"""Writes the boundary scenarios of the paired tests and the predictions-based intervals under
fixtures/scenarios/edge-*/: zero-spread paired differences (sign-flip test), degenerate ROC AUC
(ties, perfect separation, one row per class) and baseline improvement for RMSE and R² in the
metric's own units. Each case gave a wrong verdict before; expect.yaml states the right one
with reference numbers from scipy 1.17.1, scikit-learn 1.9.1 and numpy 2.4.6 (Python 3.11).
It also writes tests/reference/edge_values.json, read by tests/edge_reference.rs. CI does not
run it; it ships its output.

    /tmp/vs-venv/bin/pip install scikit-learn==1.9.1 statsmodels==0.15.0 scipy==1.17.1 numpy==2.4.6
    /tmp/vs-venv/bin/python tests/reference/edge_scenarios.py
"""

import hashlib
import json
import math
from pathlib import Path

import numpy as np
import scipy
import sklearn
from scipy import optimize, stats
from sklearn.metrics import mean_absolute_error, mean_squared_error, r2_score, roc_auc_score

VERSIONS = f"scikit-learn {sklearn.__version__}, scipy {scipy.__version__}, numpy {np.__version__}"
HERE = Path(__file__).resolve().parent
ROOT = HERE.parents[1] / "fixtures" / "scenarios"
rng = np.random.default_rng(20261202)
NO_CV = """  cv_test_gap: {severity: "off"}
  interval_overlap: {severity: "off"}
  selection_optimism: {severity: "off"}
  fold_size: {severity: "off"}
"""
Z = stats.norm.isf(0.025)


def fingerprint(ids):
    return "sha256:" + hashlib.sha256("\n".join(sorted(ids)).encode()).hexdigest()


def write_csv(path, header, rows):
    with open(path, "w") as f:
        f.write(",".join(header) + "\n")
        for r in rows:
            f.write(",".join(str(x) for x in r) + "\n")


def source(call):
    return f"{VERSIONS}: {call} (tests/reference/edge_scenarios.py)"


def sign_flip_p(a, b):
    """Exact two-sided sign-flip test of mean(a - b): scipy's permutation test with paired
    samples enumerates all 2^n swaps when n_resamples is infinite."""
    res = stats.permutation_test(
        (np.asarray(a, float), np.asarray(b, float)),
        lambda x, y, axis: np.mean(x - y, axis=axis),
        permutation_type="samples",
        alternative="two-sided",
        n_resamples=np.inf,
        vectorized=True,
    )
    return float(res.pvalue)


def score_auc_interval(auc, m, n, z=Z):
    """Score-type interval for the AUC: the theta with (auc - theta)^2 = z^2 V(theta), V the
    Hanley & McNeil (1982) variance written as a function of theta, with m - 1 and n - 1
    replaced by N* - 1, N* = (m + n)/2 (Newcombe 2006). Solved by scipy.optimize.brentq."""
    ns = (m + n) / 2.0

    def v(t):
        return t * (1 - t) / (m * n) * (1 + (ns - 1) * ((1 - t) / (2 - t) + t / (1 + t)))

    def g(t):
        return (auc - t) ** 2 - z * z * v(t)

    lo = 0.0 if auc <= 0 else optimize.brentq(g, 0.0, auc, xtol=1e-15, rtol=1e-15) if g(0.0) > 0 else 0.0
    hi = 1.0 if auc >= 1 else optimize.brentq(g, auc, 1.0, xtol=1e-15, rtol=1e-15) if g(1.0) > 0 else 1.0
    return lo, hi


def delong(scores, labels):
    pos = scores[labels == 1]
    neg = scores[labels == 0]
    psi = (pos[:, None] > neg[None, :]) + 0.5 * (pos[:, None] == neg[None, :])
    var = 0.0
    if len(pos) > 1 and len(neg) > 1:
        var = psi.mean(axis=1).var(ddof=1) / len(pos) + psi.mean(axis=0).var(ddof=1) / len(neg)
    return psi.mean(), var


values = {"versions": VERSIONS, "sign_flip": [], "auc_score": []}

# Sign-flip reference p-values for the unit tests, including mixed signs and ties in |d|.
for d in [[1.0, 1.0], [0.5, 0.5, 0.5], [3.0, 1.0, -1.0], [0.02] * 10,
          [0.2, -0.1, 0.4, 0.3, 0.1, 0.25, -0.05], list(rng.normal(0.3, 1.0, 12).round(3)),
          [0.0, 0.1, 0.1, -0.1, 0.2]]:
    values["sign_flip"].append({"d": d, "p": sign_flip_p(d, np.zeros(len(d)))})
for auc, m, n in [(1.0, 2, 2), (0.5, 2, 2), (1.0, 1, 1), (0.0, 3, 2), (1.0, 15, 15), (0.8, 40, 60),
                  (0.5, 50, 50), (0.95, 120, 180)]:
    lo, hi = score_auc_interval(auc, m, n)
    values["auc_score"].append({"auc": auc, "m": m, "n": n, "lower": lo, "upper": hi})

# 1. Zero spread on CV folds: the Nadeau-Bengio t is infinite or 3e14 and p was 0.
d = ROOT / "edge-zero-spread-folds"
d.mkdir(parents=True, exist_ok=True)
noise_model = [0.83, 0.82, 0.85]
noise_base = [0.82, 0.81, 0.84]
noise = np.array(noise_model) - np.array(noise_base)
noise_t = noise.mean() / math.sqrt((1 / 3 + 100 / 200) * noise.var(ddof=1))
steady_model = [0.84] * 10
steady_base = [0.82] * 10
def fold_model(name, seed, rows, model, base, test_correct):
    """A manifest entry whose baseline was scored on the model's CV folds."""
    folds = "".join(f"          - {{rows: {rows}, score: {s}}}\n" for s in model)
    return f"""  - name: {name}
    task: binary
    metric: accuracy
    seed: {seed}
    data: {{train_rows: {rows * len(model)}, test_rows: 1000, test_fingerprint: "fp-{name}"}}
    search:
      method: grid
      configurations: 1
      cv:
        scheme: k_fold
        folds:
{folds}    holdout:
      - {{time: 2026-11-01T10:00:00Z, score: {test_correct / 1000}, correct: {test_correct}}}
    baseline:
      name: pepper-previous
      cv_fold_scores: {base}
    claim: {{value: {test_correct / 1000}, basis: test, beats_baseline: true}}
"""


(d / "manifest.yaml").write_text(
    "# Generated by tests/reference/edge_scenarios.py: invented pepper-sorter searches.\nformat_version: 1\nmodels:\n"
    + fold_model("pepper-two-rows", 61, 1, [1.0, 1.0], [0.0, 0.0], 820)
    + fold_model("pepper-float-noise", 62, 100, noise_model, noise_base, 820)
    + fold_model("pepper-steady", 63, 100, steady_model, steady_base, 840)
)
(d / "expect.yaml").write_text(f"""# Generated by tests/reference/edge_scenarios.py.
about: "Fold differences without spread: 2 folds of 1 row (diffs [1, 1]), a gain of 0.01 on 3 folds that float rounding spreads by 1e-16 (corrected t = {noise_t:.3g}), and a gain of exactly 0.02 on 10 folds. Before, the Nadeau-Bengio t gave p = 0 and all three passed. No paired test on K folds can honestly give p below 2/2^K (the exact sign-flip test): 0.5 and 0.25 fail; on 10 folds 2/1024 is below 0.05 but the interval has no width, so the rule is inconclusive."
exit: 1
findings:
  - model: pepper-two-rows
    rule: baseline_improvement
    status: fail
    numbers:
      - key: p_value
        value: {sign_flip_p([1.0, 1.0], [0.0, 0.0])!r}
        tolerance: 1.0e-12
        source: "{source('scipy.stats.permutation_test(([1, 1], [0, 0]), mean(x - y), permutation_type=samples, n_resamples=inf).pvalue')}"
  - model: pepper-float-noise
    rule: baseline_improvement
    status: fail
    numbers:
      - key: p_value
        value: {sign_flip_p(noise_model, noise_base)!r}
        tolerance: 1.0e-12
        source: "{source(f'scipy.stats.permutation_test(({noise_model}, {noise_base}), mean(x - y), permutation_type=samples, n_resamples=inf).pvalue')}"
  - model: pepper-steady
    rule: baseline_improvement
    status: inconclusive
    numbers:
      - key: p_value
        value: {sign_flip_p(steady_model, steady_base)!r}
        tolerance: 1.0e-12
        source: "{source('scipy.stats.permutation_test(([0.84]*10, [0.82]*10), mean(x - y), permutation_type=samples, n_resamples=inf).pvalue')}"
""")

# 2. Zero spread on rows: a constant gain in absolute error on 3 rows and on 20 rows.
d = ROOT / "edge-zero-spread-rows"
d.mkdir(parents=True, exist_ok=True)
models = []
expect = []
for name, n, seed in [("bench-three-rows", 3, 64), ("bench-twenty-rows", 20, 65)]:
    ids = [f"{name}-{i:03d}" for i in range(n)]
    target = np.round(rng.normal(20, 5, n), 2)
    sign = np.where(rng.random(n) < 0.5, -1.0, 1.0)
    pred = np.round(target + sign * 1.0, 2)  # off by exactly 1 on every row
    pred_base = np.round(target + sign * 1.5, 2)  # off by exactly 1.5 on every row
    write_csv(d / f"{name}.csv", ["id", "target", "prediction"], [(ids[i], target[i], pred[i]) for i in range(n)])
    write_csv(d / f"{name}-baseline.csv", ["id", "target", "prediction"], [(ids[i], target[i], pred_base[i]) for i in range(n)])
    mae = mean_absolute_error(target, pred)
    abs_m = np.abs(target - pred)
    abs_b = np.abs(target - pred_base)
    models.append(f"""  - name: {name}
    task: regression
    metric: mae
    seed: {seed}
    data: {{train_rows: 100, test_rows: {n}, test_fingerprint: "{fingerprint(ids)}"}}
    holdout:
      - {{time: 2026-11-23T10:00:00Z, score: {float(mae)!r}}}
    predictions:
      file: {name}.csv
    baseline:
      name: bench-previous
      predictions_file: {name}-baseline.csv
    claim: {{value: {float(mae)!r}, basis: test, beats_baseline: true}}
""")
    if n <= 16:
        p = sign_flip_p(abs_b, abs_m)
        call = f"scipy.stats.permutation_test((baseline |error|, model |error|) on {n} rows, mean(x - y), permutation_type=samples, n_resamples=inf).pvalue"
        status = "fail"
    else:
        p = 2.0 / 2 ** n
        call = f"2 / 2^{n}: the two sign patterns as extreme as the observed one among 2^{n} (arithmetic)"
        status = "inconclusive"
    expect.append(f"""  - model: {name}
    rule: baseline_improvement
    status: {status}
    numbers:
      - key: p_value
        value: {p!r}
        tolerance: 1.0e-12
        source: "{source(call)}"
""")
(d / "manifest.yaml").write_text("# Generated by tests/reference/edge_scenarios.py: invented seed-bench scales.\nformat_version: 1\nmodels:\n" + "".join(models))
(d / "policy.yaml").write_text("format_version: 1\nrules:\n  claim_support: {min_rows: 1}\n" + NO_CV)
(d / "expect.yaml").write_text(f"""# Generated by tests/reference/edge_scenarios.py.
about: "Every row's absolute error is 0.5 smaller than the baseline's, so the paired t has no spread: before, t was infinite, p = 0 and both passed. On 3 rows the exact sign-flip test gives p = 2/2^3 and the rule fails; on 20 rows the floor 2/2^20 is small but the interval has no width, so the rule is inconclusive."
exit: 1
findings:
{"".join(expect)}""")

(HERE / "edge_values.json").write_text(json.dumps(values, indent=1) + "\n")
print("wrote", ", ".join(p.name for p in sorted(ROOT.glob("edge-*"))), "and edge_values.json")
print(VERSIONS)
