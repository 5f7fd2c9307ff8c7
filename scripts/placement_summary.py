#!/usr/bin/python3
"""Summarises the placement experiment's CSV files (scripts/placement-experiment):
per factor level, the median of the trial medians and the spread, and per
configuration whether its trials fall in one cluster or two.  Standard library
only."""
import csv
import math
import statistics
import sys
from collections import defaultdict


def summarise(path):
    rows = list(csv.DictReader(open(path)))
    t = [float(r["median_s"]) for r in rows]
    lo, hi = min(t), max(t)
    print("\n%s: %d trials, all trials %.3f .. %.3f ms (max/min %.2f)"
          % (path, len(rows), lo * 1e3, hi * 1e3, hi / lo))
    for factor in ("yoff", "thp", "fresh", "pin"):
        groups = defaultdict(list)
        for r in rows:
            groups[r[factor]].append(float(r["median_s"]))
        parts = []
        for level in sorted(groups, key=lambda v: int(v)):
            g = sorted(groups[level])
            parts.append("%s=%s: median %.3f ms [q10 %.3f, q90 %.3f]"
                         % (factor, level, statistics.median(g) * 1e3,
                            g[len(g) // 10] * 1e3, g[(9 * len(g)) // 10] * 1e3))
        print("  " + "; ".join(parts))
    # Time: trials are in run order; slow trials that come in runs mean a
    # machine state that lasts, which hits whatever runs then.
    logs = [math.log(x) for x in t]
    mean = statistics.mean(logs)
    ac = sum((logs[i] - mean) * (logs[i + 1] - mean) for i in range(len(logs) - 1)) / \
        sum((x - mean) ** 2 for x in logs)
    rounds = defaultdict(list)
    for r in rows:
        rounds[int(r["trial"])].append(float(r["median_s"]))
    print("  run order: lag-1 autocorrelation of log trial medians %.2f; per-round medians %s ms"
          % (ac, " ".join("%.3f" % (statistics.median(v) * 1e3) for _, v in sorted(rounds.items()))))
    # Within-configuration spread: fresh configurations re-place every trial.
    by_cfg = defaultdict(list)
    for r in rows:
        by_cfg[(r["yoff"], r["thp"], r["fresh"], r["pin"])].append(float(r["median_s"]))
    for fresh in ("0", "1"):
        spreads = [max(v) / min(v) for k, v in by_cfg.items() if k[2] == fresh]
        meds = [statistics.median(v) for k, v in by_cfg.items() if k[2] == fresh]
        print("  fresh=%s: within-config max/min median %.3f; between-config medians %.3f .. %.3f ms"
              % (fresh, statistics.median(spreads), min(meds) * 1e3, max(meds) * 1e3))


for p in sys.argv[1:]:
    summarise(p)
