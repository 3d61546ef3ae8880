#!/usr/bin/env bash
# The whole merge-request story on the demo fixtures: the base branch's report and ledger, then
# the merge request's check against them with its changed policy. Prints the comment vetscore
# would post; the files are left in a temporary directory named at the end.
set -uo pipefail
cd "$(dirname "$0")/.."
cargo build --release --quiet --locked || exit 3
vetscore=target/release/vetscore
out=$(mktemp -d)

# 1. On the base branch (main): its JSON report, and its holdout evaluations in the ledger.
$vetscore check --policy fixtures/demo/policy.yaml --today 2026-12-01 \
  --json "$out/base.json" 'fixtures/demo/manifests/*' > /dev/null
$vetscore ledger append --ledger "$out/vetscore-ledger.jsonl" 'fixtures/demo/manifests/*'
$vetscore ledger verify --ledger "$out/vetscore-ledger.jsonl"

# 2. On the merge request: new manifests and a changed policy, judged against the base branch.
$vetscore check \
  --policy fixtures/demo/merge-request/policy.yaml \
  --base-policy fixtures/demo/policy.yaml \
  --baseline "$out/base.json" \
  --ledger "$out/vetscore-ledger.jsonl" \
  --today 2026-12-01 \
  --markdown "$out/comment.md" --json "$out/report.json" --junit "$out/junit.xml" \
  'fixtures/demo/merge-request/manifests/*'
code=$?
echo
cat "$out/comment.md"
echo
echo "Files in $out: base.json, vetscore-ledger.jsonl, comment.md, report.json, junit.xml"
echo "vetscore exited with $code (1: not supported; the merge request loosened the policy)."
