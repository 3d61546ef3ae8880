#!/usr/bin/env python3
"""Write tests/reference/stats_values.json: reference values for src/stats, from scipy/statsmodels.

The Rust test tests/stats_reference.rs reads the JSON; CI does not run this script. Re-run it by
hand after changing a grid, in a virtual environment with exactly these versions:

    python3 -m venv /tmp/venv && /tmp/venv/bin/pip install \
        scipy==1.17.1 statsmodels==0.15.0 numpy==2.4.6
    /tmp/venv/bin/python tests/reference/generate.py

Every number is produced by a named library function below; nothing is copied from the Rust code.
"""

import json
import math
import platform
import sys
from fractions import Fraction
from pathlib import Path

import numpy as np
import scipy
import statsmodels
from scipy import integrate, special, stats
from statsmodels.stats.proportion import (
    confint_proportions_2indep,
    proportion_confint,
    proportions_ztest,
)

PINNED = {"scipy": "1.17.1", "statsmodels": "0.15.0", "numpy": "2.4.6"}
for name, module in (("scipy", scipy), ("statsmodels", statsmodels), ("numpy", np)):
    if module.__version__ != PINNED[name]:
        sys.exit(f"{name} {module.__version__} installed, {PINNED[name]} pinned")


def f(v):
    """Plain float (JSON has no numpy types); infinities as strings."""
    v = float(v)
    if math.isinf(v):
        return "inf" if v > 0 else "-inf"
    return v


def proportion_intervals():
    """statsmodels proportion_confint for the four methods (alpha = 1 - confidence)."""
    cases = [
        # Newcombe (1998a) worked examples, then ML-sized and other confidences.
        (81, 263, 0.95), (15, 148, 0.95), (0, 20, 0.95), (1, 29, 0.95), (29, 29, 0.95),
        (16, 20, 0.95), (1220, 1980, 0.95), (950, 1000, 0.95), (5, 5, 0.95),
        (7, 50, 0.90), (7, 50, 0.99), (999, 1000, 0.999), (1, 1, 0.95), (0, 1, 0.8),
    ]
    out = []
    for x, n, conf in cases:
        row = {"x": x, "n": n, "confidence": conf}
        for method in ("wilson", "beta", "agresti_coull", "jeffreys"):
            lo, hi = proportion_confint(x, n, alpha=1 - conf, method=method)
            row[method] = [f(lo), f(hi)]
        out.append(row)
    return out


def large_n_bounds():
    """Clopper-Pearson and Jeffreys bounds as scipy.stats.beta.ppf, n up to 1e7.

    Boundary bounds that do not exist as Beta quantiles (Clopper-Pearson L at x = 0, U at x = n)
    are recorded as null; Jeffreys boundary values are the raw quantiles (statsmodels' convention).
    """
    out = []
    alpha = 0.05
    for n in (10**4, 10**5, 10**6, 10**7):
        for x in sorted({0, 1, 2, n // 2, n - 1, n}):
            cp_lo = None if x == 0 else f(stats.beta.ppf(alpha / 2, x, n - x + 1))
            cp_hi = None if x == n else f(stats.beta.isf(alpha / 2, x + 1, n - x))
            j_lo = f(stats.beta.ppf(alpha / 2, x + 0.5, n - x + 0.5))
            j_hi = f(stats.beta.isf(alpha / 2, x + 0.5, n - x + 0.5))
            out.append({"x": x, "n": n, "confidence": 1 - alpha,
                        "clopper_pearson": [cp_lo, cp_hi], "jeffreys": [j_lo, j_hi]})
    return out


def incomplete_beta():
    """scipy.special.betainc(a, b, x) at the mean and at +-1, 3, 6 standard deviations."""
    shapes = [(0.5, 0.5), (2, 5), (10, 11), (0.5, 30), (1e3, 2e3), (5e4, 5e4), (1e5, 1e5),
              (1e6, 1e6), (3e6, 7e6), (5e6, 5e6), (1, 1e7), (0.5, 1e7), (20, 1e7)]
    out = []
    for a, b in shapes:
        mean = a / (a + b)
        sd = math.sqrt(a * b / ((a + b) ** 2 * (a + b + 1)))
        for k in (-6, -3, -1, 0, 1, 3, 6):
            x = mean + k * sd
            if 0 < x < 1:
                out.append({"a": a, "b": b, "x": x, "value": f(special.betainc(a, b, x))})
    return out


def binomial_tails():
    """scipy.stats.binom.sf(k - 1, n, p) = P(X >= k), k at the mean +- 0, 1, 3, 6 sd and edges."""
    out = []
    for n in (20, 1000, 10**4, 10**5, 10**6, 10**7):
        for p in (0.01, 0.5, 0.616, 0.9):
            mean, sd = n * p, math.sqrt(n * p * (1 - p))
            ks = {1, n}
            for z in (-6, -3, -1, 0, 1, 3, 6):
                k = int(round(mean + z * sd))
                if 1 <= k <= n:
                    ks.add(k)
            for k in sorted(ks):
                out.append({"k": k, "n": n, "p": p, "value": f(stats.binom.sf(k - 1, n, p))})
    return out


def best_of_n():
    """P(best of N >= x) = -expm1(N * log1p(-binom.sf(k - 1, n, p))), k = ceil(n x) exactly."""
    cases = [
        (900, 20, 0.616, "0.8"), (1, 20, 0.616, "0.8"), (50, 200, 0.7, "0.76"),
        (10, 1000, 0.9, "0.915"), (1, 100, 0.05, "0.07"), (10**4, 100, 0.05, "0.07"),
        (10**7, 10**6, 0.5, "0.502"), (10**7, 10**6, 0.5, "0.5025"),
        (10**7, 10**6, 0.5, "0.51"), (1000, 10**4, 0.8, "0.8"), (1000, 10**4, 0.8, "0.83"),
        (2, 10**5, 0.3, "0.305"), (10**7, 20, 0.5, "1"), (3, 50, 0.9, "0.5"),
    ]
    out = []
    for configs, n, p, x in cases:
        k = math.ceil(Fraction(x) * n)
        sf = stats.binom.sf(k - 1, n, p)
        value = -math.expm1(configs * math.log1p(-sf))
        out.append({"configs": configs, "n": n, "p": p, "x": float(x), "k": k,
                    "single_tail": f(sf), "value": f(value)})
    return out


def t_values():
    """scipy.stats.t.ppf and t.sf over df from 1 to infinity."""
    dfs = [1, 2, 4, 9, 29, 120, 1e3, 1e4, 1e5, 1e6, 1e7, 1e9, math.inf]
    ppf = [{"p": p, "df": f(df), "value": f(stats.t.ppf(p, df))}
           for df in dfs for p in (0.5005, 0.9, 0.975, 0.995, 0.9995, 0.025)]
    sf = [{"t": t, "df": f(df), "value": f(stats.t.sf(t, df))}
          for df in dfs for t in (-1.5, 0.3, 1.96, 2.5, 5.0, 6.0, 10.0, 30.0)]
    extra_df = [0.5, 1.5, 12.34]
    ppf += [{"p": 0.975, "df": df, "value": f(stats.t.ppf(0.975, df))} for df in extra_df]
    # Extreme and near-central probabilities (statrs' inverse hangs on the first one).
    extreme = [(1e-100, 999), (1e-12, 3), (1 - 1e-12, 30), (0.5 + 1e-9, 10), (1e-300, 1000),
               (1e-300, 1001), (1e-100, 5000), (1e-20, 1e4), (1e-300, 1e5), (1e-300, 1e6)]
    ppf += [{"p": p, "df": df, "value": f(stats.t.ppf(p, df))} for p, df in extreme]
    return {"ppf": ppf, "sf": sf}


def normal_values():
    """scipy.stats.norm.isf(alpha / 2) and norm.sf."""
    z = [{"confidence": c, "value": f(stats.norm.isf((1 - c) / 2))}
         for c in (0.5, 0.8, 0.9, 0.95, 0.99, 0.999, 1 - 1e-9)]
    points = (-3.0, -0.5, 0.0, 1.0, 2.65, 5.0, 10.0, 30.0)
    sf = [{"z": x, "value": f(stats.norm.sf(x))} for x in points]
    return {"z_two_sided": z, "sf": sf}


def two_sample():
    """Newcombe hybrid score interval and pooled z-test, statsmodels."""
    out = []
    for x1, n1, x2, n2 in ((56, 70, 48, 80), (16, 20, 1220, 1980), (9, 10, 3, 10), (0, 15, 4, 40)):
        lo, hi = confint_proportions_2indep(x1, n1, x2, n2, method="newcomb", compare="diff",
                                            alpha=0.05)
        stat, pval = proportions_ztest([x1, x2], [n1, n2], value=0, alternative="two-sided")
        out.append({"x1": x1, "n1": n1, "x2": x2, "n2": n2, "confidence": 0.95,
                    "newcombe": [f(lo), f(hi)], "z": f(stat), "p_value": f(pval)})
    return out


def mean_intervals():
    """scipy.stats.ttest_1samp(values, 0).confidence_interval(confidence)."""
    sets = [
        [0.02, 0.05, -0.01, 0.03, 0.04, 0.0, 0.02, 0.06, 0.01, 0.03],
        [0.81, 0.79, 0.84, 0.80, 0.83],
        [0.5, 0.7],
    ]
    out = []
    for values in sets:
        for conf in (0.9, 0.95, 0.99):
            res = stats.ttest_1samp(values, 0.0)
            ci = res.confidence_interval(confidence_level=conf)
            out.append({"values": values, "confidence": conf, "mean": f(np.mean(values)),
                        "std_error": f(stats.sem(values)), "interval": [f(ci.low), f(ci.high)]})
    return out


def expected_max():
    """E[max of N iid N(0,1)] by scipy.integrate.quad of x N phi(x) Phi(x)^(N-1), log space."""
    out = []
    for n in (2, 3, 5, 10, 100, 900, 1000, 10**4, 10**6, 10**7):
        mode = stats.norm.isf(1.0 / n)

        def integrand(x, n=n):
            return x * n * math.exp(stats.norm.logpdf(x) + (n - 1) * special.log_ndtr(x))

        value, err = integrate.quad(integrand, mode - 12, mode + 12, points=[mode],
                                    limit=500, epsabs=1e-14, epsrel=1e-13)
        blom = stats.norm.ppf((n - 0.375) / (n + 0.25))
        out.append({"n": n, "value": f(value), "quad_error_estimate": f(err), "blom": f(blom)})
    return out


def cochran():
    """n0 = z^2 p (1 - p) / E^2 with z = norm.isf(alpha / 2)."""
    out = []
    for p, e, conf in ((0.5, 0.05, 0.95), (0.5, 0.03, 0.95), (0.5, 0.02, 0.95), (0.5, 0.01, 0.95),
                       (0.1, 0.02, 0.99), (0.8, 0.05, 0.9)):
        z = stats.norm.isf((1 - conf) / 2)
        value = z * z * p * (1 - p) / e**2
        out.append({"p": p, "margin": e, "confidence": conf, "value": f(value)})
    return out


def main():
    data = {
        "generator": "tests/reference/generate.py",
        "versions": {"python": platform.python_version(), "scipy": scipy.__version__,
                     "statsmodels": statsmodels.__version__, "numpy": np.__version__},
        "proportion_confint": proportion_intervals(),
        "large_n_bounds": large_n_bounds(),
        "incomplete_beta": incomplete_beta(),
        "binomial_sf": binomial_tails(),
        "best_of_n": best_of_n(),
        "t": t_values(),
        "normal": normal_values(),
        "two_sample": two_sample(),
        "mean_t_interval": mean_intervals(),
        "expected_max": expected_max(),
        "cochran": cochran(),
    }
    path = Path(__file__).with_name("stats_values.json")
    path.write_text(json.dumps(data, indent=1) + "\n")


if __name__ == "__main__":
    main()
