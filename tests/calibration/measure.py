"""Measure how often vetscore's selection-optimism gate is wrong on the calibration corpus.

Every case of `corpus.jsonl` (see generate.py) becomes the manifest a team would write for it:
the selected configuration's folds (rows, correct count, per-class rows), the number of
configurations, every configuration's fold scores as inline trials, the realistic test split's
one evaluation, and the claim a team would make: the best mean CV accuracy, basis `cv`. The
script runs the vetscore binary on it once per gate and reads the `selection_optimism` finding
from the JSON report. The truth is the selected model's accuracy on 20,000 rows of the same
distribution.

Per gate it prints, overall and per cell (training size × grid size):
- rejects: the share of claims the rule fails (or leaves inconclusive, which fails under the
  default policy);
- false alarms: rejected although the claim is at most truth + 0.01;
- misses: passed although the claim is above truth + 0.03;
- truth above the bound: the share of cases whose truth lies above the "best score the evidence
  supports" (the upper end of the adjusted interval the finding reports), which a valid 95%
  two-sided interval's upper bound leaves about 2.5% of the time.

Only the standard library is needed. Run from the repository root:

    cargo build --release
    python3 tests/calibration/measure.py --binary target/release/vetscore
"""

from __future__ import annotations

import argparse
import json
import subprocess
import sys
import tempfile
from collections import defaultdict
from pathlib import Path

GATES = ("expected_max", "binomial_tail", "bias_correction")
CLASS_NAMES = ("neg", "pos")


def manifest(case: dict) -> dict:
    sel = case["selected"]
    folds = []
    for k, rows in enumerate(case["fold_rows"]):
        correct = case["fold_correct"][sel][k]
        counts = case["fold_class_rows"][k]
        folds.append(
            {
                "rows": rows,
                "score": correct / rows,
                "correct": correct,
                "class_rows": {CLASS_NAMES[c]: counts[c] for c in range(2)},
            }
        )
    trials = [
        {
            "id": f"cfg-{j:04d}",
            "fold_scores": [c / r for c, r in zip(row, case["fold_rows"])],
        }
        for j, row in enumerate(case["fold_correct"])
    ]
    test = case["test"]
    return {
        "format_version": 1,
        "models": [
            {
                "name": f"calibration-{case['case']}",
                "task": "binary",
                "metric": "accuracy",
                "seed": case["seed"],
                "data": {
                    "train_rows": case["train_rows"],
                    "test_rows": test["rows"],
                    "test_fingerprint": f"fp-{case['case']}",
                },
                "search": {
                    "method": "grid",
                    "configurations": case["configurations"],
                    "trials": trials,
                    "cv": {"scheme": "stratified_k_fold", "folds": folds},
                },
                "holdout": [
                    {
                        "time": "2026-11-01T10:00:00Z",
                        "score": test["correct"] / test["rows"],
                        "correct": test["correct"],
                        "rows": test["rows"],
                    }
                ],
                "claim": {"value": case["cv_mean"], "basis": "cv"},
            }
        ],
    }


def policy(gate: str) -> str:
    # Only the rule under study decides; the others are switched off so that their findings do
    # not mix into the verdict.
    others = [
        "holdout_budget",
        "cv_test_gap",
        "interval_overlap",
        "fold_size",
        "claim_support",
        "completeness",
    ]
    lines = ["format_version: 1", "rules:", f"  selection_optimism: {{severity: error, gate: {gate}}}"]
    lines += [f"  {rule}: {{severity: off}}" for rule in others]
    return "\n".join(lines) + "\n"


def judge(binary: str, workdir: Path, case: dict, gate: str) -> dict:
    man = workdir / f"{case['case']}.json"
    man.write_text(json.dumps(manifest(case)))
    pol = workdir / f"policy-{gate}.yaml"
    if not pol.exists():
        pol.write_text(policy(gate))
    report = workdir / f"{case['case']}-{gate}.report.json"
    run = subprocess.run(
        [binary, "check", "--policy", str(pol), "--json", str(report), str(man)],
        cwd=workdir,
        capture_output=True,
        text=True,
    )
    if run.returncode not in (0, 1):
        raise SystemExit(f"{case['case']} {gate}: exit {run.returncode}\n{run.stderr}")
    data = json.loads(report.read_text())
    finding = next(
        f for m in data["models"] for f in m["findings"] if f["rule"] == "selection_optimism"
    )
    bound = None
    for ev in finding.get("evidence", []):
        if ev.get("key") == "bound":
            bound = ev["value"]
    return {"status": finding["status"], "bound": bound}


def rate(hits: int, total: int) -> str:
    return f"{100 * hits / total:.0f}%" if total else "-"


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--binary", default="target/release/vetscore")
    parser.add_argument("--corpus", type=Path, default=Path(__file__).with_name("corpus.jsonl"))
    args = parser.parse_args()
    binary = str(Path(args.binary).resolve())

    with args.corpus.open() as f:
        header = json.loads(f.readline())
        cases = [json.loads(line) for line in f]
    print(f"{len(cases)} searches, generated by {header['generator']} with {header['versions']}")

    with tempfile.TemporaryDirectory() as tmp:
        workdir = Path(tmp)
        for gate in GATES:
            cells = defaultdict(lambda: defaultdict(int))
            for case in cases:
                verdict = judge(binary, workdir, case, gate)
                claim, truth = case["cv_mean"], case["truth"]["accuracy"]
                rejected = verdict["status"] != "pass"
                for cell in ("all", f"n={case['train_rows']}", f"N={case['configurations']}"):
                    c = cells[cell]
                    c["cases"] += 1
                    c["rejects"] += rejected
                    if claim <= truth + 0.01:
                        c["fine"] += 1
                        c["false_alarms"] += rejected
                    if claim > truth + 0.03:
                        c["over"] += 1
                        c["misses"] += not rejected
                    if verdict["bound"] is not None:
                        c["bounded"] += 1
                        c["truth_above"] += truth > verdict["bound"]
            print(f"\ngate {gate}")
            print("| cell | searches | rejects | false alarms | misses | truth above bound |")
            print("|---|---|---|---|---|---|")
            for name in ["all"] + sorted(k for k in cells if k != "all"):
                c = cells[name]
                print(
                    f"| {name} | {c['cases']} | {rate(c['rejects'], c['cases'])} "
                    f"| {rate(c['false_alarms'], c['fine'])} of {c['fine']} "
                    f"| {rate(c['misses'], c['over'])} of {c['over']} "
                    f"| {rate(c['truth_above'], c['bounded'])} of {c['bounded']} |"
                )
    return 0


if __name__ == "__main__":
    sys.exit(main())
