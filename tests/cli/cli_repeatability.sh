#!/usr/bin/env bash
# scripts/repeatability end to end on a tiny invented layer: three tunes in a
# chain, each table diffed with the one before (two same-build diffs), the
# control recorded in every entry, the summary counting the diffs; bad usage
# refused.  Whether a same-build diff passes on this machine is a
# measurement (results/measure/), not asserted here: only that the exit code
# agrees with the verdicts the summary lists.
set -euo pipefail
CLI="$1"; SRC="$2"
PY=/usr/bin/python3
tmp="$(mktemp -d)"; trap 'rm -rf "$tmp"' EXIT
fail() { echo "FAIL: $*"; exit 1; }

set +e
"$SRC/scripts/repeatability" --convpick "$CLI" --out "$tmp/r" --runs 3 -- \
  --shape "gate: n=1,c=8,h=10,w=10,k=8,r=3,pad=1" --algo direct,blocked --budget 0.2 \
  >"$tmp/log" 2>&1
rc=$?
set -e
[ "$rc" = 0 ] || [ "$rc" = 1 ] || { cat "$tmp/log"; fail "exit $rc"; }
for i in 1 2 3; do [ -s "$tmp/r/run$i.table.json" ] || fail "run $i wrote no table"; done
[ -s "$tmp/r/tables.1-2.diff.txt" ] && [ -s "$tmp/r/tables.2-3.diff.txt" ] || fail "two diffs expected"
[ "$(grep -c '^tables ' "$tmp/r/summary.txt")" = 2 ] || { cat "$tmp/r/summary.txt"; fail "summary lines"; }
npass=$(grep -c '^tables .*: exit 0' "$tmp/r/summary.txt" || true)
grep -q "^same-build table diffs without a regression: $npass of 2$" "$tmp/r/summary.txt" \
  || { cat "$tmp/r/summary.txt"; fail "the count line"; }
[ "$(( rc == 0 ))" = "$(( npass == 2 ))" ] || fail "exit $rc disagrees with $npass of 2 passing"
# Every entry carries the fixed control, one value per round of its race.
$PY - "$tmp/r/run1.table.json" <<'P' || fail "control series"
import json, sys
d = json.load(open(sys.argv[1]))
for e in d["entries"]:
    c = e["tried"]["control"]
    rounds = int(e["tried"]["notes"][1].split("race: ")[1].split(" rounds")[0])
    assert len(c["fma_s"]) == len(c["gemm_s"]) == rounds, (len(c["fma_s"]), rounds)
    assert all(v > 0 for v in c["fma_s"] + c["gemm_s"])
    assert c["what"].startswith("fma")
P

set +e; "$SRC/scripts/repeatability" --convpick "$CLI" --runs 1 -- --suite demo >"$tmp/log" 2>&1; rc=$?; set -e
[ "$rc" = 2 ] && grep -q "runs '1': expected a whole number >= 2" "$tmp/log" || fail "--runs 1 accepted"
echo "cli_repeatability: all checks passed"
