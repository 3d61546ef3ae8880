"""Helpers shared by the scripts that write scenario folders (evidence_scenarios.py,
edge_scenarios.py): the documented test-split fingerprint, a plain CSV writer, and the policy
lines that switch off the rules judging cross-validation."""

import hashlib

# Scenarios without cross-validation switch off the rules that judge it.
NO_CV = """  cv_test_gap: {severity: "off"}
  interval_overlap: {severity: "off"}
  selection_optimism: {severity: "off"}
  fold_size: {severity: "off"}
"""


def fingerprint(ids):
    """SHA-256 of the sorted ids joined by newlines, as docs/manifest.md defines it."""
    return "sha256:" + hashlib.sha256("\n".join(sorted(ids)).encode()).hexdigest()


def write_csv(path, header, rows):
    with open(path, "w") as f:
        f.write(",".join(header) + "\n")
        for r in rows:
            f.write(",".join(str(x) for x in r) + "\n")
