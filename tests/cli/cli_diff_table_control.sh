#!/usr/bin/env bash
# diff of two tables with the fixed control of every entry (tried.control):
# a NEW whose every time, the control's included, is 1.3x BASE's reads as
# machine-wide drift and no regression; a NEW whose chosen times alone are
# 1.3x (the control as in BASE) is a regression.  The tables are one real
# tune whose trials are replaced by a tight invented spread (each series
# its median x 1.000, 1.002, ...: this machine's own noise is not the
# subject), and copies scaled with the Python standard library; the
# statistics are the rows' (checked against SciPy in test_diff_drift).
set -euo pipefail
CLI="$1"
PY=/usr/bin/python3
tmp="$(mktemp -d)"; trap 'rm -rf "$tmp"' EXIT
fail() { echo "FAIL: $*"; exit 1; }
"$CLI" tune --shape "lens: n=1,c=8,h=12,w=12,k=8,r=3,pad=1" --shape "iris: n=1,c=16,h=6,w=6,k=8,r=1" \
  --algo direct,blocked --budget 30 --min-rounds 12 --max-rounds 12 --quiet --out "$tmp/tune.json" >/dev/null
scale() { # IN OUT FACTOR_ROWS FACTOR_CONTROL
  $PY - "$@" <<'P'
import json, sys
src, dst, fr, fc = sys.argv[1], sys.argv[2], float(sys.argv[3]), float(sys.argv[4])
d = json.load(open(src))
tight = lambda m, n: [m * (1 + 0.002 * k) for k in range(n)]
for e in d["entries"]:
    for c in e["candidates"]:
        t = c.get("timing")
        if not t:
            continue
        n = len(t.get("samples", []))
        t["samples"] = [v * fr for v in tight(t["stats"]["median"], n)]
        for k in ("median", "ci_lo", "ci_hi"):
            t["stats"][k] *= fr
    for k in ("median", "ci_lo", "ci_hi"):
        e["timing"]["stats"][k] *= fr
    ctl = e["tried"]["control"]
    ctl["fma_s"] = [v * fc for v in tight(1e-4, len(ctl["fma_s"]))]
    ctl["gemm_s"] = [v * fc for v in tight(5e-4, len(ctl["gemm_s"]))]
json.dump(d, open(dst, "w"))
P
}
scale "$tmp/tune.json" "$tmp/base.json" 1.0 1.0
scale "$tmp/tune.json" "$tmp/drift.json" 1.3 1.3
scale "$tmp/tune.json" "$tmp/slow.json" 1.3 1.0

set +e; "$CLI" diff "$tmp/base.json" "$tmp/drift.json" >"$tmp/out" 2>&1; rc=$?; set -e
[ "$rc" = 0 ] || { cat "$tmp/out"; fail "drift: exit $rc, expected 0"; }
grep -q "the control ran 1.30x slower in NEW .*machine-wide drift" "$tmp/out" || { cat "$tmp/out"; fail "drift not reported"; }
grep -qE "^summary: [0-9]+ compared: 0 slower" "$tmp/out" || { cat "$tmp/out"; fail "a row judged slower under drift"; }

set +e; "$CLI" diff "$tmp/base.json" "$tmp/slow.json" >"$tmp/out" 2>&1; rc=$?; set -e
[ "$rc" = 1 ] || { cat "$tmp/out"; fail "slower rows: exit $rc, expected 1"; }
grep -q "the control is unchanged in NEW" "$tmp/out" || { cat "$tmp/out"; fail "control verdict"; }
grep -qE "^summary: .*REGRESSION" "$tmp/out" || { cat "$tmp/out"; fail "no regression verdict"; }
echo "cli_diff_table_control: all checks passed"
