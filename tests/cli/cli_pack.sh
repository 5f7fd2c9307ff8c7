#!/usr/bin/env bash
# convpick pack and bundle files: tables of two devices (a lean table tuned
# here, and the invented machine of tests/data/tiny.table.json) packed into
# one file give the same bytes whatever the order of the inputs; lookup picks
# this machine's table from the file as from the directory and answers as the
# table alone does; bad bundle files are refused in one line naming the line
# (the line numbers checked against grep -n, outside the reader); pack
# refuses a bad table and two tables of one device, writing nothing.
set -euo pipefail
CLI="$1"; SRC="$2"
PY=/usr/bin/python3
T="$(mktemp -d)"; trap 'rm -rf "$T"' EXIT
fails=0
source "$SRC/tests/cli/expect.sh"
fast=(--budget 0.05 --max-seconds 0.02 --max-candidates 1 --quiet)

mkdir "$T/dir"
"$CLI" tune --suite demo "${fast[@]}" --out "$T/full.json"
"$CLI" gather "$T/full.json" --lean --quiet --out "$T/dir/here.json"
cp "$SRC/tests/data/tiny.table.json" "$T/dir/invented.json"

# 1. Order of the inputs does not change the bytes; a directory stands for its
# tables (the evidence file beside the lean table is not one).
"$CLI" pack "$T/dir/here.json" "$T/dir/invented.json" --quiet --out "$T/a.bundle"
"$CLI" pack "$T/dir/invented.json" "$T/dir/here.json" --quiet --out "$T/b.bundle"
"$CLI" pack "$T/dir" --quiet --out "$T/c.bundle"
cmp "$T/a.bundle" "$T/b.bundle" || die "pack depends on the order of its inputs"
cmp "$T/a.bundle" "$T/c.bundle" || die "pack of the directory differs from pack of its tables"
[[ $(grep -c '^table ' "$T/a.bundle") -eq 2 ]] || die "the bundle does not hold two tables"

# 2. The pick and the answers: the file, the directory and the table alone.
for spec in n=1,c=3,h=96,w=96,k=16,r=5,s=5,stride=2,pad=2 n=1,c=32,h=24,w=24,k=64,r=1,s=1; do
  "$CLI" lookup "$T/a.bundle" --shape "$spec" --json > "$T/l_file"
  "$CLI" lookup "$T/dir" --shape "$spec" --json > "$T/l_dir"
  "$CLI" lookup "$T/dir/here.json" --shape "$spec" --json > "$T/l_table"
  $PY - "$T/l_file" "$T/l_dir" "$T/l_table" <<'PY' || die "lookup from the bundle file differs for $spec"
import json, sys
f, d, t = (json.load(open(p)) for p in sys.argv[1:])
assert f["bundle"].startswith("a.bundle:here.json: exact"), f["bundle"]
assert d["bundle"].startswith("here.json: exact"), d["bundle"]
for x in (f, d):
    del x["bundle"]
assert f == d == t, (f, d, t)
assert f["match"] == "exact", f
PY
done
"$CLI" lookup "$T/a.bundle" --shape n=1,c=32,h=24,w=24,k=64,r=1,s=1 > "$T/text"
grep -q "^table: .*a.bundle:here.json: exact" "$T/text" || die "lookup's text does not say the table picked: $(cat "$T/text")"

# 3. Bad bundle files: one line, exit 2, the line at fault.  The expected line
# numbers come from grep -n over the file.
line2=$(grep -n '^table ' "$T/a.bundle" | sed -n 2p | cut -d: -f1)
sed "${line2}s/^table \([^ ]*\) [0-9]*/table \1 99999999/" "$T/a.bundle" > "$T/size.bundle"
expect 2 "size.bundle:$line2: table 'invented.json': 99999999 bytes declared" -- \
  "$CLI" lookup "$T/size.bundle" --shape n=1,c=32,h=24,w=24,k=64,r=1,s=1
sed "${line2}s/^table /tabel /" "$T/a.bundle" > "$T/word.bundle"
expect 2 "word.bundle:$line2: expected 'table NAME BYTES' or 'end'" -- \
  "$CLI" lookup "$T/word.bundle" --shape n=1,c=32,h=24,w=24,k=64,r=1,s=1
last=$(wc -l < "$T/a.bundle")
head -n $((last - 1)) "$T/a.bundle" > "$T/trunc.bundle"
expect 2 "trunc.bundle:$last: no 'end' line: the bundle is truncated" -- \
  "$CLI" lookup "$T/trunc.bundle" --shape n=1,c=32,h=24,w=24,k=64,r=1,s=1
# a table inside that is broken: named FILE:NAME with the loader's own message
$PY - "$T/a.bundle" "$T/field.bundle" <<'PY'
import sys
data = open(sys.argv[1], "rb").read()
bad = data.replace(b'"fingerprint": "00000000000f1a7e"', b'"fingerprint": "00000000000F1A7E"')
assert bad != data
open(sys.argv[2], "wb").write(bad)
PY
expect 2 "field.bundle:invented.json: device.fingerprint: '00000000000F1A7E' is not 16 lower-case hex digits" -- \
  "$CLI" lookup "$T/field.bundle" --shape n=1,c=32,h=24,w=24,k=64,r=1,s=1

# 4. pack refusals leave the output as it was.
cp "$T/a.bundle" "$T/keep.bundle"
printf '{"format": "convpick-tuning-table", "version": 2' > "$T/broken.json"
expect 2 "broken.json:1:" -- "$CLI" pack "$T/dir" "$T/broken.json" --out "$T/keep.bundle"
cp "$T/dir/invented.json" "$T/twin.json"
expect 2 "two tables of device 00000000000f1a7e" -- "$CLI" pack "$T/dir" "$T/twin.json" --out "$T/keep.bundle"
expect 2 "a bundle file; pack takes tables and bundle directories" -- "$CLI" pack "$T/a.bundle" --out "$T/keep.bundle"
expect 2 "--out: required" -- "$CLI" pack "$T/dir"
cmp "$T/a.bundle" "$T/keep.bundle" || die "a refused pack changed its output"

[[ $fails -eq 0 ]] || exit 1
echo "PASS: pack order, picks from a bundle file, bad bundle files, pack refusals"
