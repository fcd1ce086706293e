#!/usr/bin/env bash
# Whole-process timing: `gapwarden check` on an example against a baseline process that
# only reads and parses the same TOML file (examples/parse_baseline.rs). Prints the mean
# wall time of each over RUNS runs and their ratio, and the same for CPU time (user +
# system, from GNU time at /usr/bin/time where present), which a busy machine inflates less
# than wall time. For a figure that does not depend on the load at all, count instructions
# with scripts/bench-instructions.sh. Usage:
#   [GAPWARDEN_BIN=other/gapwarden] scripts/bench-process.sh [PROJECT.toml] [RUNS]
set -euo pipefail
cd "$(dirname "$0")/.."
project=${1:-examples/class2-adapter.toml}
runs=${2:-200}
cargo build --release --locked --quiet --bin gapwarden --example parse_baseline
# GAPWARDEN_BIN=path measures another build of the tool (for a before/after comparison).
tool=${GAPWARDEN_BIN:-target/release/gapwarden}
base=target/release/examples/parse_baseline

time_runs() {
  local start end
  start=$(date +%s%N)
  for _ in $(seq "$runs"); do "$@" > /dev/null; done
  end=$(date +%s%N)
  echo $(( (end - start) / runs ))
}

# Drop both binaries from the page cache first, so that each runs as after reading it from
# disk. A file the linker just wrote, or one read back from disk, takes more page faults
# per run than a fresh `cp` of it (229 against 168 for the same gapwarden binary, on this
# machine), so without this the figure would depend on how the file got there. (GNU dd:
# `iflag=nocache` with `count=0` drops a file's cache.)
for binary in "$tool" "$base"; do
  sync "$binary" 2> /dev/null || sync
  dd if="$binary" iflag=nocache count=0 status=none 2> /dev/null || true
done
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

# CPU time of the same loops (seconds of user + system over all runs).
cpu_runs() {
  /usr/bin/time -f "%U %S" -o "$cpu_file" bash -c 'for _ in $(seq "$1"); do "${@:2}" > /dev/null || true; done' _ "$runs" "$@"
  awk '{ printf "%.0f", ($1 + $2) * 1e9 / '"$runs"' }' "$cpu_file"
}
if [ -x /usr/bin/time ]; then
  cpu_file=$(mktemp)
  trap 'rm -f "$cpu_file"' EXIT
  tool_cpu=$(cpu_runs "$tool" check "$project")
  base_cpu=$(cpu_runs "$base" "$project")
  awk -v t="$tool_cpu" -v b="$base_cpu" 'BEGIN {
    printf "gapwarden check CPU: %.2f ms per run\n", t / 1e6
    printf "parse-only baseline CPU: %.2f ms per run\n", b / 1e6
    printf "CPU ratio: %.2f\n", t / b
  }'
fi
