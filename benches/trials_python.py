"""The Python a user would otherwise write for the selection-optimism numbers of one search:
read every trial's fold scores with pandas, check the ids are unique and every fold score is
finite and within [0, 1] (accuracy), pick the best configuration, compute the
Tibshirani & Tibshirani (2009) bias, the expected maximum of N normals by numerical integration
and the best-of-N binomial tail with scipy. Used by scripts/bench_trials.sh to compare answers
and time. Prints one JSON object.

usage: python benches/trials_python.py TRIALS.csv FOLDS ROWS TEST_SCORE
"""

import json
import math
import sys

import numpy as np
import pandas as pd
from scipy import integrate, stats

path, folds, rows, test_score = sys.argv[1], int(sys.argv[2]), int(sys.argv[3]), float(sys.argv[4])
df = pd.read_csv(path)
scores = df[[f"fold_{k}" for k in range(1, folds + 1)]].to_numpy(dtype=float)
if df["id"].duplicated().any():
    sys.exit(f"duplicate trial ids: {df['id'][df['id'].duplicated()].tolist()[:5]}")
if not (np.isfinite(scores).all() and (scores >= 0).all() and (scores <= 1).all()):
    sys.exit("fold scores must be finite and within [0, 1]")
means = scores.mean(axis=1)
best = int(np.argmax(means))
bias = float((scores.max(axis=0) - scores[best]).mean())
n = len(df)
mode = stats.norm.ppf(1 - 1 / n)
emax, _ = integrate.quad(
    lambda x: x * n * stats.norm.pdf(x) * math.exp((n - 1) * stats.norm.logcdf(x)),
    mode - 12,
    mode + 12,
    points=[mode],
    limit=200,
)
cv = float(means[best])
k = math.ceil(round(rows * cv, 9))
tail = -math.expm1(n * math.log1p(-stats.binom.sf(k - 1, rows, test_score)))
print(json.dumps({"trials": n, "naive_best": cv, "bias": bias, "expected_max": emax, "tail": tail}))
