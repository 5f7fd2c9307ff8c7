#!/usr/bin/python3
"""Writes the machine-drift fixtures of convpick diff (docs/diff.md, "The
control"): three bench results files with a fixed control and chosen rows,
and the values SciPy computes for them, which tests/harness/test_diff_drift.c
and tests/cli/cli_diff.sh compare convpick diff against.

  tests/data/drift_base.bench.json   BASE: 3 layers, a chosen row each (10 trial
                                     medians, log-normal, 2 % spread), a control of
                                     two series (sgemm, fma), 10 trials each
  tests/data/drift_all.bench.json    NEW, invented drift: the control and every
                                     row 1.15x slower (fresh draws)
  tests/data/drift_row.bench.json    NEW: the control unchanged, the row of one
                                     layer ("mid") 1.15x slower, the others unchanged
  tests/data/drift_fixtures.txt      per scenario: the control's combined series
                                     (trial r = geometric mean of the series' trials r)
                                     compared with scipy.stats.mannwhitneyu (two-sided,
                                     method='auto') and the Hodges-Lehmann ratio
                                     exp(numpy.median(log y_j - log x_i)); then every
                                     row with NEW's trials divided by that ratio when
                                     the control drifted (the same statistics)

  tests/data/drift_ctl.bench.json    NEW: the control alone 0.87x (faster), every row
                                     unchanged: a drift the rows did not go through, so
                                     no correction (the rows' common shift, the median
                                     over the rows of log(median NEW / median BASE), is
                                     not on the control's side by half its size)
  tests/data/layer_*.bench.json,     a layer's own control (docs/diff.md): BASE with, per
  tests/data/layer_fixtures.txt      layer, the chosen row (blocked) and two rows of other
                                     algorithms (im2col_gemm, direct); NEW scenarios
                                     "state" (every row of "mid" 1.3x), "algo" (only
                                     mid's chosen row 1.15x), "shared" (every row of every
                                     layer 1.2x, the control unchanged), "most" (every row
                                     of front and back 1.2x, mid unchanged); each chosen row
                                     compared with NEW divided by its layer correction:
                                     L = median log ratio of the layer's other rows minus
                                     the chosen rows' common shift (all at one thread),
                                     taken only the way the row itself moved and never
                                     past it

File format (ours): '#' comments, then lines
  control SCENARIO P HL_RATIO
  row SCENARIO LAYER P HL_RATIO        (NEW drift-corrected when the control drifted)
  network SCENARIO P HL_RATIO          (trial r = sum over layers of count x trial r)
The drift decision itself (drifted: yes/no) is the test's, from the documented
verdict rule.

Run with Debian's /usr/bin/python3 (python3-scipy, SciPy 1.10.1 when written).
The template of the documents is tests/data/diff_base.bench.json.
Usage: gen_drift_fixtures.py [DATA_DIR]  (default: the committed tests/data).
"""
import copy
import json
import os
import sys

import numpy as np
import scipy
from scipy import stats

DATA = sys.argv[1] if len(sys.argv) > 1 else os.path.join(
    os.path.dirname(os.path.abspath(__file__)), "..", "tests", "data")
TEMPLATE = os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "tests", "data",
                        "diff_base.bench.json")
ROUNDS = 10
SPREAD = 0.02
SLOW = 1.15
LAYERS = [("front", 2, 0.8e-3), ("mid", 3, 1.6e-3), ("back", 1, 0.4e-3)]
CONTROL = {"gemm": 0.75e-3, "fma": 0.063e-3}

rng = np.random.default_rng(20261202)


def trials(center, factor=1.0):
    return [float(v) for v in center * factor * np.exp(rng.normal(0.0, SPREAD, ROUNDS))]


def stats_of(x):
    """The stats object as convpick writes it (only the fields the reader needs
    are meaningful here; the median is numpy's)."""
    x = np.array(x)
    xs = np.sort(x)
    return {"n": len(x), "median": float(np.median(x)), "ci_lo": float(xs[1]),
            "ci_hi": float(xs[-2]), "confidence": 0.95, "coverage": 0.978515625,
            "ci_exact": True, "ci_rank_lo": 1, "ci_rank_hi": len(x) - 2,
            "rel_ci": float(max(np.median(x) - xs[1], xs[-2] - np.median(x)) / np.median(x)),
            "mean": float(np.mean(x)), "stddev": float(np.std(x, ddof=1)), "min": float(xs[0]),
            "max": float(xs[-1]), "q1": float(np.quantile(x, 0.25)),
            "q3": float(np.quantile(x, 0.75)), "noisy": False}


def document(rows, control):
    d = copy.deepcopy(json.load(open(TEMPLATE)))
    proto = d["results"][0]
    d["results"] = []
    d["settings"]["rounds"] = ROUNDS
    d["settings"]["trial_samples"] = 5
    d["settings"]["placed"] = True
    for (name, count, _), x in zip(LAYERS, rows):
        r = copy.deepcopy(proto)
        r["layer"] = name
        r["layer_count"] = count
        r["algo"] = "chosen"
        r["kind"] = "chosen"
        r["chosen_algo"] = "blocked"
        r["params"] = {"kb": 8}
        r["params_text"] = "blocked kb=8"
        r["shape"]["k"] = {"front": 8, "mid": 16, "back": 32}[name]
        r["shape"]["spec"] = r["shape"]["spec"].replace("k=8", "k=%d" % r["shape"]["k"])
        m = r["measurement"]
        m["settings"].update({"warmup": 1, "min_samples": 5, "max_samples": 5,
                              "samples_are": "trial_medians", "rounds": ROUNDS, "placed": True})
        m["stop"] = "rounds"
        m["stats"] = stats_of(x)
        m["samples"] = x
        d["results"].append(r)
    d["control"] = {"what": "invented for the drift fixtures", "samples": 5,
                    "fma_s": control["fma"], "gemm_s": control["gemm"],
                    "round": list(range(ROUNDS)), "at_s": [0.01 * i for i in range(ROUNDS)],
                    "layer": [LAYERS[0][0]] * ROUNDS, "flipped": [False] * ROUNDS,
                    "threads": [1] * ROUNDS}
    return d


def hl_ratio(x, y):
    return float(np.exp(np.median(np.subtract.outer(np.log(y), np.log(x)))))


def combined(control):
    return np.exp((np.log(control["gemm"]) + np.log(control["fma"])) / 2.0)


def compare(x, y):
    p = stats.mannwhitneyu(x, y, alternative="two-sided", method="auto").pvalue
    return float(p), hl_ratio(x, y)


base_rows = [trials(c) for _, _, c in LAYERS]
base_ctl = {s: trials(c) for s, c in CONTROL.items()}
scen = {
    "all": ([trials(c, SLOW) for _, _, c in LAYERS], {s: trials(c, SLOW) for s, c in CONTROL.items()}),
    "row": ([trials(c, SLOW if n == "mid" else 1.0) for n, _, c in LAYERS],
            {s: trials(c) for s, c in CONTROL.items()}),
}
# drawn after the two above, so that their draws (and files) stay as they were
ctl_only = ([trials(c) for _, _, c in LAYERS], {s: trials(c, 0.87) for s, c in CONTROL.items()})

write = lambda name, doc: open(os.path.join(DATA, name), "w").write(json.dumps(doc, indent=1) + "\n")
write("drift_base.bench.json", document(base_rows, base_ctl))
lines = ["# written by scripts/gen_drift_fixtures.py (SciPy %s, NumPy %s)" % (scipy.__version__, np.__version__),
         "# control SCENARIO P HL | row SCENARIO LAYER P HL | network SCENARIO P HL"]
for name, (rows, ctl) in scen.items():
    write("drift_%s.bench.json" % name, document(rows, ctl))
    p, f = compare(combined(base_ctl), combined(ctl))
    lines.append("control %s %.17g %.17g" % (name, p, f))
    # the documented rule at alpha 0.01, tolerance 5 %: drift when the test rejects and
    # the Hodges-Lehmann interval lies beyond the tolerance; here the decision is only
    # needed to know whether to correct, and the shifts are 0 or 15 % by construction
    drifted = p < 0.01 and abs(np.log(f)) > np.log(1.05)
    corr = f if drifted else 1.0
    for (layer, _, _), x, y in zip(LAYERS, base_rows, rows):
        pr, hr = compare(x, np.array(y) / corr)
        lines.append("row %s %s %.17g %.17g" % (name, layer, pr, hr))
    nb = sum(cnt * np.array(x) for (_, cnt, _), x in zip(LAYERS, base_rows))
    nn = sum(cnt * np.array(y) / corr for (_, cnt, _), y in zip(LAYERS, rows))
    pn, hn = compare(nb, nn)
    lines.append("network %s %.17g %.17g" % (name, pn, hn))
open(os.path.join(DATA, "drift_fixtures.txt"), "w").write("\n".join(lines) + "\n")

# --- the control alone moved, and a layer's own control -------------------
OTHERS = [("im2col_gemm", 1.3), ("direct", 9.0)]  # time relative to the chosen row


def layer_document(chosen_rows, other_rows, control):
    """chosen_rows[i]: trials of layer i's chosen row; other_rows[i][j]: of OTHERS[j]."""
    d = document(chosen_rows, control)
    chosen = d["results"]
    d["results"] = []
    for i, r in enumerate(chosen):
        d["results"].append(r)
        for (algo, _), x in zip(OTHERS, other_rows[i]):
            o = copy.deepcopy(r)
            o["algo"] = algo
            o["kind"] = "algorithm"
            del o["chosen_algo"]
            o["params"] = {}
            o["params_text"] = ""
            o["measurement"]["stats"] = stats_of(x)
            o["measurement"]["samples"] = x
            d["results"].append(o)
    return d


def median_log_ratio(pairs):
    return float(np.median([np.log(np.median(y) / np.median(x)) for x, y in pairs]))


write("drift_ctl.bench.json", document(ctl_only[0], ctl_only[1]))
lines = ["# written by scripts/gen_drift_fixtures.py (SciPy %s, NumPy %s)" % (scipy.__version__, np.__version__),
         "# control SCENARIO P HL | rowshift SCENARIO SHIFT | row SCENARIO LAYER LOCAL P HL"]
p, f = compare(combined(base_ctl), combined(ctl_only[1]))
shift = median_log_ratio(list(zip(base_rows, ctl_only[0])))
lines.append("control ctl %.17g %.17g" % (p, f))
lines.append("rowshift ctl %.17g" % np.exp(shift))
for (layer, _, _), x, y in zip(LAYERS, base_rows, ctl_only[0]):
    pr, hr = compare(x, np.array(y))  # not corrected: the rows did not move with the control
    lines.append("row ctl %s 1 %.17g %.17g" % (layer, pr, hr))

lbase_chosen = [trials(c) for _, _, c in LAYERS]
lbase_other = [[trials(c * k) for _, k in OTHERS] for _, _, c in LAYERS]
lctl = {s: trials(c) for s, c in CONTROL.items()}
write("layer_base.bench.json", layer_document(lbase_chosen, lbase_other, lctl))
lscen = {
    "state": lambda name, is_chosen: 1.3 if name == "mid" else 1.0,
    "algo": lambda name, is_chosen: SLOW if name == "mid" and is_chosen else 1.0,
    "shared": lambda name, is_chosen: 1.2,
    "most": lambda name, is_chosen: 1.0 if name == "mid" else 1.2,
}
for name, fac in lscen.items():
    chosen = [trials(c, fac(n, True)) for n, _, c in LAYERS]
    other = [[trials(c * k, fac(n, False)) for _, k in OTHERS] for n, _, c in LAYERS]
    ctl = {s: trials(c) for s, c in CONTROL.items()}
    write("layer_%s.bench.json" % name, layer_document(chosen, other, ctl))
    pc, fc = compare(combined(lctl), combined(ctl))
    lines.append("control %s %.17g %.17g" % (name, pc, fc))
    common = median_log_ratio(list(zip(lbase_chosen, chosen)))
    lines.append("rowshift %s %.17g" % (name, np.exp(common)))
    for i, (layer, _, _) in enumerate(LAYERS):
        lrel = median_log_ratio(list(zip(lbase_other[i], other[i]))) - common
        # the row's own movement as judged (no control drift in these scenarios)
        lrow = float(np.log(np.median(chosen[i]) / np.median(lbase_chosen[i])))
        local = 1.0 if lrel * lrow <= 0 else float(np.exp(lrel if abs(lrel) < abs(lrow) else lrow))
        pr, hr = compare(lbase_chosen[i], np.array(chosen[i]) / local)
        lines.append("row %s %s %.17g %.17g %.17g" % (name, layer, local, pr, hr))
open(os.path.join(DATA, "layer_fixtures.txt"), "w").write("\n".join(lines) + "\n")
print("wrote drift fixtures to", DATA)
