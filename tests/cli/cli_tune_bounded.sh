#!/usr/bin/env bash
# Accuracy bounds end to end: two tables of the same layers tuned with
# --max-rel-err 1e-4 and 1e-6.  Checks (rule of docs/table-format.md and
# convpick/table.h, no outside source): the strict table never chooses a
# candidate whose recorded error exceeds 1e-6; `lookup --max-rel-err 1e-6`
# on the strict table agrees with its choice; on the loose table it answers
# within 1e-6 with a candidate the strict run also qualified.
set -euo pipefail
CLI="$1"; SRC="$2"
PY=/usr/bin/python3
tmp="$(mktemp -d)"; trap 'rm -rf "$tmp"' EXIT
cat > "$tmp/layers.txt" <<'L'
# an invented network: a 3x3 layer (F(4x4,3x3) measures about 2e-6 here) and a depthwise one
a: n=1,c=32,h=20,w=20,k=32,r=3,s=3,pad=1
d: n=1,c=32,h=20,w=20,k=32,r=3,s=3,pad=1,groups=32
L
fast=(--budget 0.3 --max-seconds 0.05 --threads 1 --flip no --quiet)
"$CLI" tune --shapes "$tmp/layers.txt" "${fast[@]}" --max-rel-err 1e-4 --out "$tmp/loose.json"
"$CLI" tune --shapes "$tmp/layers.txt" "${fast[@]}" --max-rel-err 1e-6 --out "$tmp/strict.json"

# 1. The strict table's choices are within its bound.
$PY - "$tmp/strict.json" <<'P'
import json, sys
d = json.load(open(sys.argv[1]))
assert d["settings"]["max_rel_err"] == 1e-6, d["settings"]
assert len(d["entries"]) == 2, len(d["entries"])
for e in d["entries"]:
    ch = e["choice"]
    mine = [c for c in e["candidates"] if c["algo"] == ch["algo"] and c["params"] == ch["params"]]
    assert mine and mine[0]["status"] == "ok", (e["name"], ch)
    assert mine[0]["rel_err"] <= 1e-6, (e["name"], ch, mine[0]["rel_err"])
    for c in e["candidates"]:
        if c["status"] == "ok":
            assert c["rel_err"] <= 1e-6, (e["name"], c)
P

field() { $PY -c 'import json,sys; d=json.loads(sys.argv[1]); print(d[sys.argv[2]])' "$1" "$2"; }
for spec in n=1,c=32,h=20,w=20,k=32,r=3,s=3,pad=1 n=1,c=32,h=20,w=20,k=32,r=3,s=3,pad=1,groups=32; do
  # 2. On the strict table the bounded lookup gives the table's own choice.
  plain="$("$CLI" lookup "$tmp/strict.json" --shape "$spec" --threads 1 --json)"
  bounded="$("$CLI" lookup "$tmp/strict.json" --shape "$spec" --threads 1 --max-rel-err 1e-6 --json)"
  [ "$(field "$plain" algo)" = "$(field "$bounded" algo)" ] ||
    { echo "FAIL: $spec: strict table chose $(field "$plain" algo), bounded lookup $(field "$bounded" algo)"; exit 1; }
  [ "$(field "$bounded" max_rel_err)" = "1e-06" ] || { echo "FAIL: bound not reported: $bounded"; exit 1; }
  # 3. On the loose table it answers within the bound, with a candidate the strict run qualified.
  loose="$("$CLI" lookup "$tmp/loose.json" --shape "$spec" --threads 1 --max-rel-err 1e-6 --json)"
  $PY - "$loose" "$tmp/strict.json" <<'P'
import json, sys
a = json.loads(sys.argv[1])
assert a["rel_err"] is not None and a["rel_err"] <= 1e-6, a
d = json.load(open(sys.argv[2]))
ok = {c["algo"] for e in d["entries"] for c in e["candidates"] if c["status"] == "ok"}
assert a["algo"] in ok, (a["algo"], ok)
P
done

# 4. A bound nothing meets: exit 1 and one line naming the most accurate candidate.
set +e
"$CLI" lookup "$tmp/loose.json" --shape n=1,c=32,h=20,w=20,k=32,r=3,s=3,pad=1 --threads 1 \
  --max-rel-err 1e-30 >/dev/null 2>"$tmp/err"
rc=$?
set -e
[ "$rc" = 1 ] || { echo "FAIL: exit $rc for an unreachable bound"; exit 1; }
grep -q "most accurate is" "$tmp/err" || { echo "FAIL: $(cat "$tmp/err")"; exit 1; }
# 5. A bad bound is a usage error.
set +e; "$CLI" lookup "$tmp/loose.json" --shape n=1,c=8,h=8,w=8,k=8,r=3 --max-rel-err -1 2>"$tmp/err"; rc=$?; set -e
[ "$rc" = 2 ] && grep -q -- "--max-rel-err" "$tmp/err" || { echo "FAIL: bad bound: $rc $(cat "$tmp/err")"; exit 1; }
echo "ok"
