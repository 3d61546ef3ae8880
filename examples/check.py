"""Runs every example, checks its manifest with vetscore and asserts the expected verdicts.

    python examples/check.py path/to/vetscore [out-folder]

Each expectation is argued beside it. Exits non-zero on the first example that does not give
the expected verdicts.
"""
import json
import pathlib
import subprocess
import sys
import tempfile

HERE = pathlib.Path(__file__).parent

# example -> (policy or None, expected exit code, {rule: status})
EXPECTED = {
    # 36 configurations on 398 rows; the best CV accuracy (0.9925) is 0.039 above the test
    # split's (0.9532): inside the 0.05 bound but beyond sampling noise, and the two intervals do
    # not overlap, so the gate fails although the claimed 0.93 lies in the test interval.
    "grid_search": (None, 1, {
        "claim_support": "pass", "recompute": "pass", "fingerprint": "pass", "leakage": "pass",
        "selection_optimism": "pass", "cv_test_gap": "fail", "interval_overlap": "fail",
    }),
    # A cv claim at the best CV RMSE of 20 random configurations: the expected optimism of 20
    # looks is small next to the fold spread, so the claim survives; the test RMSE is within
    # the team's gap of 10 and the ids, predictions and fingerprint agree.
    "random_search": ("random_search.policy.yaml", 0, {
        "selection_optimism": "pass", "cv_test_gap": "pass", "recompute": "pass",
        "fingerprint": "pass", "leakage": "pass",
    }),
    # 3 learning rates × 40 epochs = 120 looks at one validation split of 115 rows, the best
    # validation accuracy (111/115 = 0.9652) claimed as it is. Under the calibrated gate the
    # least biased estimate is 0.954 (the score less E[max of 2 normals] × its standard error),
    # within 0.002 of the untouched test split's 109/114 = 0.956; the claim is 0.009 above the
    # test score, inside the 0.01 the calibration corpus counts as supported, and inside the
    # bound the evidence supports (0.986), so the rule passes. (The old expected-maximum gate
    # failed it, one of the 60% false alarms it raised on the corpus.)
    "validation_loop": (None, 0, {
        "selection_optimism": "pass", "fold_size": "pass", "recompute": "pass",
        "fingerprint": "pass", "leakage": "pass",
    }),
}


def main():
    vetscore = sys.argv[1]
    out = pathlib.Path(sys.argv[2]) if len(sys.argv) > 2 else pathlib.Path(tempfile.mkdtemp())
    failures = []
    for name, (policy, code, statuses) in EXPECTED.items():
        folder = out / name
        subprocess.run([sys.executable, str(HERE / f"{name}.py"), str(folder)], check=True)
        report = folder / "report.json"
        args = [vetscore, "check", str(folder / "manifest.json"), "--root", str(out), "--json", str(report)]
        if policy:
            args += ["--policy", str(HERE / policy)]
        done = subprocess.run(args, capture_output=True, text=True)
        if done.returncode != code:
            failures.append(f"{name}: exit {done.returncode}, expected {code}\n{done.stdout}{done.stderr}")
            continue
        findings = {f["rule"]: f["status"] for f in json.loads(report.read_text())["models"][0]["findings"]}
        for rule, status in statuses.items():
            if findings.get(rule) != status:
                failures.append(f"{name}: {rule} is {findings.get(rule)}, expected {status}")
        print(f"{name}: exit {code} as expected; " + ", ".join(f"{r} {s}" for r, s in statuses.items()))
    if failures:
        print("\n".join(failures), file=sys.stderr)
        sys.exit(1)
    print(f"{len(EXPECTED)} passed, 0 failed")


if __name__ == "__main__":
    main()
