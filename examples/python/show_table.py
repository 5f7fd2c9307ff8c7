#!/usr/bin/env python3
"""Prints each entry of a convpick tuning table: name, shape, flip, threads and
the chosen algorithm with its parameters.  Standard library only.

usage: show_table.py TABLE [--choices]
  --choices  print only "NAME ALGO PARAMS" lines (PARAMS "-" when none),
             the form the example test compares with the C example."""
import json
import sys


def params_text(params):
    return ",".join(f"{k}={v}" for k, v in params.items()) or "-"


def main(argv):
    if len(argv) not in (2, 3) or (len(argv) == 3 and argv[2] != "--choices"):
        print(__doc__.strip().splitlines()[2], file=sys.stderr)
        return 2
    try:
        with open(argv[1], encoding="utf-8") as f:
            table = json.load(f)
    except (OSError, json.JSONDecodeError) as e:
        print(f"show_table: {argv[1]}: {e}", file=sys.stderr)
        return 2
    if table.get("format") != "convpick-tuning-table" or table.get("version") != 2:
        print(f"show_table: {argv[1]}: not a convpick-tuning-table of version 2", file=sys.stderr)
        return 2
    only = len(argv) == 3
    if not only:
        dev = table["device"]
        print(f"table of {dev['cpu']['model']} ({dev['fingerprint']}), created {table['created']}")
    for e in table["entries"]:
        ch = e["choice"]
        if only:
            print(e["name"], ch["algo"], params_text(ch["params"]))
            continue
        s = e["shape"]
        shape = (f"n={s['n']} c={s['c']} h={s['h']} w={s['w']} k={s['k']} r={s['r']} s={s['s']} "
                 f"stride={s['stride_h']}x{s['stride_w']} groups={s['groups']}")
        ru = e["runner_up"]
        second = (f"; runner-up {ru['algo']} +{100 * ru['margin']:.1f}%"
                  f"{' (in noise)' if ru['in_noise'] else ''}") if ru else ""
        flip = "conv" if e["flipped"] else "xcorr"
        print(f"{e['name']}: {shape} {flip} threads={e['threads']} -> {ch['algo']} "
              f"{params_text(ch['params'])} median {e['timing']['stats']['median']:.3g} s{second}")
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))
