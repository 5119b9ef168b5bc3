#!/usr/bin/env bash
# The benchmark, side by side in one run so that machine noise hits every program alike.
# On an invented class workbook (examples/make_class.rs) it times, alternately:
#   grade      benchgrade grade, every output
#   nowb       benchgrade grade --skip-workbooks (the graded workbooks' share is grade - nowb)
#   nohand     benchgrade grade --skip-handouts (the handouts' share is grade - nohand)
#   floor      examples/io_floor: calamine reads every cell, rust_xlsxwriter writes them back
#   write      examples/bare_write: rust_xlsxwriter writes the cells a graded workbook holds
#   read       examples/bare_read: calamine reads every cell
#   pandas     bench/pandas_peer.py: the same job in pandas (python-calamine, xlsxwriter)
#   term       benchgrade grade on a term kept as 120 CSV files of 40 students (bench/make_term.py)
#   section    benchgrade grade on one 40-student section (20 runs a sample, per run)
#   baseline   the same three with BASELINE=path/to/an/older/benchgrade, for before/after figures
# then grades a class ten times the size once more for the scaling figure. Prints medians of
# wall time, CPU time (user + system) and peak memory, and the ratios the issues set targets for.
#
#   bash bench/run.sh [ROWS] [SECTIONS] [REPEATS]      (defaults 100000 8 3)
#   SCALE=0 bash bench/run.sh                          skips the tenfold class
#   BASELINE=/tmp/old-benchgrade bash bench/run.sh     also times an older build, alternately
set -euo pipefail
cd "$(dirname "$0")/.."
rows=${1:-100000}; sections=${2:-8}; repeats=${3:-3}
work=$(mktemp -d); trap 'rm -rf "$work"' EXIT
cargo build --release --quiet --bin benchgrade \
  --example make_class --example bare_read --example bare_write --example io_floor
bin=target/release
"$bin/examples/make_class" "$work/class.xlsx" "$rows" "$sections"
echo "class: $rows rows, $sections sections, $(du -h "$work/class.xlsx" | cut -f1)"
python3 bench/make_term.py "$work/term-files" 120 40
python3 bench/make_term.py "$work/section-files" 1 40
base=${BASELINE:-}
peer=1
python3 -c "import pandas, python_calamine, xlsxwriter, scipy" 2>/dev/null || {
  peer=0; echo "pandas peer skipped: pip install pandas python-calamine xlsxwriter scipy"; }

measure() { # NAME COMMAND...: appends "wall cpu kilobytes" to $work/NAME
  local name=$1; shift
  /usr/bin/time -f "%e %U %S %M" -o "$work/t" "$@" >/dev/null 2>&1 || true
  awk '{printf "%s %.2f %s\n", $1, $2 + $3, $4}' "$work/t" >> "$work/$name"
}
for _ in $(seq "$repeats"); do
  measure grade "$bin/benchgrade" grade "$work/class.xlsx" --out "$work/out" --quiet
  measure floor "$bin/examples/io_floor" "$work/class.xlsx" "$work/floor.xlsx"
  measure nowb "$bin/benchgrade" grade "$work/class.xlsx" --out "$work/out-nowb" --quiet --skip-workbooks
  measure nohand "$bin/benchgrade" grade "$work/class.xlsx" --out "$work/out-nohand" --quiet --skip-handouts
  measure write "$bin/examples/bare_write" "$work/w.xlsx" "$rows" "$sections"
  measure read "$bin/examples/bare_read" "$work/class.xlsx"
  [ "$peer" = 1 ] && measure pandas python3 bench/pandas_peer.py "$work/class.xlsx" "$work/out-pandas"
  measure term "$bin/benchgrade" grade "$work/term-files" --out "$work/out-term" --quiet
  measure section bash -c "for i in \$(seq 20); do $bin/benchgrade grade $work/section-files --out $work/out-section --quiet; done"
  if [ -n "$base" ]; then
    measure base "$base" grade "$work/class.xlsx" --out "$work/out-base" --quiet
    measure baseterm "$base" grade "$work/term-files" --out "$work/out-baseterm" --quiet
    measure basesection bash -c "for i in \$(seq 20); do $base grade $work/section-files --out $work/out-basesection --quiet; done"
  fi
done
median() { sort -n | awk '{a[NR]=$1} END {print a[int((NR+1)/2)]}'; }
col() { cut -d' ' -f"$2" "$work/$1" | median; }
show() { printf '%-52s %7s s wall %7s s cpu %6s MiB\n' "$2" "$(col "$1" 1)" "$(col "$1" 2)" "$(($(col "$1" 3) / 1024))"; }
show grade "benchgrade grade, every output"
[ -n "$base" ] && show base "baseline build, every output"
show nowb "benchgrade grade --skip-workbooks"
show nohand "benchgrade grade --skip-handouts"
show floor "I/O floor: calamine read + rust_xlsxwriter write-back"
show write "bare rust_xlsxwriter write of a graded workbook's cells"
show read "bare calamine read"
[ "$peer" = 1 ] && show pandas "pandas peer"
show term "term of 120 files x 40 students, every output"
[ -n "$base" ] && show baseterm "baseline build, the same term"
persec() { awk -v t="$(col "$1" 1)" -v m="$(($(col "$1" 3) / 1024))" -v l="$2" \
  'BEGIN { printf "%-52s %7.1f ms a run       %6s MiB\n", l, 1000 * t / 20, m }'; }
persec section "one section of 40 students, every output"
[ -n "$base" ] && persec basesection "baseline build, the same section"
awk -v g="$(col grade 1)" -v gc="$(col grade 2)" -v gm="$(col grade 3)" \
    -v n="$(col nowb 1)" -v nc="$(col nowb 2)" -v h="$(col nohand 1)" \
    -v f="$(col floor 1)" -v fm="$(col floor 3)" \
    -v w="$(col write 1)" -v wc="$(col write 2)" -v tm="$(col term 1)" -v sc="$(col section 1)" \
    -v p="$([ "$peer" = 1 ] && col pandas 1 || echo 0)" 'BEGIN {
  printf "end to end / I/O floor:           time %.2fx (target 2.0x), peak memory %.2fx (target 0.5x)\n", g/f, gm/fm
  if (p > 0) printf "pandas peer / end to end:         %.1fx faster (target 8x)\n", p/g
  printf "graded workbooks / bare write:    wall %.2fx, cpu %.2fx (target 1.3x)\n", (g-n)/w, (gc-nc)/wc
  printf "handouts added to a full run:     %+.1f %% of the time (target at most 10 %%)\n", 100*(g-h)/h
  printf "term of 120 x 40:                 %.2f s (target 0.6 s); one section %.1f ms (target 15 ms)\n", tm, 1000*sc/20
}'
[ -n "$base" ] && awk -v g="$(col grade 1)" -v b="$(col base 1)" -v gm="$(col grade 3)" -v bm="$(col base 3)" \
  -v t="$(col term 1)" -v bt="$(col baseterm 1)" -v s="$(col section 1)" -v bs="$(col basesection 1)" 'BEGIN {
  printf "this build / baseline:            every output %.2fx the time, %.2fx the memory; term %.2fx; section %.2fx\n", g/b, gm/bm, t/bt, s/bs
}'
echo "(medians of $repeats alternating runs; results rows: $(($(wc -l < "$work/out/results.csv") - 1)))"
if [ "${SCALE:-1}" != 0 ]; then
  big=$((rows * 10)); bigs=$((sections + 2))
  "$bin/examples/make_class" "$work/big.xlsx" "$big" "$bigs"
  measure big "$bin/benchgrade" grade "$work/big.xlsx" --out "$work/out-big" --quiet
  show big "benchgrade grade, $big rows, $bigs sections"
  awk -v b="$(col big 1)" -v g="$(col grade 1)" \
    'BEGIN { printf "tenfold class / this class:       %.2fx the time (target 11x)\n", b/g }'
fi
