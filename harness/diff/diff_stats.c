/* Mann-Whitney U, Hodges-Lehmann shift and interval, verdicts (method and
 * sources in diff_stats.h and docs/diff.md). */
#include "harness/diff/diff_stats.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "harness/measure/stats.h"

typedef struct tagged {
    double v;
    int from_x;
} tagged;

static int cmp_tagged(const void *a, const void *b) {
    const double x = ((const tagged *)a)->v, y = ((const tagged *)b)->v;
    return (x > y) - (x < y);
}

/* P(Z > z) for the standard normal. */
static double normal_sf(double z) { return 0.5 * erfc(z / sqrt(2.0)); }

double cph_normal_isf(double q) {
    if (!(q > 0.0 && q < 1.0)) return NAN;
    double lo = -40.0, hi = 40.0;
    for (int i = 0; i < 200; i++) {
        const double mid = 0.5 * (lo + hi);
        if (mid == lo || mid == hi) break;
        if (normal_sf(mid) > q)
            lo = mid;
        else
            hi = mid;
    }
    return 0.5 * (lo + hi);
}

int cph_mwu_exact_cdf(size_t m, size_t n, double *cdf) {
    const size_t a = m < n ? m : n, b = m < n ? n : m; /* U's law is symmetric in m, n */
    if (a > CPH_MWU_EXACT_MAX || b > ((size_t)1 << 20)) return -1;
    const size_t span = a * b + 1;
    if ((a + 1) > CPH_MWU_EXACT_CELLS / span) return -1; /* bounded memory and time */
    /* prev[i*span + u] = f(i, j-1, u), cur = f(i, j, u) for i = 0..a */
    double *prev = calloc((a + 1) * span, sizeof *prev);
    double *cur = calloc((a + 1) * span, sizeof *cur);
    if (!prev || !cur) {
        free(prev);
        free(cur);
        return -1;
    }
    for (size_t i = 0; i <= a; i++) prev[i * span] = 1.0; /* f(i, 0, 0) = 1 */
    for (size_t j = 1; j <= b; j++) {
        cur[0] = 1.0; /* f(0, j, 0) = 1 */
        for (size_t i = 1; i <= a; i++) {
            double *c = cur + i * span;
            const double *cm = cur + (i - 1) * span, *p = prev + i * span;
            const size_t top = i * j;
            for (size_t u = 0; u <= top; u++) c[u] = p[u] + (u >= j ? cm[u - j] : 0.0);
        }
        double *t = prev;
        prev = cur;
        cur = t;
    }
    const double *f = prev + a * span;
    double total = 0.0;
    for (size_t u = 0; u < span; u++) total += f[u];
    double acc = 0.0;
    for (size_t u = 0; u < span; u++) {
        acc += f[u];
        cdf[u] = acc / total;
    }
    free(prev);
    free(cur);
    return 0;
}

int cph_mwu_test(const double *x, size_t m, const double *y, size_t n, cph_mwu_method method,
                 cph_mwu *out) {
    memset(out, 0, sizeof *out);
    if (!m || !n) return -1;
    const size_t N = m + n;
    tagged *all = malloc(N * sizeof *all);
    if (!all) return -1;
    for (size_t i = 0; i < m; i++) all[i] = (tagged){x[i], 1};
    for (size_t j = 0; j < n; j++) all[m + j] = (tagged){y[j], 0};
    for (size_t i = 0; i < N; i++)
        if (isnan(all[i].v)) {
            free(all);
            return -1;
        }
    qsort(all, N, sizeof *all, cmp_tagged);
    /* midranks: a group of equal values at sorted positions s..e-1 (0-based)
     * shares the rank (s+1 + e)/2 */
    double r1 = 0.0, tie_term = 0.0;
    for (size_t s = 0; s < N;) {
        size_t e = s + 1, nx = (size_t)all[s].from_x;
        while (e < N && all[e].v == all[s].v) nx += (size_t)all[e++].from_x;
        const double t = (double)(e - s);
        r1 += (double)nx * 0.5 * ((double)s + 1.0 + (double)e);
        tie_term += t * t * t - t;
        s = e;
    }
    free(all);
    const double dm = (double)m, dn = (double)n, mn = dm * dn;
    out->u1 = r1 - dm * (dm + 1.0) / 2.0;
    out->tie_term = tie_term;
    const double u = fmax(out->u1, mn - out->u1);
    int exact = method == CPH_MWU_EXACT;
    if (method == CPH_MWU_AUTO)
        exact = (m <= CPH_MWU_EXACT_MIN_SIDE || n <= CPH_MWU_EXACT_MIN_SIDE) && tie_term == 0.0 &&
                m <= CPH_MWU_EXACT_MAX && n <= CPH_MWU_EXACT_MAX;
    double p;
    if (exact) {
        if ((m < n ? m : n) > CPH_MWU_EXACT_MAX) return -1;
        const size_t span = m * n + 1;
        double *cdf = malloc(span * sizeof *cdf);
        if (!cdf || cph_mwu_exact_cdf(m, n, cdf)) {
            free(cdf);
            return -1;
        }
        /* P(U >= u) = P(U <= mn - u) by symmetry (ties ignored: u is whole) */
        const double k = mn - floor(u);
        p = k >= 0.0 ? cdf[(size_t)k] : 0.0;
        free(cdf);
    } else {
        const double sd = sqrt(mn / 12.0 * ((double)N + 1.0 - tie_term / ((double)N * (double)(N - 1))));
        const double num = u - mn / 2.0 - 0.5;
        p = sd > 0.0 ? normal_sf(num / sd) : 1.0;
    }
    p *= 2.0;
    out->p = p > 1.0 ? 1.0 : p;
    out->exact = exact;
    return 0;
}

/* Number of pairs with ys[j] - xs[i] <= t, and the largest such difference
 * (-inf when none).  Both arrays ascending: as xs[i] grows, more ys qualify. */
static size_t count_at_most(const double *xs, size_t m, const double *ys, size_t n, double t,
                            double *largest) {
    size_t cnt = 0, j = 0;
    double best = -INFINITY;
    for (size_t i = 0; i < m; i++) {
        while (j < n && ys[j] - xs[i] <= t) j++;
        cnt += j;
        if (j && ys[j - 1] - xs[i] > best) best = ys[j - 1] - xs[i];
    }
    *largest = best;
    return cnt;
}

double cph_kth_pairwise_diff(const double *xs, size_t m, const double *ys, size_t n, size_t k) {
    double lo = ys[0] - xs[m - 1], hi = ys[n - 1] - xs[0], best;
    /* invariant: count(lo) < k <= count(hi); below the smallest difference
     * count is 0 */
    if (k >= m * n) return hi;
    if (count_at_most(xs, m, ys, n, lo, &best) >= k) return lo; /* ties at the smallest */
    for (int it = 0; it < 4000; it++) {
        const double mid = lo + (hi - lo) / 2.0;
        if (mid <= lo || mid >= hi) break;
        if (count_at_most(xs, m, ys, n, mid, &best) >= k)
            hi = mid;
        else
            lo = mid;
    }
    /* lo and hi are adjacent doubles: the only differences in (lo, hi] equal
     * the largest one at or below hi */
    count_at_most(xs, m, ys, n, hi, &best);
    return best;
}

double cph_hl_shift(const double *xs, size_t m, const double *ys, size_t n) {
    const size_t mn = m * n;
    if (mn % 2) return cph_kth_pairwise_diff(xs, m, ys, n, mn / 2 + 1);
    return 0.5 * (cph_kth_pairwise_diff(xs, m, ys, n, mn / 2) +
                  cph_kth_pairwise_diff(xs, m, ys, n, mn / 2 + 1));
}

size_t cph_hl_ci_rank(size_t m, size_t n, double alpha, int exact, double *coverage) {
    *coverage = 0.0;
    if (!m || !n || !(alpha > 0.0 && alpha < 1.0)) return 0;
    const size_t mn = m * n;
    if (exact) {
        double *cdf = malloc((mn + 1) * sizeof *cdf);
        if (!cdf || cph_mwu_exact_cdf(m, n, cdf)) {
            free(cdf);
            return 0;
        }
        size_t k = 0;
        while (k < mn / 2 && cdf[k] <= alpha / 2.0) k++; /* cdf[k-1] <= alpha/2 for this k */
        if (k) *coverage = 1.0 - 2.0 * cdf[k - 1];
        free(cdf);
        return k;
    }
    const double dm = (double)m, dn = (double)n;
    const double c = floor(dm * dn / 2.0 - cph_normal_isf(alpha / 2.0) *
                                               sqrt(dm * dn * (dm + dn + 1.0) / 12.0));
    if (c < 1.0) return 0;
    *coverage = 1.0 - alpha;
    return (size_t)c;
}

static int sorted_logs(const double *v, size_t n, double **out, double *median) {
    double *l = malloc(n * sizeof *l);
    if (!l) return -1;
    for (size_t i = 0; i < n; i++) {
        if (!(v[i] > 0.0) || !isfinite(v[i])) {
            free(l);
            return -1;
        }
        l[i] = v[i];
    }
    cph_sort_doubles(l, n);
    *median = cph_median_sorted(l, n);
    for (size_t i = 0; i < n; i++) l[i] = log(l[i]);
    *out = l;
    return 0;
}

int cph_compare_samples(const double *base, size_t m, const double *new_samples, size_t n,
                        double alpha, cph_shift_cmp *out) {
    memset(out, 0, sizeof *out);
    out->m = m;
    out->n = n;
    if (!m || !n) return -1;
    double *lx = NULL, *ly = NULL;
    if (sorted_logs(base, m, &lx, &out->base_median) ||
        sorted_logs(new_samples, n, &ly, &out->new_median) ||
        cph_mwu_test(lx, m, ly, n, CPH_MWU_AUTO, &out->mwu)) { /* ranks: logs or times alike */
        free(lx);
        free(ly);
        return -1;
    }
    out->median_ratio = out->new_median / out->base_median;
    out->ratio = exp(cph_hl_shift(lx, m, ly, n));
    const size_t k = cph_hl_ci_rank(m, n, alpha, out->mwu.exact, &out->coverage);
    if (k) {
        out->bounded = 1;
        out->ratio_lo = exp(cph_kth_pairwise_diff(lx, m, ly, n, k));
        out->ratio_hi = exp(cph_kth_pairwise_diff(lx, m, ly, n, m * n + 1 - k));
    } else {
        out->ratio_lo = 0.0;
        out->ratio_hi = INFINITY;
    }
    free(lx);
    free(ly);
    return 0;
}

cph_shift_verdict cph_shift_verdict_of(const cph_shift_cmp *c, double alpha, double tol) {
    const int significant = c->mwu.p < alpha;
    if (significant && c->bounded && c->ratio_lo > 1.0 + tol) return CPH_SHIFT_SLOWER;
    if (significant && c->bounded && c->ratio_hi < 1.0 - tol) return CPH_SHIFT_FASTER;
    if (c->bounded && c->ratio_lo >= 1.0 - tol && c->ratio_hi <= 1.0 + tol)
        return CPH_SHIFT_UNCHANGED;
    return CPH_SHIFT_INCONCLUSIVE;
}

const char *cph_shift_verdict_name(cph_shift_verdict v) {
    switch (v) {
    case CPH_SHIFT_SLOWER: return "slower";
    case CPH_SHIFT_INCONCLUSIVE: return "inconclusive";
    case CPH_SHIFT_UNCHANGED: return "unchanged";
    case CPH_SHIFT_FASTER: return "faster";
    }
    return "?";
}
