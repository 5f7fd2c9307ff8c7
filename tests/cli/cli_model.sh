#!/usr/bin/env bash
# convpick model and the model/name/count options of the shape selection:
# exit codes, one-line errors (file and node named), the shape file round
# trip.  The models are tests/data/onnx/ (scripts/gen_onnx_fixtures.py); the
# shapes they must give come from onnx.shape_inference.infer_shapes (the
# .expect files, checked in full by tests/harness/test_onnx.c).
# Usage: bash cli_model.sh CLI SRCDIR
set -euo pipefail

CLI=$1
D=$2/tests/data/onnx
T=$(mktemp -d /tmp/convpick_cli_model.XXXXXX)
trap 'rm -rf "$T"' EXIT

# shellcheck source=tests/cli/expect.sh
fails=0
. "$(dirname "$0")/expect.sh"

# --- the shape file of a model, and back through --shapes -----------------
# infer_shapes (small_cnn.expect): block1.conv1 and .conv2 take 1x8x16x16.
expect 0 "stdout:block1.conv2: n=1,c=8,h=16,w=16,k=8,r=3,pad=1" -- "$CLI" model "$D/small_cnn.onnx"
expect 0 "" -- "$CLI" model "$D/small_cnn.onnx" --output "$T/small.txt"
grep -q '^# Conv layers of .*5 shape(s), 6 layer(s)' "$T/small.txt" || die "header: $(head -1 "$T/small.txt")"
"$CLI" verify --onnx "$D/small_cnn.onnx" --algo im2col_gemm --flip no >"$T/a" 2>&1 || die "verify --onnx failed: $(cat "$T/a")"
"$CLI" verify --shapes "$T/small.txt" --algo im2col_gemm --flip no >"$T/b" 2>&1 || die "verify --shapes failed: $(cat "$T/b")"
# The same layers, names and counts either way (the round trip of the writer).
diff <(sed -n '2,7p' "$T/a") <(sed -n '2,7p' "$T/b") >/dev/null || die "model and its shape file differ: $(diff "$T/a" "$T/b")"
grep -q 'block1.conv1  x2 .*names: block1.conv1,block1.conv2' "$T/a" || die "names not kept: $(cat "$T/a")"
# --batch sets every layer's n (the model's own is 1).
expect 0 "stdout:stem: n=4,c=3,h=32,w=32,k=8,r=3,pad=1" -- "$CLI" model "$D/small_cnn.onnx" --batch 4
expect 0 "stdout:stem          x1   n=3,c=3,h=32,w=32,k=8,r=3,pad=1" -- "$CLI" verify --suite demo --onnx "$D/small_cnn.onnx" --batch 3 --algo im2col_gemm --flip no
# Symbolic sizes: refused until given (infer_shapes at N=2, H=20, W=24: symbolic.expect).
expect 2 "dimension 0 is symbolic ('N'); give it with --batch N" -- "$CLI" model "$D/symbolic.onnx"
expect 2 "--input-size H,W" -- "$CLI" tune --onnx "$D/symbolic.onnx" --batch 2 --out "$T/t.json"
expect 0 "stdout:c2: n=2,c=8,h=20,w=24,k=8,r=3,stride=2" -- "$CLI" model "$D/symbolic.onnx" --batch 2 --input-size 20,24
[[ -e $T/t.json ]] && die "tune wrote a table for a refused model"

# --- an operator that cannot be propagated: named, and --partial ----------
expect 2 "node 'norm1' (LRN): operator LRN cannot be propagated" -- "$CLI" model "$D/unsupported.onnx"
[[ -s $T/out ]] && die "model wrote layers without --partial: $(cat "$T/out")"
expect 2 "node 'norm1' (LRN)" -- "$CLI" model "$D/unsupported.onnx" --partial
grep -q '^first: n=1,c=3,h=16,w=16,k=8,r=3$' "$T/out" || die "--partial lacks the first layer: $(cat "$T/out")"
grep -q '^second' "$T/out" && die "--partial listed a layer after the stop"
expect 2 "convpick bench: --onnx: $D/unsupported.onnx: node 'norm1' (LRN)" -- "$CLI" bench --onnx "$D/unsupported.onnx"

# --- bad files: one line naming the file, exit 2, nothing written ----------
echo "keep me" >"$T/keep.txt"
for f in truncated garbage not_model no_conv bad_init_size bad_kernel bad_group huge_dims node_order; do
    expect 2 "$D/$f.onnx: " -- "$CLI" model "$D/$f.onnx" --output "$T/keep.txt"
    [[ $(cat "$T/keep.txt") == "keep me" ]] || die "model $f overwrote the output"
done
expect 2 "not an ONNX model" -- "$CLI" verify --onnx "$D/garbage.onnx"
expect 2 "cannot open" -- "$CLI" model "$T/missing.onnx"
expect 2 "--batch: '0' is not an integer" -- "$CLI" verify --onnx "$D/small_cnn.onnx" --batch 0
expect 2 "--input-size: '20x24' is not H,W" -- "$CLI" model "$D/symbolic.onnx" --input-size 20x24
expect 2 "no model file" -- "$CLI" model

# --- --shape with name: and count=; shape files keep names -------------------
expect 0 "stdout:  mine   x3   n=1,c=3,h=8,w=8,k=4,r=3" -- "$CLI" verify --shape "mine: c=3,h=8,w=8,k=4,r=3,count=3" --algo im2col_gemm
expect 2 "--shape: 'c=3,h=8,w=8,k=4,r=3,count=0': count=0: expected an integer" -- "$CLI" verify --shape "c=3,h=8,w=8,k=4,r=3,count=0"
expect 2 "count: key given twice" -- "$CLI" verify --shape "count=1,c=3,h=8,w=8,k=4,r=3,count=2"
expect 2 "layer name 'a b'" -- "$CLI" verify --shape "a b: c=3,h=8,w=8,k=4,r=3"
printf 'a: c=3,h=8,w=8,k=4,r=3\nb: c=3,h=8,w=8,k=4,r=3,count=2\n' >"$T/ab.txt"
expect 0 "stdout:  a      x3   n=1,c=3,h=8,w=8,k=4,r=3  names: a,b" -- "$CLI" verify --shapes "$T/ab.txt" --algo im2col_gemm

if ((fails)); then
    echo "cli_model: $fails failure(s)" >&2
    exit 1
fi
echo "cli_model: all checks passed"
