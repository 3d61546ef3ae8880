# Sourced by the benchmark scripts (scripts/bench_*.sh); defines nothing else.

# Builds the bench target named $1 (a program under benches/, `harness = false`) in the release
# profile and prints the path of its executable. Needs $PYTHON.
bench_executable() {
    cargo bench --locked --quiet --bench "$1" --no-run --message-format=json |
        "$PYTHON" -c 'import json, sys
for line in sys.stdin:
    m = json.loads(line)
    if m.get("reason") == "compiler-artifact" and m.get("target", {}).get("name") == sys.argv[1] and m.get("executable"):
        print(m["executable"])' "$1"
}
