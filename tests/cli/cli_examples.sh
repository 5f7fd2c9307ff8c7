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
echo "cli_examples: $checked dispatches agree with show_table.py; all checks passed"
