/* What the report computes from the measurements (report.h). */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "harness/report/report.h"

double cph_rep_intensity(const cp_shape *s) {
    const double bytes = 4.0 * ((double)cp_shape_input_elems(s) + (double)cp_shape_weight_elems(s) +
                                (double)cp_shape_output_elems(s));
    return cp_shape_flops(s) / bytes;
}

double cph_rep_gflops(const cp_shape *s, double seconds) {
    return seconds > 0 ? cp_shape_flops(s) / seconds / 1e9 : 0.0;
}

double cph_rep_roof_for(const cph_report *r, int compute, int threads) {
    double best = 0.0;
    int best_gap = 1 << 30;
    for (size_t i = 0; i < r->n; i++)
        for (int k = 0; k < r->src[i].nroofs; k++) {
            const cph_rep_roof *f = &r->src[i].roofs[k];
            if (f->compute != compute) continue;
            const int gap = abs(f->threads - threads);
            /* the nearest thread count; among equals the highest roof */
            if (gap < best_gap || (gap == best_gap && f->value > best)) {
                best_gap = gap;
                best = f->value;
            }
        }
    return best;
}

int cph_rep_thread_counts(const cph_report *r, int *out, int max) {
    int n = 0;
    for (size_t i = 0; i < r->n; i++)
        for (size_t k = 0; k < r->src[i].nentries; k++) {
            const int t = r->src[i].entries[k].threads;
            int j = 0;
            while (j < n && out[j] < t) j++;
            if ((j < n && out[j] == t) || n >= max) continue;
            memmove(out + j + 1, out + j, (size_t)(n - j) * sizeof *out);
            out[j] = t;
            n++;
        }
    return n;
}

cph_rep_total cph_rep_total_choice(const cph_rep_source *s, int threads) {
    cph_rep_total t = {0.0, 0, 0};
    for (size_t k = 0; k < s->nentries; k++) {
        const cph_rep_entry *e = &s->entries[k];
        if (e->threads != threads) continue;
        if (e->choice < 0) {
            t.missing++;
            continue;
        }
        t.seconds += e->count * e->cands[e->choice].median;
        t.layers++;
    }
    return t;
}

long cph_rep_best_of(const cph_rep_entry *e, const char *algo) {
    long best = -1;
    for (size_t c = 0; c < e->ncands; c++)
        if (strcmp(e->cands[c].algo, algo) == 0 &&
            (best < 0 || e->cands[c].median < e->cands[best].median))
            best = (long)c;
    return best;
}

cph_rep_total cph_rep_total_algo(const cph_rep_source *s, int threads, const char *algo) {
    cph_rep_total t = {0.0, 0, 0};
    for (size_t k = 0; k < s->nentries; k++) {
        const cph_rep_entry *e = &s->entries[k];
        if (e->threads != threads) continue;
        const long b = cph_rep_best_of(e, algo);
        if (b < 0) {
            t.missing++;
            continue;
        }
        t.seconds += e->count * e->cands[b].median;
        t.layers++;
    }
    return t;
}

int cph_rep_algos(const cph_rep_source *s, int threads, const char **out, int max) {
    int n = 0;
    for (size_t k = 0; k < s->nentries; k++) {
        const cph_rep_entry *e = &s->entries[k];
        if (e->threads != threads) continue;
        for (size_t c = 0; c < e->ncands; c++) {
            int j = 0;
            while (j < n && strcmp(out[j], e->cands[c].algo) != 0) j++;
            if (j == n && n < max) out[n++] = e->cands[c].algo;
        }
    }
    return n;
}

void cph_rep_set_count(cph_report *r, const cp_shape *shape, int count) {
    for (size_t i = 0; i < r->n; i++)
        for (size_t k = 0; k < r->src[i].nentries; k++) {
            cph_rep_entry *e = &r->src[i].entries[k];
            if (!cp_shape_equal(&e->shape, shape)) continue;
            e->count = count;
            e->count_known = 1;
        }
}
