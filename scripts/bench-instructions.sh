#!/usr/bin/env bash
# Instruction counts (valgrind --tool=callgrind; repeatable whatever the machine's load) of a
# whole `gapwarden check` of an example as Markdown and as JSON, and of the parse-only
# baseline process (examples/parse_baseline.rs). The figures quoted in the README's
# "Performance" section come from this script. Usage:
#   [GAPWARDEN_BIN=other/gapwarden] scripts/bench-instructions.sh [PROJECT.toml]
# Needs valgrind. Runs from a scratch folder so that the output files land there.
set -euo pipefail
cd "$(dirname "$0")/.."
project=$(realpath "${1:-examples/class2-adapter.toml}")
cargo build --release --locked --quiet --bin gapwarden --example parse_baseline
# GAPWARDEN_BIN=path measures another build of the tool (for a before/after comparison).
tool=$(realpath "${GAPWARDEN_BIN:-target/release/gapwarden}")
base=$PWD/target/release/examples/parse_baseline
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
cd "$work"

count() {
  valgrind --tool=callgrind --callgrind-out-file="$work/cg.out" "$@" > /dev/null 2> "$work/log" || true
  awk '/Collected :/ { print $NF }' "$work/log"
}

md=$(count "$tool" check "$project" --format md -o "$work/report.md")
json=$(count "$tool" check "$project" --format json -o "$work/report.json")
parse=$(count "$base" "$project")
awk -v m="$md" -v j="$json" -v p="$parse" -v f="$project" 'BEGIN {
  printf "project: %s\n", f
  printf "check --format md:   %6.2f million instructions\n", m / 1e6
  printf "check --format json: %6.2f million instructions\n", j / 1e6
  printf "parse-only baseline: %6.2f million instructions\n", p / 1e6
}'
