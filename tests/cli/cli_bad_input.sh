#!/usr/bin/env bash
# Every class of bad input listed in docs/bad-input.md, by its ID there: the
# command must end (a timeout counts as a hang), with the documented exit code
# and a one-line message holding the documented text.  Crashes show as exit
# codes >= 128 and fail.
set -euo pipefail
CLI="$(cd "$(dirname "$1")" && pwd)/$(basename "$1")"; SRC="$2"
PY=/usr/bin/python3
tmp="$(mktemp -d)"
bg=""
trap '[ -n "$bg" ] && kill "$bg" 2>/dev/null; rm -rf "$tmp"' EXIT
cd "$tmp"
fails=0
# check ID RC TEXT CMD...: runs CMD (20 s at most), compares exit code and stderr.
check() {
  local id="$1" want="$2" text="$3"; shift 3
  local rc=0
  timeout 20 "$CLI" "$@" >"$id.out" 2>"$id.err" </dev/null || rc=$?
  if [ "$rc" = 124 ]; then echo "FAIL $id: hung (killed after 20 s): $*"; fails=$((fails+1)); return; fi
  if [ "$rc" != "$want" ]; then echo "FAIL $id: exit $rc, expected $want: $*"; cat "$id.err"; fails=$((fails+1)); return; fi
  if ! grep -qF -- "$text" "$id.err"; then echo "FAIL $id: message lacks '$text': $*"; cat "$id.err"; fails=$((fails+1)); return; fi
  if [ "$want" != 0 ] && [ "$(grep -cE '^convpick: error:|^convpick [a-z]+: ' "$id.err")" != 1 ]; then
    echo "FAIL $id: expected exactly one error line"; cat "$id.err"; fails=$((fails+1)); return; fi
  echo "ok $id"
}

S=(--shape c=4,h=8,w=8,k=4,r=3,pad=1)
mkdir adir
: > empty
# ---- shape specs
check S1 2 "unknown key 'x'" verify --shape c=4,h=4,w=4,k=4,r=3,x=1
check S2 2 "missing required key 'w'" verify --shape c=4,h=4
check S3 2 "c=abc: not a number" verify --shape c=abc,h=4,w=4,k=4,r=3
check S4 2 "out of range" verify --shape c=99999999999,h=4,w=4,k=4,r=3
check S5 2 "c=0: must be at least 1" verify --shape c=0,h=4,w=4,k=4,r=3
check S6 2 "not divisible by groups=3" verify --shape c=4,h=4,w=4,k=4,r=3,groups=3
check S7 2 "some outputs would see only padding" verify --shape c=4,h=4,w=4,k=4,r=3,pad=5
check S8 2 "output height is 0" verify --shape c=4,h=2,w=2,k=4,r=3
check S9 2 "overflows size_t" verify --shape c=2000000000,h=2000000000,w=2000000000,k=4,r=1
check S10 2 "stride_h=0: must be at least 1" verify --shape c=3,h=8,w=9,k=3,r=3,stride=0,pad=same
check S11 2 'trailing characters '"'"'\xFF\x1B' verify --shape $'c=4,h=4\xff\x1b[31m,w=4,k=4,r=3'
check S12 2 "c: key given twice" verify --shape c=4,c=5,h=4,w=4,k=4,r=3
# ---- shape files
printf 'a: c=4,h=4,w=4,k=4,r=3\nb: c=4,h=4,w=4,k=4,r=3,zz=1\n' > l2.txt
printf 'bad name!: c=4,h=4,w=4,k=4,r=3\n' > name.txt
printf 'l\xc3\x28: c=4,h=4,w=4,k=4,r=3\n' > utf.txt
printf '# nothing here\n\n' > none.txt
$PY -c "print('x: c=4,h=4,w=4,k=4,r=3,' + 'pad=1,' * 300)" > long.txt
check F1 2 "missing.txt: cannot open: No such file or directory" verify --shapes missing.txt
check F2 2 "adir: cannot read: is a directory" verify --shapes adir
check F3 2 "empty: no layers in the file" verify --shapes empty
check F4 2 "none.txt: no layers in the file" verify --shapes none.txt
check F5 2 "l2.txt:2: unknown key 'zz'" verify --shapes l2.txt
check F6 2 "long.txt:1: line longer than 1024 characters" verify --shapes long.txt
check F7 2 "may hold only letters" verify --shapes name.txt
check F8 2 "layer name 'l\xC3('" verify --shapes utf.txt
check F9 2 "line longer than 1024 characters" verify --shapes /dev/zero
mkfifo endless.fifo idle.fifo   # idle.fifo: no program ever writes it
( yes 'c=4,h=4,w=4,k=4,r=1' > endless.fifo 2>/dev/null & echo $! > yes.pid ) ; bg="$(cat yes.pid)"
check F10 2 ":10001: more than 10000 layers in one file" verify --shapes endless.fifo
kill "$bg" 2>/dev/null || true; bg=""
check F11 2 "idle.fifo: no layers in the file" verify --shapes idle.fifo
# ---- tuning tables (lookup; every reader of tables goes through cp_table_load)
"$CLI" tune "${S[@]}" --shape c=4,h=6,w=6,k=8,r=1 --budget 0.05 --max-seconds 0.005 \
  --max-samples 5 --quiet --out good.json
head -c 500 good.json > trunc.json
$PY - <<'P'
import json, copy
t = json.load(open("good.json"))
def w(name, f):
    d = copy.deepcopy(t); f(d); json.dump(d, open(name, "w"), indent=1)
w("fmt.json", lambda d: d.update(format="x"))
w("ver.json", lambda d: d.update(version=3))
w("miss.json", lambda d: d["entries"][0]["shape"].pop("k"))
w("type.json", lambda d: d["entries"][0]["shape"].update(k="4"))
w("algo.json", lambda d: d["entries"][0]["choice"].update(algo="nope"))
w("dup.json", lambda d: d["entries"].append(d["entries"][0]))
w("dev.json", lambda d: d["device"].update(fingerprint="0123456789abcdef"))
open("top.json", "w").write("[1, 2]")
raw = open("good.json", "rb").read()
open("utf8.json", "wb").write(raw.replace(b'"name": "', b'"name": "\xff', 1))
P
check T1 2 "missing.json: cannot read: No such file or directory" lookup missing.json "${S[@]}"
# a directory is a bundle (convpick/bundle.h): an empty one is refused
check T2 2 "adir: no tables (*.json) in the bundle" lookup adir "${S[@]}"
check T3 2 "empty: empty file" lookup empty "${S[@]}"
check T4 2 "trunc.json:" lookup trunc.json "${S[@]}"
check T5 2 "format: 'x' is not a convpick-tuning-table" lookup fmt.json "${S[@]}"
check T6 2 "version: 3 is not supported (this build reads versions 1 to 2)" lookup ver.json "${S[@]}"
check T7 2 "entries[0].shape.k: missing (expected integer)" lookup miss.json "${S[@]}"
check T8 2 "entries[0].shape.k: expected integer, found a string" lookup type.json "${S[@]}"
check T9 2 "entries[0].choice.algo: unknown algorithm 'nope'" lookup algo.json "${S[@]}"
check T10 2 "same shape, flipped and threads as entries[0]" lookup dup.json "${S[@]}"
check T11 2 "unable to decode byte 0xff" lookup utf8.json "${S[@]}"
check T12 2 "expected a JSON object at the top level" lookup top.json "${S[@]}"
check T13 2 "is not this machine's" lookup dev.json "${S[@]}" --strict-device
check T14 2 "does not start with '{'" lookup /dev/zero "${S[@]}"
check T16 2 "idle.fifo: empty file" lookup idle.fifo "${S[@]}"
truncate -s 3G sparse.json   # 3 GiB that take no space: refused from its size, unread
check T17 2 "3221225472 bytes: larger than the 2147483648 bytes a table may have" lookup sparse.json "${S[@]}"
rm -f sparse.json
# A table appended to while it is read: refused as growing, or (if the reader
# wins the race) as malformed JSON; never a hang or a crash.
cp good.json grow.json
( while :; do cat good.json >> grow.json; done ) & bg=$!
sleep 0.2
rc=0; timeout 20 "$CLI" lookup grow.json "${S[@]}" >/dev/null 2>T15.err || rc=$?
kill "$bg" 2>/dev/null || true; wait "$bg" 2>/dev/null || true; bg=""
if [ "$rc" = 2 ] && grep -qE "grew while being read|end of file expected" T15.err; then echo "ok T15"
else echo "FAIL T15: exit $rc"; cat T15.err; fails=$((fails+1)); fi
rm -f grow.json
# ---- results files (diff reads bench results and tables)
B="$SRC/tests/data/diff_base.bench.json"
$PY - "$B" <<'P'
import json, sys
src = sys.argv[1]
b = json.load(open(src))
b["version"] = 3; json.dump(b, open("dver.json", "w"))
b["version"] = 1; b["format"] = "other"; json.dump(b, open("dfmt.json", "w"))
b["format"] = "convpick-bench-results"; b["results"][0]["threads"] = "one"
json.dump(b, open("dtype.json", "w"))
raw = open(src, "rb").read()
open("dutf.json", "wb").write(raw.replace(b'"layer": "', b'"layer": "\xff', 1))
open("dtrunc.json", "wb").write(raw[:300])
P
check D1 2 "diff: missing.json: cannot read: No such file or directory" diff missing.json "$B"
check D2 2 "diff: adir: cannot read: is a directory" diff adir "$B"
check D3 2 "empty:1:0: malformed JSON" diff empty "$B"
check D4 2 "dtrunc.json:18:1: malformed JSON: ']' expected near end of file" diff dtrunc.json "$B"
check D5 2 "format: \"other\" is neither" diff dfmt.json "$B"
check D6 2 "version 3 is not supported" diff dver.json "$B"
check D7 2 "results[0].threads: expected integer, found a string" diff dtype.json "$B"
check D8 2 "unable to decode byte 0xff" diff dutf.json "$B"
check D9 2 "idle.fifo:1:0: malformed JSON" diff idle.fifo "$B"
check D10 2 "expected two files, BASE and NEW, got 1" diff "$B"
# ---- raw tensor files (run)
$PY - <<'P'
import struct, math
open("x.f32", "wb").write(struct.pack("<36f", *[float(i) for i in range(36)]))
open("xnan.f32", "wb").write(struct.pack("<36f", *([math.nan, math.inf] + [1.0] * 34)))
open("w.f32", "wb").write(struct.pack("<18f", *[0.5] * 18))
open("short.f32", "wb").write(struct.pack("<17f", *[0.5] * 17))
open("b.f32", "wb").write(struct.pack("<3f", 1, 2, 3))
P
R=(run --shape c=1,h=6,w=6,k=2,r=3 --algo direct)
check R1 2 "input file missing.f32: cannot open" "${R[@]}" --input missing.f32 --weights w.f32 --output y.f32
check R2 2 "size is 68 bytes, expected 72 bytes" "${R[@]}" --input x.f32 --weights short.f32 --output y.f32
check R3 2 "input file adir: not a regular file" "${R[@]}" --input adir --weights w.f32 --output y.f32
check R4 2 "input file idle.fifo: not a regular file" "${R[@]}" --input idle.fifo --weights w.f32 --output y.f32
check R5 2 "bias file b.f32: size is 12 bytes, expected 8 bytes" "${R[@]}" --input x.f32 --weights w.f32 --bias b.f32 --output y.f32
check R6 0 "holds 1 NaN and 1 infinite values of 36" "${R[@]}" --input xnan.f32 --weights w.f32 --output y.f32
# The NaN and Inf reach the output (read by Python, an outside reader).
$PY -c "
import struct, math, sys
y = struct.unpack('<32f', open('y.f32', 'rb').read())
sys.exit(0 if any(math.isnan(v) for v in y) and any(math.isinf(v) for v in y) else 1)" \
  && echo "ok R6 output" || { echo "FAIL R6: NaN/Inf did not reach the output"; fails=$((fails+1)); }
check R7 1 "was left as it was" "${R[@]}" --input x.f32 --weights w.f32 --output /nonexistent/y.f32
check R8 1 "adir: cannot rename the temporary file into place: Is a directory" "${R[@]}" --input x.f32 --weights w.f32 --output adir
# ---- options
check O1 2 "convpick verify: unknown option '--bogus'" verify --bogus
check O2 2 "convpick verify: --shape: missing value" verify --shape
check O3 2 "unknown suite 'nope'" verify --suite nope
check O4 2 "unknown algorithm 'nope'" verify --algo nope "${S[@]}"
check O5 2 "convpick verify: --flip: 'both2' is not no, yes or both" verify --flip both2 "${S[@]}"
check O6 2 "no layers selected" verify
check O7 2 "unknown command 'nosuchcmd'" nosuchcmd
check O8 2 "tune: good.json exists: use --resume" tune "${S[@]}" --out good.json
check O9 2 "tune: --out adir/ is a directory" tune "${S[@]}" --out adir/ --force
check O10 2 "directory /nonexistent is not writable" tune "${S[@]}" --out /nonexistent/t.json
check O11 2 "convpick tune: --budget: 'abc' is not a number of seconds >= 0" tune "${S[@]}" --budget abc --out z.json
check O12 2 "convpick tune: --threads: 0 is outside" tune "${S[@]}" --threads 0 --out z.json
check O13 2 "premature end of input" tune "${S[@]}" --out trunc.json --resume
check O14 2 "cannot resume it here" tune "${S[@]}" --out dev.json --resume
check O15 2 "convpick bench: --threads: 'x' in 'x' is not a count" bench "${S[@]}" --threads x --no-roofs
# ---- the memory budget (--max-memory), on all four commands
# Worked by hand: input 64*224*224 + weights 64*64*9 + bias 64 + output 64*222*222
# floats = 25609472 bytes; the reference is 2 doubles per output = 50466816 bytes.
# The plan part depends on the algorithms' workspaces and is not pinned here.
check M1 2 "(tensors 25609472, reference 50466816, plan" verify --shape c=64,h=224,w=224,k=64,r=3 --max-memory 10M
check M2 2 "more than the memory budget of 1048576 bytes" tune --shape c=64,h=224,w=224,k=64,r=3 --max-memory 1M --out m.json
check M3 2 "more than the memory budget of 1048576 bytes" bench --shape c=64,h=224,w=224,k=64,r=3 --max-memory 1M --no-roofs
check M4 2 "the layer needs 424 bytes" "${R[@]}" --input x.f32 --weights w.f32 --output y.f32 --max-memory 100
check M5 2 "convpick run: --max-memory: '0': must be more than 0 bytes" "${R[@]}" --input x.f32 --weights w.f32 --output y.f32 --max-memory 0
check M6 2 "a percentage must be 1..100" verify "${S[@]}" --max-memory 101%
check M7 2 "expected BYTES (suffix K, M or G) or PERCENT%" verify "${S[@]}" --max-memory 12x
# The default budget (half of memory) refuses a layer of ~34 TB at once.
check M8 2 "more than the memory budget of" verify --shape n=1000,c=2000,h=2000,w=2000,k=64,r=3
[ -e m.json ] && { echo "FAIL M2: a refused tune wrote a table"; fails=$((fails+1)); }
if [ "$fails" != 0 ]; then echo "cli_bad_input: $fails check(s) failed"; exit 1; fi
echo "cli_bad_input: all checks passed"
