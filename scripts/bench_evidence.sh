#!/usr/bin/env bash
# Benchmark: per-example evidence on 10 million predictions and 10 million ids per side,
# vetscore against the pandas + scikit-learn + statsmodels script a user would otherwise write
# (benches/evidence_python.py). Checks both give the same numbers, then prints wall time and
# peak memory of each, the input size and the ratios, and the floor: a program that only parses
# the same files on one thread (benches/evidence_floor.rs). Needs python3 with numpy, pandas,
# scikit-learn and statsmodels; ROWS sets the size (default 10000000). FORMAT=parquet times the
# same rows with the two predictions files written as Parquet by pandas (`to_parquet`, pyarrow,
# its default snappy compression; needs pyarrow): vetscore, the Python script (`read_parquet`)
# and the floor all read the Parquet files, and the input size counts them instead of the CSVs.
#
# vetscore and the floor run RUNS times each (default 3), in turn, and the run of median wall time
# is reported for each, so one run slowed by a busy machine does not set the figure; the Python
# script, at about 30x the time, runs once.
#
# WORK keeps the generated files for the next run (generation is skipped when WORK already holds
# them); with WORK set, REUSE_PYTHON=1 reuses the Python script's output and time from an earlier
# run there, and VETSCORE names the vetscore binary to time (default target/release/vetscore), so
# two builds can be timed in turn on the same files.
#
#   PYTHON=/tmp/vs-venv/bin/python bash scripts/bench_evidence.sh
set -euo pipefail
cd "$(dirname "$0")/.."
PYTHON=${PYTHON:-python3}
ROWS=${ROWS:-10000000}
FORMAT=${FORMAT:-csv}
RUNS=${RUNS:-3}
case "$FORMAT" in csv | parquet) ;; *) echo "FORMAT must be csv or parquet, not $FORMAT" >&2; exit 2 ;; esac
work=${WORK:-$(mktemp -d)}
trap '[ -z "${WORK:-}" ] && rm -rf "$work"' EXIT

VETSCORE=${VETSCORE:-target/release/vetscore}
mkdir -p "$work"

cargo build --release --quiet --locked
. scripts/bench_common.sh
floor=$(bench_executable evidence_floor)

[ -f "$work/manifest.yaml" ] || "$PYTHON" - "$work" "$ROWS" <<'PY'
import hashlib, sys
import numpy as np
work, n = sys.argv[1], int(sys.argv[2])
rng = np.random.default_rng(11)
ids = np.char.add("row-", np.arange(n).astype(str))
label = rng.integers(0, 2, n)
model = np.where(rng.random(n) < 0.86, label, 1 - label)
base = np.where(rng.random(n) < 0.85, label, 1 - label)
names = np.array(["no", "yes"])
def write(path, header, cols):
    with open(path, "w") as f:
        f.write(header + "\n")
        for start in range(0, n, 1_000_000):
            end = min(n, start + 1_000_000)
            parts = [c[start:end] for c in cols]
            f.write("\n".join(",".join(row) for row in zip(*parts)) + "\n")
write(f"{work}/predictions.csv", "id,label,prediction", [ids, names[label], names[model]])
order = rng.permutation(n)
write(f"{work}/baseline.csv", "id,label,prediction", [ids[order], names[label][order], names[base][order]])
with open(f"{work}/test_ids.txt", "w") as f:
    f.write("\n".join(ids) + "\n")
train = np.char.add("row-", (np.arange(n) + n - 1000).astype(str))  # 1000 ids shared
with open(f"{work}/train_ids.txt", "w") as f:
    f.write("\n".join(train) + "\n")
acc = float((model == label).mean())
correct = int((model == label).sum())
fp = "sha256:" + hashlib.sha256("\n".join(sorted(ids.tolist())).encode()).hexdigest()
open(f"{work}/manifest.yaml", "w").write(f"""format_version: 1
models:
  - name: bench
    task: binary
    metric: accuracy
    data:
      train_rows: {n}
      test_rows: {n}
      test_fingerprint: "{fp}"
      train_ids_file: train_ids.txt
      test_ids_file: test_ids.txt
    holdout:
      - {{time: 2026-11-01T10:00:00Z, score: {acc}, correct: {correct}}}
    predictions: {{file: predictions.csv, classes: ["no", "yes"], positive_class: "yes"}}
    baseline: {{name: previous, predictions_file: baseline.csv}}
    claim: {{value: {round(acc, 3)}, basis: test, beats_baseline: true}}
""")
PY

manifest=$work/manifest.yaml
if [ "$FORMAT" = parquet ]; then
    [ -f "$work/baseline.parquet" ] || "$PYTHON" - "$work" <<'PY'
import sys
import pandas as pd
work = sys.argv[1]
for name in ("predictions", "baseline"):
    frame = pd.read_csv(f"{work}/{name}.csv", dtype=str, keep_default_na=False)
    frame.to_parquet(f"{work}/{name}.parquet", index=False)
PY
    manifest=$work/manifest.parquet.yaml
    sed -e 's/predictions\.csv/predictions.parquet/' -e 's/baseline\.csv/baseline.parquet/' \
        "$work/manifest.yaml" > "$manifest"
fi
predictions=$work/predictions.$FORMAT
baseline=$work/baseline.$FORMAT

# One run of a command: prints "wall-seconds peak-KiB user-seconds system-seconds"; its standard
# output is left in $work/out.
measure() {
    /usr/bin/time -f "%e %M %U %S" "$@" 2> "$work/time" > "$work/out" || true
    tail -n 1 "$work/time"
}
# The line of median wall time among the lines on standard input (RUNS of them).
median() {
    sort -n -k1,1 | sed -n "$(((RUNS + 1) / 2))p"
}
: > "$work/vetscore.runs"
: > "$work/floor.runs"
: > "$work/floor.parse"
for _ in $(seq "$RUNS"); do
    measure "$VETSCORE" check --today 2026-12-01 --root "$work" --json - "$manifest" >> "$work/vetscore.runs"
    cp "$work/out" "$work/vetscore.json"
    measure "$floor" "$predictions" "$baseline" -- "$work/test_ids.txt" "$work/train_ids.txt" >> "$work/floor.runs"
    "$PYTHON" -c 'import json, sys; print(json.load(open(sys.argv[1]))["seconds"])' "$work/out" >> "$work/floor.parse"
done
read -r rs_s rs_kb rs_user rs_sys < <(median < "$work/vetscore.runs")
read -r fl_s fl_kb _ < <(median < "$work/floor.runs")
# The floor's own clock around its parsing, median of the runs.
fl_parse=$(median < "$work/floor.parse")
# The Python result and time of each format are kept apart, so REUSE_PYTHON never mixes them.
python_json=$work/python.$FORMAT.json python_time=$work/python.$FORMAT.time
if [ -n "${REUSE_PYTHON:-}" ] && [ -f "$python_time" ] && [ -f "$python_json" ]; then
    read -r py_s py_kb < "$python_time"
else
    read -r py_s py_kb _ < <(measure "$PYTHON" benches/evidence_python.py "$work" "$FORMAT")
    cp "$work/out" "$python_json"
    echo "$py_s $py_kb" > "$python_time"
fi

"$PYTHON" - "$work" "$python_json" <<'PY'
import json, sys
work = sys.argv[1]
py = json.load(open(sys.argv[2]))
report = json.load(open(f"{work}/vetscore.json"))
ev = {(f["rule"], e["key"]): e for f in report["models"][0]["findings"] for e in f["evidence"]}
checks = {
    "accuracy": (ev[("recompute", "recomputed")]["value"], py["accuracy"]),
    "fingerprint": (ev[("fingerprint", "computed")]["value"], py["fingerprint"]),
    "model-only rows": (ev[("baseline_improvement", "model_only")]["value"], py["b"]),
    "baseline-only rows": (ev[("baseline_improvement", "baseline_only")]["value"], py["c"]),
    "McNemar p": (ev[("baseline_improvement", "p_value")]["value"], py["p"]),
    "shared ids": (ev[("leakage", "shared")]["value"], py["shared"]),
}
for name, (ours, theirs) in checks.items():
    if isinstance(theirs, str):
        assert ours == theirs, (name, ours, theirs)
    else:
        assert abs(ours - theirs) <= 1e-9 * max(1.0, abs(theirs)), (name, ours, theirs)
print("same numbers: " + ", ".join(f"{k} {v[1]}" for k, v in checks.items() if k != "fingerprint"))
PY
size=$(du -cb "$predictions" "$baseline" "$work"/train_ids.txt "$work"/test_ids.txt | tail -n 1 | cut -f1)
echo "input: $ROWS predictions per side ($FORMAT) and $ROWS ids per list, $((size / 1048576)) MiB"
echo "median of $RUNS runs of vetscore and of the floor; Python once"
echo "vetscore: ${rs_s} s wall, ${rs_user} s user + ${rs_sys} s system CPU, peak $((rs_kb / 1024)) MiB"
echo "python:   ${py_s} s, peak $((py_kb / 1024)) MiB"
echo "floor:    ${fl_parse} s parsing (${fl_s} s with start and exit), peak $((fl_kb / 1024)) MiB"
"$PYTHON" -c "print(f'ratio (python / vetscore): {float(\"$py_s\") / max(float(\"$rs_s\"), 0.001):.1f}x time, {float(\"$py_kb\") / float(\"$rs_kb\"):.1f}x memory; vetscore peak / input size: {float(\"$rs_kb\") * 1024 / float(\"$size\"):.2f}')"
"$PYTHON" -c "print(f'vetscore / floor: {float(\"$rs_s\") / max(float(\"$fl_parse\"), 0.001):.2f}x the bare parse time; CPU / wall: {(float(\"$rs_user\") + float(\"$rs_sys\")) / max(float(\"$rs_s\"), 0.001):.2f}')"
