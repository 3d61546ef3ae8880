#!/usr/bin/env bash
# Benchmark: BBC-CV with B resamples on a generated search of CONFIGS configurations x ROWS
# out-of-fold rows (default 1000 x 100 x 100,000), vetscore's bit-packed, two-thread
# implementation against the numpy reference a user would write (tests/reference/bbc_reference.py:
# one bincount and one matrix-vector product per resample). Prints both times and the ratio, and
# checks the two estimates agree within Monte Carlo error (4 standard errors of their gap: two
# independent means of the same bootstrap distribution).
#
# Needs python3 with numpy 2.4.6; set PYTHON to choose the interpreter, e.g.
#   PYTHON=/tmp/bbc-venv/bin/python bash scripts/bench_bbc.sh
set -euo pipefail
cd "$(dirname "$0")/.."
PYTHON=${PYTHON:-python3}
CONFIGS=${CONFIGS:-100}
ROWS=${ROWS:-100000}
RESAMPLES=${RESAMPLES:-1000}
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT

rust=$(cargo bench --locked --quiet --bench bbc -- "$work/data.bin" "$CONFIGS" "$ROWS" "$RESAMPLES")
python=$("$PYTHON" tests/reference/bbc_reference.py bench "$work/data.bin" "$CONFIGS" "$ROWS" "$RESAMPLES")
"$PYTHON" - "$rust" "$python" "$CONFIGS" "$ROWS" "$RESAMPLES" <<'PY'
import json, math, sys
r, p = json.loads(sys.argv[1]), json.loads(sys.argv[2])
configs, rows, b = sys.argv[3:6]
print(f"BBC-CV, B = {b}, {configs} configurations x {rows} rows")
print(f"  vetscore: estimate {r['estimate']:.5f} (95% {r['lower']:.5f}..{r['upper']:.5f}), "
      f"selected configuration's plain OOF accuracy {r['selected_score']:.5f}")
print(f"  numpy:    estimate {p['estimate']:.5f}")
print(f"  vetscore {r['seconds']:.2f} s on 2 threads ({r['seconds_one_thread']:.2f} s on 1), "
      f"numpy {p['seconds']:.2f} s: ratio {p['seconds'] / r['seconds']:.1f}x")
print(f"  effective configurations: Li & Ji {r['li_ji']:.2f}, Galwey {r['galwey']:.2f} "
      f"({r['seconds_effective']:.2f} s)")
se = math.sqrt(r["spread"] ** 2 / r["resamples"] + p["spread"] ** 2 / p["resamples"])
gap = abs(r["estimate"] - p["estimate"])
if gap > 4 * se:
    sys.exit(f"estimates disagree: gap {gap:.5f} > 4 x {se:.5f}")
print(f"  estimates agree: gap {gap:.5f} within 4 x {se:.5f}")
PY
