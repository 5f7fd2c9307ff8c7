#!/usr/bin/env bash
# The examples against an installed convpick: `cmake --install` into a
# temporary prefix, build examples/c with find_package(convpick CONFIG) and
# again with the pkg-config line of its header comment, run it on every entry
# of two tables (the committed fixture and one fresh from the writer), and
# check that it dispatches to the choice the Python example prints.
set -euo pipefail
CLI="$1"; SRC="$2"
PY=/usr/bin/python3
BUILD="$(cd "$(dirname "$CLI")" && pwd)"
tmp="$(mktemp -d)"; trap 'rm -rf "$tmp"' EXIT
prefix="$tmp/prefix"

cmake --install "$BUILD" --prefix "$prefix" >/dev/null
[ -f "$prefix/include/convpick/table.h" ] || { echo "FAIL: headers not installed"; exit 1; }
cfg=$(find "$prefix" -name convpickConfig.cmake | head -1)
[ -n "$cfg" ] || { echo "FAIL: convpickConfig.cmake not installed"; exit 1; }
pc=$(find "$prefix" -name convpick.pc | head -1)
[ -n "$pc" ] || { echo "FAIL: convpick.pc not installed"; exit 1; }

# A sanitizer build's library needs the sanitizer runtime in the example too.
extra=()
if grep -q '^CMAKE_BUILD_TYPE:STRING=Sanitize' "$BUILD/CMakeCache.txt"; then
  extra=(-DCMAKE_C_FLAGS="-fsanitize=address,undefined" -DCMAKE_EXE_LINKER_FLAGS="-fsanitize=address,undefined")
  san="-fsanitize=address,undefined"
else
  san=""
fi
cmake -S "$SRC/examples/c" -B "$tmp/ex" -DCMAKE_PREFIX_PATH="$prefix" "${extra[@]}" >/dev/null
cmake --build "$tmp/ex" >/dev/null
[ -x "$tmp/ex/dispatch" ] || { echo "FAIL: the cmake build of examples/c made no binary"; exit 1; }

# The pkg-config build line of the example's comment.
export PKG_CONFIG_PATH="$(dirname "$pc")"
cc -std=c17 $san "$SRC/examples/c/dispatch.c" -o "$tmp/dispatch_pc" $(pkg-config --cflags --libs convpick)
libdir="$(pkg-config --variable=libdir convpick)"

"$BUILD/tests/test_table" --write-sample "$tmp/fresh.table.json"
# And a real one: convpick tune on the demo suite (tiny budget).
"$CLI" tune --suite demo --budget 0.2 --max-seconds 0.05 --quiet --out "$tmp/demo.table.json"

checked=0
for table in "$SRC/tests/data/tiny.table.json" "$tmp/fresh.table.json" "$tmp/demo.table.json"; do
  "$PY" "$SRC/examples/python/show_table.py" "$table" --choices > "$tmp/py.txt"
  [ -s "$tmp/py.txt" ] || { echo "FAIL: show_table.py printed nothing for $table"; exit 1; }
  # name  "n,c,h,w,k,r,s,stride,pad"  flip  threads, for each entry
  "$PY" -c '
import json, sys
for e in json.load(open(sys.argv[1]))["entries"]:
    s = e["shape"]
    keys = "n c h w k r s stride_h stride_w pad_top pad_left pad_bottom pad_right dilation_h dilation_w groups"
    # the table says "flipped": true|false; the example takes the flip word no|yes
    print(e["name"], ",".join(str(s[k]) for k in keys.split()), "yes" if e["flipped"] else "no", e["threads"])
' "$table" > "$tmp/layers.txt"
  while read -r name spec flip threads; do
    want="$(awk -v n="$name" '$1 == n { print $2, $3 }' "$tmp/py.txt")"
    for bin in "$tmp/ex/dispatch" "$tmp/dispatch_pc"; do
      out="$(LD_LIBRARY_PATH="$libdir" "$bin" "$table" "$spec" "$flip" "$threads")" ||
        { echo "FAIL: $bin on $name of $table"; exit 1; }
      got="$(sed -n 's/^choice: \([^ ]*\) \([^ ]*\) \([^ ]*\)$/\1 \2 \3/p' <<<"$out")"
      [ "$got" = "$want exact" ] ||
        { echo "FAIL: $name of $table: C example chose '$got', Python example shows '$want' (exact)"; echo "$out"; exit 1; }
      grep -Eq '^checksum: -?[0-9]\.[0-9]+e[-+][0-9]+$' <<<"$out" || { echo "FAIL: no checksum: $out"; exit 1; }
      checked=$((checked + 1))
    done
  done < "$tmp/layers.txt"
done
[ "$checked" -ge 20 ] || { echo "FAIL: only $checked runs checked"; exit 1; }

# Both builds compute the same layer identically (same library, same data).
a="$(LD_LIBRARY_PATH="$libdir" "$tmp/ex/dispatch" "$SRC/tests/data/tiny.table.json" 1,3,16,16,8,3,3,1,1 | grep checksum)"
b="$(LD_LIBRARY_PATH="$libdir" "$tmp/dispatch_pc" "$SRC/tests/data/tiny.table.json" 1,3,16,16,8,3,3,1,1 | grep checksum)"
[ "$a" = "$b" ] || { echo "FAIL: checksums differ: $a / $b"; exit 1; }
# A layer no entry is compatible with (1x1 kernel) runs the documented default.
d="$(LD_LIBRARY_PATH="$libdir" "$tmp/ex/dispatch" "$SRC/tests/data/tiny.table.json" 1,16,8,8,8,1,1,1,0)"
grep -q '^choice: im2col_gemm .* default$' <<<"$d" || { echo "FAIL: default dispatch: $d"; exit 1; }
# A bad table is refused with the loader's message and exit 2.
set +e
LD_LIBRARY_PATH="$libdir" "$tmp/ex/dispatch" "$tmp" 1,3,16,16,8,3,3,1,1 2>"$tmp/err"; rc=$?
set -e
[ "$rc" = 2 ] && grep -q "is a directory" "$tmp/err" || { echo "FAIL: bad table: rc=$rc $(cat "$tmp/err")"; exit 1; }

# --- The example plugin (examples/plugin), built against the installed package
# through pkg-config (its CMakeLists and its one-line build), verified, tuned
# with, named by the table, and dispatched through by the installed library.
cmake -S "$SRC/examples/plugin" -B "$tmp/plug" >/dev/null
cmake --build "$tmp/plug" >/dev/null
PLUG="$tmp/plug/pointwise.so"
[ -f "$PLUG" ] || { echo "FAIL: the cmake build of examples/plugin made no pointwise.so"; exit 1; }
cc -std=c17 -O2 -shared -fPIC $(pkg-config --cflags convpick) "$SRC/examples/plugin/pointwise.c" -o "$tmp/pointwise_pc.so"
grep -q '^pointwise_rows ' <<<"$("$CLI" algos --plugin "$tmp/pointwise_pc.so")" || { echo "FAIL: the pkg-config build of the plugin does not load"; exit 1; }
PW1="n=1,c=32,h=14,w=14,k=48,r=1,s=1"
PW2="n=2,c=8,h=5,w=9,k=12,r=1,s=1"
v="$("$CLI" verify --plugin "$PLUG" --algo pointwise_rows --shape "$PW1" --shape "$PW2" --isolate)" ||
  { echo "FAIL: verify of the example plugin: $v"; exit 1; }
grep -q '^verify: 4 passed, 0 failed, 0 not applicable$' <<<"$v" || { echo "FAIL: verify: $v"; exit 1; }
# tune includes it beside a built-in (the race may pick either) ...
"$CLI" tune --plugin "$PLUG" --algo pointwise_rows,im2col_gemm --shape "$PW1" --budget 0.3 \
  --max-seconds 0.05 --quiet --out "$tmp/mixed.table.json"
"$PY" -c 'import json,sys; c=[x["algo"] for x in json.load(open(sys.argv[1]))["entries"][0]["candidates"] if x["status"]=="ok"]; sys.exit("pointwise_rows" not in c)' \
  "$tmp/mixed.table.json" || { echo "FAIL: tune did not race pointwise_rows"; exit 1; }
# ... and a table chosen from it names the plugin and its file's FNV-1a 64
# (draft-eastlake-fnv, recomputed here in Python).
"$CLI" tune --plugin "$PLUG" --algo pointwise_rows --shape "$PW1" --budget 0.2 --max-seconds 0.05 \
  --quiet --out "$tmp/plugin.table.json"
"$PY" - "$tmp/plugin.table.json" "$PLUG" <<'PY' || { echo "FAIL: the table does not name the example plugin"; exit 1; }
import json, sys
h = 0xcbf29ce484222325
for b in open(sys.argv[2], "rb").read():
    h = ((h ^ b) * 0x100000001b3) & 0xffffffffffffffff
c = json.load(open(sys.argv[1]))["entries"][0]["choice"]
sys.exit(not (c["algo"] == "pointwise_rows" and c["plugin"] == {"name": "pointwise_example", "hash": "%016x" % h}))
PY
grep -q '^algorithm: pointwise_rows$' <<<"$("$CLI" lookup "$tmp/plugin.table.json" --shape "$PW1" --plugin "$PLUG")" ||
  { echo "FAIL: lookup through the plugin"; exit 1; }
# The installed library: the C example loads the plugin and dispatches.
o="$(LD_LIBRARY_PATH="$libdir" "$tmp/dispatch_pc" --plugin "$PLUG" "$tmp/plugin.table.json" 1,32,14,14,48,1,1,1,0)" ||
  { echo "FAIL: dispatch through the plugin: $o"; exit 1; }
grep -q '^choice: pointwise_rows hw_block=[0-9]* exact$' <<<"$o" || { echo "FAIL: dispatch chose: $o"; exit 1; }
grep -Eq '^checksum: -?[0-9]\.[0-9]+e[-+][0-9]+$' <<<"$o" || { echo "FAIL: no checksum: $o"; exit 1; }
# Without the plugin (or with another build of it) the table is refused, exit 2.
set +e
LD_LIBRARY_PATH="$libdir" "$tmp/dispatch_pc" "$tmp/plugin.table.json" 1,32,14,14,48,1,1,1,0 2>"$tmp/err"; rc=$?
LD_LIBRARY_PATH="$libdir" "$tmp/dispatch_pc" --plugin "$tmp/pointwise_pc.so" "$tmp/plugin.table.json" 1,32,14,14,48,1,1,1,0 2>"$tmp/err2"; rc2=$?
set -e
[ "$rc" = 2 ] && grep -q "comes from plugin 'pointwise_example' (hash [0-9a-f]*), which is not loaded" "$tmp/err" ||
  { echo "FAIL: dispatch without the plugin: rc=$rc $(cat "$tmp/err")"; exit 1; }
if ! cmp -s "$PLUG" "$tmp/pointwise_pc.so"; then
  [ "$rc2" = 2 ] && grep -q "but the loaded one is plugin 'pointwise_example' hash" "$tmp/err2" ||
    { echo "FAIL: dispatch with another build: rc=$rc2 $(cat "$tmp/err2")"; exit 1; }
fi
echo "cli_examples: $checked dispatches agree with show_table.py; the example plugin verified, tuned, dispatched; all checks passed"
