#!/usr/bin/env bash
# The Python step of CI: installs the writer (python/) and pinned scikit-learn, numpy, pandas and
# pytest into a fresh virtual environment, runs the package's tests, then runs every example in
# examples/ and checks its manifest with the built vetscore binary (examples/check.py asserts
# the verdicts). Needs only Python 3 and the package registry. Without Python 3 it says so and
# skips; it never skips silently.
set -euo pipefail
cd "$(dirname "$0")/.."

PYTHON="${PYTHON:-python3}"
if ! command -v "$PYTHON" >/dev/null; then
  echo "SKIPPED: the Python step (pytest of python/ and examples/) needs Python 3, and '$PYTHON' is not installed" >&2
  exit 0
fi
if ! "$PYTHON" -c 'import venv, ensurepip' 2>/dev/null; then
  echo "error: $PYTHON has no venv/ensurepip module; install it (e.g. apt-get install python3-venv)" >&2
  exit 1
fi

start=$(date +%s)
work="$(mktemp -d)"
trap 'rm -rf "$work"' EXIT
venv="$work/venv"
"$PYTHON" -m venv "$venv"
# --no-compile: byte-compiling all of scipy and scikit-learn at install time is most of the
# install time; Python compiles only what it imports.
"$venv/bin/pip" install --quiet --no-compile --disable-pip-version-check \
  scikit-learn==1.9.1 numpy==2.4.6 pandas==3.1.1 scipy==1.17.1 pytest==9.2.0 jsonschema==4.26.0
"$venv/bin/pip" install --quiet --no-compile --disable-pip-version-check ./python

cargo build --locked --quiet
binary="$(pwd)/target/debug/vetscore"

# pytest exits 5 when it collects no test; say so loudly instead of failing the whole CI run.
status=0
(cd python && VETSCORE="$binary" "$venv/bin/python" -m pytest -q -p no:cacheprovider tests) || status=$?
if [ "$status" -eq 5 ]; then
  echo "WARNING: pytest collected no tests in python/tests" >&2
elif [ "$status" -ne 0 ]; then
  exit "$status"
fi

out="$work/examples"
"$venv/bin/python" examples/check.py "$binary" "$out"
echo "python step: $(( $(date +%s) - start )) s"
