"""Reference values for the calibrated selection-optimism gate's scenarios
(fixtures/scenarios/selection-calibrated, selection-luck).

Run with scipy 1.17.1, statsmodels 0.15.0, numpy 2.4.6 (Python 3.11):

    python tests/reference/calibrated.py

Prints each value with the call that produced it; the scenario files quote them in their
`source` field. CI does not run this script.

- Wilson interval: statsmodels `proportion_confint(x, n, method='wilson')`.
- Agresti & Coull (1998) standard error: half the width of statsmodels' agresti_coull interval
  over z (unclipped cases only here, or the clipped rule of tests/reference/edges.py).
- Fold interval: mean of the fold scores ± scipy `t.ppf(0.975, K - 1)` × s/√K.
- E[max of 2 standard normals] = 1/√π (numerical check: scipy integrate.quad).
"""

import math

import numpy as np
import scipy
import statsmodels
from scipy import integrate, stats
from statsmodels.stats.proportion import proportion_confint

Z = stats.norm.ppf(0.975)
print(f"scipy {scipy.__version__}, statsmodels {statsmodels.__version__}, numpy {np.__version__}")


def show(label, value):
    print(f"{label}: {value:.10f}")


def ac_se(x, n):
    lo, hi = proportion_confint(x, n, alpha=0.05, method="agresti_coull")
    centre = (x + Z * Z / 2) / (n + Z * Z)
    if 0 < lo and hi < 1:
        return (hi - lo) / (2 * Z)
    return (centre - lo) / Z


def fold_t_upper(scores):
    s = np.asarray(scores, dtype=float)
    k = len(s)
    return s.mean() + stats.t.ppf(0.975, k - 1) * s.std(ddof=1) / math.sqrt(k)


e2, _ = integrate.quad(lambda x: 2 * x * stats.norm.pdf(x) * stats.norm.cdf(x), -np.inf, np.inf)
show("E[max of 2] by quad", e2)
show("1/sqrt(pi)", 1 / math.sqrt(math.pi))

# selection-luck: CV 16/20 in 5 folds of 4 (0.75, 1, 0.75, 0.75, 0.75).
luck = [0.75, 1.0, 0.75, 0.75, 0.75]
se = ac_se(16, 20)
show("selection-luck: AC SE of 16/20", se)
show("selection-luck: Wilson upper of 16/20", proportion_confint(16, 20, method="wilson")[1])
show("selection-luck: fold t upper", fold_t_upper(luck))
show("selection-luck: headline 0.8 - se/sqrt(pi)", 0.8 - se / math.sqrt(math.pi))

# selection-calibrated, rowan-ample: 5 folds of 200, correct 174, 170, 176, 172, 178 (870/1000).
ample = [c / 200 for c in (174, 170, 176, 172, 178)]
se = ac_se(870, 1000)
wilson = proportion_confint(870, 1000, method="wilson")[1]
t_up = fold_t_upper(ample)
show("rowan-ample: AC SE of 870/1000", se)
show("rowan-ample: Wilson upper of 870/1000", wilson)
show("rowan-ample: fold t upper", t_up)
show("rowan-ample: bound (the larger)", max(wilson, t_up))
show("rowan-ample: headline 0.87 - se/sqrt(pi)", 0.87 - se / math.sqrt(math.pi))

# rowan-perfect: CV 20/20 in 5 folds of 4 after 900 configurations.
show("rowan-perfect: AC SE of 20/20", ac_se(20, 20))
