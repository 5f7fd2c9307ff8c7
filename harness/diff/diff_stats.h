/* Comparing two sets of timing samples: is NEW faster or slower than BASE,
 * by how much, and how sure are we?  Pure functions: no clocks, no files.
 *
 * Method (docs/diff.md):
 *  - Significance: the Mann-Whitney U test, two-sided (Mann & Whitney 1947,
 *    Ann. Math. Statist. 18).  U1 is BASE's statistic, as scipy.stats.mannwhitneyu(base, new)
 *    reports it.  The p-value is exact (the null distribution of U counted
 *    without ties) when the smaller sample has at most 8 values, the larger at
 *    most CPH_MWU_EXACT_MAX and no value is tied; otherwise the normal
 *    approximation with the tie correction of the variance and a continuity
 *    correction of 0.5.  This is the rule and the arithmetic of
 *    scipy.stats.mannwhitneyu(method='auto') in SciPy 1.10, which the tests
 *    compare against.
 *  - Size: the Hodges-Lehmann estimate of the shift between the logarithms
 *    of the times, the median of the m*n differences log(new_j) - log(base_i)
 *    (Hodges & Lehmann 1963, Ann. Math. Statist. 34), and its
 *    distribution-free confidence interval [D(k), D(mn+1-k)] from the order
 *    statistics of those differences, k from the null distribution of U
 *    (Hollander & Wolfe, "Nonparametric Statistical Methods", the two-sample
 *    location problem; chapter and equation numbers not given: from memory).
 *    exp() of the shift and of its interval give the ratio NEW/BASE and its
 *    interval.  The interval's level is 1 - alpha, so it excludes 1 when the
 *    test rejects at alpha (exactly so for the exact case). */
#ifndef CONVPICK_DIFF_STATS_H
#define CONVPICK_DIFF_STATS_H

#include <stddef.h>

/* Largest sample size for which the exact null distribution is counted. */
#define CPH_MWU_EXACT_MAX 1000
/* The smaller sample must have at most this many values for the exact path
 * (SciPy's 'auto' rule). */
#define CPH_MWU_EXACT_MIN_SIDE 8
/* Cap on the counting table of cph_mwu_exact_cdf (doubles, two of them). */
#define CPH_MWU_EXACT_CELLS ((size_t)1 << 22)

typedef enum cph_mwu_method {
    CPH_MWU_AUTO = 0,       /* exact when allowed (above), else asymptotic */
    CPH_MWU_ASYMPTOTIC = 1, /* normal approximation, tie and continuity corrected */
    CPH_MWU_EXACT = 2       /* exact null distribution without ties (ties ignored) */
} cph_mwu_method;

typedef struct cph_mwu {
    double u1;        /* statistic of the first sample: R1 - m(m+1)/2 (midranks) */
    double p;         /* two-sided p-value */
    double tie_term;  /* sum over tie groups of t^3 - t */
    int exact;        /* 1: p from the exact distribution */
} cph_mwu;

/* The test of x[0..m) against y[0..n).  Returns 0, or -1 when m or n is 0, a
 * value is NaN, the exact path was forced beyond what cph_mwu_exact_cdf counts, or memory
 * ran out. */
int cph_mwu_test(const double *x, size_t m, const double *y, size_t n, cph_mwu_method method,
                 cph_mwu *out);

/* Null distribution of U for samples of sizes m and n without ties:
 * cdf[u] = P(U <= u) for u = 0..m*n (the caller gives m*n+1 slots).  Counts
 * arrangements by the recurrence f(i,j,u) = f(i-1,j,u-j) + f(i,j-1,u)
 * (common practice, no source).  Returns 0, or -1 when out of memory or the
 * table it needs, (min(m,n)+1) x (mn+1) values, exceeds CPH_MWU_EXACT_CELLS. */
int cph_mwu_exact_cdf(size_t m, size_t n, double *cdf);

/* The k-th smallest (1-based, 1 <= k <= m*n) of the m*n differences
 * ys[j] - xs[i], for ascending xs and ys, without forming them: bisection on
 * the value with a linear count of the differences at or below it. */
double cph_kth_pairwise_diff(const double *xs, size_t m, const double *ys, size_t n, size_t k);

/* The Hodges-Lehmann shift estimate: the median of ys[j] - xs[i] (mean of the
 * two middle ones when m*n is even, as numpy.median does). */
double cph_hl_shift(const double *xs, size_t m, const double *ys, size_t n);

/* The rank k of the lower end of the level 1-alpha interval [D(k), D(mn+1-k)].
 * exact: k is the largest with P(U <= k-1) <= alpha/2 under the exact null
 * distribution, and *coverage = 1 - 2 P(U <= k-1).  Otherwise (large samples)
 * k = floor(mn/2 - z(1-alpha/2) sqrt(mn(m+n+1)/12)) and *coverage = 1-alpha
 * (the large-sample rule of Hollander & Wolfe, from memory; rounding down is
 * ours and only widens the interval).
 * Returns 0 when no such k >= 1 exists (too few samples: the interval is
 * unbounded) or on failure. */
size_t cph_hl_ci_rank(size_t m, size_t n, double alpha, int exact, double *coverage);

/* The upper 1-q quantile of the standard normal: z with P(Z > z) = q,
 * 0 < q < 1 (bisection on erfc). */
double cph_normal_isf(double q);

/* BASE against NEW on the log scale. */
typedef struct cph_shift_cmp {
    size_t m, n;              /* sample counts (BASE, NEW) */
    double base_median, new_median; /* seconds */
    double median_ratio;      /* new_median / base_median */
    cph_mwu mwu;              /* BASE first, as in mannwhitneyu(base, new) */
    double ratio;             /* exp(Hodges-Lehmann shift of log times) */
    double ratio_lo, ratio_hi; /* exp of its interval; 0 and +inf when unbounded */
    double coverage;          /* of the interval (1 - alpha, or the exact value) */
    int bounded;              /* 0: too few samples for an interval at this level */
} cph_shift_cmp;

/* Compares base[0..m) and new[0..n) (seconds, > 0).  Returns 0, or -1 when a
 * side is empty, a value is not a positive finite number, or memory ran out. */
int cph_compare_samples(const double *base, size_t m, const double *new_samples, size_t n,
                        double alpha, cph_shift_cmp *out);

/* What the ratio of two timing distributions says (not to be confused with a
 * performance target's PASS / MISS in harness/bench/bench_summary.h). */
typedef enum cph_shift_verdict {
    CPH_SHIFT_SLOWER = 0,    /* a regression */
    CPH_SHIFT_INCONCLUSIVE,
    CPH_SHIFT_UNCHANGED,
    CPH_SHIFT_FASTER
} cph_shift_verdict;

/* The verdict rules (docs/diff.md), tol a fraction (0.05 = 5 %):
 *   slower:       p < alpha and the whole interval lies above 1 + tol
 *   faster:       p < alpha and the whole interval lies below 1 - tol
 *   unchanged:    the interval lies within [1 - tol, 1 + tol]
 *   inconclusive: everything else: the interval straddles 1 + tol or 1 - tol
 *                 (whether or not the test rejects), or there is no bounded
 *                 interval (too few samples). */
cph_shift_verdict cph_shift_verdict_of(const cph_shift_cmp *c, double alpha, double tol);
const char *cph_shift_verdict_name(cph_shift_verdict v);

#endif
