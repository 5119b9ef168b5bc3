#!/usr/bin/env bash
# Runs every fuzz target in turn for SECONDS each (default 600), one job at a time, with the
# seeds in fuzz/seeds/<target>; new inputs and any crash go under target/fuzz-work/.
#
#   bash fuzz/run.sh [SECONDS] [TARGET ...]
set -euo pipefail
cd "$(dirname "$0")"
secs=${1:-600}; shift || true
targets=("$@"); [ ${#targets[@]} -gt 0 ] || targets=(values range headers rubric csv xls ods ods_content)
work=../target/fuzz-work
export RUSTC_BOOTSTRAP=1  # cargo-fuzz needs nightly flags; this lets a stable toolchain take them
for t in "${targets[@]}"; do
  mkdir -p "$work/corpus/$t" "$work/artifacts/$t"
  echo "== $t: $secs s"
  cargo fuzz run --target-dir ../target/fuzz "$t" "$work/corpus/$t" "seeds/$t" -- \
    -max_total_time="$secs" -rss_limit_mb=2048 -max_len=65536 \
    -artifact_prefix="$work/artifacts/$t/" 2>&1 | tail -n 4
done
