#!/usr/bin/env bash
# tools/revision_plugin/ as scripts/ci-speed-check --ab builds each side: the
# standalone CMake project against this build's libconvpick.a, loaded as a
# plugin; every built-in algorithm comes back as PREFIX_X with the same
# parameters, and verify runs one of them against the oracle (the reference
# is the library's fp64 oracle, checked against SciPy elsewhere).  A bad
# prefix and a tree without plugin.h are refused at configure time.
set -euo pipefail
CLI="$1"; SRC="$2"
LIB="$(dirname "$CLI")/libconvpick.a"
# The sanitizer build's library needs the sanitizer runtime, which a module
# linked with --no-undefined cannot leave to the host.
[ -z "${CP_SANITIZE_BUILD:-}" ] || { echo "cli_revision_plugin: SKIP: sanitizer build"; exit 77; }
[ -f "$LIB" ] || { echo "cli_revision_plugin: SKIP: $LIB not built"; exit 77; }
command -v cmake >/dev/null || { echo "cli_revision_plugin: SKIP: no cmake"; exit 77; }
tmp="$(mktemp -d)"; trap 'rm -rf "$tmp"' EXIT
fail() { echo "FAIL: $*"; exit 1; }

cmake -S "$SRC/tools/revision_plugin" -B "$tmp/rp" -DCMAKE_BUILD_TYPE=Release -DCP_REV_PREFIX=old \
  -DCP_REV_SOURCE="$SRC" -DCP_REV_LIBRARY="$LIB" >"$tmp/log" 2>&1 || { cat "$tmp/log"; fail "configure"; }
cmake --build "$tmp/rp" >>"$tmp/log" 2>&1 || { cat "$tmp/log"; fail "build"; }
so="$tmp/rp/convpick_rev_old.so"
[ -f "$so" ] || fail "no $so"
# only the entry point is exported
exported="$(nm -D --defined-only "$so" | awk '{print $3}' | grep -v '^_' | sort | tr '\n' ' ')"
[ "$exported" = "convpick_plugin_entry " ] || fail "exported symbols: $exported"
"$CLI" algos >"$tmp/plain.txt"
"$CLI" algos --plugin "$so" >"$tmp/with.txt"
builtins="$(awk '/^[a-z0-9_]+ +[0-9.e+-]+ +/ {print $1}' "$tmp/plain.txt")"
[ -n "$builtins" ] || fail "no built-in algorithm listed"
for a in $builtins; do
  grep -qE "^old_$a +" "$tmp/with.txt" || fail "old_$a missing from the plugin's algorithms"
done
"$CLI" verify --plugin "$so" --algo old_blocked --shape n=1,c=5,h=9,w=7,k=6,r=3,pad=1 >"$tmp/v.txt" 2>&1 \
  || { cat "$tmp/v.txt"; fail "verify old_blocked"; }
grep -qE "old_blocked" "$tmp/v.txt" || { cat "$tmp/v.txt"; fail "verify did not run old_blocked"; }

set +e
cmake -S "$SRC/tools/revision_plugin" -B "$tmp/bad1" -DCP_REV_PREFIX=Old -DCP_REV_SOURCE="$SRC" \
  -DCP_REV_LIBRARY="$LIB" >"$tmp/log" 2>&1; rc=$?
set -e
[ "$rc" != 0 ] && grep -q "CP_REV_PREFIX='Old': expected" "$tmp/log" || fail "prefix Old accepted"
set +e
cmake -S "$SRC/tools/revision_plugin" -B "$tmp/bad2" -DCP_REV_SOURCE="$tmp" \
  -DCP_REV_LIBRARY="$LIB" >"$tmp/log" 2>&1; rc=$?
set -e
[ "$rc" != 0 ] && grep -q "no include/convpick/plugin.h there" "$tmp/log" || fail "a tree without plugin.h accepted"
echo "cli_revision_plugin: all checks passed"
