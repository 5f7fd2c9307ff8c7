#!/usr/bin/env bash
# convpick probe from the outside: the JSON parses (Python's json module) and
# agrees with the kernel (nproc, /proc/cpuinfo) and with an invented machine's
# description; bad options exit 2 with one line on stderr.
set -u
CLI=$1
fail=0
pass=0
check() { # name, command...
    local name=$1; shift
    if "$@"; then pass=$((pass + 1)); else echo "FAIL: $name"; fail=$((fail + 1)); fi
}
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
PY=/usr/bin/python3

"$CLI" probe --no-roofs --json >"$tmp/real.json" 2>"$tmp/err"
check "probe --json exits 0" test $? -eq 0
check "real machine JSON agrees with the kernel" "$PY" - "$tmp/real.json" "$(nproc --all)" <<'PYEOF'
import json, re, sys
d = json.load(open(sys.argv[1]))
info = open("/proc/cpuinfo").read()
def field(k):
    m = re.search(r"^" + re.escape(k) + r"\s*:\s*(.*)$", info, re.M)
    return m.group(1).strip() if m else None
assert d["synthetic"] is False
assert d["roofs"] is None
assert d["topology"]["pus"] == int(sys.argv[2]), d["topology"]
assert re.fullmatch(r"[0-9a-f]{16}", d["fingerprint"]), d["fingerprint"]
if field("vendor_id"):
    assert d["cpu"]["vendor"] == field("vendor_id")
    assert d["cpu"]["family"] == int(field("cpu family"))
    assert d["cpu"]["model_id"] == int(field("model"))
    assert d["cpu"]["model"] == field("model name")
    assert ("avx2" in d["isa"]) == ("avx2" in field("flags").split())
levels = [c["level"] for c in d["caches"]]
assert levels == sorted(levels) and len(levels) >= 1
assert d["blas"]["version"].startswith("OpenBLAS")
PYEOF

"$CLI" probe --no-roofs --json >"$tmp/again.json" 2>/dev/null
check "fingerprint stable across runs" "$PY" -c '
import json, sys
a, b = (json.load(open(p)) for p in sys.argv[1:3])
assert a["fingerprint"] == b["fingerprint"]' "$tmp/real.json" "$tmp/again.json"

desc='pack:2 [numa(memory=16GiB)] l3:1(size=32MiB) l2:8(size=1MiB) l1d:1(size=48KiB) core:1 pu:2'
"$CLI" probe --json --synthetic "$desc" >"$tmp/syn.json" 2>/dev/null
check "probe --synthetic exits 0" test $? -eq 0
check "synthetic JSON matches the description" "$PY" -c '
import json, sys
d = json.load(open(sys.argv[1]))
t = d["topology"]
assert d["synthetic"] is True and d["roofs"] is None
assert (t["packages"], t["numa_nodes"], t["cores"], t["pus"]) == (2, 2, 16, 32), t
assert t["memory_bytes"] == 32 << 30
c = {x["level"]: x for x in d["caches"]}
assert (c[1]["size"], c[1]["instances"], c[1]["cores_sharing"]) == (48 << 10, 16, 1)
assert (c[2]["size"], c[2]["instances"], c[2]["cores_sharing"]) == (1 << 20, 16, 1)
assert (c[3]["size"], c[3]["instances"], c[3]["cores_sharing"]) == (32 << 20, 2, 8)
assert d["llc_total_bytes"] == 64 << 20
assert d["algorithm_caches"] == {"l1d": 48 << 10, "l2": 1 << 20, "l3": 32 << 20, "line": 64}
' "$tmp/syn.json"

"$CLI" probe --synthetic "$desc" >"$tmp/syn.txt" 2>/dev/null
check "text output names the topology" grep -q "2 packages, 2 NUMA nodes, 16 physical cores, 32 PUs" "$tmp/syn.txt"
check "text output lists the L3" grep -q "L3 unified   32 MiB" "$tmp/syn.txt"

"$CLI" probe --help >"$tmp/help" 2>&1
check "--help exits 0" test $? -eq 0
check "--help names --synthetic" grep -q -- "--synthetic" "$tmp/help"

usage() { # args...: exit 2, exactly one line on stderr, nothing on stdout
    "$CLI" probe "$@" >"$tmp/out" 2>"$tmp/err"
    local rc=$?
    [ $rc -eq 2 ] && [ "$(wc -l <"$tmp/err")" -eq 1 ] && [ ! -s "$tmp/out" ]
}
check "unknown option exits 2" usage --frobnicate
check "--seconds without value exits 2" usage --seconds
check "--seconds 0 exits 2" usage --seconds 0
check "--seconds junk exits 2" usage --seconds fast
check "stray argument exits 2" usage extra
check "bad synthetic exits 2" usage --synthetic "pack:1 l3:1(32MB) core:1 pu:1"
check "bad synthetic message quotes it" grep -q "l3:1(32MB)" "$tmp/err"

echo "$pass passed, $fail failed"
[ $fail -eq 0 ]
