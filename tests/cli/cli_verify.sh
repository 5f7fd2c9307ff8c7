#!/usr/bin/env bash
# The command line of verify, run and algos: exit codes, one-line errors, and
# a `run` round trip checked against SciPy (scipy.signal.correlate2d /
# convolve2d, Debian python3-scipy), which shares nothing with the oracle.
# Usage: bash cli_verify.sh CLI SRCDIR
set -euo pipefail

CLI=$1
PY=/usr/bin/python3
T=$(mktemp -d /tmp/convpick_cli_verify.XXXXXX)
trap 'rm -rf "$T"' EXIT

# shellcheck source=tests/cli/expect_lib.sh
. "$(dirname "$0")/expect_lib.sh"

# --- verify on the demo suite passes --------------------------------------
expect 0 "stdout:verify: " -- "$CLI" verify --suite demo
grep -qE '^verify: [1-9][0-9]* passed, 0 failed, [0-9]+ not applicable$' "$T/out" ||
    die "verify --suite demo summary: $(tail -1 "$T/out")"
grep -q 'FAIL' "$T/out" && die "verify --suite demo printed a FAIL"

# --- help and usage errors --------------------------------------------------
for cmd in verify run algos; do
    expect 0 "stdout:usage: convpick $cmd" -- "$CLI" "$cmd" --help
    expect 2 "convpick $cmd: unknown option '--no-such-option'" -- "$CLI" "$cmd" --no-such-option
done
expect 0 "stdout:direct" -- "$CLI" algos
expect 2 "convpick verify: --flip: 'fft' is not no, yes or both" -- "$CLI" verify --suite demo --flip fft
expect 2 "unknown algorithm 'nosuch'" -- "$CLI" verify --suite demo --algo direct,nosuch
expect 2 "unknown suite 'alexnet'" -- "$CLI" verify --suite alexnet
expect 2 "--seed" -- "$CLI" verify --suite demo --seed -3
expect 2 "no layers selected" -- "$CLI" verify
expect 2 "convpick verify: --shape: missing value" -- "$CLI" verify --shape

# --- every invalid-shape class through --shape ------------------------------
S=c=3,h=8,w=8,k=4
expect 2 "c=0: must be at least 1" -- "$CLI" verify --shape c=0,h=8,w=8,k=4,r=3
expect 2 "pad_top=-1: padding cannot be negative" -- "$CLI" verify --shape $S,r=3,pad_top=-1
expect 2 "c=3 is not divisible by groups=2" -- "$CLI" verify --shape $S,r=3,groups=2
expect 2 "output height is 0" -- "$CLI" verify --shape c=3,h=2,w=8,k=4,r=5
expect 2 "pad_right=3 is larger than dilation*(kernel-1)=2" -- "$CLI" verify --shape $S,r=3,pad_right=3
expect 2 "overflows size_t" -- "$CLI" verify \
    --shape n=2147483647,c=2147483647,h=2147483647,w=2147483647,k=1,r=1
# ... and the parser's own errors, each naming the key.
expect 2 "unknown key 'depth'" -- "$CLI" verify --shape $S,r=3,depth=2
expect 2 "r3: missing '='" -- "$CLI" verify --shape $S,r3
expect 2 "k=four: not a number" -- "$CLI" verify --shape c=3,h=8,w=8,k=four,r=3
expect 2 "h=8px: trailing characters" -- "$CLI" verify --shape c=3,h=8px,w=8,k=4,r=3
expect 2 "k: key given twice" -- "$CLI" verify --shape $S,k=5,r=3
expect 2 "w=9999999999: out of range" -- "$CLI" verify --shape c=3,h=8,w=9999999999,k=4,r=3
expect 2 "missing required key 'r'" -- "$CLI" verify --shape $S

# --- a shape file with an error names FILE:LINE -------------------------------
printf '# layers\nok: c=3,h=8,w=8,k=4,r=3\n\nbad: c=3,h=8,w=8,k=4,r=3,stide=2\n' >"$T/s.txt"
expect 2 "$T/s.txt:4: unknown key 'stide'" -- "$CLI" verify --shapes "$T/s.txt"
printf 'a: c=3,h=8,w=8,k=4,r=3\nb: c=3,h=8,w=8,k=4,r=3\n' >"$T/dup.txt"
expect 0 "stdout:x2" -- "$CLI" verify --shapes "$T/dup.txt" --algo direct --flip no
grep -q '^verify: 1 passed, 0 failed, 0 not applicable$' "$T/out" || die "duplicate shape verified twice"

# --- run: round trip against SciPy ------------------------------------------
# gen SHAPE-ARGS: writes x.f32, w.f32, b.f32 and the expected outputs
# ref_xcorr.f32, ref_conv.f32 computed with scipy.signal on padded planes.
gen() {
    "$PY" - "$T" "$@" <<'EOF'
import sys
import numpy as np
from scipy import signal
d = sys.argv[1]
n, c, h, w, k, r, s, sh, sw, pt, pl, pb, pr, g = map(int, sys.argv[2:])
rng = np.random.default_rng(7)
x = rng.uniform(-1, 1, (n, c, h, w)).astype('<f4')
wt = rng.uniform(-1, 1, (k, c // g, r, s)).astype('<f4')
b = rng.uniform(-1, 1, k).astype('<f4')
x.tofile(d + '/x.f32'); wt.tofile(d + '/w.f32'); b.tofile(d + '/b.f32')
xp = np.pad(x.astype(np.float64), ((0, 0), (0, 0), (pt, pb), (pl, pr)))
for mode, fn in (('xcorr', signal.correlate2d), ('conv', signal.convolve2d)):
    ys = []
    for ni in range(n):
        planes = []
        for ki in range(k):
            gi = ki // (k // g)
            acc = sum(fn(xp[ni, gi * (c // g) + ci], wt[ki, ci].astype(np.float64), mode='valid')
                      for ci in range(c // g))
            planes.append(acc[::sh, ::sw] + b[ki])
        ys.append(planes)
    np.asarray(ys, dtype='<f4').tofile(d + '/ref_' + mode + '.f32')
EOF
}

# compare OUT REF: max |out - ref| within 1e-5 (values are O(1), sums of <= 50 terms)
compare() {
    "$PY" - "$1" "$2" <<'EOF'
import sys
import numpy as np
a = np.fromfile(sys.argv[1], dtype='<f4'); b = np.fromfile(sys.argv[2], dtype='<f4')
if a.shape != b.shape:
    sys.exit('size %d, expected %d' % (a.size, b.size))
err = float(np.max(np.abs(a.astype(np.float64) - b)))
if not err <= 1e-5:
    sys.exit('max abs error %g' % err)
EOF
}

# n c h w k r s stride_h stride_w pad_top pad_left pad_bottom pad_right groups
SHAPE=n=2,c=4,h=7,w=6,k=6,r=3,s=2,stride_h=2,stride_w=1,pad_top=1,pad_left=1,pad_bottom=2,pad_right=0,groups=2
gen 2 4 7 6 6 3 2 2 1 1 1 2 0 2
for mode in xcorr conv; do
    for algo in direct direct_flipidx; do
        [[ $algo == direct_flipidx && $mode == xcorr ]] && continue
        rm -f "$T/y.f32"
        flip=no; [[ $mode == conv ]] && flip=yes
        expect 0 "" -- "$CLI" run --shape $SHAPE --algo $algo --flip $flip \
            --input "$T/x.f32" --weights "$T/w.f32" --bias "$T/b.f32" --output "$T/y.f32"
        compare "$T/y.f32" "$T/ref_$mode.f32" || die "run $algo $mode differs from SciPy"
    done
done
# The output is replaced atomically: no temporary file is left beside it.
ls -A "$T" | grep -q '^\.y\.f32\.' && die "run left a temporary file"
# Without --bias the SciPy reference minus the bias must match.
expect 0 "" -- "$CLI" run --shape $SHAPE --algo direct --input "$T/x.f32" --weights "$T/w.f32" \
    --output "$T/nb.f32"
"$PY" - "$T" <<'EOF' || die "run without bias differs from SciPy"
import sys
import numpy as np
d = sys.argv[1]
y = np.fromfile(d + '/nb.f32', dtype='<f4').reshape(2, 6, 4, 6)
ref = np.fromfile(d + '/ref_xcorr.f32', dtype='<f4').reshape(2, 6, 4, 6)
b = np.fromfile(d + '/b.f32', dtype='<f4')
err = float(np.max(np.abs(y.astype(np.float64) - (ref.astype(np.float64) - b[None, :, None, None]))))
sys.exit(0 if err <= 1e-5 else 'max abs error %g' % err)
EOF

# --- run: bad input -------------------------------------------------------------
head -c 100 "$T/x.f32" >"$T/short.f32"
expect 2 "input file $T/short.f32: size is 100 bytes, expected 1344 bytes" -- \
    "$CLI" run --shape $SHAPE --algo direct --input "$T/short.f32" --weights "$T/w.f32" \
    --output "$T/y2.f32"
expect 2 "weights file $T/x.f32: size is 1344 bytes, expected 288 bytes" -- \
    "$CLI" run --shape $SHAPE --algo direct --input "$T/x.f32" --weights "$T/x.f32" \
    --output "$T/y2.f32"
expect 2 "bias file $T/w.f32: size is 288 bytes, expected 24 bytes" -- \
    "$CLI" run --shape $SHAPE --algo direct --input "$T/x.f32" --weights "$T/w.f32" \
    --bias "$T/w.f32" --output "$T/y2.f32"
[[ -e $T/y2.f32 ]] && die "run wrote an output despite bad input"
expect 2 "cannot open" -- "$CLI" run --shape $SHAPE --algo direct --input "$T/none.f32" \
    --weights "$T/w.f32" --output "$T/y2.f32"
expect 2 "convpick run: --output: required" -- "$CLI" run --shape $SHAPE --algo direct --input "$T/x.f32" \
    --weights "$T/w.f32"
expect 2 "direct_flipidx does not support" -- "$CLI" run --shape $SHAPE --algo direct_flipidx \
    --input "$T/x.f32" --weights "$T/w.f32" --output "$T/y2.f32"
expect 2 "unknown algorithm 'fft'" -- "$CLI" run --shape $SHAPE --algo fft \
    --input "$T/x.f32" --weights "$T/w.f32" --output "$T/y2.f32"
expect 2 "groups=5" -- "$CLI" run --shape c=4,h=7,w=6,k=6,r=3,groups=5 --algo direct \
    --input "$T/x.f32" --weights "$T/w.f32" --output "$T/y2.f32"

if [[ $fails -ne 0 ]]; then
    echo "cli_verify: $fails check(s) failed" >&2
    exit 1
fi
echo "cli_verify: all checks passed"
