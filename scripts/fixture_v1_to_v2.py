#!/usr/bin/python3
"""Rewrites a version-1 tuning table or bench results file in version 2, the
migration docs/table-format.md ("Migration") describes, written out again in
Python so that the committed v2 fixtures do not come from the C code they
test.  Used to remake tests/data fixtures from their v1 originals.

Usage: fixture_v1_to_v2.py IN OUT   (run with /usr/bin/python3)
Keys keep their order; output is indented by one space like convpick's.
"""
import json
import sys

FLIP = {"xcorr": False, "conv": True}


def rename(o, a, b):
    if isinstance(o, dict) and a in o and b not in o:
        items = [(b if k == a else k, v) for k, v in o.items()]
        o.clear()
        o.update(items)


def shape(s):
    rename(s, "dil_h", "dilation_h")
    rename(s, "dil_w", "dilation_w")
    s.setdefault("layout", "NCHW/KCRS")


def mode(o):
    if isinstance(o, dict) and o.get("mode") in FLIP:
        o["flipped"] = FLIP[o.pop("mode")]


def params(o):
    if isinstance(o, dict) and isinstance(o.get("params"), dict):
        rename(o["params"], "ukernel", "tile_isa")


def device(d):
    cpu = d.get("cpu")
    if isinstance(cpu, dict) and "brand" in cpu:
        rename(cpu, "model", "model_id")
        rename(cpu, "brand", "model")
    elif cpu is None and isinstance(d.get("model"), str):
        for name, keys in (("cpu", ["vendor", "model", "family", "model_id", "stepping"]),
                           ("topology", ["packages", "numa_nodes", "cores", "pus", "memory_bytes"]),
                           ("build", ["compiler", "flags"])):
            d[name] = {k: d.pop(k) for k in keys if k in d}
    if isinstance(d.get("blas"), dict):
        rename(d["blas"], "config", "version")
    isa = d.get("isa")
    if isinstance(isa, dict):
        d["isa"] = [k for k, v in isa.items() if v is True]
    elif isinstance(isa, list):
        d["isa"] = ["sse4_2" if x == "sse4.2" else x for x in isa]


def timing(t):
    if not isinstance(t, dict) or "stats" in t:
        return
    stats = {}
    for a, b in (("median_s", "median"), ("ci_lo_s", "ci_lo"), ("ci_hi_s", "ci_hi"),
                 ("samples", "n"), ("noisy", "noisy")):
        if a in t:
            stats[b] = t.pop(a)
    samples = t.pop("samples_s", None)
    t["stats"] = stats
    if samples is not None:
        t["samples"] = samples


def table(d):
    device(d["device"])
    s = d["settings"]
    if "timing" not in s:
        t = {k: s.pop(k) for k in ["warmup", "min_samples", "max_samples", "target_rel_ci",
                                   "confidence", "max_seconds"] if k in s}
        if s.get("caches") in ("cold", "warm"):
            t["cold"] = s.pop("caches") == "cold"
        d["settings"] = {"timing": t, **s}
    for e in d["entries"]:
        shape(e["shape"])
        mode(e)
        params(e.get("choice"))
        params(e.get("runner_up"))
        timing(e.get("timing"))
        for c in e.get("candidates", []):
            params(c)
            timing(c.get("timing"))


def bench(d):
    out = {}
    for k, v in d.items():
        if k == "convpick_version":
            out["convpick"] = {"version": v, "git": d.get("git_rev")}
        elif k in ("git_rev", "fingerprint"):
            continue
        elif k == "created_utc":
            out["created"] = v
        else:
            out[k] = v
    if "fingerprint" in d and isinstance(out.get("device"), dict):
        out["device"].setdefault("fingerprint", d["fingerprint"])
    device(out["device"])
    s = out["settings"]
    if "modes" in s:
        s["flipped"] = [FLIP[m] for m in s.pop("modes")]
    for r in out["results"]:
        shape(r["shape"])
        mode(r)
        params(r)
    for x in out.get("summaries") or []:
        mode(x)
    return out


def main():
    d = json.load(open(sys.argv[1]))
    if d.get("version") != 1:
        sys.exit("%s: not version 1" % sys.argv[1])
    if d["format"] == "convpick-tuning-table":
        table(d)
    else:
        d = bench(d)
    d["version"] = 2
    with open(sys.argv[2], "w") as f:
        json.dump(d, f, indent=1)
        f.write("\n")


if __name__ == "__main__":
    main()
