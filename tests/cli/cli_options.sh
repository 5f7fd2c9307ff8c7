#!/usr/bin/env bash
# The command line's one convention, checked in every command (harness/cli/options.h):
# an unknown option, a missing value or a bad value of a shared option prints
# exactly one line on stderr, "convpick CMD: ..." naming the command and the
# option, nothing on stdout, and exits 2; every --help is laid out the same way.
# Source of the expectations: the convention as written in options.h and
# docs/bad-input.md (ours; common practice for command lines, no outside source).
set -euo pipefail
CLI="$(cd "$(dirname "$1")" && pwd)/$(basename "$1")"
tmp="$(mktemp -d)"
trap 'rm -rf "$tmp"' EXIT
cd "$tmp"
fails=0
checked=0
S=c=4,h=8,w=8,k=4,r=3,pad=1

# one_line WANT_LINE CMD ARGS...: exit 2, stdout empty, stderr exactly WANT_LINE.
one_line() {
  local want="$1"; shift
  local rc=0
  "$CLI" "$@" >out 2>err </dev/null || rc=$?
  checked=$((checked+1))
  if [ "$rc" != 2 ]; then echo "FAIL: convpick $*: exit $rc, want 2"; fails=$((fails+1)); return; fi
  if [ -s out ]; then echo "FAIL: convpick $*: wrote to stdout:"; cat out; fails=$((fails+1)); return; fi
  if [ "$(wc -l <err)" != 1 ]; then echo "FAIL: convpick $*: want one stderr line, got:"; cat err
    fails=$((fails+1)); return; fi
  if [ "$(cat err)" != "$want" ]; then echo "FAIL: convpick $*: got '$(cat err)', want '$want'"
    fails=$((fails+1)); return; fi
}

# A value-taking option of each command, for the missing-value check.
declare -A valued=([verify]=--shape [run]=--shape [algos]="" [probe]=--seconds [bench]=--shape
                   [tune]=--shape [lookup]=--shape [cache]=--shape [diff]=--alpha
                   [model]=--output [show]="" [report]=--out [gather]=--out)
for cmd in verify run algos probe bench tune lookup cache diff model show report gather; do
  one_line "convpick $cmd: unknown option '--frob'" "$cmd" --frob
  one_line "convpick $cmd: unknown option '--frob'" "$cmd" --frob=3
  one_line "convpick $cmd: unknown option '-q'" "$cmd" -q
  if [ -n "${valued[$cmd]}" ]; then
    one_line "convpick $cmd: ${valued[$cmd]}: missing value" "$cmd" "${valued[$cmd]}"
  fi
  # --help: the same layout everywhere (usage line first, options, -h, exit status).
  "$CLI" "$cmd" --help >help 2>err
  checked=$((checked+1))
  head -1 help | grep -q "^usage: convpick $cmd " || { echo "FAIL: $cmd --help: first line"; fails=$((fails+1)); }
  for want in '^options:$' '^  -h, --help          this text$' '^exit status: 0 '; do
    grep -qE -- "$want" help || { echo "FAIL: $cmd --help lacks /$want/"; fails=$((fails+1)); }
  done
  [ ! -s err ] || { echo "FAIL: $cmd --help wrote to stderr"; fails=$((fails+1)); }
  # Every option states its default or that it is required (the layer
  # options --shape, --shapes, --suite, --onnx: "give at least one" above them).
  awk '
    function check() { if (opt != "" && opt !~ /^(-h,|--shape|--shapes|--suite|--onnx)$/ && txt !~ /default|required/) print opt }
    /^  -/ { check(); opt = $1; txt = $0; next }
    /^                      / { txt = txt $0; next }
    { check(); opt = "" }
    END { check() }' help > nodefault
  [ ! -s nodefault ] || { echo "FAIL: $cmd --help: no default stated for $(tr '\n' ' ' < nodefault)"; fails=$((fails+1)); }
done

# The shared options, one bad value each, in every command that takes them.
for cmd in verify bench tune cache; do
  one_line "convpick $cmd: --seed: 'x' is not an integer in [0, 2^64)" "$cmd" --shape $S --seed x
  one_line "convpick $cmd: --algo: unknown algorithm 'nope' (known: $("$CLI" algos | awk 'NR>1 && /^[a-z]/ {printf "%s%s", s, $1; s=", "}'))" \
    "$cmd" --shape $S --algo nope
  help_text="$("$CLI" "$cmd" --help)"; grep -q '^shape selection' <<<"$help_text" || { echo "FAIL: $cmd --help: no shape selection block"; fails=$((fails+1)); }
done
for cmd in verify run bench tune lookup; do
  case $cmd in
    verify|bench|tune) want="no, yes or both" ;;
    *) want="no or yes" ;;
  esac
  one_line "convpick $cmd: --flip: 'conv' is not $want" "$cmd" --shape $S --flip conv
  # The help states the default orientation.
  grep -A3 -- '--flip F' <<<"$("$CLI" "$cmd" --help)" | grep -q '(default: [a-z]*)' ||
    { echo "FAIL: $cmd --help does not state the default --flip"; fails=$((fails+1)); }
done
for cmd in verify run bench tune; do
  one_line "convpick $cmd: --max-memory: '12x': expected BYTES (suffix K, M or G) or PERCENT%" \
    "$cmd" --shape $S --max-memory 12x
done
for cmd in bench tune; do
  one_line "convpick $cmd: --threads: 'x' in 'x' is not a count, a range a-b or 'all'" \
    "$cmd" --shape $S --threads x --out t.json
  one_line "convpick $cmd: --max-seconds: '-1' is not a number of seconds > 0" \
    "$cmd" --shape $S --max-seconds -1 --out t.json
done
# --out is tune's only: bench must refuse it as unknown, after the line above
# used it only behind an earlier bad value.
one_line "convpick bench: unknown option '--out'" bench --shape $S --out t.json
# An ambiguous prefix names the options it could be (getopt_long accepts any
# unambiguous prefix, so "--max" alone is neither; common practice, no source).
one_line "convpick tune: ambiguous option '--max-s' (--max-seconds, --max-samples)" tune --shape $S --max-s 1
one_line "convpick bench: --cold: takes no value" bench --shape $S --cold=1
# The old name of --flip is gone.
one_line "convpick verify: unknown option '--mode'" verify --shape $S --mode xcorr
[ ! -e t.json ] || { echo "FAIL: a refused command wrote t.json"; fails=$((fails+1)); }

echo "cli_options: $checked checks, $fails failed"
[ "$fails" = 0 ]
