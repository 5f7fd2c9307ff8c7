#!/usr/bin/env bash
# Plugins on the command line (include/convpick/plugin.h, tests/plugins/test_plugin.c):
# the refusals (one line, exit 2) on every command that selects algorithms,
# the oracle check before timing (a wrong plugin fails verify, is disqualified
# by tune and not timed by bench), the isolated checking run (a crashing plugin
# is reported with its signal and the run goes on), and tables that name their
# plugin (the same build loads, another build or none is refused).
# Usage: bash cli_plugins.sh CLI SRCDIR
set -euo pipefail
CLI=$1
PY=/usr/bin/python3
BUILD="$(cd "$(dirname "$CLI")" && pwd)"
P="$BUILD/tests/plugins"
T=$(mktemp -d /tmp/convpick_cli_plugins.XXXXXX)
trap 'rm -rf "$T"' EXIT
for v in good good2 wrong crash clash badabi badparam noentry; do
  [[ -f $P/cptp_$v.so ]] || { echo "FAIL: $P/cptp_$v.so not built"; exit 1; }
done

fails=0
# die, expect (one error line, exit status)
source "$(dirname "$0")/expect.sh"

SH="n=1,c=4,h=8,w=8,k=4,r=3,s=3,pad=1"
# FNV-1a 64 of a file (Fowler-Noll-Vo, draft-eastlake-fnv: offset basis
# 0xcbf29ce484222325, prime 0x100000001b3), written out independently here.
fnv() {
  "$PY" -c '
import sys
h = 0xcbf29ce484222325
for b in open(sys.argv[1], "rb").read():
    h = ((h ^ b) * 0x100000001b3) & 0xffffffffffffffff
print("%016x" % h)' "$1"
}
HGOOD=$(fnv "$P/cptp_good.so")
HGOOD2=$(fnv "$P/cptp_good2.so")
[[ $HGOOD != "$HGOOD2" ]] || die "the two builds of the good plugin hash the same"

# --- algos lists a plugin's algorithm with its origin (common practice, no source)
expect 0 "stdout:origin: plugin tp ($P/cptp_good.so, hash $HGOOD)" -- \
  "$CLI" algos --plugin "$P/cptp_good.so"
grep -q '^tp_loops ' "$T/out" || die "algos --plugin: no tp_loops line"
grep -A1 '^direct ' "$T/out" | grep -q 'origin: built-in' || die "algos: direct is not built-in"

# --- refusals: one line, exit 2, on every command that selects algorithms --
refuse() { # plugin fragment
  expect 2 "convpick verify: --plugin: $P/cptp_$1.so: $2" -- \
    "$CLI" verify --shape "$SH" --plugin "$P/cptp_$1.so"
}
refuse clash "algorithm 'direct' clashes with the built-in one; not loaded"
refuse badabi "plugin ABI version 99 is not supported (this convpick supports 1)"
refuse badparam "algorithm 'tp_badparam': parameter 'unroll' has an empty range [4, 1]"
refuse noentry "no entry point 'convpick_plugin_entry' (not a convpick plugin)"
expect 2 "convpick verify: --plugin: cannot load plugin: $T/none.so" -- \
  "$CLI" verify --shape "$SH" --plugin "$T/none.so"
expect 2 "convpick verify: --plugin: $P/cptp_good2.so: a plugin named 'tp' is already loaded" -- \
  "$CLI" verify --shape "$SH" --plugin "$P/cptp_good.so" --plugin "$P/cptp_good2.so"
for cmd in run bench tune lookup cache algos; do
  expect 2 "convpick $cmd: --plugin: $P/cptp_clash.so: algorithm 'direct' clashes" -- \
    "$CLI" $cmd --plugin "$P/cptp_clash.so"
done

# --- the good plugin passes verify on several layers and both flips; --algo
# may stand before --plugin (the oracle is the reference, convpick/oracle.h)
expect 0 "stdout:verify: 8 passed, 0 failed, 0 not applicable" -- \
  "$CLI" verify --algo tp_loops --shape "$SH" --shape n=2,c=3,h=9,w=7,k=5,r=3,s=2,stride=2,pad=1 \
  --shape n=1,c=2,h=10,w=10,k=3,r=3,s=3,dilation=2 --shape n=1,c=8,h=6,w=6,k=4,r=1,s=1 \
  --plugin "$P/cptp_good.so"

# --- a wrong plugin (off by one) fails verify with the usual FAIL lines ----
expect 1 "stdout:verify: 2 passed, 2 failed" -- \
  "$CLI" verify --shape "$SH" --plugin "$P/cptp_wrong.so" --algo tp_wrong,direct
[[ $(grep -c '^shape1 .* tp_wrong .* FAIL$' "$T/out") -eq 2 ]] || die "verify tp_wrong: $(cat "$T/out")"

# --- a crashing plugin: with --isolate its checking run dies in a child, is
# reported with the signal and the rest goes on; without, the command dies.
expect 1 "stdout:verify: 2 passed, 2 failed, 0 not applicable" -- \
  "$CLI" verify --shape "$SH" --plugin "$P/cptp_crash.so" --algo tp_crash,direct --isolate
[[ $(grep -c 'tp_crash .*FAIL *crashed in its checking run: signal 11 (SIGSEGV)' "$T/out") -eq 2 ]] ||
  die "verify --isolate: the crash is not reported: $(cat "$T/out")"
rc=0
# (in a shell of its own, whose "Segmentation fault" notice goes nowhere; a
# sanitizer build reports the SEGV itself and exits 1: no summary either way)
bash -c '"$@" 2>/dev/null' _ "$CLI" verify --shape "$SH" --plugin "$P/cptp_crash.so" \
  --algo tp_crash,direct >"$T/crash.out" 2>/dev/null || rc=$?
[[ $rc -ne 0 ]] && ! grep -q '^verify: .* passed' "$T/crash.out" ||
  die "verify without --isolate: the crash did not take it down (rc $rc)"

# --- tune: the wrong one disqualified before timing, the crashing one failed
# with the signal, the good one raced; the table names the plugins.
expect 0 "tp_crash failed: crashed in its checking run: signal 11 (SIGSEGV)" -- \
  "$CLI" tune --shape "$SH" --plugin "$P/cptp_good.so" --plugin "$P/cptp_wrong.so" \
  --plugin "$P/cptp_crash.so" --isolate --algo tp_loops,tp_wrong,tp_crash,direct \
  --budget 0.3 --max-seconds 0.05 --quiet --out "$T/mixed.json"
"$PY" - "$T/mixed.json" "$HGOOD" <<'PY' || die "tune's table with plugins: see above"
import json, sys
e = json.load(open(sys.argv[1]))["entries"][0]
c = {x["algo"]: x for x in e["candidates"]}
bad = []
if c["tp_wrong"]["status"] != "disqualified" or c["tp_wrong"]["timing"] is not None:
    bad.append("tp_wrong was timed or not disqualified")
if c["tp_crash"]["status"] != "failed" or "SIGSEGV" not in c["tp_crash"]["note"]:
    bad.append("tp_crash not failed with its signal")
if c["tp_loops"]["status"] != "ok" or c["tp_loops"]["timing"] is None:
    bad.append("tp_loops was not raced")
if c["tp_loops"].get("plugin") != {"name": "tp", "hash": sys.argv[2]}:
    bad.append("tp_loops does not name its plugin: %r" % c["tp_loops"].get("plugin"))
if "plugin" in c["direct"]:
    bad.append("direct names a plugin")
if e["choice"]["algo"] not in ("tp_loops", "direct"):
    bad.append("choice %s" % e["choice"]["algo"])
for b in bad: print(b)
sys.exit(1 if bad else 0)
PY

# --- a table chosen from a plugin: loads with the same build, refused
# without it or with another build (docs/table-format.md, "plugin")
expect 0 "" -- "$CLI" tune --shape "$SH" --plugin "$P/cptp_good.so" --algo tp_loops \
  --budget 0.2 --max-seconds 0.05 --quiet --out "$T/plug.json"
"$PY" -c 'import json,sys; c=json.load(open(sys.argv[1]))["entries"][0]["choice"]; c.pop("rel_err"); sys.exit(c != {"algo":"tp_loops","params":{"unroll":1},"plugin":{"name":"tp","hash":sys.argv[2]}})' \
  "$T/plug.json" "$HGOOD" || die "choice does not name the plugin: $(cat "$T/plug.json" | head -c 300)"
expect 0 "stdout:algorithm: tp_loops" -- "$CLI" lookup "$T/plug.json" --shape "$SH" --plugin "$P/cptp_good.so"
expect 2 "entries[0].choice.plugin: 'tp_loops' comes from plugin 'tp' (hash $HGOOD), which is not loaded" -- \
  "$CLI" lookup "$T/plug.json" --shape "$SH"
expect 2 "entries[0].choice.plugin: 'tp_loops' was chosen from plugin 'tp' hash $HGOOD, but the loaded one is plugin 'tp' hash $HGOOD2" -- \
  "$CLI" lookup "$T/plug.json" --shape "$SH" --plugin "$P/cptp_good2.so"
# The table validates against the schema (python3-jsonschema).
"$PY" - "$2/docs/table.schema.json" "$T/plug.json" "$T/mixed.json" <<'PY' || die "schema"
import json, sys, jsonschema
v = jsonschema.Draft202012Validator(json.load(open(sys.argv[1])))
bad = [e.message for p in sys.argv[2:] for e in v.iter_errors(json.load(open(p)))]
for b in bad[:5]: print(b)
sys.exit(1 if bad else 0)
PY

# --- bench checks a plugin's algorithm against the oracle before timing it
expect 1 "" -- "$CLI" bench --shape "$SH" --plugin "$P/cptp_wrong.so" --algo tp_wrong --max-seconds 0.02
grep -q 'tp_wrong *ERROR check: error .* above its tolerance' "$T/out" || die "bench timed tp_wrong: $(cat "$T/out")"

[[ $fails -eq 0 ]] || { echo "cli_plugins: $fails check(s) failed"; exit 1; }
echo "cli_plugins: all checks passed"
