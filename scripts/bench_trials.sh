#!/usr/bin/env bash
# Benchmark: the trials path (search.trials_file) at 10^4, 10^5 and 10^6 configurations x 10
# folds. For each size it times three programs on the same generated CSV:
#   - vetscore `check` on a manifest that names the file (selection optimism, duplicate ids, fold
#     scores in range);
#   - the pandas + scipy script a user would otherwise write (benches/trials_python.py);
#   - the floor (benches/trials_floor.rs): csv tokenizing and float parsing only.
# It checks vetscore and Python give the same numbers, then prints each one's median wall time
# and peak resident memory over RUNS runs, and the ratios.
#
# Needs python3 with pandas and scipy; set PYTHON to choose the interpreter, SIZES and RUNS to
# change the sizes and the number of runs, VETSCORE to time another build of vetscore (e.g. the
# base branch's) against the same files, WORK to keep the files of the last size in that folder:
#   PYTHON=/tmp/vs-venv/bin/python bash scripts/bench_trials.sh
set -euo pipefail
cd "$(dirname "$0")/.."
PYTHON=${PYTHON:-python3}
SIZES=${SIZES:-10000 100000 1000000}
RUNS=${RUNS:-3}
work=${WORK:-$(mktemp -d)}
trap '[ -z "${WORK:-}" ] && rm -rf "$work"' EXIT

cargo build --release --quiet --locked
VETSCORE=${VETSCORE:-target/release/vetscore}
floor=$(cargo bench --no-run --quiet --locked --bench trials_floor --message-format=json |
  "$PYTHON" -c 'import json, sys
for line in sys.stdin:
    m = json.loads(line)
    if m.get("reason") == "compiler-artifact" and m["target"]["name"] == "trials_floor" and m.get("executable"):
        print(m["executable"])')

# Writes trials.csv (N trials x 10 folds, ids t0 … tN-1) and a manifest whose folds are those of
# the trial with the best mean, as a search would report them.
generate() {
  "$PYTHON" - "$work" "$1" <<'PY'
import random, sys
work, n = sys.argv[1], int(sys.argv[2])
rng = random.Random(7)
best, best_mean = None, -1.0
with open(f"{work}/trials.csv", "w") as f:
    f.write("id,depth,rate," + ",".join(f"fold_{k}" for k in range(1, 11)) + "\n")
    for i in range(n):
        skill = 0.80 + rng.random() * 0.02
        folds = [min(1.0, max(0.0, round(skill + rng.gauss(0, 0.02), 4))) for _ in range(10)]
        f.write(f"t{i},{rng.randint(2, 12)},{rng.random():.4f}," + ",".join(map(str, folds)) + "\n")
        mean = sum(folds) / 10
        if mean > best_mean:
            best, best_mean = folds, mean
folds = "\n".join(f"          - {{rows: 10000, score: {s}}}" for s in best)
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
}

# Median wall seconds and median peak resident KiB of RUNS runs of a command: the time from
# Python's clock around the run, the memory from /usr/bin/time (a small parent, so the figure is
# the command's own, not a forked copy of Python's); the output of the last run is kept in
# $work/out.
measure() {
  "$PYTHON" - "$RUNS" "$work/out" "$@" <<'PY'
import statistics, subprocess, sys, time
runs, out, command = int(sys.argv[1]), sys.argv[2], sys.argv[3:]
walls, peaks = [], []
for _ in range(runs):
    with open(out, "wb") as f:
        start = time.perf_counter()
        subprocess.run(["/usr/bin/time", "-f", "%M", "-o", f"{out}.kib", *command],
                       stdin=subprocess.DEVNULL, stdout=f, stderr=subprocess.DEVNULL)
        walls.append(time.perf_counter() - start)
        peaks.append(int(open(f"{out}.kib").read().split()[-1]))
print(f"{statistics.median(walls):.4f} {int(statistics.median(peaks))}")
PY
}

rows=()
for n in $SIZES; do
  generate "$n"
  read -r rs_s rs_kb < <(measure "$VETSCORE" check --today 2026-12-01 --root "$work" --json - "$work/manifest.yaml")
  cp "$work/out" "$work/vetscore.json"
  read -r py_s py_kb < <(measure "$PYTHON" benches/trials_python.py "$work/trials.csv" 10 100000 0.80)
  cp "$work/out" "$work/python.json"
  read -r fl_s fl_kb < <(measure "$floor" "$work/trials.csv")
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
  rows+=("$n $size $rs_s $rs_kb $py_s $py_kb $fl_s $fl_kb")
done

printf '%s\n' "${rows[@]}" | "$PYTHON" -c 'import sys
print(f"median of '"$RUNS"' runs each; time in s, peak resident memory in MiB")
print("| trials | file MiB | vetscore | python | floor | python / vetscore | vetscore / floor |")
print("|---|---|---|---|---|---|---|")
for line in sys.stdin:
    n, size, rs, rkb, py, pkb, fl, fkb = line.split()
    rs, py, fl = float(rs), float(py), float(fl)
    mib = lambda kb: int(kb) / 1024
    print(f"| {int(n):,} | {int(size) / 2**20:.1f} | {rs:.3f} s, {mib(rkb):.0f} MiB | {py:.3f} s, {mib(pkb):.0f} MiB "
          f"| {fl:.3f} s, {mib(fkb):.0f} MiB | {py / rs:.1f}x | {rs / fl:.2f}x |")'
