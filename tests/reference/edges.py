"""Reference values for the boundary scenarios (issue 9: perfect scores, tiny folds, ties).

Run with scipy 1.17.1, statsmodels 0.15.0, numpy 2.4.6 (Python 3.11):

    /tmp/vs-venv/bin/python tests/reference/edges.py

Prints each value with the call that produced it; the scenario files under fixtures/scenarios/
quote them with the same call in their `source` field. It also writes the 900-trial JSON Lines
files of the `selection-perfect-cv` scenario (`--write-trials`). CI does not run this script.

Standard error at the boundary: Agresti & Coull (1998), half the width of their adjusted Wald
interval divided by z. statsmodels' `proportion_confint(..., method='agresti_coull')` clips to
[0, 1]; when the upper end is clipped (x = n) the half-width is taken from the lower end and the
centre p~ = (x + z^2/2)/(n + z^2).
"""

import json
import math
import sys

import numpy as np
import scipy
import statsmodels
from scipy import integrate, stats
from statsmodels.stats.proportion import (
    confint_proportions_2indep,
    proportion_confint,
    proportions_ztest,
)

Z = stats.norm.ppf(0.975)
print(f"scipy {scipy.__version__}, statsmodels {statsmodels.__version__}, numpy {np.__version__}")


def ac_se(x, n, z=Z):
    """Agresti-Coull standard error from statsmodels' interval (see module docstring)."""
    lo, hi = proportion_confint(x, n, alpha=2 * stats.norm.sf(z), method="agresti_coull")
    centre = (x + z * z / 2) / (n + z * z)
    if hi < 1 and lo > 0:
        return (hi - lo) / (2 * z), centre
    if hi >= 1:
        return (centre - lo) / z, centre
    return (hi - centre) / z, centre


def expected_max(n):
    f = lambda x: x * n * stats.norm.pdf(x) * stats.norm.cdf(x) ** (n - 1)
    c = -stats.norm.ppf(1 / n)
    v, _ = integrate.quad(f, c - 10, c + 10, limit=200)
    return v


def wilson(x, n):
    return proportion_confint(x, n, alpha=0.05, method="wilson")


def tail(configs, n, p, k):
    # P(best of `configs` Bin(n, p) >= k) = 1 - F(k - 1)^configs
    return -math.expm1(configs * math.log1p(-stats.binom.sf(k - 1, n, p)))


def show(label, value):
    print(f"{label}: {value:.10f}")


# --- selection-perfect-cv: perfect CV scores after 900 configurations (issue 9, item 1) ---
e900 = expected_max(900)
show("E[max of 900 normals] (scipy integrate.quad)", e900)
for x, n, test_x, test_n in [(60, 60, 960, 1000), (20, 20, 960, 1000), (200, 200, 985, 1000)]:
    se, centre = ac_se(x, n)
    lo, hi = wilson(x, n)
    show(f"{x}/{n}: Agresti-Coull SE (statsmodels agresti_coull lower, centre {centre:.10f})", se)
    show(f"{x}/{n}: Wilson upper", hi)
    show(f"{x}/{n}: Wilson upper - E[max 900] * SE", hi - e900 * se)
    tlo, thi = wilson(test_x, test_n)
    show(f"test {test_x}/{test_n}: Wilson lower", tlo)
    show(f"test {test_x}/{test_n}: Wilson upper", thi)
    show(f"{x}/{n} vs test {test_x}/{test_n}: best-of-900 tail", tail(900, n, test_x / test_n, x))

# --- selection-tail-count: the best-of-N tail on the count correct (issue 9, item 2) ---
show("tail N=900, CV 40/49, test 0.61 (scipy binom.sf)", tail(900, 49, 0.61, 40))
show("tail N=2, CV 142/150, test 898/1000 (scipy binom.sf)", tail(2, 150, 0.898, 142))
lo, hi = wilson(898, 1000)
show("test 898/1000 Wilson upper", hi)

# --- fold-size at the boundary: 60/60 in folds of 30 ---
se60, c60 = ac_se(60, 60)
fold = math.sqrt(c60 * (1 - c60) / (30 + Z * Z))
show("fold SE for 30 rows at p~ of 60/60", fold)
show("Cochran rows at p~ of 60/60, E = 0.05", Z * Z * c60 * (1 - c60) / 0.05**2)

# --- existing scenarios, restated with the Agresti-Coull SE ---
se16, _ = ac_se(16, 20)
lo, hi = wilson(16, 20)
show("selection-luck: AC SE of 16/20", se16)
show("selection-luck: adjusted lower", lo - e900 * se16)
show("selection-luck: adjusted upper", hi - e900 * se16)
se344, _ = ac_se(344, 400)
e25 = expected_max(25)
lo, hi = wilson(344, 400)
show("selection-small-search: AC SE of 344/400", se344)
show("selection-small-search: optimism", e25 * se344)
show("selection-small-search: bound", hi - e25 * se344)
_, c16 = ac_se(16, 20)
show("gap-over-bound: fold SE for 4 rows at p~ of 16/20", math.sqrt(c16 * (1 - c16) / (4 + Z * Z)))

# --- cv_test_gap: CV 16/20 vs test 20/20 (issue 9, item 5) ---
z, p = proportions_ztest([16, 20], [20, 20])
lo, hi = confint_proportions_2indep(16, 20, 20, 20, method="newcomb", compare="diff")
print(f"proportions_ztest([16, 20], [20, 20]) z = {z:.10f}, p = {p:.10f}; newcomb [{lo:.10f}, {hi:.10f}]")


def write_trials(path):
    # Trial 0 is perfect on every fold (the selected configuration); the other 899 score 0.75 on
    # one fold in turn and 1.0 elsewhere, so no trial beats trial 0 on any fold.
    with open(path, "w") as f:
        for i in range(900):
            scores = [1.0] * 5
            if i > 0:
                scores[i % 5] = 0.75
            f.write(json.dumps({"id": f"t{i}", "fold_scores": scores}) + "\n")


if "--write-trials" in sys.argv:
    write_trials("fixtures/scenarios/selection-perfect-cv-search/trials-900.jsonl")

# --- fold-mean-range: fold-mean t intervals kept inside [0, 1] (issue 9, item 8) ---
for name, folds, rows in [("auc", [1.0, 0.99, 1.0, 0.98, 1.0], 200), ("f1", [1.0] * 5, 200)]:
    a = np.asarray(folds)
    m, sem = a.mean(), stats.sem(a)
    lo_t, hi_t = stats.t.interval(0.95, len(a) - 1, loc=m, scale=sem) if sem > 0 else (m, m)
    floor, _ = ac_se(m * rows, rows)
    se = max(sem, floor)
    t = stats.t.ppf(0.975, len(a) - 1)
    print(f"{name}: mean {m:.10f}, sem {sem:.10f}, plain t interval [{lo_t:.10f}, {hi_t:.10f}]; "
          f"Agresti-Coull floor on {rows} rows {floor:.10f}; interval used "
          f"[{max(0, m - t * se):.10f}, {min(1, m + t * se):.10f}]")
    show(f"{name}: E[max 900] shift of the floored SE", e900 * se)

# --- cv-repeated: 801 of 1000 validations over 2 repeats of 500 rows (issue 9, item 12) ---
lo, hi = proportion_confint(400.5, 500, alpha=0.05, method="wilson")
print(f"proportion_confint(400.5, 500, method='wilson') = [{lo:.10f}, {hi:.10f}]")
lo, hi = confint_proportions_2indep(400.5, 500, 400, 500, method="newcomb", compare="diff")
z, p = proportions_ztest([400.5, 400], [500, 500])
print(f"newcomb(400.5, 500, 400, 500) = [{lo:.10f}, {hi:.10f}]; ztest p = {p:.10f}")

# --- plan with 10^18 looks: Bonferroni z at alpha/k = 5e-20 (issue 9, item 12) ---
zk = stats.norm.isf(0.05 / 1e18 / 2)
print(f"norm.isf(0.05 / 1e18 / 2) = {zk:.10f}; margin on 1e14 rows = {zk * math.sqrt(0.25 / 1e14):.10e}")
