#!/usr/bin/env bash
# Benchmark: ROC AUC with a baseline (DeLong's interval and DeLong's paired test) at 10^5, 10^6
# and 10^7 rows per side. For each size it generates a model's and a baseline's binary
# predictions (id, label, prediction, score; the baseline's rows shuffled), then times
#   - vetscore `check` with metric roc_auc,
#   - vetscore `check` with metric accuracy on the same files (the target: AUC <= 3x this),
#   - the numpy + scikit-learn script a user would write (benches/auc_python.py),
#   - the floor: a program that only parses the same files (benches/auc_floor.rs),
# and prints wall time and peak memory of each, the ratios, and the growth exponent of the AUC
# path from 10^6 to 10^7 rows. It checks that vetscore's and Python's AUC, AUC difference and
# paired p-value agree. Generated files are kept in WORK (default /tmp/vetscore-bench-auc) and
# reused on the next run.
#
# Needs python3 with numpy, scikit-learn and scipy (tested with numpy 2.4.6, scikit-learn 1.9.1,
# scipy 1.17.1); set PYTHON to choose the interpreter and SIZES to choose the sizes, e.g.
#   PYTHON=/tmp/auc-venv/bin/python SIZES="100000 1000000" bash scripts/bench_auc.sh
set -euo pipefail
cd "$(dirname "$0")/.."
PYTHON=${PYTHON:-python3}
SIZES=${SIZES:-100000 1000000 10000000}
WORK=${WORK:-/tmp/vetscore-bench-auc}
mkdir -p "$WORK"

cargo build --release --quiet --locked
. scripts/bench_common.sh
floor=$(bench_executable auc_floor)

generate() {
    "$PYTHON" - "$1" "$2" <<'PY'
import hashlib, sys
import numpy as np
from sklearn.metrics import roc_auc_score
work, n = sys.argv[1], int(sys.argv[2])
rng = np.random.default_rng(14)
ids = np.char.add("row-", np.arange(n).astype(str))
label = rng.integers(0, 2, n)
signal = label + rng.normal(0.0, 1.0, n)
# Scores rounded to 6 decimals (many ties at 10^7 rows); the baseline is the model's signal with
# a little more noise, so the two are correlated as successive models are and DeLong's p-value
# is about 0.07 at 10^5 rows and 3e-6 at 10^6.
model = np.round(1 / (1 + np.exp(-signal)), 6)
base = np.round(1 / (1 + np.exp(-(signal + rng.normal(0.0, 0.02, n)))), 6)
names = np.array(["no", "yes"])
def write(path, order, score):
    with open(path, "w") as f:
        f.write("id,label,prediction,score\n")
        for start in range(0, n, 1_000_000):
            rows = order[start:start + 1_000_000]
            cols = [ids[rows], names[label[rows]], names[(score[rows] >= 0.5).astype(int)], score[rows].astype(str)]
            f.write("\n".join(",".join(row) for row in zip(*cols)) + "\n")
write(f"{work}/predictions.csv", np.arange(n), model)
write(f"{work}/baseline.csv", rng.permutation(n), base)
auc = float(roc_auc_score(label, model))
correct = int(((model >= 0.5).astype(int) == label).sum())
fp = "sha256:" + hashlib.sha256("\n".join(sorted(ids.tolist())).encode()).hexdigest()
for metric, holdout in [("roc_auc", f"score: {auc!r}"), ("accuracy", f"score: {correct / n!r}, correct: {correct}")]:
    value = auc if metric == "roc_auc" else correct / n
    open(f"{work}/{metric}.yaml", "w").write(f"""format_version: 1
models:
  - name: bench
    task: binary
    metric: {metric}
    data: {{train_rows: {n}, test_rows: {n}, test_fingerprint: "{fp}"}}
    holdout:
      - {{time: 2026-11-01T10:00:00Z, {holdout}}}
    predictions: {{file: predictions.csv, classes: ["no", "yes"], positive_class: "yes"}}
    baseline: {{name: previous, predictions_file: baseline.csv}}
    claim: {{value: {round(value, 3)}, basis: test, beats_baseline: true}}
""")
PY
}

# Prints "seconds peak_kib" of one run; the command's output goes to $out.
measure() { /usr/bin/time -f "%e %M" "$@" 2> "$WORK/time" > "$out" || true; tail -n 1 "$WORK/time"; }
ratio() { "$PYTHON" -c "print(f'{float(\"$1\") / max(float(\"$2\"), 0.001):.2f}')"; }

printf '%-9s %-26s %-26s %-26s %-26s %-9s %-9s %-9s\n' rows "vetscore roc_auc" "vetscore accuracy" \
    "python" "floor (parse only)" "auc/acc" "py/auc" "auc/floor"
declare -A auc_s
for n in $SIZES; do
    dir="$WORK/$n"
    if [ ! -f "$dir/accuracy.yaml" ]; then
        mkdir -p "$dir"
        generate "$dir" "$n"
    fi
    out="$dir/vetscore_auc.json"
    read -r a_s a_kb < <(measure target/release/vetscore check --today 2026-12-01 --root "$dir" --json - "$dir/roc_auc.yaml")
    out="$dir/vetscore_acc.json"
    read -r c_s c_kb < <(measure target/release/vetscore check --today 2026-12-01 --root "$dir" --json - "$dir/accuracy.yaml")
    out="$dir/python.json"
    read -r p_s p_kb < <(measure "$PYTHON" benches/auc_python.py "$dir/predictions.csv" "$dir/baseline.csv")
    out="$dir/floor.json"
    read -r f_s f_kb < <(measure "$floor" "$dir/predictions.csv" "$dir/baseline.csv")
    "$PYTHON" - "$dir" <<'PY'
import json, sys
d = sys.argv[1]
py = json.load(open(f"{d}/python.json"))
report = json.load(open(f"{d}/vetscore_auc.json"))
ev = {(f["rule"], e["key"]): e for f in report["models"][0]["findings"] for e in f["evidence"]}
checks = {
    "AUC": (ev[("recompute", "recomputed")]["value"], py["auc"]),
    "paired rows": (ev[("baseline_improvement", "paired_rows")]["value"], py["paired_rows"]),
    "AUC difference": (ev[("baseline_improvement", "improvement")]["value"], py["difference"]),
    "DeLong p": (ev[("baseline_improvement", "test_p_value")]["value"], py["p_value"]),
}
for name, (ours, theirs) in checks.items():
    assert abs(ours - theirs) <= 1e-9 * abs(theirs) + 1e-300, (name, ours, theirs)
assert abs(py["auc"] - py["auc_delong"]) <= 1e-12, py
PY
    auc_s[$n]=$a_s
    printf '%-9s %-26s %-26s %-26s %-26s %-9s %-9s %-9s\n' "$n" \
        "${a_s} s, $((a_kb / 1024)) MiB" "${c_s} s, $((c_kb / 1024)) MiB" \
        "${p_s} s, $((p_kb / 1024)) MiB" "${f_s} s, $((f_kb / 1024)) MiB" \
        "$(ratio "$a_s" "$c_s")" "$(ratio "$p_s" "$a_s")" "$(ratio "$a_s" "$f_s")"
done
echo "same numbers (AUC, paired rows, AUC difference, DeLong p) as Python at every size"
if [ -n "${auc_s[1000000]:-}" ] && [ -n "${auc_s[10000000]:-}" ]; then
    "$PYTHON" -c "import math; print(f'growth exponent of the roc_auc check, 10^6 to 10^7 rows: {math.log10(float(\"${auc_s[10000000]}\") / float(\"${auc_s[1000000]}\")):.2f}')"
fi
