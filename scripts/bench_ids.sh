#!/usr/bin/env bash
# Benchmark: the worst case for id handling. 10 million ids that share a long prefix and fall
# on two dates (`2026-11-29/plant-A/row-…`, `2026-11-30/plant-B/row-…`) with suffixes in random
# order, in a predictions file, a baseline predictions file (another order) and the train and
# test id lists; 1000 ids are in both lists. Every id path runs: sorting and the fingerprint,
# duplicate detection, pairing with the baseline, and the leakage check. Checks the fingerprint
# and the shared-id count against Python's standard library, then prints wall time and peak
# memory. Needs only python3; ROWS sets the size (default 10000000).
#
#   bash scripts/bench_ids.sh
#   ROWS=200000 bash scripts/bench_ids.sh     # a quick run
set -euo pipefail
cd "$(dirname "$0")/.."
PYTHON=${PYTHON:-python3}
ROWS=${ROWS:-10000000}
work=${WORK:-$(mktemp -d)}
trap '[ -z "${WORK:-}" ] && rm -rf "$work"' EXIT

cargo build --release --quiet --locked

"$PYTHON" - "$work" "$ROWS" <<'PY'
import hashlib, random, sys
work, n = sys.argv[1], int(sys.argv[2])
rng = random.Random(12)
suffix = list(range(n))
rng.shuffle(suffix)
def ident(k):
    date = "29/plant-A" if k % 2 == 0 else "30/plant-B"
    return f"2026-11-{date}/row-{k:09d}"
ids = [ident(k) for k in suffix]
label = [rng.random() < 0.5 for _ in range(n)]
model = [l if rng.random() < 0.86 else not l for l in label]
base = [l if rng.random() < 0.85 else not l for l in label]
yes = {True: "yes", False: "no"}
def write(path, rows):
    with open(path, "w") as f:
        f.write("id,label,prediction\n")
        for start in range(0, n, 1_000_000):
            f.write("".join(f"{i},{yes[a]},{yes[b]}\n" for i, a, b in rows[start:start + 1_000_000]))
write(f"{work}/predictions.csv", list(zip(ids, label, model)))
order = list(range(n))
rng.shuffle(order)
write(f"{work}/baseline.csv", [(ids[i], label[i], base[i]) for i in order])
with open(f"{work}/test_ids.txt", "w") as f:
    f.write("\n".join(ids) + "\n")
# The train list: ids of the same shape numbered after the test ids, plus 1000 test ids.
train = [ident(k) for k in range(n, 2 * n - 1000)] + ids[:1000]
rng.shuffle(train)
with open(f"{work}/train_ids.txt", "w") as f:
    f.write("\n".join(train) + "\n")
correct = sum(a == b for a, b in zip(label, model))
fp = "sha256:" + hashlib.sha256("\n".join(sorted(ids)).encode()).hexdigest()
shared = len(set(train) & set(ids))
open(f"{work}/expected.txt", "w").write(f"{fp} {shared}\n")
open(f"{work}/manifest.yaml", "w").write(f"""format_version: 1
models:
  - name: bench
    task: binary
    metric: accuracy
    data:
      train_rows: {len(train)}
      test_rows: {n}
      test_fingerprint: "{fp}"
      train_ids_file: train_ids.txt
      test_ids_file: test_ids.txt
    holdout:
      - {{time: 2026-11-01T10:00:00Z, score: {correct / n}, correct: {correct}}}
    predictions: {{file: predictions.csv, classes: ["no", "yes"], positive_class: "yes"}}
    baseline: {{name: previous, predictions_file: baseline.csv}}
    claim: {{value: {round(correct / n, 3)}, basis: test, beats_baseline: true}}
""")
PY

/usr/bin/time -f "%e %M" target/release/vetscore check --today 2026-12-01 --root "$work" \
  --json "$work/report.json" "$work/manifest.yaml" > /dev/null 2> "$work/time" || true
read -r seconds kb < <(tail -n 1 "$work/time")

"$PYTHON" - "$work" <<'PY'
import json, sys
work = sys.argv[1]
fp, shared = open(f"{work}/expected.txt").read().split()
report = json.load(open(f"{work}/report.json"))
ev = {(f["rule"], e["key"]): e for f in report["models"][0]["findings"] for e in f["evidence"]}
assert ev[("fingerprint", "computed")]["value"] == fp, "fingerprint differs from Python's"
assert ev[("leakage", "shared")]["value"] == int(shared), "shared-id count differs from Python's"
print(f"same numbers as Python: fingerprint, {shared} shared ids")
PY
size=$(du -cb "$work"/predictions.csv "$work"/baseline.csv "$work"/train_ids.txt "$work"/test_ids.txt | tail -n 1 | cut -f1)
echo "input: $ROWS ids per file (shared prefix, two dates), $((size / 1048576)) MiB"
echo "vetscore: ${seconds} s, peak $((kb / 1024)) MiB"
