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
cargo build --release --quiet --bin benchgrade --example make_class --example bare_read --example bare_write
bin=target/release
"$bin/examples/make_class" "$work/class.xlsx" "$rows" "$sections"
echo "workbook: $rows rows, $sections sections, $(du -h "$work/class.xlsx" | cut -f1)"

measure() { # prints "seconds kilobytes"
  /usr/bin/time -f "%e %M" -o "$work/t" "$@" >/dev/null 2>&1 || true
  cat "$work/t"
}
: > "$work/grade"; : > "$work/bare"; : > "$work/full"; : > "$work/write"
for _ in $(seq "$repeats"); do
  measure "$bin/examples/bare_read" "$work/class.xlsx" >> "$work/bare"
  measure "$bin/benchgrade" grade "$work/class.xlsx" --out "$work/out" --quiet --skip-workbooks >> "$work/grade"
  measure "$bin/benchgrade" grade "$work/class.xlsx" --out "$work/out-full" --quiet >> "$work/full"
  measure "$bin/examples/bare_write" "$work/w.xlsx" "$rows" "$sections" >> "$work/write"
done
median() { sort -n | awk '{a[NR]=$1} END {print a[int((NR+1)/2)]}'; }
col() { cut -d' ' -f"$2" "$work/$1" | median; }
bt=$(col bare 1); bm=$(col bare 2); gt=$(col grade 1); gm=$(col grade 2)
ft=$(col full 1); fm=$(col full 2); wt=$(col write 1); wm=$(col write 2)
printf '%-44s %8s s %8s MiB\n' "bare calamine read" "$bt" "$((bm / 1024))"
printf '%-44s %8s s %8s MiB\n' "grade, no workbooks (CSV, JSON, gradebook)" "$gt" "$((gm / 1024))"
printf '%-44s %8s s %8s MiB\n' "grade, every output" "$ft" "$((fm / 1024))"
printf '%-44s %8s s %8s MiB\n' "bare rust_xlsxwriter write of the same cells" "$wt" "$((wm / 1024))"
awk -v g="$gt" -v b="$bt" -v f="$ft" -v w="$wt" -v gm="$gm" -v bm="$bm" 'BEGIN {
  printf "grade without workbooks / bare read: time %.2fx, peak memory %.2fx\n", g/b, gm/bm
  printf "workbook writing (every output - no workbooks) / bare write: %.2fx\n", (f-g)/w
}'
echo "(medians of $repeats alternating runs; results rows: $(($(wc -l < "$work/out/results.csv") - 1)))"
