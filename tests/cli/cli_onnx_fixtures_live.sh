#!/bin/bash
# Reruns scripts/gen_onnx_fixtures.py (python3-onnx: onnx.helper builds the
# models, onnx.shape_inference.infer_shapes gives their shapes) and compares
# with the committed tests/data/onnx/: the same files, and every .expect line
# equal (the header naming the onnx version left out).  Skipped (exit 77)
# without /usr/bin/python3 and its onnx module (CP_TEST_PYTHON names another
# interpreter, which is how the skip path is tried).
# Usage: bash cli_onnx_fixtures_live.sh CLI SRCDIR (CLI unused: this checks data).
set -u
src=${2:?usage: cli_onnx_fixtures_live.sh CLI SRCDIR}
. "$(dirname "$0")/live_fixture.sh"
live_require_python "onnx, numpy"
tmp=$(mktemp -d) || exit 1
trap 'rm -rf "$tmp"' EXIT
if ! "$py" "$src/scripts/gen_onnx_fixtures.py" "$tmp/onnx" 2>"$tmp/stderr"; then
    echo "FAIL: scripts/gen_onnx_fixtures.py did not run:" >&2
    head -20 "$tmp/stderr" >&2
    exit 1
fi
if ! diff <(cd "$src/tests/data/onnx" && ls) <(cd "$tmp/onnx" && ls) >"$tmp/diff"; then
    echo "FAIL: tests/data/onnx/ and a fresh run hold other files:" >&2
    cat "$tmp/diff" >&2
    exit 1
fi
n=0
for e in "$tmp"/onnx/*.expect; do
    name=$(basename "$e")
    if ! diff <(grep -v '^#' "$src/tests/data/onnx/$name") <(grep -v '^#' "$e") >"$tmp/diff"; then
        echo "FAIL: tests/data/onnx/$name differs from a fresh run:" >&2
        head -20 "$tmp/diff" >&2
        exit 1
    fi
    n=$((n + $(grep -vc '^#' "$e")))
done
echo "OK: $n shapes of tests/data/onnx/*.expect match a fresh run ($(head -1 "$tmp"/onnx/small_cnn.expect))"
