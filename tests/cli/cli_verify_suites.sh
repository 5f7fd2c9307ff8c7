#!/usr/bin/env bash
# Every algorithm in both orientations (--flip no and yes) passes verify on every built-in suite
# (ResNet-50, VGG-16, MobileNet v1, demo).  The fp64 oracle on VGG-16 takes a
# few minutes, so sanitizer builds (ten times slower) run only the demo suite.
set -euo pipefail
CLI="$1"
suites="demo resnet50 mobilenet_v1 vgg16"
# (grep without -q: an early exit would SIGPIPE nm and fail the pipeline under pipefail)
if nm "$CLI" 2>/dev/null | grep __asan_init >/dev/null; then
  echo "sanitizer build: only the demo suite (the others run in the Release build)"
  suites="demo"
fi
all=""
for s in $suites; do
  out="$("$CLI" verify --suite "$s")" || { echo "$out" | grep -E "FAIL" | head -20; echo "FAIL: verify --suite $s"; exit 1; }
  echo "$s: $(echo "$out" | tail -1)"
  all+="$out"$'\n'
done
# Each registered algorithm must have passed somewhere: a run where one never
# ran proves nothing about it.  (Not every algorithm applies to every suite:
# MobileNet v1 has no 3x3 stride-1 layer with groups = 1 for Winograd.)
for a in $("$CLI" algos | awk 'NR>1 && /^[a-z0-9_]+ /{print $1}' | sort -u); do
  n=$(grep -Ec "^[^ ]+ +(no|yes) +$a +.*PASS" <<<"$all" || true)
  [ "$n" -gt 0 ] || { echo "FAIL: $a never ran on: $suites"; exit 1; }
  echo "  $a: $n passing checks"
done
echo "cli_verify_suites: all checks passed"
