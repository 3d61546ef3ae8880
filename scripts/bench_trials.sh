#!/usr/bin/env bash
# Benchmark: selection optimism on a search of 100,000 configurations x 10 folds, vetscore against
# the pandas + scipy script a user would otherwise write (benches/trials_python.py). Checks both
# give the same numbers, then prints wall time and peak memory of each and the ratio.
#
# Needs python3 with pandas and scipy; set PYTHON to choose the interpreter, e.g.
#   PYTHON=/tmp/vs-venv/bin/python bash scripts/bench_trials.sh
set -euo pipefail
cd "$(dirname "$0")/.."
PYTHON=${PYTHON:-python3}
TRIALS=${TRIALS:-100000}
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT

cargo build --release --quiet --locked

"$PYTHON" - "$work" "$TRIALS" <<'PY'
import random, sys
work, n = sys.argv[1], int(sys.argv[2])
rng = random.Random(7)
with open(f"{work}/trials.csv", "w") as f:
    f.write("id,depth,rate," + ",".join(f"fold_{k}" for k in range(1, 11)) + "\n")
    for i in range(n):
        skill = 0.80 + rng.random() * 0.02
        folds = [min(1.0, max(0.0, round(skill + rng.gauss(0, 0.02), 4))) for _ in range(10)]
        f.write(f"t{i},{rng.randint(2, 12)},{rng.random():.4f}," + ",".join(map(str, folds)) + "\n")
PY
# The selected configuration is the trial with the best mean; the manifest states its folds.
best=$("$PYTHON" benches/trials_python.py "$work/trials.csv" 10 100000 0.80)
"$PYTHON" - "$work" "$best" <<'PY'
import csv, json, sys
work, best = sys.argv[1], json.loads(sys.argv[2])
rows = list(csv.DictReader(open(f"{work}/trials.csv")))
means = [sum(float(r[f"fold_{k}"]) for k in range(1, 11)) / 10 for r in rows]
top = rows[max(range(len(rows)), key=lambda i: means[i])]
folds = "\n".join(f"          - {{rows: 10000, score: {float(top[f'fold_{k}'])}}}" for k in range(1, 11))
open(f"{work}/manifest.yaml", "w").write(f"""format_version: 1
models:
  - name: bench
    task: binary
    metric: accuracy
    seed: 1
    data: {{train_rows: 100000, test_rows: 10000, test_fingerprint: "fp-bench"}}
    search:
      method: random
      trials_file: trials.csv
      cv:
        scheme: k_fold
        folds:
{folds}
    holdout:
      - {{time: 2026-11-01T10:00:00Z, score: 0.8, correct: 8000}}
    claim: {{value: 0.8, basis: test}}
""")
PY

measure() { /usr/bin/time -f "%e %M" "$@" 2> "$work/time" > "$work/out"; tail -n 1 "$work/time"; }
read -r rs_s rs_kb < <(measure target/release/vetscore check --today 2026-12-01 --root "$work" --json - "$work/manifest.yaml" || true)
cp "$work/out" "$work/vetscore.json"
read -r py_s py_kb < <(measure "$PYTHON" benches/trials_python.py "$work/trials.csv" 10 100000 0.80)
cp "$work/out" "$work/python.json"

"$PYTHON" - "$work" <<'PY'
import json, sys
work = sys.argv[1]
py = json.load(open(f"{work}/python.json"))
report = json.load(open(f"{work}/vetscore.json"))
ev = {e["key"]: e for f in report["models"][0]["findings"] if f["rule"] == "selection_optimism" for e in f["evidence"]}
rs = {"trials": ev["trials"]["value"], "bias": ev["tt_bias"]["value"],
      "expected_max": ev["expected_max"]["value"], "tail": ev["tail_probability"]["value"]}
for key, value in rs.items():
    assert abs(value - py[key]) <= 1e-9 * max(1.0, abs(py[key])), (key, value, py[key])
print(f"same numbers: trials {rs['trials']:.0f}, bias {rs['bias']:.6f}, E[max] {rs['expected_max']:.6f}, tail {rs['tail']:.6g}")
PY
size=$(stat -c %s "$work/trials.csv")
echo "trials file: $TRIALS trials x 10 folds, $((size / 1024)) KiB"
echo "vetscore: ${rs_s} s, peak ${rs_kb} KiB"
echo "python:   ${py_s} s, peak ${py_kb} KiB"
"$PYTHON" -c "print(f'ratio (python / vetscore): {float(\"$py_s\") / max(float(\"$rs_s\"), 0.001):.1f}x time, {float(\"$py_kb\") / float(\"$rs_kb\"):.1f}x memory')"
