#!/usr/bin/env bash
# convpick tune end to end: a table is written after each layer, a run killed
# part-way (SIGKILL, SIGINT, SIGTERM) leaves a valid table holding every
# finished layer, and --resume measures only what is missing.
set -euo pipefail
CLI="$1"; SRC="$2"
PY=/usr/bin/python3
tmp="$(mktemp -d)"; trap 'rm -rf "$tmp"' EXIT
cat > "$tmp/layers.txt" <<'L'
# four small layers of an invented network
a: n=1,c=16,h=24,w=24,k=16,r=3,s=3,pad=1
b: n=1,c=16,h=24,w=24,k=32,r=1,s=1
c: n=1,c=32,h=24,w=24,k=32,r=3,s=3,stride=2,pad=1
d: n=1,c=32,h=12,w=12,k=32,r=3,s=3,pad=1,groups=32
L
fast=(--budget 0.3 --max-seconds 0.05)
# An unreachable CI target keeps every candidate sampling up to its time cap,
# so each layer takes about the budget and a kill lands mid-run.  Resumed runs
# must use the same settings, else their entries count as stale.
slow=(--budget 1 --trial-samples 1000 --min-rounds 400 --max-rounds 400 --max-seconds 0.2)

count() { $PY -c 'import json,sys; print(len(json.load(open(sys.argv[1]))["entries"]))' "$1"; }
names() { $PY -c 'import json,sys; print(" ".join(e["name"] for e in json.load(open(sys.argv[1]))["entries"]))' "$1"; }

# 1. A full run writes every layer.
"$CLI" tune --shapes "$tmp/layers.txt" "${fast[@]}" --quiet --out "$tmp/full.json"
[ "$(count "$tmp/full.json")" = 4 ] || { echo "FAIL: full run should hold 4 entries"; exit 1; }

# 2. An existing table is not overwritten without --resume or --force.
if "$CLI" tune --shapes "$tmp/layers.txt" "${fast[@]}" --quiet --out "$tmp/full.json" 2>"$tmp/err"; then
  echo "FAIL: overwrote an existing table"; exit 1
fi
grep -q -- "--resume" "$tmp/err" || { echo "FAIL: refusal should mention --resume"; cat "$tmp/err"; exit 1; }

# 3. Kill part-way with each signal; the table stays valid; resume completes it.
for sig in KILL INT TERM; do
  out="$tmp/killed-$sig.json"
  "$CLI" tune --shapes "$tmp/layers.txt" "${slow[@]}" --quiet --out "$out" &
  pid=$!
  # wait for the first finished layer
  for _ in $(seq 1 300); do
    [ -s "$out" ] && [ "$(count "$out" 2>/dev/null || echo 0)" -ge 1 ] && break
    sleep 0.05
  done
  kill -s "$sig" "$pid" 2>/dev/null || true
  wait "$pid" 2>/dev/null || true
  n="$(count "$out")"   # json.load fails (and so does the test) on a torn file
  [ "$n" -ge 1 ] && [ "$n" -lt 4 ] || { echo "FAIL($sig): expected 1..3 entries after the kill, got $n"; exit 1; }
  before="$(names "$out")"
  # The atomic writer's temporary files are hidden: ".NAME.XXXXXX".  INT and
  # TERM let the write in flight finish, so none may remain; KILL can land
  # inside a write and leave one (the table itself is still whole).
  if [ "$sig" != KILL ] && ls -A "$tmp" | grep -q '^\.'; then echo "FAIL($sig): temporary file left behind"; ls -A "$tmp"; exit 1; fi
  "$CLI" tune --shapes "$tmp/layers.txt" "${slow[@]}" --out "$out" --resume 2>"$tmp/resume.err"
  [ "$(count "$out")" = 4 ] || { echo "FAIL($sig): resume should complete 4 entries"; exit 1; }
  after="$(names "$out")"
  case "$after" in "$before"*) ;; *) echo "FAIL($sig): finished layers lost: '$before' -> '$after'"; exit 1;; esac
  skipped=$(grep -c "already measured" "$tmp/resume.err" || true)
  [ "$skipped" = "$n" ] || { echo "FAIL($sig): resume re-measured finished layers ($skipped of $n skipped)"; cat "$tmp/resume.err"; exit 1; }
done
echo "cli_tune: all checks passed"
