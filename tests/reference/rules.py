"""Reference values for the rule scenarios under fixtures/scenarios/.

Run with scipy 1.17.1, statsmodels 0.15.0, numpy 2.4.6 (Python 3.11):

    python -m venv /tmp/vs-venv && /tmp/vs-venv/bin/pip install scipy==1.17.1 statsmodels==0.15.0 numpy==2.4.6
    /tmp/vs-venv/bin/python tests/reference/rules.py

It prints each value with the call that produced it; the scenario files quote these values with
the same call named in their `source` field. CI does not run this script.
"""

import math

import numpy as np
import scipy
import statsmodels
from scipy import stats
from statsmodels.stats.proportion import (
    confint_proportions_2indep,
    proportion_confint,
    proportions_ztest,
)

print(f"scipy {scipy.__version__}, statsmodels {statsmodels.__version__}, numpy {np.__version__}")


def wilson(x, n, conf):
    lo, hi = proportion_confint(x, n, alpha=1 - conf, method="wilson")
    print(f"proportion_confint({x}, {n}, alpha={1 - conf:.10g}, method='wilson') = [{lo:.10f}, {hi:.10f}]")


def newcombe(x1, n1, x2, n2):
    lo, hi = confint_proportions_2indep(x1, n1, x2, n2, method="newcomb", compare="diff")
    z, p = proportions_ztest([x1, x2], [n1, n2])
    print(
        f"confint_proportions_2indep({x1}, {n1}, {x2}, {n2}, method='newcomb') = [{lo:.10f}, {hi:.10f}]; "
        f"proportions_ztest z = {z:.10f}, p = {p:.10g}"
    )


def hoeffding(n, alpha, k):
    # Hoeffding (1963) two-sided bound with a union bound over k looks: eps = sqrt(ln(2k/alpha) / 2n).
    print(f"hoeffding margin n={n}, alpha={alpha}, k={k}: {math.sqrt(math.log(2 * k / alpha) / (2 * n)):.10f}")


def t_interval(values, conf):
    a = np.asarray(values, dtype=float)
    m, se = a.mean(), stats.sem(a)
    lo, hi = stats.t.interval(conf, len(a) - 1, loc=m, scale=se)
    print(f"t.interval({conf}, df={len(a) - 1}, mean={m:.10f}, sem={se:.10f}) = [{lo:.10f}, {hi:.10f}]")


# supported-baseline: Newcombe (1998a) example 81/263 as the test split.
wilson(81, 263, 0.95)
# holdout-over-budget: 15/148 (Newcombe 1998a example) scored 4 times -> Bonferroni 1 - 0.05/4.
wilson(15, 148, 1 - 0.05 / 4)
hoeffding(148, 0.05, 4)
# gap-beyond-noise: Newcombe (1998b) example 56/70 vs 48/80.
newcombe(56, 70, 48, 80)
# gap-over-bound: 20 rows in folds of 4 (16 correct) against 1220/1980 on the test split.
newcombe(16, 20, 1220, 1980)
# intervals-apart: 900/1000 in CV against 800/1000 on the test split.
wilson(900, 1000, 0.95)
wilson(800, 1000, 0.95)
# claim-above-test: 1086/1200 on the test split.
wilson(1086, 1200, 0.95)
# regression-fold-mean: RMSE per fold.
t_interval([3.1, 2.9, 3.4, 3.0, 3.1], 0.95)


def expected_max(n):
    # E[max of n iid N(0,1)] = integral of x * n * phi(x) * Phi(x)^(n-1), with Phi^(n-1) in log space.
    from scipy import integrate

    f = lambda x: x * n * stats.norm.pdf(x) * math.exp((n - 1) * stats.norm.logcdf(x))
    mode = stats.norm.ppf(1 - 1 / n) if n > 1 else 0.0
    value, _ = integrate.quad(f, mode - 12, mode + 12, points=[mode], limit=200)
    print(f"E[max of {n}] (scipy integrate.quad) = {value:.10f}")
    return value


def best_of_n(n_configs, n, p, k):
    # P(best of N >= k/n) = 1 - F(k-1; n, p)^N, evaluated as -expm1(N * log1p(-sf(k-1))).
    sf = stats.binom.sf(k - 1, n, p)
    value = -math.expm1(n_configs * math.log1p(-sf))
    print(f"best-of-{n_configs} tail n={n} p={p:.10f} k={k}: {value:.12g} (binom.sf(k-1) = {sf:.10g})")


def wilson_upper_minus(x, n, conf, shift):
    lo, hi = proportion_confint(x, n, alpha=1 - conf, method="wilson")
    print(f"Wilson({x}/{n}) shifted by -{shift:.10f}: [{lo - shift:.10f}, {hi - shift:.10f}]")


# selection-luck: 900 configurations, CV 16/20 (5 folds of 4 rows), test 1220/1980.
e900 = expected_max(900)
se = math.sqrt(0.8 * 0.2 / 20)
wilson_upper_minus(16, 20, 0.95, e900 * se)
best_of_n(900, 20, 1220 / 1980, 16)
# selection-small-search: 25 configurations, CV 344/400, test 850/1000.
e25 = expected_max(25)
se = math.sqrt(0.86 * 0.14 / 400)
print(f"optimism 25 configs: {e25 * se:.10f}")
wilson_upper_minus(344, 400, 0.95, e25 * se)
best_of_n(25, 400, 0.85, 344)
wilson(850, 1000, 0.95)
# selection-bias-correction: Tibshirani & Tibshirani on 4 configurations x 5 folds of 100 rows.
wilson_upper_minus(403, 500, 0.95, 0.03)
