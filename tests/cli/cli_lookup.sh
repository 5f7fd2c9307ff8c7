#!/usr/bin/env bash
# convpick lookup on the committed fixture tests/data/tiny.table.json: the
# three kinds of answer, the JSON form, and exit 2 with the loader's or the
# parser's one-line message on bad input.
set -euo pipefail
CLI="$1"; SRC="$2"
PY=/usr/bin/python3
T="$SRC/tests/data/tiny.table.json"
tmp="$(mktemp -d)"; trap 'rm -rf "$tmp"' EXIT
fail() { echo "FAIL: $*"; exit 1; }

out="$("$CLI" lookup "$T" --shape n=1,c=3,h=16,w=16,k=8,r=3,s=3,pad=1)"
grep -q '^algorithm: direct$' <<<"$out" || fail "exact: $out"
grep -q '^match: *exact$' <<<"$out" || fail "exact match: $out"
grep -q 'another device' <<<"$out" || fail "device note missing: $out"

j="$("$CLI" lookup "$T" --shape n=1,c=8,h=32,w=32,k=8,r=3,pad=1 --flip yes --threads 1 --json)"
$PY -c '
import json, sys
d = json.loads(sys.argv[1])
assert d["algo"] == "direct_flipidx" and d["match"] == "approximate" and d["entry"] == "block1", d
assert "nearest" in d["why"] and d["device_matches"] is False, d' "$j" || fail "nearest: $j"

j="$("$CLI" lookup "$T" --shape n=1,c=8,h=8,w=8,k=8,r=1 --json)"
$PY -c '
import json, sys
d = json.loads(sys.argv[1])
assert d["algo"] == "im2col_gemm" and d["match"] == "default" and d["entry"] is None, d' "$j" || fail "default: $j"

expect2() { # expect2 NEEDLE ARGS...: exit 2 and NEEDLE in the one-line error
  local needle="$1"; shift
  set +e; "$CLI" lookup "$@" >/dev/null 2>"$tmp/err"; local rc=$?; set -e
  [ "$rc" = 2 ] || fail "exit $rc (want 2) for: $*"
  [ "$(wc -l <"$tmp/err")" = 1 ] || fail "not one line: $(cat "$tmp/err")"
  grep -qF -- "$needle" "$tmp/err" || fail "'$needle' not in: $(cat "$tmp/err")"
}
expect2 "device.fingerprint: 00000000000f1a7e is not this machine's" "$T" --shape n=1,c=3,h=16,w=16,k=8,r=3 --strict-device
expect2 "cannot read: No such file or directory" "$tmp/absent.json" --shape n=1,c=3,h=16,w=16,k=8,r=3
head -c 700 "$T" > "$tmp/trunc.json"
expect2 "$tmp/trunc.json:" "$tmp/trunc.json" --shape n=1,c=3,h=16,w=16,k=8,r=3
sed "s/\"version\": 2,/\"version\": 3,/" "$T" > "$tmp/v3.json"
expect2 "version: 3 is not supported" "$tmp/v3.json" --shape n=1,c=3,h=16,w=16,k=8,r=3
expect2 "--shape" "$T" --shape n=1,c=3,h=16,w=16,k=8,r=3,bogus=2
expect2 "convpick lookup: --flip: 'sideways' is not no or yes" "$T" --shape n=1,c=3,h=16,w=16,k=8,r=3 --flip sideways
expect2 "expected one TABLE" --shape n=1,c=3,h=16,w=16,k=8,r=3
grep -q -- "--strict-device" <<<"$("$CLI" lookup --help)" || fail "help"
echo "cli_lookup: all checks passed"
