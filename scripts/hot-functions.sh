#!/usr/bin/env bash
# Writes scripts/hot-functions.txt: the symbols of the functions a `check` runs, which
# build.rs hands to the linker (`--symbol-ordering-file`) so that they lie together at the
# start of the binary's code. A run then maps a few dozen pages of code instead of most of
# the binary's 7 MB: on the Class II example, page faults per run 229 -> 144 and about 0.5
# ms less CPU per run (README, "Performance"). The order changes no behaviour; a list that
# has gone stale after code changes only places fewer functions together (the linker skips
# names it does not find). Run it after larger changes, on the release build:
#   scripts/hot-functions.sh [PROJECT.toml ...]   (default: the shipped examples without a board)
# Needs valgrind (callgrind names every function a run enters) and nm.
set -euo pipefail
cd "$(dirname "$0")/.."
projects=("$@")
[ ${#projects[@]} -gt 0 ] || projects=(examples/class2-adapter.toml examples/class1-appliance.toml examples/medical-supply.toml)
cargo build --release --locked --quiet --bin gapwarden
tool=$PWD/target/release/gapwarden
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
for project in "${projects[@]}"; do
  for format in md json html; do
    valgrind --tool=callgrind --demangle=no --callgrind-out-file="$work/cg.$format.$(basename "$project")" \
      "$tool" check "$project" --format "$format" -o "$work/report" > /dev/null 2>&1 || true
  done
done
# callgrind names a function once per file, on the first `fn=` or `cfn=` line that uses it.
cat "$work"/cg.* | sed -nE 's/^c?fn=\([0-9]+\) (.+)$/\1/p' | sort -u > "$work/entered"
nm "$tool" | awk '$2 ~ /^[tTwW]$/ { print $3 }' | sort -u > "$work/code"
{
  echo "# Functions a check runs (scripts/hot-functions.sh); build.rs lets the linker place them first."
  comm -12 "$work/entered" "$work/code"
} > scripts/hot-functions.txt
echo "scripts/hot-functions.txt: $(($(wc -l < scripts/hot-functions.txt) - 1)) functions"
