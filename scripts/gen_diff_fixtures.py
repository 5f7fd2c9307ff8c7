#!/usr/bin/python3
"""Writes tests/data/diff_fixtures.txt: reference values that
tests/harness/test_diff_stats.c compares convpick diff's statistics against.

  - scipy.stats.mannwhitneyu(x, y, alternative='two-sided') with
    method='asymptotic' (tie and continuity corrected), method='exact' and
    method='auto': the statistic U1 (of x) and the p-value;
  - the Hodges-Lehmann shift: numpy.median of all differences y[j] - x[i];
  - the order statistics D(k), D(mn+1-k) of those differences that bound the
    distribution-free interval, with k found independently of convpick:
      exact:  the null distribution of U enumerated over every split of the
              m+n ranks (itertools.combinations; small m+n only), k the
              largest with P(U <= k-1) <= alpha/2;
      normal: k = floor(mn/2 - scipy.stats.norm.isf(alpha/2) sqrt(mn(m+n+1)/12)).

Run with Debian's /usr/bin/python3 (python3-scipy); the python3 first on PATH
may have no SciPy.  Usage: gen_diff_fixtures.py [OUTPUT]  (default: the
committed file).

Sample arrays come from numpy's seeded generator (timing-like log-normal
values, some rounded to make ties) and are written with 17 significant
digits, so the C test reads back exactly the values SciPy saw.

File format (ours): '#' lines are comments; each case is
  case NAME
  x M v1 ... vM
  y N v1 ... vN
  mwu METHOD U1 P          (METHOD: asymptotic, exact, auto; auto_exact 0|1 follows)
  hl SHIFT                 (median of y[j] - x[i])
  ci KIND ALPHA K LO HI    (KIND: exact or normal)
  end
"""

import itertools
import math
import os
import sys

import numpy as np
import scipy
from scipy import stats

ALPHAS = (0.01, 0.05)


def fmt(v):
    return repr(float(v))


def exact_cdf(m, n):
    """P(U <= u), u = 0..mn, by enumerating which ranks go to the first sample."""
    counts = [0] * (m * n + 1)
    N = m + n
    for comb in itertools.combinations(range(1, N + 1), m):
        u = sum(comb) - m * (m + 1) // 2
        counts[u] += 1
    total = math.comb(N, m)
    acc, cdf = 0, []
    for c in counts:
        acc += c
        cdf.append(acc / total)
    return cdf


def ci_lines(x, y, exact_ok):
    m, n = len(x), len(y)
    d = np.sort(np.subtract.outer(np.asarray(y), np.asarray(x)).ravel())
    out = []
    for alpha in ALPHAS:
        if exact_ok:
            cdf = exact_cdf(m, n)
            k = 0
            while k < (m * n) // 2 and cdf[k] <= alpha / 2:
                k += 1
            if k >= 1:
                out.append("ci exact %s %d %s %s" % (fmt(alpha), k, fmt(d[k - 1]), fmt(d[m * n - k])))
        z = stats.norm.isf(alpha / 2)
        k = math.floor(m * n / 2 - z * math.sqrt(m * n * (m + n + 1) / 12))
        if k >= 1:
            out.append("ci normal %s %d %s %s" % (fmt(alpha), k, fmt(d[k - 1]), fmt(d[m * n - k])))
    return out


def case(name, x, y, exact=True, enumerate_ok=False):
    lines = ["case " + name,
             "x %d %s" % (len(x), " ".join(fmt(v) for v in x)),
             "y %d %s" % (len(y), " ".join(fmt(v) for v in y))]
    for method in ("asymptotic", "exact", "auto"):
        if method == "exact" and not exact:
            continue
        r = stats.mannwhitneyu(x, y, alternative="two-sided", method=method)
        line = "mwu %s %s %s" % (method, fmt(r.statistic), fmt(r.pvalue))
        if method == "auto":
            # the method 'auto' picked (SciPy 1.10 rule, private helper)
            from scipy.stats._mannwhitneyu import _mwu_choose_method
            xy = np.concatenate([np.asarray(x), np.asarray(y)])
            line += " %d" % (_mwu_choose_method(len(x), len(y), xy, "auto") == "exact")
        lines.append(line)
    lines.append("hl %s" % fmt(np.median(np.subtract.outer(np.asarray(y), np.asarray(x)))))
    lines += ci_lines(x, y, enumerate_ok)
    lines.append("end")
    return lines


def main():
    out = sys.argv[1] if len(sys.argv) > 1 else os.path.join(
        os.path.dirname(os.path.abspath(__file__)), "..", "tests", "data", "diff_fixtures.txt")
    rng = np.random.default_rng(20261201)
    logn = lambda n, med, sd: list(med * np.exp(sd * rng.standard_normal(n)))
    cases = []
    # small, no ties: exact and asymptotic differ; the interval from enumeration
    cases += case("small_5x6", logn(5, 1e-3, 0.05), logn(6, 1.1e-3, 0.05), enumerate_ok=True)
    # small integers with ties: asymptotic (tie corrected); scipy's exact ignores ties
    cases += case("ties_7x9", [3, 5, 5, 7, 8, 8, 8], [5, 6, 8, 8, 9, 9, 10, 11, 12], enumerate_ok=True)
    # a short run against a long one: auto picks exact (3 <= 8)
    cases += case("short_3x40", logn(3, 2e-4, 0.02), logn(40, 2.1e-4, 0.02), enumerate_ok=True)
    # timing-like, no ties, 20 x 25: exact (counted) and asymptotic both
    cases += case("timing_20x25", logn(20, 5e-4, 0.03), logn(25, 5.15e-4, 0.03))
    # quantized to 1 us: many ties, 200 x 150
    q = lambda v: [round(t * 1e6) / 1e6 for t in v]
    cases += case("quantized_200x150", q(logn(200, 2e-5, 0.1)), q(logn(150, 2.1e-5, 0.1)), exact=False)
    # the same samples on both sides
    same = logn(30, 1e-3, 0.02)
    cases += case("identical_30", same, list(same))
    with open(out, "w") as f:
        f.write("# Reference values of scipy.stats.mannwhitneyu (two-sided) and of the\n"
                "# Hodges-Lehmann shift (numpy.median of pairwise differences).\n"
                "# Generated by scripts/gen_diff_fixtures.py with SciPy %s, NumPy %s.\n"
                "# Do not edit: rerun the script.\n" % (scipy.__version__, np.__version__))
        f.write("\n".join(cases) + "\n")


if __name__ == "__main__":
    main()
