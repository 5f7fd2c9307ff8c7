#!/usr/bin/env bash
# The command line's main paths under valgrind (memcheck, an outside memory
# checker): no invalid access, no definite leak.  verify on small shapes (every
# algorithm), tune on the demo suite with a tiny budget, lookup on the table
# tune wrote, run on raw files.  Skipped (exit 77, with the reason) when the
# binary is built with AddressSanitizer (the Sanitize build: ASan and valgrind
# do not mix) or valgrind is missing.
set -euo pipefail
CLI="$1"; SRC="$2"
if [ -n "${CP_SANITIZE_BUILD:-}" ] || nm "$CLI" 2>/dev/null | grep -q __asan_init ||
   ldd "$CLI" 2>/dev/null | grep -q libasan; then
  echo "cli_valgrind: SKIP: $CLI is built with AddressSanitizer, which valgrind cannot run"
  exit 77
fi
command -v valgrind >/dev/null || { echo "cli_valgrind: SKIP: valgrind not installed"; exit 77; }
tmp="$(mktemp -d)"; trap 'rm -rf "$tmp"' EXIT
export OPENBLAS_NUM_THREADS=1
vg() {
  local name="$1"; shift
  if ! valgrind -q --error-exitcode=99 --leak-check=full --errors-for-leak-kinds=definite \
       --log-file="$tmp/$name.vg" "$CLI" "$@" >"$tmp/$name.out" 2>"$tmp/$name.err"; then
    local rc=$?
    echo "FAIL: convpick $* under valgrind: exit $rc"; cat "$tmp/$name.vg" "$tmp/$name.err"; exit 1
  fi
  # -q prints only errors; any line is a finding.
  if grep -q . "$tmp/$name.vg"; then echo "FAIL: valgrind reported on convpick $*"; cat "$tmp/$name.vg"; exit 1; fi
  echo "ok: convpick $*"
}
vg verify verify --shape c=4,h=8,w=8,k=4,r=3,pad=1 --shape c=3,h=6,w=6,k=8,r=1 \
   --shape c=4,h=7,w=7,k=4,r=3,groups=4
vg tune tune --suite demo --algo im2col_gemm,winograd_2x2_3x3,blocked --budget 0.01 \
   --max-seconds 0.002 --max-samples 3 --max-candidates 1 --quiet --out "$tmp/t.json"
vg lookup lookup "$tmp/t.json" --shape c=16,h=48,w=48,k=32,r=3,pad=1
vg lookup-near lookup "$tmp/t.json" --shape c=16,h=40,w=40,k=32,r=3,pad=1 --json
# diff of two tables and of two bench results files (the committed fixtures).
vg diff-tables diff "$tmp/t.json" "$tmp/t.json"
vg diff-bench diff "$SRC/tests/data/diff_base.bench.json" "$SRC/tests/data/diff_base.bench.json"
/usr/bin/python3 - "$tmp" <<'P'
import struct, sys
d = sys.argv[1]
open(d + "/x.f32", "wb").write(struct.pack("<36f", *[float(i % 7) for i in range(36)]))
open(d + "/w.f32", "wb").write(struct.pack("<18f", *[0.5] * 18))
P
vg run run --shape c=1,h=6,w=6,k=2,r=3 --algo im2col_gemm --input "$tmp/x.f32" \
   --weights "$tmp/w.f32" --output "$tmp/y.f32"
# Bad input takes the error paths: they must free too.
if valgrind -q --error-exitcode=99 --leak-check=full --errors-for-leak-kinds=definite \
     --log-file="$tmp/bad.vg" "$CLI" lookup "$tmp/x.f32" --shape c=1,h=6,w=6,k=2,r=3 >/dev/null 2>&1; then
  echo "FAIL: lookup on a non-table should fail"; exit 1
fi
if grep -q . "$tmp/bad.vg"; then echo "FAIL: valgrind reported on a refused table"; cat "$tmp/bad.vg"; exit 1; fi
echo "ok: lookup on a non-table (error path)"
# Plugins (tests/plugins/): loading and an isolated checking run, a refusal
# (its dlclose path), and load/unload cycles through the library alone
# (tests/lib/test_plugins.c).
P="$(cd "$(dirname "$CLI")" && pwd)/tests/plugins"
vg plugins verify --shape c=4,h=8,w=8,k=4,r=3,pad=1 --plugin "$P/cptp_good.so" --algo tp_loops,direct \
   --isolate
if valgrind -q --error-exitcode=99 --leak-check=full --errors-for-leak-kinds=definite \
     --log-file="$tmp/refused.vg" "$CLI" algos --plugin "$P/cptp_clash.so" >/dev/null 2>&1; then
  echo "FAIL: a clashing plugin should be refused"; exit 1
fi
if grep -q . "$tmp/refused.vg"; then echo "FAIL: valgrind reported on a refused plugin"; cat "$tmp/refused.vg"; exit 1; fi
valgrind -q --error-exitcode=99 --leak-check=full --errors-for-leak-kinds=definite \
  --log-file="$tmp/libplug.vg" "$(dirname "$CLI")/tests/test_plugins" >/dev/null 2>&1 ||
  { echo "FAIL: test_plugins under valgrind"; cat "$tmp/libplug.vg"; exit 1; }
if grep -q . "$tmp/libplug.vg"; then echo "FAIL: valgrind reported on test_plugins"; cat "$tmp/libplug.vg"; exit 1; fi
echo "ok: plugins (a refusal, load/unload cycles)"
echo "cli_valgrind: all checks passed"
