#!/usr/bin/env bash
# tune --shard and convpick gather: the shards of the demo suite partition it
# as the documented rule says; gathering them in every order gives the same
# bytes; a layer measured twice is resolved by the rule; shards of another
# device or other settings are refused unless --mixed (then said at the top);
# --lean writes a table without the evidence and the full table beside it;
# every output validates against docs/table.schema.json (python3-jsonschema).
set -euo pipefail
CLI="$1"; SRC="$2"
PY=/usr/bin/python3
tmp="$(mktemp -d)"; trap 'rm -rf "$tmp"' EXIT
$PY -c 'import jsonschema' 2>/dev/null || { echo "FAIL: python3-jsonschema is not installed"; exit 1; }
fail() { echo "FAIL: $*"; exit 1; }
fast=(--budget 0.05 --max-seconds 0.02 --max-candidates 1 --quiet)

for i in 1 2 3; do "$CLI" tune --suite demo --shard "$i/3" "${fast[@]}" --out "$tmp/s$i.json"; done

# 1. The partition.  Expected: the rule of docs/table-format.md recomputed
# here (greedy, heaviest first, to the lightest shard; FLOPs = 2 n k (c/g) r s
# oh ow, common practice, no source) from the suite as `convpick tune` lists
# it; every distinct shape lands in exactly one shard.
"$CLI" tune --suite demo --shard 1/1 "${fast[@]}" --out "$tmp/all.json"
$PY - "$tmp/all.json" "$tmp"/s1.json "$tmp"/s2.json "$tmp"/s3.json <<'PY' || fail "the shards do not follow the partition rule"
import json, sys
def flops(s):
    oh = (s["h"] + s["pad_top"] + s["pad_bottom"] - s["dilation_h"] * (s["r"] - 1) - 1) // s["stride_h"] + 1
    ow = (s["w"] + s["pad_left"] + s["pad_right"] - s["dilation_w"] * (s["s"] - 1) - 1) // s["stride_w"] + 1
    return 2 * s["n"] * s["k"] * (s["c"] // s["groups"]) * s["r"] * s["s"] * oh * ow
allt = json.load(open(sys.argv[1]))["entries"]
order = sorted(range(len(allt)), key=lambda i: (-flops(allt[i]["shape"]), i))
load = [0, 0, 0]; want = [[], [], []]
for i in order:
    b = min(range(3), key=lambda s: (load[s], s))
    load[b] += flops(allt[i]["shape"]); want[b].append(allt[i]["name"])
got = [sorted(e["name"] for e in json.load(open(p))["entries"]) for p in sys.argv[2:]]
names = sum(got, [])
print("shards:", got)
assert len(names) == len(set(names)) == len(allt), names
assert got == [sorted(w) for w in want], (got, want)
PY

# 2. Every order, the same bytes (cmp).  The shards get distinct "created"
# times (the gathered table carries the latest).
edit() { # edit IN OUT PYTHON-STATEMENTS (d is the document)
  $PY -c "import json,sys; d=json.load(open(sys.argv[1])); $3; json.dump(d, open(sys.argv[2],'w'), indent=1)" "$1" "$2"; }
edit "$tmp/s1.json" "$tmp/s1.json" 'd["created"]="2026-01-01T00:00:00Z"'
edit "$tmp/s3.json" "$tmp/s3.json" 'd["created"]="2031-01-01T00:00:00Z"'
orders=("1 2 3" "1 3 2" "2 1 3" "2 3 1" "3 1 2" "3 2 1")
for o in "${orders[@]}"; do
  args=(); for i in $o; do args+=("$tmp/s$i.json"); done
  "$CLI" gather "${args[@]}" --quiet --out "$tmp/g_${o// /}.json"
  cmp "$tmp/g_123.json" "$tmp/g_${o// /}.json" || fail "gather order $o gives other bytes"
done
$PY - "$tmp/g_123.json" "$tmp/all.json" <<'PY' || fail "the gathered table does not hold every layer once"
import json, sys
g = [e["name"] for e in json.load(open(sys.argv[1]))["entries"]]
a = [e["name"] for e in json.load(open(sys.argv[2]))["entries"]]
assert sorted(g) == sorted(a) and len(set(g)) == len(g), (g, a)
assert json.load(open(sys.argv[1]))["created"] == "2031-01-01T00:00:00Z"
PY

# An empty shard (more shards than shapes) still writes its table, and
# gathering it changes nothing.
"$CLI" tune --suite demo --shard 9/9 "${fast[@]}" --out "$tmp/empty.json"
"$CLI" gather "$tmp/s1.json" "$tmp/empty.json" "$tmp/s2.json" "$tmp/s3.json" --quiet --out "$tmp/g_empty.json"
$PY -c 'import json,sys; a,b=(json.load(open(p)) for p in sys.argv[1:]); assert a["entries"]==b["entries"]' \
  "$tmp/g_empty.json" "$tmp/g_123.json" || fail "an empty shard changed the gathered entries"

# 3. Conflicts: s2's first entry again in a fourth shard, renamed, with a
# lower median: it wins whichever file comes first; with an equal median the
# entry whose key-sorted text sorts first ("aaa" before the real name) wins.
edit "$tmp/s2.json" "$tmp/c_low.json" 'e=d["entries"][0]; d["entries"]=[e]; e["name"]="zzz.faster"; st=e["timing"]["stats"]; [st.__setitem__(k, st[k]*0.5) for k in ("median","ci_lo","ci_hi")]'
edit "$tmp/s2.json" "$tmp/c_tie.json" 'e=d["entries"][0]; d["entries"]=[e]; e["name"]="aaa.tie"'
for pair in "s2 c_low" "c_low s2"; do
  set -- $pair
  "$CLI" gather "$tmp/$1.json" "$tmp/$2.json" --out "$tmp/conf_$1.json" 2>"$tmp/conf.err"
  grep -q "1 conflict(s)" "$tmp/conf.err" || fail "the conflict was not counted: $(cat "$tmp/conf.err")"
  $PY -c 'import json,sys; d=json.load(open(sys.argv[1])); n=[e["name"] for e in d["entries"]]; assert "zzz.faster" in n and len(n)==len(set(n)) and d["gathered"]["conflicts"]==1, n' \
    "$tmp/conf_$1.json" || fail "the lower median did not win ($pair)"
done
cmp "$tmp/conf_s2.json" "$tmp/conf_c_low.json" || fail "the resolved conflict depends on the order"
"$CLI" gather "$tmp/c_tie.json" "$tmp/s2.json" --quiet --out "$tmp/tie.json"
$PY -c 'import json,sys; n=[e["name"] for e in json.load(open(sys.argv[1]))["entries"]]; assert "aaa.tie" in n, n' \
  "$tmp/tie.json" || fail "an equal median was not resolved by the text order"

# 4. Another device, other settings: refused (exit 2, one line, nothing
# written); --mixed gathers and says so at the top.
edit "$tmp/s3.json" "$tmp/other_dev.json" 'd["device"]["fingerprint"]="0123456789abcdef"'
edit "$tmp/s3.json" "$tmp/other_set.json" 'd["settings"]["seed"]=99'
for bad in other_dev other_set; do
  rc=0; "$CLI" gather "$tmp/s1.json" "$tmp/$bad.json" --out "$tmp/refused.json" 2>"$tmp/ref.err" || rc=$?
  [ "$rc" = 2 ] || fail "$bad: gather exited $rc, expected 2"
  [ "$(wc -l < "$tmp/ref.err")" = 1 ] || fail "$bad: not one error line: $(cat "$tmp/ref.err")"
  [ ! -e "$tmp/refused.json" ] || fail "$bad: a refused gather wrote its output"
done
grep -q "device" "$tmp/ref.err" && fail "the settings refusal names the device"
"$CLI" gather "$tmp/s1.json" "$tmp/other_dev.json" --mixed --out "$tmp/mixed.json" 2>/dev/null
$PY -c 'import json,sys; d=json.load(open(sys.argv[1])); k=list(d); assert k.index("gathered")<k.index("device") and any("0123456789abcdef" in m for m in d["gathered"]["mixed"]), d["gathered"]' \
  "$tmp/mixed.json" || fail "--mixed does not say the mismatch at the top"

# 5. Lean: no candidates or tried, "evidence" names the side file, which is
# exactly the full gathered table; both load, and lookup answers the same.
"$CLI" gather "$tmp/s3.json" "$tmp/s1.json" "$tmp/s2.json" --lean --quiet --out "$tmp/lean.json"
cmp "$tmp/lean.evidence.json" "$tmp/g_123.json" || fail "the evidence file is not the full table"
$PY -c 'import json,sys; d=json.load(open(sys.argv[1])); assert d["evidence"]=="lean.evidence.json" and all("candidates" not in e and "tried" not in e for e in d["entries"])' \
  "$tmp/lean.json" || fail "the lean table carries evidence"
for spec in n=1,c=3,h=96,w=96,k=16,r=5,s=5,stride=2,pad=2 n=1,c=32,h=24,w=24,k=64,r=1,s=1; do
  "$CLI" lookup "$tmp/lean.json" --shape "$spec" --json > "$tmp/l1"
  "$CLI" lookup "$tmp/g_123.json" --shape "$spec" --json > "$tmp/l2"
  cmp "$tmp/l1" "$tmp/l2" || fail "lookup differs between the lean and the full table for $spec"
  grep -q '"match":"exact"' "$tmp/l1" || fail "lookup on the lean table found no exact entry for $spec"
done

# diff reads a lean table's candidates from its evidence file.
"$CLI" diff "$tmp/lean.json" "$tmp/g_123.json" > "$tmp/diff.out" || fail "diff of the lean table failed"
grep -q "^BASE .*lean.evidence.json: tuning table" "$tmp/diff.out" || fail "diff did not read the evidence file: $(head -2 "$tmp/diff.out")"

# 6. Every output against the schema.
$PY - "$SRC/docs/table.schema.json" "$tmp/g_123.json" "$tmp/mixed.json" "$tmp/lean.json" "$tmp/lean.evidence.json" <<'PY' || fail "an output does not match the schema"
import json, sys, jsonschema
v = jsonschema.Draft202012Validator(json.load(open(sys.argv[1])))
bad = 0
for p in sys.argv[2:]:
    for e in v.iter_errors(json.load(open(p))):
        print(p, list(e.path), e.message); bad = 1
sys.exit(bad)
PY
echo "PASS: shards, gather order, conflicts, refusals, lean"
