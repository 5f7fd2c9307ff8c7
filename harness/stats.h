/* Statistics of timing samples.  Pure functions: no clocks here. */
#ifndef CONVPICK_STATS_H
#define CONVPICK_STATS_H

#include <stddef.h>

typedef struct cph_stats {
    size_t n;            /* samples */
    double median;       /* seconds */
    double ci_lo, ci_hi; /* confidence interval of the median */
    double confidence;   /* e.g. 0.95 (the achieved coverage may be higher; see stats.c) */
    double mean, min, max, stddev;
    double rel_ci;       /* max(median - ci_lo, ci_hi - median) / median */
    int noisy;           /* the spread is large: see cph_stats_compute */
} cph_stats;

/* Sorts a copy of t[0..n) and fills st.  n may be small: with too few samples
 * for a distribution-free interval at that confidence the interval is
 * [min, max] and rel_ci reflects it. */
void cph_stats_compute(const double *t, size_t n, double confidence, cph_stats *st);

/* Order-statistic ranks (0-based, into the sorted samples) of a
 * distribution-free confidence interval for the median.  Returns 0 when n is
 * too small for the requested confidence. */
int cph_median_ci_ranks(size_t n, double confidence, size_t *lo, size_t *hi);

/* Median of sorted values. */
double cph_median_sorted(const double *sorted, size_t n);

#endif
