"""The Python a user would otherwise write to check per-example evidence: read the model's and
the baseline's predictions with pandas, recompute accuracy with scikit-learn, hash the sorted ids
for the test fingerprint, test the improvement with statsmodels' McNemar on rows paired by id,
and look for train ids among the test ids. Used by scripts/bench_evidence.sh. Prints JSON.

usage: python benches/evidence_python.py DIR [csv|parquet]

With `parquet`, the two predictions files are DIR/predictions.parquet and DIR/baseline.parquet,
read with pandas' `read_parquet`.
"""

import hashlib
import json
import sys

import pandas as pd
from sklearn.metrics import accuracy_score
from statsmodels.stats.contingency_tables import mcnemar

d = sys.argv[1]
form = sys.argv[2] if len(sys.argv) > 2 else "csv"
readers = {
    "csv": lambda path: pd.read_csv(path, dtype={"id": str, "label": str, "prediction": str}),
    "parquet": pd.read_parquet,
}
if form not in readers:
    sys.exit(f"format must be csv or parquet, not {form}")
model = readers[form](f"{d}/predictions.{form}")
base = readers[form](f"{d}/baseline.{form}")
accuracy = accuracy_score(model["label"], model["prediction"])
fingerprint = "sha256:" + hashlib.sha256("\n".join(sorted(model["id"])).encode()).hexdigest()
pairs = model.merge(base, on="id", suffixes=("_m", "_b"))
right_m = pairs["label_m"] == pairs["prediction_m"]
right_b = pairs["label_b"] == pairs["prediction_b"]
b = int((right_m & ~right_b).sum())
c = int((~right_m & right_b).sum())
both = int((right_m & right_b).sum())
neither = int((~right_m & ~right_b).sum())
p = mcnemar([[both, b], [c, neither]], exact=(b + c) < 25, correction=True).pvalue
with open(f"{d}/test_ids.txt") as f:
    test_ids = set(line.strip() for line in f if line.strip())
with open(f"{d}/train_ids.txt") as f:
    shared = sum(1 for line in f if line.strip() in test_ids)
print(json.dumps({"accuracy": accuracy, "fingerprint": fingerprint, "b": b, "c": c, "p": float(p), "shared": shared}))
