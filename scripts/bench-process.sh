#!/usr/bin/env bash
# Whole-process timing: `gapwarden check` on an example against a baseline process that
# only reads and parses the same TOML file (examples/parse_baseline.rs). Prints the mean
# wall time of each over RUNS runs and their ratio. Usage:
#   scripts/bench-process.sh [PROJECT.toml] [RUNS]
set -euo pipefail
cd "$(dirname "$0")/.."
project=${1:-examples/class2-adapter.toml}
runs=${2:-200}
cargo build --release --locked --quiet --bin gapwarden --example parse_baseline
tool=target/release/gapwarden
base=target/release/examples/parse_baseline

time_runs() {
  local start end
  start=$(date +%s%N)
  for _ in $(seq "$runs"); do "$@" > /dev/null; done
  end=$(date +%s%N)
  echo $(( (end - start) / runs ))
}

# Warm the file cache and the binaries once.
"$tool" check "$project" > /dev/null || true
"$base" "$project" > /dev/null
tool_ns=$(time_runs "$tool" check "$project" || true)
base_ns=$(time_runs "$base" "$project")
awk -v t="$tool_ns" -v b="$base_ns" -v n="$runs" -v p="$project" 'BEGIN {
  printf "project: %s, %d runs each\n", p, n
  printf "gapwarden check: %.2f ms per run\n", t / 1e6
  printf "parse-only baseline: %.2f ms per run\n", b / 1e6
  printf "ratio: %.2f\n", t / b
}'
