#!/usr/bin/python3
"""Writes a large synthetic tuning table (format version 2) for the loader
benchmark (experiments/table_load_bench.c): N entries of distinct shapes,
each with two candidates carrying SAMPLES timed samples, as tune writes them,
and the same table in its lean form (docs/table-format.md, "Lean tables").
The numbers are invented (a fixed pseudo-random sequence); only the sizes
and the structure matter.

usage: scripts/gen_big_table.py FULL.json LEAN.json [N [SAMPLES]]"""
import json
import random
import sys


def main():
    full_path, lean_path = sys.argv[1], sys.argv[2]
    n = int(sys.argv[3]) if len(sys.argv) > 3 else 100000
    nsamples = int(sys.argv[4]) if len(sys.argv) > 4 else 30
    rng = random.Random(17)
    head = {
        "format": "convpick-tuning-table", "version": 2, "created": "2026-12-02T07:00:00Z",
        "convpick": {"version": "synthetic", "git": "synthetic"},
        "device": json.load(open(sys.argv[5]))["device"] if len(sys.argv) > 5 else None,
    }
    tmpl = json.load(open(sys.argv[5])) if len(sys.argv) > 5 else None
    if tmpl is None:
        sys.exit("gen_big_table.py: give a real table as the 5th argument (device and settings)")
    head["settings"] = tmpl["settings"]
    key = tmpl["entries"][0]["settings_key"]
    entries = []
    for i in range(n):
        shape = {"n": 1 + i % 40, "c": 8 + 8 * ((i // 40) % 50), "h": 14 + (i // 2000) % 50,
                 "w": 14 + (i // 2000) % 50, "k": 16, "r": 3, "s": 3, "stride_h": 1,
                 "stride_w": 1, "pad_top": 1, "pad_left": 1, "pad_bottom": 1, "pad_right": 1,
                 "dilation_h": 1, "dilation_w": 1, "groups": 1, "layout": "NCHW/KCRS"}
        med = 1e-4 * (1 + rng.random())
        def timing(m, with_samples):
            t = {"stats": {"n": nsamples, "median": m, "ci_lo": m * 0.98, "ci_hi": m * 1.02,
                           "noisy": False}}
            if with_samples:
                t["samples"] = [m * (0.95 + 0.1 * rng.random()) for _ in range(nsamples)]
            return t
        cands = [{"algo": "direct", "params": {"order": o}, "timing": timing(m, True),
                  "rel_err": 3.1e-07, "status": "ok", "note": ""}
                 for o, m in ((0, med), (1, med * 1.1))]
        entries.append({
            "name": "layer%06d" % i, "shape": shape, "flipped": False, "threads": 1,
            "choice": {"algo": "direct", "params": {"order": 0}}, "timing": timing(med, False),
            "runner_up": {"algo": "direct", "params": {"order": 1}, "margin": 0.1,
                          "margin_interval": [0.08, 0.12], "in_noise": False},
            "candidates": cands,
            "tried": {"planned": 2, "measured": 2, "skipped": 0, "disqualified": 0,
                      "failed": 0, "unsupported": 0, "seconds": 1.5, "notes": []},
            "settings_key": key})
    full = dict(head, entries=entries)
    json.dump(full, open(full_path, "w"), indent=1)
    for e in entries:
        del e["candidates"], e["tried"]
    lean = dict(head, evidence=full_path.rsplit("/", 1)[-1], entries=entries)
    json.dump(lean, open(lean_path, "w"), indent=1)


main()
