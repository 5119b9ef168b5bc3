#!/usr/bin/env bash
# Peak memory and wall time of benchgrade on each hostile file of issue 20 (items 5 to 7), each
# graded beside a good CSV: the small ones from tests/data/bad/ (make.py), the large ones made
# here (a 150 MB CSV of blank lines, an .ods holding an 800 MB attribute, a baseline parquet with
# a damaged footer). Prints, per file, the exit code, the peak resident memory (GNU time's
# "Maximum resident set size") and the message that names the file. Every peak must stay under
# 1 GiB and every exit code be 1 (2 for the baseline), never 134 (abort) or 101 (panic).
#
#   bash bench/hostile.sh              # release build
#   PROFILE=debug bash bench/hostile.sh
set -euo pipefail
cd "$(dirname "$0")/.."
profile=${PROFILE:-release}
if [ "$profile" = release ]; then cargo build --release --quiet --bin benchgrade
else cargo build --quiet --bin benchgrade; fi
bin=$PWD/target/$profile/benchgrade
work=$(mktemp -d); trap 'rm -rf "$work"' EXIT
cd "$work"
printf 'ID,Crude mass (g),Recovered mass (g),MP\ngood-1,3.0,2.1,121-122\n' > good.csv

python3 - <<'EOF'
import zipfile
with open("blank-lines.csv", "wb") as f:
    f.write(b"ID,Crude mass (g),Recovered mass (g),MP\n")
    for _ in range(150):
        f.write(b"\n" * 1_000_000)
ns = ('xmlns:office="urn:oasis:names:tc:opendocument:xmlns:office:1.0" '
      'xmlns:table="urn:oasis:names:tc:opendocument:xmlns:table:1.0" '
      'xmlns:text="urn:oasis:names:tc:opendocument:xmlns:text:1.0"')
with zipfile.ZipFile("attribute-800mb.ods", "w", zipfile.ZIP_DEFLATED, compresslevel=1) as z:
    z.writestr("mimetype", "application/vnd.oasis.opendocument.spreadsheet")
    with z.open("content.xml", "w", force_zip64=True) as f:
        f.write(f'<office:document-content {ns}><office:body><office:spreadsheet><table:table table:name="A">'
                '<table:table-row><table:table-cell office:value-type="string" office:string-value="'.encode())
        chunk = b"7" * (1 << 24)
        for _ in range(48):  # 805 MB
            f.write(chunk)
        f.write(b'"/></table:table-row></table:table></office:spreadsheet></office:body></office:document-content>')
EOF

# a baseline whose footer has a boolean field made an i32 one (the parquet reader panicked:
# "thrift bool field"); the first such flip the reader refuses as damaged
"$bin" grade good.csv --out old >/dev/null 2>&1
python3 - <<'EOF'
import struct
data = open("old/results.parquet", "rb").read()
n = len(data)
meta = struct.unpack("<I", data[n - 8:n - 4])[0]
for i in range(n - 8 - meta, n - 8):
    if data[i] & 0x0F in (1, 2):
        m = bytearray(data)
        m[i] = (m[i] & 0xF0) | 5
        open(f"flip-{i}.parquet", "wb").write(bytes(m))
EOF
baseline=
for p in flip-*.parquet; do
  mkdir -p try && cp "$p" try/results.parquet
  said=$("$bin" grade good.csv --out try-out --baseline try 2>&1 || true)
  if [[ $said == *damaged* ]]; then
    mkdir -p bad-baseline && cp "$p" bad-baseline/results.parquet; baseline=1; break
  fi
done
rm -rf try try-out flip-*.parquet

measure() { # LABEL ARGS...
  local label=$1; shift
  local code=0
  /usr/bin/time -f '%M %e' -o time.txt "$@" > out.txt 2> err.txt || code=$?
  read -r kb secs < <(tail -n 1 time.txt)
  printf '%-40s exit %3s  %7s MiB  %6s s  %s\n' "$label" "$code" "$((kb / 1024))" \
    "$secs" "$(grep -m1 -E 'refused|damaged|error:' err.txt | cut -c1-110)"
}

root=$OLDPWD
for f in "$root"/tests/data/bad/{xls-*.xls,ods-*.ods,xlsx-3-million-styles.xlsx}; do
  cp "$f" .
  measure "$(basename "$f")" "$bin" grade good.csv "$(basename "$f")" --out out
done
measure "blank-lines.csv (150 MB)" "$bin" grade good.csv blank-lines.csv --out out
measure "attribute-800mb.ods" "$bin" grade good.csv attribute-800mb.ods --out out
[ -n "$baseline" ] && measure "damaged baseline parquet" "$bin" grade good.csv --out out --baseline bad-baseline
measure "BENCHGRADE_LOCK_WAIT=1e300" env BENCHGRADE_LOCK_WAIT=1e300 "$bin" grade good.csv --out out
