#!/usr/bin/env bash
# bench's error column against an outside reference: the rel_err bench prints
# beside each row's time (and writes to its JSON) must be the error SciPy
# finds for the same algorithm's output on the same tensors.
#   - the tensors: bench's seeded data (splitmix64, Steele, Lea & Flood,
#     "Fast Splittable Pseudorandom Number Generators", OOPSLA 2014, as
#     harness/measure/data.c uses it), regenerated here in Python;
#   - the algorithm's output on them: `convpick run` (the library, one thread);
#   - the reference: scipy.signal.correlate2d per input channel in float64,
#     and sum |x|*|w| + |b| the same way on the absolute values
#     (the measure of include/convpick/oracle.h, written out again here).
# Skipped (77) without SciPy and NumPy in /usr/bin/python3.
set -euo pipefail
CLI="$1"; SRC="$2"
PY=/usr/bin/python3
"$PY" -c "import scipy.signal, numpy, jsonschema" 2>/dev/null || { echo "SKIP: no scipy/numpy/jsonschema"; exit 77; }
tmp="$(mktemp -d)"; trap 'rm -rf "$tmp"' EXIT

# Odd sizes, C != K, partial Winograd tiles at both edges.
shape=n=1,c=5,h=9,w=11,k=3,r=3,pad=1
algos=direct,winograd_2x2_3x3,winograd_4x4_3x3
"$CLI" bench --shape "$shape" --algo "$algos" --threads 1 --seed 7 --no-roofs --no-sgemm \
  --max-seconds 0.01 --rounds 2 --trial-samples 1 --no-place --json "$tmp/b.json" > "$tmp/out.txt"
grep -q "rel_err" "$tmp/out.txt" || { echo "FAIL: no rel_err column"; cat "$tmp/out.txt"; exit 1; }

"$PY" - "$CLI" "$shape" "$algos" "$tmp" "$SRC/tests/data/bench_results.schema.json" <<'P'
import json, subprocess, sys
import jsonschema
import numpy as np
from scipy.signal import correlate2d

cli, spec, algos, tmp, schema = sys.argv[1:6]
M = (1 << 64) - 1
def rng_next(st):  # splitmix64 (OOPSLA 2014); returns (value, new state)
    st = (st + 0x9E3779B97F4A7C15) & M
    z = st
    z = ((z ^ (z >> 30)) * 0xBF58476D1CE4E5B9) & M
    z = ((z ^ (z >> 27)) * 0x94D049BB133111EB) & M
    return z ^ (z >> 31), st
def tensor_seed(seed, layer, tensor):  # bench's per-tensor seed (bench_rounds.c)
    return rng_next(seed ^ (layer << 20) ^ tensor)[0]
def uniform(n, seed):  # 24 random bits -> [-1, 1), exact in float32
    out, st = np.empty(n), seed
    for i in range(n):
        v, st = rng_next(st)
        out[i] = (v >> 40) / 8388608.0 - 1.0
    return out

n, c, h, w, k = 1, 5, 9, 11, 3
x = uniform(n * c * h * w, tensor_seed(7, 0, 0)).reshape(n, c, h, w)
wt = uniform(k * c * 9, tensor_seed(7, 0, 1)).reshape(k, c, 3, 3)
b = uniform(k, tensor_seed(7, 0, 2))
for name, a in (("x", x), ("w", wt), ("b", b)):
    a.astype("<f4").tofile(f"{tmp}/{name}.f32")
xp = np.pad(x[0], ((0, 0), (1, 1), (1, 1)))
ref = np.stack([sum(correlate2d(xp[ci], wt[ko, ci], mode="valid") for ci in range(c)) + b[ko]
                for ko in range(k)])
mag = np.stack([sum(correlate2d(np.abs(xp[ci]), np.abs(wt[ko, ci]), mode="valid")
                    for ci in range(c)) + abs(b[ko]) for ko in range(k)])

d = json.load(open(f"{tmp}/b.json"))
jsonschema.validate(d, json.load(open(schema)))
printed = {}
for line in open(f"{tmp}/out.txt"):
    f = line.split()
    if len(f) > 6 and f[0] == "shape1" and f[3] in algos.split(","):
        printed[f[3]] = float(f[6])  # layer flip thr algo params median_ms rel_err
rows = {r["algo"]: r for r in d["results"]}
for a in algos.split(","):
    subprocess.run([cli, "run", "--shape", spec, "--algo", a, "--input", f"{tmp}/x.f32",
                    "--weights", f"{tmp}/w.f32", "--bias", f"{tmp}/b.f32",
                    "--output", f"{tmp}/y.f32"], check=True, stdout=subprocess.DEVNULL)
    y = np.fromfile(f"{tmp}/y.f32", dtype="<f4").astype(np.float64).reshape(k, h, w)
    want = float(np.max(np.abs(y - ref) / mag))
    got = rows[a]["rel_err"]
    # float32 outputs against a float64 reference: never exact for Winograd,
    # so the check compares two non-zero numbers
    assert want > 0 or a == "direct", (a, want)
    # the oracle and SciPy differ only in float64 rounding (~1e-16 of mag)
    assert abs(got - want) <= 1e-6 * want + 1e-15, ("json", a, got, want)
    # printed with 3 significant digits
    assert abs(printed[a] - want) <= 5e-3 * want + 1e-15, ("text", a, printed[a], want)
    print(f"{a}: rel_err {got:.4e} (SciPy {want:.4e}, printed {printed[a]:.2e})")
P
