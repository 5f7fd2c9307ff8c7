#!/usr/bin/env bash
# The cache study command: a small study end to end (table, JSON, SVG), the
# hardware-counter report, sampling, and one-line usage errors.
# Usage: bash cli_cache.sh CLI SRCDIR
# Outside checks: the JSON is read by Python's json module, the SVG by
# xmllint (libxml2-utils) as well-formed XML.
set -euo pipefail

CLI=$1
PY=/usr/bin/python3
T=$(mktemp -d /tmp/convpick_cli_cache.XXXXXX)
trap 'rm -rf "$T"' EXIT
fails=0
die() { echo "FAIL: $*" >&2; fails=$((fails + 1)); }

expect() { # CODE FRAGMENT -- command...
    local code=$1 frag=$2
    shift 3
    local rc=0
    "$@" >"$T/out" 2>"$T/err" || rc=$?
    [[ $rc -eq $code ]] || { die "'$*' exited $rc, expected $code: $(cat "$T/err")"; return 0; }
    [[ -z $frag ]] || grep -qF -- "$frag" "$T/err" || die "'$*': stderr '$(cat "$T/err")' lacks '$frag'"
    if [[ $code -eq 2 ]]; then
        [[ $(wc -l <"$T/err") -eq 1 ]] || die "'$*': expected one error line, got: $(cat "$T/err")"
    fi
}

# A small study: two layers, explicit geometry, 6 of 12 channels simulated.
"$CLI" cache --shape n=1,c=8,h=14,w=14,k=12,r=3,pad=1 --shape n=1,c=4,h=20,w=20,k=12,r=5,stride=2 \
    --cache-geometry L1=4K:4:64,L2=32K:8:64 --channels 6 --time-cap 0.05 \
    --json "$T/s.json" --svg "$T/s.svg" >"$T/table" || die "study exited $?"
grep -q "simulated: first 6 of 12 output channels" "$T/table" || die "sampling not reported"
grep -q "^hardware counters: " "$T/table" || die "no hardware counter line"
xmllint --noout "$T/s.svg" || die "SVG is not well-formed"
grep -q "<svg" "$T/s.svg" || die "no svg element"
$PY - "$T/s.json" "$T/table" <<'PYEOF' || die "JSON checks"
import json, sys
d = json.load(open(sys.argv[1]))
table = open(sys.argv[2]).read()
assert d["format"] == "convpick-cache-study" and d["version"] == 2
assert all(v["flipped"] in (False, True) for L in d["layers"] for v in L["variants"])
assert all(L["shape"]["dilation_h"] >= 1 and L["shape"]["spec"] for L in d["layers"])
assert [l["name"] for l in d["geometry"]["levels"]] == ["L1", "L2"]
assert d["geometry"]["levels"][0]["size"] == 4096 and d["geometry"]["levels"][0]["ways"] == 4
hc = d["hardware_counters"]
assert len(d["layers"]) == 2
for L in d["layers"]:
    assert L["k_simulated"] == 6 and L["k"] == 12
    ids = [v["id"] for v in L["variants"]]
    assert len(ids) == 12, ids
    for v in L["variants"]:
        assert v["check"]["pass"], v["id"]
        # Counters: either measured, or absent everywhere with a reason.
        if not hc["available"]:
            assert v["counters"] is None, v["id"]
        if v["id"].startswith("blocked.avx2"):
            assert v["sim"] is None and "no trace hooks" in v["sim_unavailable"]
            continue
        s = v["sim"]
        lv = s["levels"]
        # Every access is looked up in L1; L2 sees exactly the L1 misses.
        assert lv[0]["accesses"] >= s["refs"], v["id"]
        assert lv[1]["accesses"] == lv[0]["misses"], v["id"]
        assert lv[1]["misses"] <= lv[0]["misses"], v["id"]
        assert abs(lv[0]["misses_per_output"] * L["outputs_simulated"] - lv[0]["misses"]) < 1e-6 * lv[0]["misses"] + 1e-9
        if v["kind"] == "xcorr":
            assert lv[0]["ratio_to_xcorr"] == 1.0
        if v["kind"] == "flipidx":
            assert v["check"]["diff_vs_preflip"] is not None and v["check"]["diff_vs_preflip"] <= v["check"]["tolerance"]
    # The traced flipidx and preflip read the same x and y as xcorr: equal refs.
    by = {v["id"]: v for v in L["variants"]}
    for fam in ("direct.o0", "direct.o1", "blocked.ref"):
        r = {k: by[fam + "." + k]["sim"]["refs"] for k in ("xcorr", "flipidx", "preflip")}
        assert len(set(r.values())) == 1, (fam, r)
if not hc["available"]:
    assert hc["reason"] and "hardware counters: not available here (" + hc["reason"] + ")" in table
PYEOF

# --trace-only prints the simulator's counts for one variant.
"$CLI" cache --trace-only direct.o1.flipidx --shape n=1,c=2,h=8,w=8,k=2,r=3 \
    --cache-geometry L1=1K:2:64 >"$T/tr" || die "trace-only exited $?"
grep -q "^trace direct.o1.flipidx refs " "$T/tr" || die "trace-only output: $(cat "$T/tr")"
grep -q "^level L1 accesses " "$T/tr" || die "trace-only level line: $(cat "$T/tr")"

S=n=1,c=2,h=8,w=8,k=2,r=3
expect 2 "convpick cache: --cache-geometry: 'L1=32K:8:48': L1: line size 48 is not a power of two" -- \
    "$CLI" cache --shape $S --cache-geometry L1=32K:8:48
expect 2 "convpick cache: --cache-geometry: 'L1=1K:2:64,L2=8K:x:64': L2: ways 'x'" -- "$CLI" cache --shape $S --cache-geometry L1=1K:2:64,L2=8K:x:64
expect 2 "convpick cache: --max-accesses: 'abc' is not a positive integer" -- "$CLI" cache --shape $S --max-accesses abc
expect 2 "convpick cache: --flip: not taken" -- "$CLI" cache --shape $S --flip yes
expect 2 "convpick cache: --trace-only: 'direct.o9.xcorr': unknown variant" -- "$CLI" cache --shape $S --trace-only direct.o9.xcorr
expect 2 "no traced build" -- "$CLI" cache --shape $S --trace-only blocked.avx2.xcorr
expect 2 "convpick cache: --family: unknown family 'sideways'" -- "$CLI" cache --shape $S --family sideways
expect 2 "convpick cache: --algo: 'im2col_gemm': the cache study covers direct and blocked only" -- \
    "$CLI" cache --shape $S --algo im2col_gemm
expect 2 "convpick cache: --plain: needs --trace-only" -- "$CLI" cache --shape $S --plain
expect 2 "" -- "$CLI" cache --bogus

[[ $fails -eq 0 ]] || { echo "$fails failure(s)"; exit 1; }
echo "cli_cache: all checks passed"
