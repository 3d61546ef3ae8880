#!/usr/bin/env bash
# Builds the static release archive for TARGET (default x86_64-unknown-linux-musl) with the
# `dist` profile into DIR (default dist/): vetscore-VERSION-TARGET.tar.gz holding the binary
# alone, and its SHA-256 line in vetscore-VERSION-TARGET.tar.gz.sha256. Checks that the binary
# is statically linked and runs.
set -euo pipefail
cd "$(dirname "$0")/.."
target=${1:-x86_64-unknown-linux-musl}
dir=${2:-dist}
version=$(sed -n 's/^version = "\(.*\)"/\1/p' Cargo.toml | head -n 1)
cargo build --locked --profile dist --target "$target"
bin="target/$target/dist/vetscore"
if file "$bin" | grep -q "dynamically linked"; then
  echo "error: $bin is dynamically linked" >&2
  exit 1
fi
if [ "$target" = "$(rustc -vV | sed -n 's/^host: //p' | sed 's/gnu$/musl/')" ]; then
  "$bin" --version
fi
mkdir -p "$dir"
asset="vetscore-$version-$target.tar.gz"
stage=$(mktemp -d)
cp "$bin" "$stage/vetscore"
tar -czf "$dir/$asset" -C "$stage" vetscore
(cd "$dir" && sha256sum "$asset" > "$asset.sha256" && sha256sum -c "$asset.sha256")
ls -l "$bin" "$dir/$asset"
