/* Statistics of timing samples.  Pure functions: no clocks here.
 *
 * Timings are skewed (a floor set by the hardware, a long tail of
 * interruptions), so the median with a distribution-free confidence interval
 * from order statistics is reported rather than a mean +- t * stddev; this is
 * what Hoefler & Belli, "Scientific Benchmarking of Parallel Computing
 * Systems", SC15, recommend for non-normal timings (from memory). */
#ifndef CONVPICK_STATS_H
#define CONVPICK_STATS_H

#include <stddef.h>

/* noisy is set when the interquartile range exceeds this fraction of the
 * median (our rule; see cph_stats_compute). */
#define CPH_NOISY_IQR 0.10

typedef struct cph_stats {
    size_t n;            /* samples */
    double median;       /* seconds */
    double ci_lo, ci_hi; /* confidence interval of the median */
    double confidence;   /* e.g. 0.95 (the achieved coverage may be higher; see stats.c) */
    double mean, min, max, stddev;
    double rel_ci;       /* max(median - ci_lo, ci_hi - median) / median */
    int noisy;           /* the spread is large: see cph_stats_compute */
    double coverage;     /* achieved coverage of [ci_lo, ci_hi] (>= confidence, or 1 - 2^(1-n)
                            for the [min, max] fallback) */
    size_t ci_rank_lo, ci_rank_hi; /* 0-based ranks of ci_lo / ci_hi in the sorted samples */
    int ci_exact;        /* 1: ranks from cph_median_ci_ranks; 0: the [min, max] fallback */
    double q1, q3;       /* quartiles (linear interpolation, cph_quantile_sorted) */
} cph_stats;

/* Sorts a copy of t[0..n) and fills st.  n may be small: with too few samples
 * for a distribution-free interval at that confidence the interval is
 * [min, max] and rel_ci reflects it.
 * stddev is the sample standard deviation (divisor n - 1; 0 when n < 2).
 * noisy = (q3 - q1) / median > CPH_NOISY_IQR, or n == 0.  The timing loop
 * also marks a measurement noisy when its CI target was not met (timing.h).
 * n == 0 gives zeros, rel_ci = +inf and noisy = 1. */
void cph_stats_compute(const double *t, size_t n, double confidence, cph_stats *st);

/* Order-statistic ranks (0-based, into the sorted samples) of a
 * distribution-free confidence interval for the median.  Returns 0 when n is
 * too small for the requested confidence.
 *
 * Rule: with B ~ Binomial(n, 1/2) (the number of samples below the true
 * median), [x_(lo), x_(hi)] (1-based lo, hi) covers the median with
 * probability P(lo <= B <= hi - 1).  We take the symmetric pair hi = n + 1 - lo
 * with the largest lo such that P(B <= lo - 1) <= (1 - confidence) / 2, so the
 * coverage 1 - 2 P(B <= lo - 1) is >= confidence.  The 0-based ranks returned
 * are lo - 1 and hi - 1 = n - lo.  0 when even lo = 1 fails (2^-n > alpha/2). */
int cph_median_ci_ranks(size_t n, double confidence, size_t *lo, size_t *hi);

/* log P(B <= k) for B ~ Binomial(n, 1/2), computed in log space with lgamma
 * (safe for n in the hundreds of thousands).  -inf never occurs for k >= 0. */
double cph_binom_half_logcdf(size_t n, size_t k);

/* Sorts v[0..n) ascending in place (NaNs are the caller's business). */
void cph_sort_doubles(double *v, size_t n);

/* Median of unsorted values (a sorted copy; NaN for n = 0 or no memory). */
double cph_median_of(const double *v, size_t n);

/* Median of sorted values (mean of the two middle ones for even n; 0 for n = 0). */
double cph_median_sorted(const double *sorted, size_t n);

/* Quantile q in [0, 1] of sorted values by linear interpolation between
 * closest ranks: h = (n - 1) q, x_floor(h) + (h - floor(h)) (x_ceil(h) - x_floor(h))
 * (Hyndman & Fan 1996, definition 7; numpy.percentile's default). */
double cph_quantile_sorted(const double *sorted, size_t n, double q);

#endif
