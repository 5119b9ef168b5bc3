#!/usr/bin/env bash
# Benchmark: `benchgrade grade` on an invented 100,000-row, 8-section workbook against a bare
# calamine read of the same file, run alternately in one session so that machine noise hits
# both alike. Prints medians of wall time and peak memory, and their ratios.
#
#   bash bench/run.sh [ROWS] [SECTIONS] [REPEATS]
set -euo pipefail
cd "$(dirname "$0")/.."
rows=${1:-100000}; sections=${2:-8}; repeats=${3:-5}
work=$(mktemp -d); trap 'rm -rf "$work"' EXIT
cargo build --release --quiet --bin benchgrade --example make_class --example bare_read
bin=target/release
"$bin/examples/make_class" "$work/class.xlsx" "$rows" "$sections"
echo "workbook: $rows rows, $sections sections, $(du -h "$work/class.xlsx" | cut -f1)"

measure() { # prints "seconds kilobytes"
  /usr/bin/time -f "%e %M" -o "$work/t" "$@" >/dev/null 2>&1 || true
  cat "$work/t"
}
: > "$work/grade"; : > "$work/bare"
for _ in $(seq "$repeats"); do
  measure "$bin/examples/bare_read" "$work/class.xlsx" >> "$work/bare"
  measure "$bin/benchgrade" grade "$work/class.xlsx" --out "$work/out" --quiet >> "$work/grade"
done
median() { sort -n | awk '{a[NR]=$1} END {print a[int((NR+1)/2)]}'; }
gt=$(cut -d' ' -f1 "$work/grade" | median); gm=$(cut -d' ' -f2 "$work/grade" | median)
bt=$(cut -d' ' -f1 "$work/bare" | median); bm=$(cut -d' ' -f2 "$work/bare" | median)
printf '%-28s %8s s %8s MiB\n' "bare calamine read" "$bt" "$((bm / 1024))"
printf '%-28s %8s s %8s MiB\n' "benchgrade grade" "$gt" "$((gm / 1024))"
awk -v g="$gt" -v b="$bt" -v gm="$gm" -v bm="$bm" 'BEGIN {printf "ratio: time %.2fx, peak memory %.2fx (medians of %d runs)\n", g/b, gm/bm, '"$repeats"'}'
echo "results rows: $(($(wc -l < "$work/out/results.csv") - 1))"
