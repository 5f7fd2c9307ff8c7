#!/usr/bin/env bash
# scripts/ci-speed-check with a given binary (no build): --refresh writes the
# device's baseline, a run against it keeps its artefacts and passes, a
# baseline made twice as fast fails the check, a missing baseline is exit 2.
set -euo pipefail
CLI="$1"; SRC="$2"
PY=/usr/bin/python3
tmp="$(mktemp -d)"; trap 'rm -rf "$tmp"' EXIT
fail() { echo "FAIL: $*"; exit 1; }
# scaled IN FACTOR OUT: the results file IN with every sample times FACTOR.
scaled() {
  $PY - "$1" "$2" "$3" <<'PY'
import json, sys
d = json.load(open(sys.argv[1]))
for r in d["results"]:
    if r["status"] == "ok":
        r["measurement"]["samples"] = [t * float(sys.argv[2]) for t in r["measurement"]["samples"]]
json.dump(d, open(sys.argv[3], "w"))
PY
}
cat >"$tmp/shapes.txt" <<'S'
# two tiny layers of an invented network
a: n=1,c=4,h=10,w=10,k=8,r=3,s=3,pad=1
b: n=1,c=8,h=8,w=8,k=8,r=1,s=1
S
check=("$SRC/scripts/ci-speed-check" --convpick "$CLI" --shapes "$tmp/shapes.txt"
       --algo direct,im2col_gemm --max-seconds 0.05 --baseline-dir "$tmp/baselines")

# 1. --refresh writes baselines/<fingerprint>.json.
"${check[@]}" --refresh --out "$tmp/art0" >"$tmp/log" || { cat "$tmp/log"; fail "--refresh failed"; }
n="$(ls "$tmp/baselines" | grep -c '^[0-9a-f]\{16\}\.json$')"
[ "$n" = 1 ] || fail "expected one baseline named by the fingerprint, found: $(ls "$tmp/baselines")"
base="$(ls "$tmp/baselines"/*.json)"
fp="$(basename "$base" .json)"
grep -q "\"fingerprint\": \"$fp\"" "$base" || fail "baseline named $fp does not carry that fingerprint"

# 2. A run that is not slower passes and keeps its artefacts.  This checks the
# pass path, not the statistics (test_diff_stats checks their false-alarm rate
# on seeded samples): these layers take microseconds, and on a shared machine
# other work can slow a run against a fresh baseline by tens of per cent (it
# once made one 1.9x slower here).  So the baseline is this machine's made ten
# times slower: whatever the load, the run cannot be a regression against it.
scaled "$base" 10 "$tmp/slow.json"
"${check[@]}" --baseline "$tmp/slow.json" --out "$tmp/art1" >"$tmp/log" || { cat "$tmp/log"; fail "a run against a slower baseline failed"; }
for f in results.json results.txt diff.txt junit.xml summary.md; do
  [ -s "$tmp/art1/$f" ] || fail "artefact $f missing"
done
ok="$($PY -c 'import json,sys; print(sum(r["status"]=="ok" for r in json.load(open(sys.argv[1]))["results"]))' "$tmp/art1/results.json")"
[ "$(xmllint --xpath 'count(//testcase)' "$tmp/art1/junit.xml")" = "$ok" ] || fail "junit testcases != $ok measured results"
grep -q "speed check passed" "$tmp/log" || fail "no pass line"

# 3. A baseline twice as fast as this machine: a regression that holds after the retry.
scaled "$base" 0.5 "$tmp/fast.json"
set +e; "${check[@]}" --baseline "$tmp/fast.json" --retries 1 --out "$tmp/art2" >"$tmp/log" 2>&1; rc=$?; set -e
[ "$rc" = 1 ] || { cat "$tmp/log"; fail "a 2x slowdown should exit 1, got $rc"; }
grep -q "measuring again (1 of 1)" "$tmp/log" || fail "no retry before failing"
grep -q "speed check FAILED" "$tmp/log" || fail "no failure line"
[ -s "$tmp/art2/results-retry1.json" ] || fail "retry results not kept"
[ "$(xmllint --xpath 'count(//testcase/failure)' "$tmp/art2/junit.xml")" -ge 1 ] || fail "no JUnit failure"

# 4. No baseline for this device: exit 2 with the way to make one.
set +e; "${check[@]}" --baseline-dir "$tmp/none" --out "$tmp/art3" >"$tmp/log" 2>&1; rc=$?; set -e
[ "$rc" = 2 ] || fail "a missing baseline should exit 2, got $rc"
grep -q "no baseline for device $fp" "$tmp/log" && grep -q -- "--refresh" "$tmp/log" || { cat "$tmp/log"; fail "missing-baseline message"; }
echo "cli_speed_check: all checks passed"
