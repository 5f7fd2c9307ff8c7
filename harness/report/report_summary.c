/* The terminal summary (report.h): one line per entry of every table, then
 * the network totals per thread count.  convpick show prints it, and tune at
 * its end. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "harness/report/report.h"

static void entry_line(FILE *f, const cph_report *r, const cph_rep_entry *e) {
    const cph_rep_cand *c = e->choice >= 0 ? &e->cands[e->choice] : NULL;
    char choice[64] = "-", roof[16] = "-", margin[48] = "-";
    double ms = NAN, g = NAN;
    if (c) {
        snprintf(choice, sizeof choice, "%s", c->algo);
        ms = c->median * 1e3;
        g = cph_rep_gflops(&e->shape, c->median);
        const double peak = cph_rep_roof_for(r, 1, e->threads);
        if (peak > 0) snprintf(roof, sizeof roof, "%.0f%%", 100.0 * g / peak);
    }
    if (isfinite(e->margin)) {
        if (isfinite(e->margin_lo))
            snprintf(margin, sizeof margin, "%+.1f%% [%+.1f, %+.1f]", 100 * e->margin,
                     100 * e->margin_lo, 100 * e->margin_hi);
        else
            snprintf(margin, sizeof margin, "%+.1f%%", 100 * e->margin);
    }
    char runner[40];
    snprintf(runner, sizeof runner, "%.39s", e->runner[0] ? e->runner : "-");
    char *paren = strchr(runner, ' ');
    if (paren) *paren = '\0'; /* the algorithm; its parameters are in the report */
    fprintf(f, "%-20.20s %5d%s %3d %-18.18s %10.4f %8.1f %6s  %-18.18s %-26s %s\n", e->layer,
            e->count, e->count_known ? " " : "*", e->threads, choice, ms, g, roof, runner, margin,
            e->runner[0] ? (e->confident ? "confident" : "in noise") : "no runner-up");
}

static void totals(FILE *f, const cph_rep_source *s, int threads) {
    const cph_rep_total t = cph_rep_total_choice(s, threads);
    fprintf(f, "network total, %d thread(s): the choice %.4f ms over %zu layer(s)", threads,
            t.seconds * 1e3, t.layers);
    const char *algos[32];
    const int n = cph_rep_algos(s, threads, algos, 32);
    for (int i = 0; i < n; i++) {
        const cph_rep_total a = cph_rep_total_algo(s, threads, algos[i]);
        fprintf(f, "; %s %.4f ms", algos[i], a.seconds * 1e3);
        if (a.missing) fprintf(f, " (not measured on %zu layer(s))", a.missing);
    }
    fputc('\n', f);
}

void cph_rep_summary(FILE *f, const cph_report *r) {
    int th[64];
    const int nt = cph_rep_thread_counts(r, th, 64);
    for (size_t i = 0; i < r->n; i++) {
        const cph_rep_source *s = &r->src[i];
        if (s->kind != CPH_REP_TABLE) continue;
        fprintf(f, "%s: %s, fingerprint %s, %zu entries\n", s->path, s->model, s->fingerprint,
                s->nentries);
        fprintf(f, "%-20s %6s %3s %-18s %10s %8s %6s  %-18s %-26s %s\n", "layer", "count", "thr",
                "choice", "time ms", "GFLOP/s", "%roof", "runner-up", "margin % [interval]",
                "verdict");
        int assumed = 0;
        for (size_t k = 0; k < s->nentries; k++) {
            entry_line(f, r, &s->entries[k]);
            assumed |= !s->entries[k].count_known;
        }
        for (int t = 0; t < nt; t++) totals(f, s, th[t]);
        if (assumed)
            fprintf(f, "* count 1 assumed: the table does not record how often a layer occurs "
                       "(give bench results of the same shapes for the counts)\n");
        if (cph_rep_roof_for(r, 1, 1) <= 0)
            fprintf(f, "%%roof: no roofs given (add convpick probe --json output)\n");
    }
}
