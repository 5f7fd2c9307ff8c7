#!/usr/bin/env bash
# convpick bench end to end: the JSON results file (format convpick-bench-results
# version 2) holds every row's trial medians and every setting, its statistics
# agree with NumPy's on the recorded trial medians, every round holds one trial
# of each control series, cold mode is recorded, and bad options give one
# error line and exit status 2.
set -euo pipefail
CLI="$1"; SRC="$2"
PY=/usr/bin/python3
tmp="$(mktemp -d)"; trap 'rm -rf "$tmp"' EXIT
shape=n=1,c=4,h=10,w=10,k=4,r=3,pad=1
fast=(--no-roofs --max-seconds 0.05 --max-samples 40 --rounds 6 --trial-samples 3)

# 1. A run with JSON: the document and every measurement.
"$CLI" bench --shape "$shape" --shape n=1,c=4,h=8,w=8,k=8,r=1 --flip both --threads all \
  --target-ci 5 "${fast[@]}" --json "$tmp/b.json" > "$tmp/out.txt"
grep -qE "^control gemm +[0-9]+ trials" "$tmp/out.txt" && grep -qE "^control fma +[0-9]+ trials" "$tmp/out.txt" ||
  { echo "FAIL: no control lines printed"; cat "$tmp/out.txt"; exit 1; }
grep -q "median_ms" "$tmp/out.txt" || { echo "FAIL: no table printed"; cat "$tmp/out.txt"; exit 1; }
# A user's run prints the user's rows only: the project's targets need --targets
# (common practice, no source: what the command's help promises).
! grep -qE "blocked_peak|im2col_vs_sgemm|PASS|MISS|per layer" "$tmp/out.txt" ||
  { echo "FAIL: targets printed without --targets"; cat "$tmp/out.txt"; exit 1; }
# The orientation column says flip no / yes.
grep -qE "^shape1 +no +[0-9]+ " "$tmp/out.txt" && grep -qE "^shape1 +yes +[0-9]+ " "$tmp/out.txt" ||
  { echo "FAIL: no flip column with no/yes"; cat "$tmp/out.txt"; exit 1; }
$PY - "$tmp/b.json" "$SRC/tests/data/bench_results.schema.json" <<'P'
import json, sys
import jsonschema
import numpy as np
d = json.load(open(sys.argv[1]))
jsonschema.validate(d, json.load(open(sys.argv[2])))
assert d["format"] == "convpick-bench-results" and d["version"] == 2, d["format"]
assert len(d["device"]["fingerprint"]) == 16 and "fingerprint" not in d
assert d["roofs"] is None  # --no-roofs
t = d["settings"]["timing"]
assert abs(t["target_rel_ci"] - 0.05) < 1e-15 and t["max_seconds"] == 0.05 and t["max_samples"] == 40
assert d["settings"]["flipped"] == [False, True]
assert d["summaries"] is None  # no --targets
ok = [r for r in d["results"] if r["status"] == "ok"]
assert ok, "no measurement"
layers = {r["layer"] for r in d["results"]}
assert len(layers) == 2, layers
for r in d["results"]:
    assert r["status"] in ("ok", "unsupported", "error"), r["status"]
    if r["status"] != "ok":
        assert r["reason"], r
assert d["settings"]["rounds"] == 6 and d["settings"]["trial_samples"] == 3
assert d["settings"]["placed"] is True
groups = {(r["layer"], r["flipped"], r["threads"]) for r in d["results"]}
for r in ok:
    m = r["measurement"]; s = m["stats"]; x = np.array(m["samples"])
    # the samples are trial medians, one per round (docs/benchmark.md)
    assert m["settings"]["samples_are"] == "trial_medians" and m["settings"]["rounds"] == 6, m["settings"]
    assert m["stop"] == "rounds" and len(x) == 6 and s["n"] == len(x), (m["stop"], len(x))
    assert m["settings"]["min_samples"] == m["settings"]["max_samples"] == 3
    assert m["settings"]["warmup"] == 1 and abs(m["settings"]["max_seconds"] - 0.05 / 6) < 1e-15
    assert (x > 0).all()
    # outside check: numpy on the recorded samples
    assert abs(s["median"] - np.median(x)) <= 1e-12 * np.median(x), (s["median"], np.median(x))
    assert abs(s["mean"] - np.mean(x)) <= 1e-9 * np.mean(x)
    assert s["min"] == x.min() and s["max"] == x.max()
    xs = np.sort(x)
    if s["ci_exact"]:
        assert s["ci_lo"] == xs[s["ci_rank_lo"]] and s["ci_hi"] == xs[s["ci_rank_hi"]]
    assert m["warmup_runs"] == 1 and m["wall_seconds"] > 0
    assert abs(r["gflops"] - r["flops"] / s["median"] * 1e-9) <= 1e-9 * r["gflops"]
    assert r["threads"] >= 1 and r["flipped"] in (False, True)
# the control: one trial in every round of every layer x flip x threads
c = d["control"]
n = len(c["fma_s"])
assert n == 6 * len(groups), (n, len(groups))
for k in ("gemm_s", "round", "at_s", "layer", "flipped", "threads"):
    assert len(c[k]) == n, k
assert all(v > 0 for v in c["fma_s"] + c["gemm_s"])
for g in groups:
    rounds = sorted(r for r, *key in zip(c["round"], c["layer"], c["flipped"], c["threads"]) if tuple(key) == g)
    assert rounds == list(range(6)), (g, rounds)
assert c["at_s"] == sorted(c["at_s"]), "control trials not in run order"
# rounds over the whole selection: at each thread count, every layer's round r
# is done before any layer's round r + 1 starts (a row's trials span the run)
for t in set(c["threads"]):
    seq = [r for r, th in zip(c["round"], c["threads"]) if th == t]
    assert seq == sorted(seq), ("rounds of one layer ran back to back", t, seq)
    assert len({l for l, th in zip(c["layer"], c["threads"]) if th == t}) > 1
print("json ok: %d measurements, %d control trials" % (len(ok), n))
P

# 2. Cold mode: a flush before every sample, twice the last-level cache.
"$CLI" bench --shape "$shape" --algo direct --cold "${fast[@]}" --rounds 3 --trial-samples 1 \
  --json "$tmp/c.json" > /dev/null
$PY - "$tmp/c.json" "$SRC/tests/data/bench_results.schema.json" <<'P'
import json, sys
import jsonschema
d = json.load(open(sys.argv[1]))
jsonschema.validate(d, json.load(open(sys.argv[2])))
m = d["results"][0]["measurement"]
assert m["settings"]["cold"] is True and len(m["samples"]) == 3
assert m["settings"]["flush_bytes"] == 2 * d["device"]["llc_total_bytes"], m["settings"]
print("cold ok")
P

# 3. Bad input: one line, exit 2; no file written.
expect_usage() {
  set +e; "$CLI" bench "$@" > /dev/null 2> "$tmp/err"; rc=$?; set -e
  [ "$rc" = 2 ] || { echo "FAIL: bench $* exited $rc, want 2"; cat "$tmp/err"; exit 1; }
  [ "$(wc -l < "$tmp/err")" = 1 ] || { echo "FAIL: bench $*: want one error line"; cat "$tmp/err"; exit 1; }
}
expect_usage --shape "$shape" --target-ci abc --no-roofs
expect_usage --shape "$shape" --target-ci 0 --no-roofs
expect_usage --shape "$shape" --max-seconds -1 --no-roofs
expect_usage --shape "$shape" --threads 0 --no-roofs
expect_usage --shape "$shape" --threads 1,9999 --no-roofs
expect_usage --shape "$shape" --bogus
expect_usage --shape "$shape" --rounds 0 --no-roofs
expect_usage --shape "$shape" --trial-samples x --no-roofs
expect_usage --no-roofs
expect_usage --shape n=1,c=0,h=4,w=4,k=4,r=3 --no-roofs
expect_usage --shape "$shape" --no-roofs --table "$tmp/no-such-table.json"
grep -q "target-ci" <("$CLI" bench --help) || { echo "FAIL: help lacks --target-ci"; exit 1; }

# 4. An unwritable JSON path is refused before anything runs: exit 2, the
#    message names the file, and nothing is printed on stdout.
set +e
"$CLI" bench --shape "$shape" --algo direct "${fast[@]}" --json "$tmp/no/such/b.json" > "$tmp/out2" 2> "$tmp/err"
rc=$?; set -e
[ "$rc" = 2 ] || { echo "FAIL: unwritable --json exited $rc, want 2"; exit 1; }
grep -q "$tmp/no/such/b.json" "$tmp/err" || { echo "FAIL: error should name the file"; cat "$tmp/err"; exit 1; }
[ ! -s "$tmp/out2" ] || { echo "FAIL: bench ran despite an unwritable --json"; exit 1; }
# 5. --table: a 'chosen' row planned from a tuning table, SGEMM reference rows
#    and (--targets) the project's performance targets, in the text and in the JSON.
s3=n=1,c=64,h=8,w=8,k=64,r=3,pad=1
"$CLI" tune --shape "$s3" --algo im2col_gemm,blocked --budget 0.2 --max-seconds 0.05 \
  --max-samples 20 --quiet --out "$tmp/t.json" > /dev/null
"$CLI" bench --shape "$s3" --algo im2col_gemm,blocked,winograd_2x2_3x3 --table "$tmp/t.json" \
  "${fast[@]}" --targets --json "$tmp/s.json" > "$tmp/out3.txt"
for w in " chosen " " sgemm " " sgemm_wino " "im2col_vs_sgemm" "chosen_vs_im2col"; do
  grep -q -- "$w" "$tmp/out3.txt" || { echo "FAIL: bench output lacks '$w'"; cat "$tmp/out3.txt"; exit 1; }
done
$PY - "$tmp/s.json" "$SRC/tests/data/bench_results.schema.json" "$tmp/t.json" <<'P'
import json, sys
import jsonschema
d = json.load(open(sys.argv[1]))
jsonschema.validate(d, json.load(open(sys.argv[2])))
table = json.load(open(sys.argv[3]))
rows = {r["algo"]: r for r in d["results"]}
ch = rows["chosen"]
assert ch["kind"] == "chosen" and ch["status"] == "ok", ch
# the chosen row runs the algorithm the table recorded for this shape
assert ch["chosen_algo"] == table["entries"][0]["choice"]["algo"], (ch["chosen_algo"], table["entries"][0]["choice"])
g = rows["sgemm"]
assert g["kind"] == "reference" and g["params"] == {"m": 64, "k": 576, "n": 64, "products": 1, "repeats": 1}
# the im2col product of this layer: 2 K (C R S) (P Q) FLOPs (common practice, no source)
assert g["flops_performed"] == 2 * 64 * 576 * 64, g["flops_performed"]
# Winograd's GEMM stage: 16 products K x C x tiles, 16 tiles of 2x2 on an 8x8 output
gw = rows["sgemm_wino"]
assert gw["flops_performed"] == 16 * 2 * 64 * 64 * 16, gw["flops_performed"]
sums = {(s["id"], s["threads"]): s for s in d["summaries"]}
im = sums[("im2col_vs_sgemm", 1)]
want = rows["im2col_gemm"]["measurement"]["stats"]["median"] / g["measurement"]["stats"]["median"]
assert abs(im["value"] - want) <= 1e-12 * want, (im["value"], want)
assert im["verdict"] == ("pass" if want <= 1.25 else "miss")
cv = sums[("chosen_vs_im2col", 1)]
want = ch["measurement"]["stats"]["median"] / rows["im2col_gemm"]["measurement"]["stats"]["median"]
assert abs(cv["value"] - want) <= 1e-12 * want, (cv["value"], want)
if cv["verdict"] == "miss":
    assert abs(cv["missed_by"] - (want - 0.8) / 0.8) <= 1e-12
assert sums[("blocked_peak", 1)]["verdict"] == "n/a"  # --no-roofs: no peak to compare with
print("table + summaries ok")
P
echo "cli_bench: all checks passed"
