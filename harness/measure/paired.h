/* Paired comparisons of two candidates from trials taken close together.
 * Pure functions: no clocks, no files.
 *
 * Why paired: a trial of A and a trial of B run back to back share the
 * machine's state at that moment (frequency, neighbours, cache contents of
 * other processes), so the ratio B_i / A_i cancels most of what moves both;
 * ratios of pooled samples do not (Kalibera & Jones, "Rigorous Benchmarking in
 * Reasonable Time", ISMM 2013, decide on the upper level of repetition).
 *
 * Method, on d_i = log(b_i) - log(a_i), i = 1..n (trial medians, seconds):
 *  - Significance: the Wilcoxon signed-rank test (Wilcoxon 1945, Biometrics
 *    Bulletin 1), zeros dropped ("wilcox"), no continuity correction; exact
 *    null distribution when at most CPH_WSR_EXACT_MAX differences and none
 *    is zero, else the normal approximation with the tie correction.  This is
 *    scipy.stats.wilcoxon(d, method='auto') of SciPy 1.10, which the tests
 *    compare against (tests/data/paired_fixtures.txt).
 *  - Size: the one-sample Hodges-Lehmann estimate, the median of the
 *    n(n+1)/2 Walsh averages (d_i + d_j) / 2, i <= j, and its
 *    distribution-free interval [W(k), W(M+1-k)], M = n(n+1)/2, k the largest
 *    with P(T+ <= k-1) <= alpha/2 under the exact signed-rank distribution
 *    (Hollander & Wolfe, "Nonparametric Statistical Methods", the one-sample
 *    location problem; from memory).  exp() gives the ratio B/A and its
 *    interval.  The interval is the set of shifts the exact two-sided test
 *    does not reject at alpha, which the tests check against SciPy. */
#ifndef CONVPICK_PAIRED_H
#define CONVPICK_PAIRED_H

#include <stddef.h>

/* Largest count of non-zero differences for the exact p-value (SciPy's rule). */
#define CPH_WSR_EXACT_MAX 50
/* Largest n for which cph_wsr_exact_pmf counts (the interval always uses
 * the exact distribution, so this also caps the pairs compared). */
#define CPH_WSR_EXACT_CI_MAX 400

typedef enum cph_alternative {
    CPH_TWO_SIDED = 0,
    CPH_GREATER,  /* the differences tend to be > 0 (B slower than A) */
    CPH_LESS      /* the differences tend to be < 0 (B faster than A) */
} cph_alternative;

typedef struct cph_wsr {
    double statistic; /* two-sided: min(R+, R-); one-sided: R+ (SciPy's convention) */
    double p;
    size_t n_used;    /* differences after dropping zeros */
    int exact;        /* 1: exact null distribution */
} cph_wsr;

/* The signed-rank test of d[0..n).  Returns 0, or -1 when no difference is
 * non-zero, a value is NaN, or memory ran out. */
int cph_wsr_test(const double *d, size_t n, cph_alternative alt, cph_wsr *out);

/* Exact null distribution of R+ for m differences: pmf[r], r = 0..m(m+1)/2
 * (the caller gives m(m+1)/2 + 1 slots), counted by the recurrence over
 * subsets of {1..m} (common practice, no source).  Returns 0, or -1 when m
 * is 0 or above CPH_WSR_EXACT_CI_MAX. */
int cph_wsr_exact_pmf(size_t m, double *pmf);

/* Largest number of pairs cph_compare_paired takes: the n(n+1)/2 Walsh
 * averages are formed and sorted, and the interval's rank is exact. */
#define CPH_PAIRED_MAX CPH_WSR_EXACT_CI_MAX

typedef struct cph_paired_cmp {
    size_t n;                 /* pairs */
    double ratio;             /* exp(Hodges-Lehmann estimate of log(b/a)) */
    double ratio_lo, ratio_hi; /* exp of its interval; 0 and +inf when unbounded */
    double coverage;          /* achieved coverage of the interval */
    int bounded;              /* 0: too few pairs for an interval at this level */
    cph_wsr test;             /* two-sided; p = 1 and n_used = 0 when all ratios are 1 */
} cph_paired_cmp;

/* Compares paired times a[i], b[i] (seconds, > 0) at level 1 - alpha.
 * Returns 0, or -1 when n is 0 or above CPH_PAIRED_MAX, a value is not a positive finite number, or
 * memory ran out. */
int cph_compare_paired(const double *a, const double *b, size_t n, double alpha,
                       cph_paired_cmp *out);

#endif
