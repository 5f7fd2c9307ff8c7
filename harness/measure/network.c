/* The end-to-end network time (network.h). */
#include "harness/measure/network.h"

#include <stdlib.h>
#include <string.h>

void cph_net_init(cph_net_total *t, cp_flip flip, int threads, size_t nshapes, long long nlayers) {
    memset(t, 0, sizeof *t);
    t->flip = flip;
    t->threads = threads;
    t->nshapes = nshapes;
    t->nlayers = nlayers;
}

void cph_net_add(cph_net_total *t, const char *row, int count, double seconds) {
    size_t i = 0;
    while (i < t->nrows && strcmp(t->rows[i].name, row) != 0) i++;
    if (i == t->nrows) {
        if (t->nrows == CPH_NET_MAX_ROWS) return;
        memset(&t->rows[i], 0, sizeof t->rows[i]);
        snprintf(t->rows[i].name, sizeof t->rows[i].name, "%s", row);
        t->nrows++;
    }
    t->rows[i].seconds += count * seconds;
    t->rows[i].covered++;
}

/* Full rows first, by time; then partial rows by name. */
static int by_total(const void *a, const void *b) {
    const cph_net_row *x = a, *y = b;
    const size_t fx = x->covered, fy = y->covered;
    if (fx != fy) return fx > fy ? -1 : 1;
    if (x->seconds != y->seconds) return x->seconds < y->seconds ? -1 : 1;
    return strcmp(x->name, y->name);
}

void cph_net_print(FILE *f, const cph_net_total *t) {
    if (!t->nrows) return;
    cph_net_row rows[CPH_NET_MAX_ROWS];
    memcpy(rows, t->rows, t->nrows * sizeof rows[0]);
    qsort(rows, t->nrows, sizeof rows[0], by_total);
    fprintf(f, "\nnetwork total, flip=%s threads=%d: %lld layer(s) in %zu shape(s), sum of count x "
               "median\n", t->flip == CP_CONV ? "yes" : "no", t->threads, t->nlayers, t->nshapes);
    for (size_t i = 0; i < t->nrows; i++) {
        if (rows[i].covered >= t->nshapes)
            fprintf(f, "  %-16s %12.3f ms\n", rows[i].name, rows[i].seconds * 1e3);
        else
            fprintf(f, "  %-16s %12s    (measured on %zu of %zu shapes: no network total)\n",
                    rows[i].name, "n/a", rows[i].covered, t->nshapes);
    }
}
