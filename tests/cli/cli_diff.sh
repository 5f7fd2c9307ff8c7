#!/usr/bin/env bash
# convpick diff end to end: verdicts and exit codes on results with known
# shifts, the JUnit report parsed back with xmllint (libxml2-utils), the
# Markdown report, changed choices of two tables, every kind of bad input
# (exit 2 with one clear line), and two bench runs of the same build back to
# back, which must never show a regression.
set -euo pipefail
CLI="$1"; SRC="$2"
PY=/usr/bin/python3
DATA="$SRC/tests/data"
tmp="$(mktemp -d)"; trap 'rm -rf "$tmp"' EXIT
fail() { echo "FAIL: $*"; exit 1; }

# expect CODE PATTERN -- command...: exit code and a stderr line matching PATTERN
expect() {
  local code="$1" pat="$2"; shift 3
  set +e; "$@" >"$tmp/out" 2>"$tmp/err"; local rc=$?; set -e
  [ "$rc" = "$code" ] || { cat "$tmp/out" "$tmp/err"; fail "'$*' exited $rc, expected $code"; }
  if [ -n "$pat" ]; then
    grep -qE -- "$pat" "$tmp/err" || { cat "$tmp/err"; fail "'$*': stderr lacks /$pat/"; }
    [ "$(wc -l <"$tmp/err")" = 1 ] || { cat "$tmp/err"; fail "'$*': expected one error line"; }
  fi
}

# 0. The committed inputs (made by convpick bench and tune) still follow the
#    formats' schemas (python3-jsonschema).
$PY - "$DATA" "$SRC/docs/table.schema.json" <<'PY'
import json, sys, jsonschema
data, table_schema = sys.argv[1], sys.argv[2]
jsonschema.validate(json.load(open(data + "/diff_base.bench.json")),
                    json.load(open(data + "/bench_results.schema.json")))
jsonschema.validate(json.load(open(data + "/diff_base.table.json")), json.load(open(table_schema)))
PY

# 1. Synthetic samples with known shifts on the committed bench file's layers:
#    stem/direct +10 % (a regression), stem/im2col_gemm -10 %, mix/direct 0 %,
#    mix/im2col_gemm only in BASE, a renamed algorithm only in NEW.  The layer
#    name carries XML's special characters.  1 % log-normal noise, 30 samples.
$PY - "$DATA/diff_base.bench.json" "$tmp" <<'PY'
import copy, json, random, sys
src, out = sys.argv[1], sys.argv[2]
doc = json.load(open(src))
rng = random.Random(42)
def samples(med, n=30):
    return [med * rng.lognormvariate(0.0, 0.01) for _ in range(n)]
base, new = copy.deepcopy(doc), copy.deepcopy(doc)
shift = {("stem", "direct"): 1.10, ("stem", "im2col_gemm"): 0.90, ("mix", "direct"): 1.0}
bres, nres = [], []
for r in doc["results"]:
    key = (r["layer"], r["algo"])
    b = copy.deepcopy(r); b["layer"] = "stem <&\"'>" if r["layer"] == "stem" else r["layer"]
    b["measurement"]["samples"] = samples(1e-4)
    bres.append(b)
    if key in shift:
        n = copy.deepcopy(b); n["measurement"]["samples"] = samples(1e-4 * shift[key])
        nres.append(n)
extra = copy.deepcopy(nres[-1]); extra["algo"] = "direct_renamed"; nres.append(extra)
base["results"], new["results"] = bres, nres
json.dump(base, open(out + "/base.json", "w"))
json.dump(new, open(out + "/new.json", "w"))
# the same file with another device, another format name, a mistyped sample
other = copy.deepcopy(new); other["device"]["fingerprint"] = "0123456789abcdef"
json.dump(other, open(out + "/other_device.json", "w"))
wrong = copy.deepcopy(base); wrong["format"] = "some-other-format"
json.dump(wrong, open(out + "/wrong_format.json", "w"))
bad = copy.deepcopy(base); bad["results"][1]["measurement"]["samples"][3] = "fast"
json.dump(bad, open(out + "/bad_sample.json", "w"))
# nothing in common: every shape changed
apart = copy.deepcopy(base)
for r in apart["results"]: r["shape"]["k"] += 1
json.dump(apart, open(out + "/apart.json", "w"))
PY

expect 1 "" -- "$CLI" diff "$tmp/base.json" "$tmp/new.json"
grep -q "^not in both: 1 measurements only in BASE, 1 only in NEW (--details lists them)" "$tmp/out" \
  || { cat "$tmp/out"; fail "unmatched items not counted"; }
grep -q "only in BASE:" "$tmp/out" && fail "unmatched items listed without --details"
expect 1 "" -- "$CLI" diff "$tmp/base.json" "$tmp/new.json" --details --junit "$tmp/junit.xml" --markdown "$tmp/summary.md"
grep -q "^slower .*stem <&\"'>.* direct " "$tmp/out" || { cat "$tmp/out"; fail "stem/direct should be slower"; }
grep -q "^faster .* im2col_gemm " "$tmp/out" || fail "stem/im2col_gemm should be faster"
grep -q "^unchanged .*mix .* direct " "$tmp/out" || fail "mix/direct should be unchanged"
head -n 20 "$tmp/out" | grep -m1 -E '^(slower|faster|unchanged|inconclusive) ' | grep -q '^slower' \
  || fail "the worst row (slower) should come first"
grep -q "only in BASE: mix flip=no t=1 im2col_gemm" "$tmp/out" || fail "unmatched BASE item not reported"
grep -q "only in NEW: mix flip=no t=1 direct_renamed" "$tmp/out" || fail "unmatched NEW item not reported"
grep -q "summary: 3 compared: 1 slower, 0 inconclusive, 1 unchanged, 1 faster; 1 only in BASE, 1 only in NEW: REGRESSION" "$tmp/out" \
  || { cat "$tmp/out"; fail "summary line"; }

# JUnit: well-formed, one testcase per compared pair, one failure with the figures
xmllint --noout "$tmp/junit.xml" || fail "junit.xml is not well-formed XML"
[ "$(xmllint --xpath 'count(//testcase)' "$tmp/junit.xml")" = 3 ] || fail "expected 3 testcases"
[ "$(xmllint --xpath 'count(//testcase/failure)' "$tmp/junit.xml")" = 1 ] || fail "expected 1 failure"
[ "$(xmllint --xpath 'string(/testsuites/@failures)' "$tmp/junit.xml")" = 1 ] || fail "failures attribute"
msg="$(xmllint --xpath 'string(//failure/@message)' "$tmp/junit.xml")"
# the true ratio is 1.10: the message carries a ratio near it, its interval and p
echo "$msg" | grep -qE '^slower: ratio 1\.(0[6-9]|1[0-4])[0-9]* \(Hodges-Lehmann [0-9.]+, 99\.0 % CI [0-9.]+\.\.[0-9.]+\), Mann-Whitney p = [0-9.e+-]+ ' \
  || fail "failure message lacks the figures: $msg"
name="$(xmllint --xpath 'string(//testcase[failure]/@name)' "$tmp/junit.xml")"
[ "$name" = "stem <&\"'> flip=no t=1 direct" ] || fail "testcase name not escaped and read back: '$name'"
ls "$tmp" | grep -q '\.tmp' && fail "temporary report file left behind"
grep -q '^| \*\*slower\*\* | stem <&"'"'"'> | no | 1 | direct |' "$tmp/summary.md" || { cat "$tmp/summary.md"; fail "markdown row"; }
grep -q "1 only in BASE, 1 only in NEW" "$tmp/summary.md" || fail "markdown summary"

# A file against itself: no regression, every pair unchanged or inconclusive.
expect 0 "" -- "$CLI" diff "$tmp/base.json" "$tmp/base.json" --junit "$tmp/self.xml"
[ "$(xmllint --xpath 'count(//testcase/failure)' "$tmp/self.xml")" = 0 ] || fail "self diff failed"
grep -qE "^(slower|faster) " "$tmp/out" && fail "self diff found a change"
for f in diff_base.bench.json diff_base.table.json; do
  expect 0 "" -- "$CLI" diff "$DATA/$f" "$DATA/$f"
done

# Parameters are printed in the algorithm's declaration order (the order
# `convpick algos` lists them; ours, no outside source), whatever the order of
# the keys in the file: here a result whose params object is written backwards.
$PY - "$tmp/base.json" "$tmp/params.json" <<'PY'
import json, sys
d = json.load(open(sys.argv[1]))
r = next(r for r in d["results"] if r["status"] == "ok")
r["algo"] = "blocked"
r["params"] = {"order": 0, "tile_isa": 1, "pb": 3, "cb": 4, "kb": 2}
json.dump(d, open(sys.argv[2], "w"))
PY
want="$("$CLI" algos | awk '/^blocked /{b=1; next} b && /^[a-z]/{b = 0} b && NF > 2 && $1 != "parameters:" {printf "%s%s", s, $1; s=","}')"
[ "$want" = "kb,cb,pb,tile_isa,order" ] || fail "blocked's declared parameters read as '$want'"
expect 0 "" -- "$CLI" diff "$tmp/params.json" "$tmp/params.json"
grep -qE " blocked +kb=2,cb=4,pb=3,tile_isa=1,order=0 " "$tmp/out" ||
  { cat "$tmp/out"; fail "params not in declaration order"; }

# A wider tolerance turns the +10 % into no regression; alpha is validated.
expect 0 "" -- "$CLI" diff --tolerance 15 "$tmp/base.json" "$tmp/new.json"
expect 2 "--alpha" -- "$CLI" diff --alpha 0.7 "$tmp/base.json" "$tmp/new.json"
expect 2 "--tolerance" -- "$CLI" diff --tolerance x "$tmp/base.json" "$tmp/new.json"
expect 2 "expected two files" -- "$CLI" diff "$tmp/base.json"

# 2. Bad inputs: one clear line each, exit 2.
expect 2 "missing\.json: cannot read: No such file" -- "$CLI" diff "$tmp/missing.json" "$tmp/new.json"
expect 2 "wrong_format\.json: format: \"some-other-format\" is neither" -- "$CLI" diff "$tmp/wrong_format.json" "$tmp/new.json"
printf '{"format": "convpick-bench-results",\n "version": 1,\n "results": [}\n' >"$tmp/torn.json"
expect 2 "torn\.json:3:[0-9]+: malformed JSON" -- "$CLI" diff "$tmp/base.json" "$tmp/torn.json"
expect 2 "bad_sample\.json: results\[1\]\.measurement\.samples\[3\]: expected a number" -- "$CLI" diff "$tmp/bad_sample.json" "$tmp/new.json"
expect 2 "no measurement in common" -- "$CLI" diff "$tmp/base.json" "$tmp/apart.json"
# Two tables whose only common entry changed its choice: no pair to test, but
# the change is the report (exit 0, not "nothing in common").
$PY - "$DATA/diff_base.table.json" "$tmp/one_a.json" "$tmp/one_b.json" <<'PY'
import json, sys
d = json.load(open(sys.argv[1])); d["entries"] = d["entries"][:1]
json.dump(d, open(sys.argv[2], "w"))
d["entries"][0]["choice"] = {"algo": "im2col_gemm", "params": {"row_block": 6}}
json.dump(d, open(sys.argv[3], "w"))
PY
expect 0 "" -- "$CLI" diff "$tmp/one_a.json" "$tmp/one_b.json"
grep -q "^changed choices (1):" "$tmp/out" || { cat "$tmp/out"; fail "one changed entry: not listed"; }
grep -q "^summary: 0 compared" "$tmp/out" || { cat "$tmp/out"; fail "one changed entry: summary"; }
$PY -c 'import json,sys; d=json.load(open(sys.argv[1])); d["version"]=3; json.dump(d, open(sys.argv[2],"w"))' \
  "$DATA/diff_base.table.json" "$tmp/table_v3.json"
expect 2 "table_v3\.json: version: 3 is not supported \(this build reads versions 1 to 2\)" -- "$CLI" diff "$DATA/diff_base.table.json" "$tmp/table_v3.json"
$PY -c 'import json,sys; d=json.load(open(sys.argv[1])); d["version"]=3; json.dump(d, open(sys.argv[2],"w"))' \
  "$DATA/diff_base.bench.json" "$tmp/bench_v3.json"
expect 2 "bench_v3\.json: version: convpick-bench-results version 3 is not supported" -- "$CLI" diff "$DATA/diff_base.bench.json" "$tmp/bench_v3.json"
# Version 1 (the migration, docs/table-format.md): the v1 original of the bench
# fixture reads as its Python-migrated v2 copy, every pair unchanged.
expect 0 "" -- "$CLI" diff "$DATA/diff_base.v1.bench.json" "$DATA/diff_base.bench.json"
grep -qE "^summary: 4 compared: 0 slower, [0-9] inconclusive, [0-9] unchanged, 0 faster; 0 only in BASE, 0 only in NEW" "$tmp/out" || { cat "$tmp/out"; fail "v1 bench file does not read as its v2 copy"; }
expect 2 "device .*--allow-other-device" -- "$CLI" diff "$tmp/base.json" "$tmp/other_device.json"
expect 1 "" -- "$CLI" diff --allow-other-device "$tmp/base.json" "$tmp/other_device.json" --markdown "$tmp/other.md"
head -n 1 "$tmp/out" | grep -q "^WARNING: BASE and NEW were measured on different devices" || fail "other-device warning not on top"
grep -q "Warning:\*\* BASE and NEW were measured on different devices" "$tmp/other.md" || fail "markdown other-device warning"

# 3. Two tables: a changed choice and what the old choice costs now.
$PY - "$DATA/diff_base.table.json" "$tmp/table_new.json" <<'PY'
import json, sys
t = json.load(open(sys.argv[1]))
e = t["entries"][0]
other = next(c for c in e["candidates"]
             if c["status"] == "ok" and (c["algo"], c["params"]) != (e["choice"]["algo"], e["choice"]["params"]))
e["choice"] = {"algo": other["algo"], "params": other["params"]}
json.dump(t, open(sys.argv[2], "w"))
PY
expect 0 "" -- "$CLI" diff "$DATA/diff_base.table.json" "$tmp/table_new.json" --markdown "$tmp/table.md"
grep -q "^changed choices (1):" "$tmp/out" || { cat "$tmp/out"; fail "changed choice not reported"; }
# By default two tables compare their choices only (one per entry; the changed
# entry's choices differ, so they do not pair) and the network's time; --all
# compares every candidate.
nent="$($PY -c 'import json,sys; print(len(json.load(open(sys.argv[1]))["entries"]))' "$DATA/diff_base.table.json")"
ncand="$($PY -c 'import json,sys; print(sum(1 for e in json.load(open(sys.argv[1]))["entries"] for c in e["candidates"] if c["status"] == "ok"))' "$DATA/diff_base.table.json")"
grep -qE "^summary: $((nent - 1)) compared" "$tmp/out" || { cat "$tmp/out"; fail "choices only: expected $((nent - 1)) pairs"; }
grep -qE "^network: $nent entries in both, sum of the chosen medians BASE [0-9.e+-]+ ms, NEW [0-9.e+-]+ ms, ratio [0-9.]+" "$tmp/out" \
  || { cat "$tmp/out"; fail "network total not reported"; }
# Reproduction of the confident choices, counted here from the two files with
# Python's json module (an outside count of the same definition: confident =
# runner_up.in_noise false; same = same algorithm; same params too).
read -r conf same_algo same_all <<<"$($PY - "$DATA/diff_base.table.json" "$tmp/table_new.json" <<'PY'
import json, sys
a, b = (json.load(open(f))["entries"] for f in sys.argv[1:3])
conf = same_algo = same_all = 0
for x, y in zip(a, b):
    if isinstance(x["runner_up"], dict) and x["runner_up"]["in_noise"] is False:
        conf += 1
        same_algo += x["choice"]["algo"] == y["choice"]["algo"]
        same_all += x["choice"] == y["choice"]
print(conf, same_algo, same_all)
PY
)"
grep -qE "^choices: $nent entries in both; $conf of BASE's were confident \(over the best other algorithm\), of those NEW chose the same algorithm in $same_algo \([0-9]+ %\), with the same parameters in $same_all" "$tmp/out" \
  || { cat "$tmp/out"; fail "choices line: expected $conf confident, $same_algo same algorithm, $same_all same"; }
grep -qE "^changed choices, BASE's choice re-measured in NEW: worst [0-9.]+x NEW's choice, median [0-9.]+x" "$tmp/out" \
  || fail "cost of the changed choices not summarised"
expect 0 "" -- "$CLI" diff --all "$DATA/diff_base.table.json" "$tmp/table_new.json"
grep -qE "^summary: $ncand compared" "$tmp/out" || { cat "$tmp/out"; fail "--all: expected $ncand pairs"; }
grep -qE "BASE's choice now takes [0-9.e+-]+ ms, [0-9.e+-]+ times NEW's choice \([0-9.e+-]+ ms\)" "$tmp/out" || fail "old choice cost not reported"
grep -q "### Changed choices" "$tmp/table.md" || fail "markdown changed choices"

# A bench file against a table of the same device: pairs found across formats.
expect 0 "" -- "$CLI" diff --tolerance 99 "$DATA/diff_base.bench.json" "$DATA/diff_base.table.json"
grep -qE "^summary: [1-9][0-9]* compared" "$tmp/out" || fail "no pair across formats"

# 3b. --paired: eight rounds per side whose whole-round speed swings by a
#     lognormal factor (sigma 15 %, shared by BASE and NEW of the round, as a
#     neighbour's load would), NEW 10 % slower on stem/direct only.  Paired by
#     round, the regression is found and nothing else moves.  Expected p:
#     eight positive log ratios, exact signed-rank two-sided p = 2/256 (common
#     practice, no source), below alpha 0.01.
$PY - "$DATA/diff_base.bench.json" "$tmp" <<'PY'
import copy, json, random, sys
src, out = sys.argv[1], sys.argv[2]
doc = json.load(open(src))
rng = random.Random(7)
for r in range(8):
    f = rng.lognormvariate(0.0, 0.15)
    for side, slow in (("a", 1.0), ("b", 1.10)):
        d = copy.deepcopy(doc)
        for x in d["results"]:
            k = slow if (x["layer"], x["algo"]) == ("stem", "direct") else 1.0
            x["measurement"]["samples"] = [1e-4 * f * k * rng.lognormvariate(0.0, 0.005) for _ in range(10)]
        json.dump(d, open("%s/round%d%s.json" % (out, r, side), "w"))
PY
A="$(ls "$tmp"/round?a.json | paste -sd,)"; B="$(ls "$tmp"/round?b.json | paste -sd,)"
expect 1 "" -- "$CLI" diff --paired "$A" "$B" --junit "$tmp/paired.xml"
grep -q "^method: rounds paired in order; two-sided Wilcoxon signed-rank" "$tmp/out" || fail "paired method line"
grep -qE "^slower .* stem .* direct " "$tmp/out" || { cat "$tmp/out"; fail "paired: stem/direct should be slower"; }
grep -qE "^summary: [0-9]+ compared: 1 slower, [0-9]+ inconclusive, [0-9]+ unchanged, 0 faster" "$tmp/out" \
  || { cat "$tmp/out"; fail "paired: exactly one regression"; }
grep -q "p = 0.0078" <(xmllint --xpath 'string(//failure/@message)' "$tmp/paired.xml") \
  || fail "paired: exact p 2/256 not in the failure message"
expect 2 "diff: --paired: BASE needs at least 2 rounds" -- "$CLI" diff --paired "$tmp/round0a.json" "$B"
expect 2 "missing\.json" -- "$CLI" diff --paired "$A,$tmp/missing.json" "$B"

# 3b. The fixed control (docs/diff.md, "The control"), on invented bench results
#     made by scripts/gen_drift_fixtures.py (SciPy's figures are checked in
#     tests/harness/test_diff_drift.c): every time 1.15x slower in NEW, the
#     control included, is machine-wide drift and no regression; the control
#     unchanged and one row 1.15x slower is that row's regression; without a
#     control in NEW, today's verdicts with a note.  Chosen rows and the network
#     by default, every row with --all.
DB="$DATA/drift_base.bench.json"
expect 0 "" -- "$CLI" diff "$DB" "$DATA/drift_all.bench.json" --junit "$tmp/drift.xml" --markdown "$tmp/drift.md"
grep -qE "^the control ran 1\.15x slower in NEW .*machine-wide drift; rows judged on drift-corrected ratios" "$tmp/out" ||
  { cat "$tmp/out"; fail "drift: no drift line"; }
grep -qE "^summary: 3 compared: 0 slower, .*machine drift 1\.15[0-9]*x \(control\), rows drift-corrected$" "$tmp/out" ||
  { cat "$tmp/out"; fail "drift: summary"; }
grep -qE "^network: 3 chosen rows in both, .*\(drift-corrected\), ratio 1\.00[0-9]*; over the trials: unchanged" "$tmp/out" ||
  { cat "$tmp/out"; fail "drift: network line"; }
grep -q "the table's chosen rows only" "$tmp/out" || fail "drift: chosen rows not said"
[ "$(xmllint --xpath 'string(//property[@name="drift"]/@value)' "$tmp/drift.xml")" = true ] || fail "drift: JUnit property"
[ "$(xmllint --xpath 'count(//testcase/failure)' "$tmp/drift.xml")" = 0 ] || fail "drift: JUnit failures"
grep -q "Machine drift:.*the control ran 1.15x slower in NEW" "$tmp/drift.md" || { cat "$tmp/drift.md"; fail "drift: Markdown"; }
expect 1 "" -- "$CLI" diff "$DB" "$DATA/drift_row.bench.json" --junit "$tmp/row.xml" --markdown "$tmp/row.md"
grep -qE "^the control is unchanged in NEW .*rows judged as measured" "$tmp/out" || { cat "$tmp/out"; fail "row: control line"; }
grep -qE "^slower +mid +no +1 +chosen=blocked " "$tmp/out" || { cat "$tmp/out"; fail "row: mid not slower"; }
grep -qE "^summary: 3 compared: 1 slower, .*: REGRESSION$" "$tmp/out" || { cat "$tmp/out"; fail "row: summary"; }
[ "$(xmllint --xpath 'count(//testcase/failure)' "$tmp/row.xml")" = 1 ] || fail "row: JUnit failures"
[ "$(xmllint --xpath 'string(//property[@name="drift"]/@value)' "$tmp/row.xml")" = false ] || fail "row: JUnit drift"
$PY - "$DATA/drift_all.bench.json" "$tmp/nocontrol.json" <<'PY'
import json, sys
d = json.load(open(sys.argv[1])); del d["control"]; json.dump(d, open(sys.argv[2], "w"))
PY
expect 1 "" -- "$CLI" diff "$DB" "$tmp/nocontrol.json"
grep -q "^note: only BASE carries a control: a machine-wide drift cannot be told from a regression" "$tmp/out" ||
  { cat "$tmp/out"; fail "no control: note"; }
grep -qE "^summary: 3 compared: 3 slower" "$tmp/out" || { cat "$tmp/out"; fail "no control: rows as measured"; }
# a file written before trials (single samples) against one of trial medians: said
$PY - "$DATA/diff_base.bench.json" "$tmp/relabelled.json" <<'PY'
import json, sys
d = json.load(open(sys.argv[1]))
for r in d["results"]:
    if r["status"] == "ok": r["measurement"]["settings"]["samples_are"] = "trial_medians"
json.dump(d, open(sys.argv[2], "w"))
PY
expect 0 "" -- "$CLI" diff "$DATA/diff_base.bench.json" "$tmp/relabelled.json"
grep -q "^note: BASE's samples are single samples, NEW's trial medians" "$tmp/out" || { cat "$tmp/out"; fail "sample kinds"; }

# 4. Two real bench runs of this build: diff reads what bench wrote, and its
#    exit code agrees with the JUnit report.  Whether two runs of one build
#    agree is a property of the machine's noise, not of this code: it is
#    measured by the repeatability benchmark, never asserted by a test.
shapes=(--shape n=1,c=4,h=10,w=10,k=8,r=3,pad=1 --shape n=1,c=8,h=8,w=8,k=8,r=1)
for run in a b; do
  "$CLI" bench "${shapes[@]}" --algo direct,im2col_gemm --max-seconds 0.05 --no-roofs \
    --json "$tmp/run_$run.json" >/dev/null
done
set +e; "$CLI" diff "$tmp/run_a.json" "$tmp/run_b.json" --junit "$tmp/runs.xml" >"$tmp/out"; rc=$?; set -e
[ "$rc" = 0 ] || [ "$rc" = 1 ] || { cat "$tmp/out"; fail "diff of two runs exited $rc"; }
nf="$(xmllint --xpath 'count(//testcase/failure)' "$tmp/runs.xml")"
[ "$(( rc == 1 ))" = "$(( nf > 0 ))" ] || fail "exit $rc disagrees with $nf JUnit failures"
grep -qE "^summary: [1-9][0-9]* compared" "$tmp/out" || { cat "$tmp/out"; fail "two runs: nothing compared"; }
echo "cli_diff: all checks passed"
