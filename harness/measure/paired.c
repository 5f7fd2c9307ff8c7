/* Paired comparisons from trials: the Wilcoxon signed-rank test and the
 * one-sample Hodges-Lehmann ratio with its interval (paired.h). */
#include "harness/measure/paired.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "harness/measure/stats.h"

typedef struct {
    double abs;
    int sign; /* +1 or -1 */
} signed_abs;

static int cmp_abs(const void *a, const void *b) {
    const double x = ((const signed_abs *)a)->abs, y = ((const signed_abs *)b)->abs;
    return (x > y) - (x < y);
}

static double normal_sf(double z) { return 0.5 * erfc(z / sqrt(2.0)); }

int cph_wsr_exact_pmf(size_t m, double *pmf) {
    if (m == 0 || m > CPH_WSR_EXACT_CI_MAX) return -1;
    const size_t top = m * (m + 1) / 2;
    memset(pmf, 0, (top + 1) * sizeof *pmf);
    pmf[0] = 1.0;
    /* Subsets of {1..j} by their sum: adding j shifts the counts by j. */
    for (size_t j = 1; j <= m; j++) {
        const size_t reach = j * (j + 1) / 2;
        for (size_t r = reach; r >= j; r--) pmf[r] += pmf[r - j];
    }
    for (size_t r = 0; r <= top; r++) pmf[r] = ldexp(pmf[r], -(int)m);
    return 0;
}

/* R+ and the tie term of the non-zero differences, midranks of |d|. */
static int signed_ranks(const double *d, size_t n, double *r_plus, double *r_minus,
                        double *tie_term, size_t *used) {
    signed_abs *v = malloc((n ? n : 1) * sizeof *v);
    if (!v) return -1;
    size_t m = 0;
    for (size_t i = 0; i < n; i++)
        if (d[i] != 0.0) v[m++] = (signed_abs){fabs(d[i]), d[i] > 0 ? 1 : -1};
    qsort(v, m, sizeof *v, cmp_abs);
    double rp = 0.0, rm = 0.0, ties = 0.0;
    for (size_t i = 0; i < m;) {
        size_t j = i;
        while (j + 1 < m && v[j + 1].abs == v[i].abs) j++;
        const double rank = 0.5 * (double)(i + 1 + j + 1), t = (double)(j - i + 1);
        for (size_t q = i; q <= j; q++) *(v[q].sign > 0 ? &rp : &rm) += rank;
        ties += t * (t * t - 1.0);
        i = j + 1;
    }
    free(v);
    *r_plus = rp;
    *r_minus = rm;
    *tie_term = ties;
    *used = m;
    return 0;
}

int cph_wsr_test(const double *d, size_t n, cph_alternative alt, cph_wsr *out) {
    size_t zeros = 0;
    for (size_t i = 0; i < n; i++) {
        if (isnan(d[i])) return -1;
        zeros += d[i] == 0.0;
    }
    if (n == zeros) return -1;
    double rp, rm, ties;
    size_t m;
    if (signed_ranks(d, n, &rp, &rm, &ties, &m) != 0) return -1;
    out->statistic = alt == CPH_TWO_SIDED ? fmin(rp, rm) : rp;
    out->n_used = m;
    out->exact = n <= CPH_WSR_EXACT_MAX && zeros == 0;
    if (out->exact) {
        const size_t top = m * (m + 1) / 2;
        double *pmf = malloc((top + 1) * sizeof *pmf);
        if (!pmf || cph_wsr_exact_pmf(m, pmf) != 0) {
            free(pmf);
            return -1;
        }
        /* SciPy truncates a tied (half-integer) R+ to an integer here. */
        const size_t r = (size_t)rp;
        double below = 0.0, above = 0.0;
        for (size_t i = 0; i <= r; i++) below += pmf[i];
        for (size_t i = r; i <= top; i++) above += pmf[i];
        free(pmf);
        double p;
        if (alt == CPH_GREATER) p = above;
        else if (alt == CPH_LESS) p = below;
        else p = r == top / 2 ? 1.0 : 2.0 * fmin(below, above);
        out->p = fmin(fmax(p, 0.0), 1.0);
        return 0;
    }
    const double dm = (double)m;
    const double mean = dm * (dm + 1.0) * 0.25;
    const double se = sqrt((dm * (dm + 1.0) * (2.0 * dm + 1.0) - 0.5 * ties) / 24.0);
    const double z = (out->statistic - mean) / se;
    if (alt == CPH_GREATER) out->p = normal_sf(z);
    else if (alt == CPH_LESS) out->p = normal_sf(-z);
    else out->p = fmin(2.0 * normal_sf(fabs(z)), 1.0);
    return 0;
}

/* The rank k (1-based) of the interval's lower end, 0 when unbounded. */
static size_t hl_rank(size_t n, double alpha, double *coverage) {
    const size_t top = n * (n + 1) / 2;
    double *pmf = malloc((top + 1) * sizeof *pmf);
    if (!pmf || cph_wsr_exact_pmf(n, pmf) != 0) {
        free(pmf);
        return 0;
    }
    /* k is the largest with P(T+ <= k-1) <= alpha/2 (relative slack 1e-12
     * so that a cdf equal to alpha/2 up to rounding counts as equal). */
    size_t k = 0;
    double cdf = 0.0, at_k = 0.0;
    for (size_t r = 0; r < top; r++) {
        cdf += pmf[r];
        if (cdf > alpha / 2.0 * (1.0 + 1e-12)) break;
        k = r + 1;
        at_k = cdf;
    }
    free(pmf);
    *coverage = k ? 1.0 - 2.0 * at_k : 0.0;
    return k;
}

int cph_compare_paired(const double *a, const double *b, size_t n, double alpha,
                       cph_paired_cmp *out) {
    if (n == 0 || n > CPH_PAIRED_MAX) return -1;
    for (size_t i = 0; i < n; i++)
        if (!(a[i] > 0.0 && b[i] > 0.0 && isfinite(a[i]) && isfinite(b[i]))) return -1;
    const size_t top = n * (n + 1) / 2;
    double *d = malloc(n * sizeof *d), *walsh = malloc(top * sizeof *walsh);
    if (!d || !walsh) {
        free(d);
        free(walsh);
        return -1;
    }
    for (size_t i = 0; i < n; i++) d[i] = log(b[i]) - log(a[i]);
    size_t w = 0;
    for (size_t i = 0; i < n; i++)
        for (size_t j = i; j < n; j++) walsh[w++] = 0.5 * (d[i] + d[j]);
    cph_sort_doubles(walsh, top);
    memset(out, 0, sizeof *out);
    out->n = n;
    /* The median of the Walsh averages (mean of the middle two when even). */
    const double hl = top % 2 ? walsh[top / 2] : 0.5 * (walsh[top / 2 - 1] + walsh[top / 2]);
    out->ratio = exp(hl);
    const size_t k = hl_rank(n, alpha, &out->coverage);
    out->bounded = k > 0;
    out->ratio_lo = k ? exp(walsh[k - 1]) : 0.0;
    out->ratio_hi = k ? exp(walsh[top - k]) : INFINITY;
    if (cph_wsr_test(d, n, CPH_TWO_SIDED, &out->test) != 0) {
        /* Every ratio is exactly 1: nothing to test. */
        out->test = (cph_wsr){0.0, 1.0, 0, 0};
    }
    free(d);
    free(walsh);
    return 0;
}
