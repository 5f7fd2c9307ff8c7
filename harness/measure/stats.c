/* Statistics of timing samples: median, its distribution-free confidence
 * interval from order statistics, and the spread figures reports show.
 *
 * The interval is the binomial (sign-test) one: the number of samples below
 * the true median is Binomial(n, 1/2) whatever the distribution of the
 * samples, so a pair of order statistics brackets the median with a
 * probability computed exactly from that binomial.  Le Boudec, "Performance
 * Evaluation of Computer and Communication Systems", EPFL Press 2010,
 * derives it and tabulates the ranks (from memory: n = 10 at 95 % gives the
 * 2nd and 9th values); tests/harness/test_stats.c checks our ranks against SciPy. */
#include "harness/measure/stats.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

/* Binomial(n, 1/2) probabilities are compared against alpha/2 with this
 * relative slack, so that a CDF equal to the threshold in exact arithmetic
 * (a dyadic alpha/2 such as 0.25) is not lost to rounding in lgamma/exp. */
#define CPH_CDF_SLACK 1e-12

static double log_add(double a, double b) {
    if (a == -INFINITY) return b;
    if (b == -INFINITY) return a;
    const double hi = a > b ? a : b, lo = a > b ? b : a;
    return hi + log1p(exp(lo - hi));
}

/* log P(B = i), B ~ Binomial(n, 1/2). */
static double log_pmf_half(double lgn1, double n, double i) {
    return lgn1 - lgamma(i + 1.0) - lgamma(n - i + 1.0) - n * log(2.0);
}

double cph_binom_half_logcdf(size_t n, size_t k) {
    if (k >= n) return 0.0;
    const double dn = (double)n, lgn1 = lgamma(dn + 1.0);
    double acc = -INFINITY;
    for (size_t i = 0; i <= k; i++) acc = log_add(acc, log_pmf_half(lgn1, dn, (double)i));
    return acc > 0.0 ? 0.0 : acc;
}

int cph_median_ci_ranks(size_t n, double confidence, size_t *lo, size_t *hi) {
    if (n == 0 || !(confidence < 1.0)) return 0;
    const double half_alpha = (1.0 - confidence) / 2.0;
    const double thresh = log(half_alpha) + CPH_CDF_SLACK;
    const double dn = (double)n, lgn1 = lgamma(dn + 1.0);
    /* k = lo - 1 (1-based lo): the largest k with P(B <= k) <= alpha/2, kept
     * at most (n - 1) / 2 so that lo <= hi. */
    const size_t kmax = (n - 1) / 2;
    double acc = -INFINITY;
    size_t k = 0;
    int found = 0;
    for (size_t i = 0; i <= kmax; i++) {
        acc = log_add(acc, log_pmf_half(lgn1, dn, (double)i));
        if (acc > thresh) break;
        k = i;
        found = 1;
    }
    if (!found) return 0;
    *lo = k;         /* 1-based k + 1 */
    *hi = n - 1 - k; /* 1-based n - k  = n + 1 - lo */
    return 1;
}

double cph_median_sorted(const double *sorted, size_t n) {
    if (n == 0) return 0.0;
    if (n % 2) return sorted[n / 2];
    return (sorted[n / 2 - 1] + sorted[n / 2]) / 2.0;
}

double cph_quantile_sorted(const double *sorted, size_t n, double q) {
    if (n == 0) return 0.0;
    if (q <= 0.0) return sorted[0];
    if (q >= 1.0) return sorted[n - 1];
    const double h = (double)(n - 1) * q;
    const double fl = floor(h);
    const size_t i = (size_t)fl;
    if (i + 1 >= n) return sorted[n - 1];
    return sorted[i] + (h - fl) * (sorted[i + 1] - sorted[i]);
}

static int cmp_double(const void *a, const void *b) {
    const double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

void cph_sort_doubles(double *v, size_t n) { qsort(v, n, sizeof *v, cmp_double); }

double cph_median_of(const double *v, size_t n) {
    double *s = n ? malloc(n * sizeof *s) : NULL;
    if (!s) return NAN;
    memcpy(s, v, n * sizeof *s);
    cph_sort_doubles(s, n);
    const double m = cph_median_sorted(s, n);
    free(s);
    return m;
}

static double rel_halfwidth(double median, double lo, double hi) {
    const double h = fmax(median - lo, hi - median);
    if (median > 0.0) return h / median;
    return h > 0.0 ? INFINITY : 0.0;
}

void cph_stats_compute(const double *t, size_t n, double confidence, cph_stats *st) {
    memset(st, 0, sizeof *st);
    st->n = n;
    st->confidence = confidence;
    if (n == 0) {
        st->rel_ci = INFINITY;
        st->noisy = 1;
        return;
    }
    double *s = malloc(n * sizeof *s);
    if (!s) { /* keep going without order statistics rather than crash */
        st->rel_ci = INFINITY;
        st->noisy = 1;
        return;
    }
    memcpy(s, t, n * sizeof *s);
    cph_sort_doubles(s, n);

    st->min = s[0];
    st->max = s[n - 1];
    st->median = cph_median_sorted(s, n);
    st->q1 = cph_quantile_sorted(s, n, 0.25);
    st->q3 = cph_quantile_sorted(s, n, 0.75);

    /* Mean, then the variance from deviations about it (two passes: no
     * cancellation between large sums; common practice, no source). */
    double sum = 0.0;
    for (size_t i = 0; i < n; i++) sum += t[i];
    const double mean = sum / (double)n;
    double m2 = 0.0;
    for (size_t i = 0; i < n; i++) m2 += (t[i] - mean) * (t[i] - mean);
    st->mean = mean;
    st->stddev = n > 1 ? sqrt(m2 / (double)(n - 1)) : 0.0;

    size_t lo, hi;
    if (cph_median_ci_ranks(n, confidence, &lo, &hi)) {
        st->ci_exact = 1;
        st->coverage = 1.0 - 2.0 * exp(cph_binom_half_logcdf(n, lo));
    } else {
        lo = 0;
        hi = n - 1;
        st->ci_exact = 0;
        /* P(min < median < max) = 1 - 2 * 2^-n. */
        st->coverage = 1.0 - 2.0 * pow(0.5, (double)n);
    }
    st->ci_rank_lo = lo;
    st->ci_rank_hi = hi;
    st->ci_lo = s[lo];
    st->ci_hi = s[hi];
    st->rel_ci = rel_halfwidth(st->median, st->ci_lo, st->ci_hi);

    const double iqr = st->q3 - st->q1;
    st->noisy = st->median > 0.0 ? iqr / st->median > CPH_NOISY_IQR : iqr > 0.0;
    free(s);
}
