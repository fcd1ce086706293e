#!/usr/bin/env bash
# Time and peak memory of `gapwarden check` on generated designs of growing size, to show
# that both grow about linearly with the design (README, "Performance"). Each design has
# N circuits and N barriers in one connected ring: every fourth circuit is mains, the next
# hazardous, then two safe ones of which the second is accessible, so N/2 hazardous and
# N/4 accessible circuits make N^2/8 hazardous/accessible pairs. Grades cycle through
# functional, reinforced, basic and reinforced.
#
# Usage: scripts/bench-size.sh [SIZES...]    (default: 12500 25000 50000 100000)
# Needs GNU time at /usr/bin/time (CPU time and peak resident memory from `-v`; on a busy
# machine quote the CPU time, which the load does not inflate). Runs one process at a time,
# so it keeps one core busy.
set -euo pipefail
cd "$(dirname "$0")/.."
sizes=("$@")
[ ${#sizes[@]} -gt 0 ] || sizes=(12500 25000 50000 100000)
cargo build --release --locked --quiet --bin gapwarden
tool=$PWD/target/release/gapwarden
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT

generate() {
  awk -v n="$1" 'BEGIN {
    print "[design]\nname = \"generated ring\"\nprotection_class = \"II\"\n"
    print "[mains]\nnominal_v = 230\n"
    split("mains hazardous safe safe", kind, " ")
    split("functional reinforced basic reinforced", grade, " ")
    for (i = 0; i < n; i++) {
      printf "[[circuit]]\nid = \"c%d\"\nkind = \"%s\"\naccessible = %s\n\n", i, kind[i % 4 + 1], (i % 4 == 3 ? "true" : "false")
    }
    for (i = 0; i < n; i++) {
      printf "[[barrier]]\nid = \"b%d\"\nbetween = [\"c%d\", \"c%d\"]\ngrade = \"%s\"\nworking_rms_v = 250\nclearance_mm = %s\ncreepage_mm = 8\n\n", i, i, (i + 1) % n, grade[i % 4 + 1], (i % 7 == 0 ? "2.0" : "8")
    }
  }'
}

printf '%-10s %-6s %8s %8s %12s %10s\n' circuits format "wall s" "CPU s" "peak RSS MB" "output MB"
for n in "${sizes[@]}"; do
  generate "$n" > "$work/p.toml"
  for format in json md; do
    # Exit 1 (not ready) is expected: some barriers are laid out too short on purpose.
    /usr/bin/time -v "$tool" check "$work/p.toml" --format "$format" -o "$work/out" 2> "$work/time" || true
    secs=$(awk -F': ' '/Elapsed \(wall clock\)/ { n = split($2, t, ":"); s = 0; for (i = 1; i <= n; i++) s = s * 60 + t[i]; print s }' "$work/time")
    cpu=$(awk -F': ' '/User time|System time/ { s += $2 } END { printf "%.2f", s }' "$work/time")
    rss=$(awk -F': ' '/Maximum resident set size/ { printf "%.0f", $2 / 1024 }' "$work/time")
    size=$(awk -v b="$(stat -c %s "$work/out")" 'BEGIN { printf "%.1f", b / 1048576 }')
    printf '%-10s %-6s %8s %8s %12s %10s\n' "$n" "$format" "$secs" "$cpu" "$rss" "$size"
  done
done
