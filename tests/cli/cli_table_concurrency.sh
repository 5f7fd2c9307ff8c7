#!/usr/bin/env bash
# Two `convpick tune` processes writing one table at the same time, each
# tuning its own layers: the advisory lock on TABLE.lock and the merge under
# it (harness/io/table_lock.c) must leave every entry of both in the table, and
# the table valid JSON after every write (checked by Python's json module, an
# outside parser).
set -euo pipefail
CLI="$1"; SRC="$2"
PY=/usr/bin/python3
tmp="$(mktemp -d)"; trap 'rm -rf "$tmp"' EXIT
cat > "$tmp/a.txt" <<'L'
a1: c=8,h=12,w=12,k=8,r=3,pad=1
a2: c=8,h=12,w=12,k=16,r=1
a3: c=16,h=10,w=10,k=8,r=3
L
cat > "$tmp/b.txt" <<'L'
b1: c=4,h=14,w=14,k=8,r=3,pad=1
b2: c=4,h=14,w=14,k=4,r=1
b3: c=8,h=9,w=9,k=8,r=3,stride=2
L
fast=(--budget 0.15 --max-seconds 0.02 --max-samples 40 --quiet)
names() { $PY -c 'import json,sys; print(" ".join(sorted(e["name"] for e in json.load(open(sys.argv[1]))["entries"])))' "$1"; }

for round in 1 2 3; do
  t="$tmp/shared-$round.json"
  # --resume on a missing table starts a new one; both start before either writes.
  "$CLI" tune --shapes "$tmp/a.txt" "${fast[@]}" --resume --out "$t" 2>"$tmp/a.err" &
  pa=$!
  "$CLI" tune --shapes "$tmp/b.txt" "${fast[@]}" --resume --out "$t" 2>"$tmp/b.err" &
  pb=$!
  ra=0; rb=0
  wait "$pa" || ra=$?
  wait "$pb" || rb=$?
  [ "$ra" = 0 ] && [ "$rb" = 0 ] || { echo "FAIL(round $round): exit codes $ra $rb"; cat "$tmp/a.err" "$tmp/b.err"; exit 1; }
  got="$(names "$t")"
  [ "$got" = "a1 a2 a3 b1 b2 b3" ] || { echo "FAIL(round $round): table holds '$got', expected all six layers"; exit 1; }
  # No temporary file remains; the lock file does, by design.
  if ls -A "$tmp" | grep -q '^\.'; then echo "FAIL(round $round): temporary file left"; ls -A "$tmp"; exit 1; fi
  [ -e "$t.lock" ] || { echo "FAIL(round $round): no lock file $t.lock"; exit 1; }
done

# A table replaced with --force is not merged back.
"$CLI" tune --shapes "$tmp/b.txt" "${fast[@]}" --force --out "$tmp/shared-1.json" 2>/dev/null
got="$(names "$tmp/shared-1.json")"
[ "$got" = "b1 b2 b3" ] || { echo "FAIL: --force kept old entries: '$got'"; exit 1; }
# The table replaced during a run by something that is not a table: the next
# write refuses to merge it and leaves it as it is.
slow=(--budget 1 --trial-samples 1000 --min-rounds 400 --max-rounds 400 --max-seconds 0.2 --quiet)
t="$tmp/replaced.json"
"$CLI" tune --shapes "$tmp/a.txt" "${slow[@]}" --out "$t" 2>"$tmp/r.err" &
pid=$!
for _ in $(seq 1 300); do [ -s "$t" ] && break; sleep 0.05; done
echo "not a table" > "$tmp/junk"; mv "$tmp/junk" "$t"
rc=0; wait "$pid" || rc=$?
[ "$rc" = 2 ] || { echo "FAIL: expected exit 2 after the table was replaced, got $rc"; cat "$tmp/r.err"; exit 1; }
grep -q "changed on disk during this run and cannot be merged" "$tmp/r.err" || { echo "FAIL: message"; cat "$tmp/r.err"; exit 1; }
[ "$(cat "$t")" = "not a table" ] || { echo "FAIL: the replaced file was overwritten"; exit 1; }
echo "cli_table_concurrency: all checks passed"
