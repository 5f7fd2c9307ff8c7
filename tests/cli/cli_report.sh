#!/usr/bin/env bash
# convpick report and show end to end: a small tune (whose end summary is
# checked), a second table of "another machine" made from it, invented roofs
# in probe output, a small cache study; the page is opened in headless
# Chromium (screenshot not blank, no console error, one roofline point per
# measured candidate at coordinates recomputed here), its SVGs parse with
# xmllint, the network totals match Python's; bad inputs give one line, exit
# 2, and leave no HTML behind.
# Usage: bash cli_report.sh CLI SRCDIR.  Exits 77 (skipped) without Chromium.
set -euo pipefail
CLI="$1"; SRC="$2"
PY=/usr/bin/python3
command -v "${CHROMIUM:-chromium}" >/dev/null || { echo "cli_report: SKIP: chromium not installed (scripts/deps)"; exit 77; }
T="$(mktemp -d /tmp/convpick_cli_report.XXXXXX)"
trap 'rm -rf "$T"' EXIT
die() { echo "FAIL: $*"; exit 1; }

# 1. A small tune of an invented network: layer a occurs twice.
cat > "$T/layers.txt" <<'L'
a: n=1,c=8,h=20,w=20,k=16,r=3,s=3,pad=1
b: n=1,c=16,h=20,w=20,k=16,r=1,s=1
a2: n=1,c=8,h=20,w=20,k=16,r=3,s=3,pad=1
L
"$CLI" tune --shapes "$T/layers.txt" --budget 0.3 --max-seconds 0.05 --threads 1 --quiet \
    --out "$T/a.table.json" >"$T/tune.out" 2>"$T/tune.err" || die "tune exited $?"
grep -q "network total, 1 thread(s): the choice" "$T/tune.out" || die "tune printed no summary on stdout"
grep -q "network total" "$T/tune.err" && die "the summary went to stderr"
"$CLI" show "$T/a.table.json" >"$T/show.out" || die "show exited $?"

# 2. Another machine's table: same shapes, another fingerprint, times x1.5 and
# the first entry's choice swapped for its runner-up (fixture, invented).
$PY - "$T/a.table.json" "$T/b.table.json" <<'PYEOF'
import json, sys
d = json.load(open(sys.argv[1]))
d["device"]["fingerprint"] = "0123456789abcdef"
for e in d["entries"]:
    for c in e["candidates"]:
        t = c.get("timing")
        if t:
            for k in ("median", "ci_lo", "ci_hi"):
                t["stats"][k] *= 1.5
            if "samples" in t:
                t["samples"] = [s * 1.5 for s in t["samples"]]
    for k in ("median", "ci_lo", "ci_hi"):
        e["timing"]["stats"][k] *= 1.5
e = d["entries"][0]
if e["runner_up"]:
    ru = e["runner_up"]
    e["choice"], ru["algo"], ru["params"] = ({"algo": ru["algo"], "params": ru["params"]},
                                            e["choice"]["algo"], e["choice"]["params"])
json.dump(d, open(sys.argv[2], "w"), indent=1)
PYEOF

# 3. Probe output with invented roofs, including a roof name the report has
# never seen (another vector width) and an unknown field: read leniently.
"$CLI" probe --json --no-roofs >"$T/probe0.json" || die "probe exited $?"
$PY - "$T/probe0.json" "$T/probe.json" <<'PYEOF'
import json, sys
d = json.load(open(sys.argv[1]))
d["roofs"] = {"peak_1core_gflops": 60.0, "peak_all_gflops": 110.0, "bw_1core_gbs": 12.0,
              "bw_all_gbs": 15.0, "cores_used": 2, "wide": {"peak_1core_gflops": 90.0},
              "by_width": [{"isa": "w512", "threads": 1, "gflops": 95.0}],
              "a_future_field": [1, 2]}
json.dump(d, open(sys.argv[2], "w"))
PYEOF

# 4. A small cache study.
"$CLI" cache --shape n=1,c=8,h=14,w=14,k=12,r=3,pad=1 --cache-geometry L1=4K:4:64,L2=32K:8:64 \
    --channels 6 --time-cap 0.05 --json "$T/cache.json" --svg "$T/cache.svg" >/dev/null \
    || die "cache exited $?"
xmllint --noout "$T/cache.svg" || die "cache SVG does not parse"

# 5. The report.
"$CLI" report --out "$T/r.html" "$T/a.table.json" "$T/b.table.json" "$T/probe.json" \
    "$T/cache.json" 2>"$T/report.err" || { cat "$T/report.err"; die "report exited $?"; }
grep -q "wrote $T/r.html" "$T/report.err" || die "report does not say where it wrote"
grep -Eq '(src|href)="(https?:)?//' "$T/r.html" && die "the page refers to an outside asset"

# Every <svg> of the page parses as XML (xmllint, libxml2).
$PY - "$T/r.html" "$T" <<'PYEOF'
import re, sys
svgs = re.findall(r"<svg.*?</svg>", open(sys.argv[1]).read(), re.S)
assert len(svgs) >= 2, "expected a roofline and a cache chart, found %d svg" % len(svgs)
for i, s in enumerate(svgs):
    open("%s/svg%d.svg" % (sys.argv[2], i), "w").write(s)
PYEOF
for f in "$T"/svg*.svg; do xmllint --noout "$f" || die "$f does not parse"; done

# 6. Headless Chromium (scripts/headless-chromium: a screenshot, then the DOM,
# logging to stderr, each instance killed by its process id).
set +e; "$SRC/scripts/headless-chromium" "$T/r.html" "$T/r"; rc=$?; set -e
[ "$rc" = 77 ] && { echo "cli_report: SKIP: chromium could not run here"; exit 77; }
[ "$rc" = 0 ] || die "headless-chromium exited $rc"
# The console: Chromium logs page errors as "Uncaught ..." and console
# messages as "CONSOLE" lines (common practice, no source).
if grep -Eiq "Uncaught|console" "$T/r.shot.log" "$T/r.dom.log"; then
  grep -Ei "Uncaught|console" "$T/r.shot.log" "$T/r.dom.log" | head; die "the page logged console errors"
fi

# 7. The screenshot is not blank: decode the PNG (RFC 2083 / PNG spec: zlib
# stream, one filter byte per row, filters 0-4) with zlib from the standard
# library and require a spread of grey values.
$PY - "$T/r.png" <<'PYEOF'
import struct, sys, zlib
data = open(sys.argv[1], "rb").read()
assert data[:8] == b"\x89PNG\r\n\x1a\n", "not a PNG"
pos, idat = 8, b""
while pos < len(data):
    n, typ = struct.unpack(">I4s", data[pos:pos + 8])
    body = data[pos + 8:pos + 8 + n]
    if typ == b"IHDR":
        w, h, depth, ctype, _, _, interlace = struct.unpack(">IIBBBBB", body)
    elif typ == b"IDAT":
        idat += body
    pos += 12 + n
assert depth == 8 and ctype in (2, 6) and interlace == 0, (depth, ctype, interlace)
bpp = 3 if ctype == 2 else 4
raw = zlib.decompress(idat)
stride = w * bpp
prev = bytearray(stride)
grey = []
for y in range(h):
    f = raw[y * (stride + 1)]
    row = bytearray(raw[y * (stride + 1) + 1:(y + 1) * (stride + 1)])
    for i in range(stride):
        a = row[i - bpp] if i >= bpp else 0
        b = prev[i]
        c = prev[i - bpp] if i >= bpp else 0
        if f == 1: row[i] = (row[i] + a) & 255
        elif f == 2: row[i] = (row[i] + b) & 255
        elif f == 3: row[i] = (row[i] + (a + b) // 2) & 255
        elif f == 4:
            p = a + b - c
            pa, pb, pc = abs(p - a), abs(p - b), abs(p - c)
            row[i] = (row[i] + (a if pa <= pb and pa <= pc else b if pb <= pc else c)) & 255
    prev = row
    if y % 4 == 0:
        grey += [(row[x] + row[x + 1] + row[x + 2]) // 3 for x in range(0, stride, bpp * 4)]
mean = sum(grey) / len(grey)
var = sum((g - mean) ** 2 for g in grey) / len(grey)
dark = sum(g < 128 for g in grey) / len(grey)
assert var > 100 and 0.005 < dark < 0.6, "screenshot looks blank: variance %.1f, dark %.4f" % (var, dark)
print("screenshot %dx%d: grey variance %.1f, %.2f%% dark pixels" % (w, h, var, 100 * dark))
PYEOF

# 8. The DOM: one roofline point per measured candidate of each table, at the
# arithmetic intensity and GFLOP/s recomputed from the table JSON (FLOPs =
# 2 n k (c/groups) r s P Q, bytes = 4 (input + weights + output elements)),
# placed by the log mapping the <svg> states; the network totals (count x
# median, summed) match the page's and the summaries'.
$PY - "$T/r.dom.html" "$T/a.table.json" "$T/b.table.json" "$T/tune.out" "$T/show.out" <<'PYEOF'
import json, math, re, sys
from html.parser import HTMLParser

class P(HTMLParser):
    def __init__(self):
        super().__init__(); self.svg = None; self.pts = []; self.totals = []
    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        if tag == "svg" and "roofline" in a.get("class", ""):
            self.svg = {k: float(v) for k, v in a.items() if k.startswith("data-")}
            self.svgs = getattr(self, "svgs", []) + [self.svg]
        if tag == "g" and a.get("class") == "rl-pt":
            x, y = map(float, re.match(r"translate\(([-\d.]+),([-\d.]+)\)", a["transform"]).groups())
            self.pts.append((self.svg, x, y, a))
        if tag == "td" and "total" in a.get("class", ""):
            self.totals.append(a)

p = P(); p.feed(open(sys.argv[1]).read())

def out(n, pad0, pad1, k, st, d=1):
    return (n + pad0 + pad1 - d * (k - 1) - 1) // st + 1

counts = {"a": 2, "b": 1, "a2": 2}  # layer a occurs twice in layers.txt (a and a2 are one shape)
checked = 0
for si, path in ((0, sys.argv[2]), (1, sys.argv[3])):
    d = json.load(open(path))
    want = 0
    total = 0.0
    algo_tot = {}
    for ei, e in enumerate(d["entries"]):
        s = e["shape"]
        P_ = out(s["h"], s["pad_top"], s["pad_bottom"], s["r"], s["stride_h"], s["dilation_h"])
        Q_ = out(s["w"], s["pad_left"], s["pad_right"], s["s"], s["stride_w"], s["dilation_w"])
        flops = 2.0 * s["n"] * s["k"] * (s["c"] // s["groups"]) * s["r"] * s["s"] * P_ * Q_
        byts = 4.0 * (s["n"] * s["c"] * s["h"] * s["w"] + s["k"] * (s["c"] // s["groups"]) * s["r"] * s["s"]
                      + s["n"] * s["k"] * P_ * Q_)
        ai = flops / byts
        ok = [c for c in e["candidates"] if c["status"] == "ok" and c["timing"]]
        pts = [q for q in p.pts if q[3]["data-src"] == str(si) and q[3]["data-entry"] == str(ei)]
        assert len(pts) == len(ok), "entry %d: %d points for %d candidates" % (ei, len(pts), len(ok))
        for c, (svg, x, y, a) in zip(ok, pts):
            med = c["timing"]["stats"]["median"]
            g = flops / med / 1e9
            assert a["data-algo"] == c["algo"]
            assert math.isclose(float(a["data-ai"]), ai, rel_tol=1e-4), (a["data-ai"], ai)
            assert math.isclose(float(a["data-gflops"]), g, rel_tol=1e-4), (a["data-gflops"], g)
            lx0, lx1, ly0, ly1 = svg["data-lx0"], svg["data-lx1"], svg["data-ly0"], svg["data-ly1"]
            assert lx0 <= math.log10(ai) <= lx1 and ly0 <= math.log10(g) <= ly1, "point off the axes"
            X = svg["data-px0"] + svg["data-pw"] * (math.log10(ai) - lx0) / (lx1 - lx0)
            Y = svg["data-py0"] + svg["data-ph"] * (1 - (math.log10(g) - ly0) / (ly1 - ly0))
            assert abs(X - x) < 0.05 and abs(Y - y) < 0.05, ((X, Y), (x, y))
            chosen = c["algo"] == e["choice"]["algo"] and c["params"] == e["choice"]["params"]
            assert a["data-chosen"] == ("1" if chosen else "0"), (ei, c["algo"])
            assert a["data-noisy"] == ("1" if c["timing"]["stats"]["noisy"] else "0")
            checked += 1
        chosen_c = [c for c in ok if c["algo"] == e["choice"]["algo"] and c["params"] == e["choice"]["params"]]
        assert len(chosen_c) == 1
        # the table does not record counts: the page takes 1 (marked *)
        total += chosen_c[0]["timing"]["stats"]["median"]
        for c in ok:
            m = c["timing"]["stats"]["median"]
            algo_tot.setdefault(c["algo"], {})
            prev = algo_tot[c["algo"]].get(ei)
            algo_tot[c["algo"]][ei] = m if prev is None else min(prev, m)
    page = {t["data-what"]: float(t["data-seconds"]) for t in p.totals if t["data-src"] == str(si)}
    assert math.isclose(page["the table's choice"], total, rel_tol=1e-6), (page, total)
    for algo, per in algo_tot.items():
        assert math.isclose(page[algo], sum(per.values()), rel_tol=1e-6), (algo, page[algo])
    if si == 0:
        table0 = d
        total0 = total
assert checked >= 6, "too few points checked: %d" % checked

# The summaries: tune's knows the counts from layers.txt; show's takes 1.
def summary_total(text):
    m = re.search(r"network total, 1 thread\(s\): the choice ([\d.]+) ms", text)
    assert m, "no total line"
    return float(m.group(1)) / 1e3
tc = 0.0
for e in table0["entries"]:
    c = [c for c in e["candidates"] if c["status"] == "ok" and c["timing"] and c["algo"] == e["choice"]["algo"]
         and c["params"] == e["choice"]["params"]][0]
    tc += counts[e["name"]] * c["timing"]["stats"]["median"]
tune_total = summary_total(open(sys.argv[4]).read())
assert abs(tune_total - tc) <= 0.00005e-3 + 1e-12, (tune_total, tc)
show_total = summary_total(open(sys.argv[5]).read())
assert abs(show_total - total0) <= 0.00005e-3 + 1e-12, (show_total, total0)
lines = [l for l in open(sys.argv[5]) if re.match(r"^(a|b) ", l)]
assert len(lines) == len(table0["entries"]), "show: one line per entry"
print("cli_report: %d roofline points and the totals checked" % checked)
PYEOF

# 8b. Bench results beside the table: their points and their layer counts
# (layer a occurs twice); the table's total then counts a twice, as tune's
# summary does.
"$CLI" bench --shapes "$T/layers.txt" --threads 1 --max-seconds 0.03 --no-roofs --json "$T/b.bench.json" \
    >/dev/null 2>&1 || die "bench exited $?"
"$CLI" report --out "$T/rb.html" "$T/a.table.json" "$T/b.bench.json" 2>/dev/null || die "report with bench"
$PY - "$T/rb.html" "$T/b.bench.json" "$T/tune.out" <<'PYEOF'
import json, re, sys
page = open(sys.argv[1]).read()
d = json.load(open(sys.argv[2]))
ok = [r for r in d["results"] if r["status"] == "ok" and r["kind"] == "algorithm"]
pts = re.findall(r'<g class="rl-pt"[^>]*data-src="1"', page)
assert len(pts) == len(ok), "bench: %d points for %d results" % (len(pts), len(ok))
counts = {r["layer"]: r["layer_count"] for r in ok}
assert counts.get("a") == 2, counts
m = re.search(r'data-src="0" data-threads="1" data-what="the table&#39;s choice" data-seconds="([^"]+)"', page)
tune = re.search(r"network total, 1 thread\(s\): the choice ([\d.]+) ms", open(sys.argv[3]).read())
assert m and tune, "totals missing"
assert abs(float(m.group(1)) * 1e3 - float(tune.group(1))) <= 0.00005 + 1e-9, (m.group(1), tune.group(1))
print("cli_report: %d bench points; counts from bench results match tune's summary" % len(pts))
PYEOF

# The comparison marks the swapped entry as changed.
grep -q 'class="changed"' "$T/r.html" || die "the swapped choice is not marked changed"
# The cache chart names the variants it cannot show (the AVX2 tile kernel is
# timed only, never traced: harness/cache/cache_traced.h) and lists only bars it draws.
grep -q "not shown: blocked.avx2 (all kinds): " "$T/r.html" || die "missing cache variants not explained"
grep -q ">blocked.avx2 preflip<" "$T/r.html" && die "a legend entry without bars"
# Every roof of the probe output is listed, the unknown width too.
for roof in peak_1core_gflops peak_all_gflops bw_1core_gbs bw_all_gbs wide.peak_1core_gflops \
    by_width.w512.gflops; do
  grep -q ">$roof<" "$T/r.html" || die "roof $roof not listed"
done

# 9. Bad inputs: one line, exit 2, the previous page untouched, no temporary left.
cp "$T/r.html" "$T/keep.html"
echo '{"hello": 1}' > "$T/other.json"
$PY - "$T/a.table.json" "$T/c.table.json" <<'PYEOF'
import json, sys
d = json.load(open(sys.argv[1]))
for e in d["entries"]:
    e["shape"]["h"] += 1; e["shape"]["w"] += 1; e["shape"].pop("spec", None)
json.dump(d, open(sys.argv[2], "w"))
PYEOF
ls -a "$T" >"$T/listing.before"
bad() { # WHAT EXPECT ARGS...
  local what="$1" expect="$2"; shift 2
  set +e; "$CLI" report --out "$T/r.html" "$@" >"$T/bad.out" 2>"$T/bad.err"; local rc=$?; set -e
  [ "$rc" = 2 ] || die "$what: exit $rc, expected 2"
  [ "$(wc -l <"$T/bad.err")" = 1 ] || { cat "$T/bad.err"; die "$what: expected one line"; }
  grep -q "$expect" "$T/bad.err" || { cat "$T/bad.err"; die "$what: message lacks '$expect'"; }
  cmp -s "$T/r.html" "$T/keep.html" || die "$what: the page was changed"
  ls -a "$T" | grep -v -E '^bad\.(out|err)$' | diff - <(grep -v -E '^bad\.(out|err)$' "$T/listing.before") \
      || die "$what: left a file behind"
}
bad "another kind" "other.json: format: missing is not a tuning table" "$T/other.json"
bad "a missing file" "nope.json" "$T/nope.json"
bad "no common shape" "share no layer shape" "$T/a.table.json" "$T/c.table.json"
# a good table before the missing file: still nothing written
set +e; "$CLI" report --out "$T/new.html" "$T/a.table.json" "$T/nope.json" 2>/dev/null; rc=$?; set -e
[ "$rc" = 2 ] && [ ! -e "$T/new.html" ] || die "a failed report left new.html (exit $rc)"
set +e; "$CLI" show "$T/probe.json" 2>"$T/bad.err"; rc=$?; set -e
[ "$rc" = 2 ] && grep -q "not a tuning table" "$T/bad.err" || die "show of probe output: exit $rc"
echo "cli_report: all checks passed"
