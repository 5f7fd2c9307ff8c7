#!/usr/bin/env bash
# convpick diff --paired with rounds measured in parts (a.json+b.json): the
# parts of a round are read as one round, every layer of every part paired
# round by round; a missing part and a part of another device are refused
# with one line and exit 2.  The verdicts themselves are the paired
# statistics' (checked against SciPy in test_paired), not asserted here.
set -euo pipefail
CLI="$1"
tmp="$(mktemp -d)"; trap 'rm -rf "$tmp"' EXIT
fail() { echo "FAIL: $*"; exit 1; }
for r in 1 2 3; do
  for side in a b; do
    "$CLI" bench --shape "north: n=1,c=4,h=8,w=8,k=4,r=3,pad=1" --algo direct --no-roofs \
      --max-seconds 0.01 --json "$tmp/$side$r.p1.json" >/dev/null
    "$CLI" bench --shape "south: n=1,c=8,h=6,w=6,k=4,r=1" --algo direct --no-roofs \
      --max-seconds 0.01 --json "$tmp/$side$r.p2.json" >/dev/null
  done
done
list() { echo "$tmp/${1}1.p1.json+$tmp/${1}1.p2.json,$tmp/${1}2.p1.json+$tmp/${1}2.p2.json,$tmp/${1}3.p1.json+$tmp/${1}3.p2.json"; }
set +e; "$CLI" diff --paired "$(list a)" "$(list b)" >"$tmp/out" 2>&1; rc=$?; set -e
[ "$rc" = 0 ] || [ "$rc" = 1 ] || { cat "$tmp/out"; fail "exit $rc"; }
grep -qE '^summary: 2 compared' "$tmp/out" || { cat "$tmp/out"; fail "both parts' layers compared"; }
grep -qE ' north ' "$tmp/out" && grep -qE ' south ' "$tmp/out" || { cat "$tmp/out"; fail "a layer is missing"; }

set +e; "$CLI" diff --paired "$(list a)" "$tmp/b1.p1.json+$tmp/nowhere.json,$tmp/b2.p1.json" >"$tmp/out" 2>&1; rc=$?; set -e
[ "$rc" = 2 ] && grep -q "nowhere.json" "$tmp/out" && [ "$(wc -l <"$tmp/out")" = 1 ] || { cat "$tmp/out"; fail "a missing part"; }

sed 's/"fingerprint": *"[0-9a-f]*"/"fingerprint": "0123456789abcdef"/' "$tmp/b2.p2.json" >"$tmp/other.json"
set +e; "$CLI" diff --paired "$(list a)" "$tmp/b1.p1.json+$tmp/b1.p2.json,$tmp/b2.p1.json+$tmp/other.json" >"$tmp/out" 2>&1; rc=$?; set -e
[ "$rc" = 2 ] && grep -q "parts of a round come from different devices" "$tmp/out" || { cat "$tmp/out"; fail "a part of another device"; }
echo "cli_diff_parts: all checks passed"
