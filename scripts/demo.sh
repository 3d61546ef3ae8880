#!/usr/bin/env bash
# Runs vetscore on the demo manifests under fixtures/demo/ and prints the Markdown report that
# would be posted on the merge request. The demo is built to contain unsupported claims, so the
# check ends with exit code 1 on purpose; the last line says so.
set -uo pipefail
cd "$(dirname "$0")/.."

cargo build --release --quiet --locked || exit 3
out=$(mktemp -d)
target/release/vetscore check \
  --policy fixtures/demo/policy.yaml \
  --today 2026-12-01 \
  --markdown "$out/report.md" \
  --json "$out/report.json" \
  'fixtures/demo/manifests/*'
code=$?
cat "$out/report.md"
echo
echo "Reports written to $out/report.md and $out/report.json."
case $code in
  0) echo "vetscore exited with 0: every claim is supported." ;;
  1) echo "vetscore exited with 1: some claims are not supported, as this demo intends (a CI job would fail here)." ;;
  *) echo "vetscore exited with $code: see the messages above."; exit "$code" ;;
esac
