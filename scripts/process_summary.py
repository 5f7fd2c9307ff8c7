"""Summary of scripts/process-experiment: per layer and placement mode, the
spread of the processes' medians and how often an unpaired comparison of two
consecutive processes of the same build calls them different.

The comparison is the one `convpick diff` makes of two unpaired runs:
scipy.stats.mannwhitneyu (two-sided) on the trial medians, called different
when p < 0.01 and the medians differ by more than 5 % (docs/diff.md)."""
import csv
import sys
from collections import defaultdict

import numpy as np
from scipy.stats import mannwhitneyu

ALPHA, TOL = 0.01, 0.05

for path in sys.argv[1:]:
    runs = defaultdict(lambda: defaultdict(list))
    with open(path) as f:
        for row in csv.DictReader(f):
            t = float(row["median_s"])
            runs[row["mode"]][int(row["process"])].append(t)
            # the same trial read against the fixed control run right after it
            c = (float(row["control_fma_s"]) * float(row["control_gemm_s"])) ** 0.5
            runs[row["mode"] + "/control"][int(row["process"])].append(t / c)
    print(path.rsplit("/", 1)[-1])
    for mode in ("heap", "placer", "heap/control", "placer/control"):
        procs = [np.array(runs[mode][p]) for p in sorted(runs[mode])]
        meds = np.array([np.median(v) for v in procs])
        within = np.median([np.percentile(v, 75) / np.percentile(v, 25) for v in procs])
        called = 0
        for a, b in zip(procs, procs[1:]):
            p = mannwhitneyu(a, b, alternative="two-sided").pvalue
            r = np.median(b) / np.median(a)
            called += p < ALPHA and abs(r - 1) > TOL
        unit = "ms" if "/" not in mode else "x control"
        scale = 1e3 if "/" not in mode else 1.0
        print(f"  {mode:14s} {len(procs)} processes: medians {meds.min()*scale:.4f}..{meds.max()*scale:.4f} {unit} "
              f"(max/min {meds.max()/meds.min():.3f}), within a process IQR ratio {within:.3f}; "
              f"consecutive pairs called different: {called} of {len(procs)-1}")
