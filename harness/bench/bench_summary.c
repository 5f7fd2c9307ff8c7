/* The suite summaries of convpick bench (see bench_summary.h). */
#include "harness/bench/bench_summary.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "harness/io/report_json.h"
#include "harness/select/selection.h"

#define BLOCKED_PEAK_TARGET 0.70
#define IM2COL_TARGET 1.25
#define WINOGRAD_TARGET 1.3
#define CHOSEN_TARGET 0.8
#define SCALING_TARGET 1.7

cp_status cph_bench_recs_add(cph_bench_recs *r, const cph_bench_rec *rec) {
    if (r->n == r->cap) {
        const size_t cap = r->cap ? 2 * r->cap : 64;
        cph_bench_rec *v = realloc(r->v, cap * sizeof *v);
        if (!v) return CP_ENOMEM;
        r->v = v;
        r->cap = cap;
    }
    r->v[r->n++] = *rec;
    return CP_OK;
}

cp_status cph_bench_recs_fastest(const cph_bench_recs *r, cph_bench_recs *out) {
    memset(out, 0, sizeof *out);
    for (size_t i = 0; i < r->n; i++) {
        cph_bench_rec e = r->v[i];
        e.median = e.fastest;
        if (cph_bench_recs_add(out, &e) != CP_OK) {
            cph_bench_recs_free(out);
            return CP_ENOMEM;
        }
    }
    return CP_OK;
}

void cph_bench_recs_free(cph_bench_recs *r) {
    free(r->v);
    memset(r, 0, sizeof *r);
}

/* --- looking rows up ------------------------------------------------------ */

/* The row of that kind (and name, when not NULL) or NULL. */
static const cph_bench_rec *find(const cph_bench_recs *r, size_t layer, cp_flip flip,
                                 int threads, cph_row_kind kind, const char *name) {
    for (size_t i = 0; i < r->n; i++) {
        const cph_bench_rec *e = &r->v[i];
        if (e->layer == layer && e->flip == flip && e->threads == threads && e->kind == kind &&
            (!name || strcmp(e->name, name) == 0))
            return e;
    }
    return NULL;
}

static int is_winograd(const char *name) { return strncmp(name, "winograd", 8) == 0; }

/* Smallest median among algorithm rows; winograd: 1 only Winograd ones, 0 only
 * the others, -1 all.  0 when there is none. */
static double best(const cph_bench_recs *r, size_t layer, cp_flip flip, int threads,
                   int winograd, const char **which) {
    double b = 0;
    for (size_t i = 0; i < r->n; i++) {
        const cph_bench_rec *e = &r->v[i];
        if (e->layer != layer || e->flip != flip || e->threads != threads ||
            e->kind != CPH_ROW_ALGO || e->median <= 0)
            continue;
        if (winograd >= 0 && is_winograd(e->name) != winograd) continue;
        if (b == 0 || e->median < b) {
            b = e->median;
            if (which) *which = e->name;
        }
    }
    return b;
}

/* Any row of the layer (for its name, count, shape and FLOPs). */
static const cph_bench_rec *any_row(const cph_bench_recs *r, size_t layer) {
    for (size_t i = 0; i < r->n; i++)
        if (r->v[i].layer == layer) return &r->v[i];
    return NULL;
}

/* --- building the list ---------------------------------------------------- */

typedef struct sumlist {
    cph_summary *v;
    size_t n, cap;
    int oom;
} sumlist;

static cph_summary *push(sumlist *l, const char *id, int at_least, double target,
                         const char *unit, int threads, cp_flip flip, size_t maxlayers) {
    if (l->oom) return NULL;
    if (l->n == l->cap) {
        const size_t cap = l->cap ? 2 * l->cap : 8;
        cph_summary *v = realloc(l->v, cap * sizeof *v);
        if (!v) {
            l->oom = 1;
            return NULL;
        }
        l->v = v;
        l->cap = cap;
    }
    cph_summary *s = &l->v[l->n];
    memset(s, 0, sizeof *s);
    s->layers = calloc(maxlayers ? maxlayers : 1, sizeof *s->layers);
    if (!s->layers) {
        l->oom = 1;
        return NULL;
    }
    l->n++;
    s->id = id;
    s->at_least = at_least;
    s->target = target;
    s->unit = unit;
    s->threads = threads;
    s->flip = flip;
    s->value = NAN;
    s->verdict = CPH_NA;
    return s;
}

static void add_layer(cph_summary *s, const cph_bench_rec *row, double value, int per_layer) {
    cph_summary_layer *L = &s->layers[s->nlayers++];
    snprintf(L->layer, sizeof L->layer, "%s", row->layer_name);
    L->value = value;
    L->verdict = !per_layer ? CPH_NA
                 : (s->at_least ? value >= s->target : value <= s->target) ? CPH_PASS
                                                                             : CPH_MISS;
}

static double shortfall(const cph_summary *s, double v) {
    const double d = s->at_least ? s->target - v : v - s->target;
    return d > 0 ? d / s->target : 0.0;
}

/* Sets verdict and missed_by from the suite value (and, when per_layer, from
 * every layer: one layer missing misses the target). */
static void judge(cph_summary *s, int per_layer) {
    if (s->nlayers == 0 || !isfinite(s->value)) {
        s->verdict = CPH_NA;
        if (!s->note[0]) snprintf(s->note, sizeof s->note, "no layer had every row measured");
        return;
    }
    double miss = shortfall(s, s->value);
    size_t below = 0;
    if (per_layer)
        for (size_t i = 0; i < s->nlayers; i++)
            if (s->layers[i].verdict == CPH_MISS) {
                below++;
                const double m = shortfall(s, s->layers[i].value);
                if (m > miss) miss = m;
            }
    s->verdict = miss > 0 ? CPH_MISS : CPH_PASS;
    s->missed_by = miss;
    if (per_layer)
        snprintf(s->note + strlen(s->note), sizeof s->note - strlen(s->note),
                 "%s%zu of %zu layers miss%s", s->note[0] ? "; " : "", below, s->nlayers,
                 below ? " (missed by: worst layer or suite)" : "");
}

static size_t max_layer(const cph_bench_recs *r) {
    size_t m = 0;
    for (size_t i = 0; i < r->n; i++)
        if (r->v[i].layer + 1 > m) m = r->v[i].layer + 1;
    return m;
}

static int blocked_layer(const cp_shape *s) {
    return s->groups == 1 && s->c >= 64 && s->k >= 64 &&
           ((s->r == 1 && s->s == 1) || (s->r == 3 && s->s == 3));
}

static int winograd_layer(const cp_shape *s) {
    return s->groups == 1 && s->c >= 64 && s->k >= 64 && s->r == 3 && s->s == 3 &&
           s->stride_h == 1 && s->stride_w == 1 && s->dil_h == 1 && s->dil_w == 1;
}

static void blocked_peak(sumlist *l, const cph_bench_recs *r, size_t nl, cp_flip flip,
                         double peak) {
    cph_summary *s = push(l, "blocked_peak", 1, BLOCKED_PEAK_TARGET, "fraction of peak", 1, flip, nl);
    if (!s) return;
    snprintf(s->what, sizeof s->what,
             "blocked, 1 thread, 1x1 and 3x3 layers with C,K >= 64: GFLOP/s >= 70 %% of the "
             "measured 1-core FMA peak at the widest vector width, the device roof (suite, "
             "count-weighted)");
    if (peak <= 0) {
        snprintf(s->note, sizeof s->note, "roofs not measured");
        return;
    }
    double fl = 0, t = 0;
    size_t pass = 0;
    for (size_t i = 0; i < nl; i++) {
        const cph_bench_rec *b = find(r, i, flip, 1, CPH_ROW_ALGO, "blocked");
        if (!b || !blocked_layer(&b->shape)) continue;
        const double f = b->flops / b->median * 1e-9 / peak;
        add_layer(s, b, f, 0);
        s->layers[s->nlayers - 1].verdict = f >= s->target ? CPH_PASS : CPH_MISS;
        pass += f >= s->target;
        fl += b->count * b->flops;
        t += b->count * b->median;
    }
    if (t > 0) s->value = fl / t * 1e-9 / peak;
    if (s->nlayers)
        snprintf(s->note, sizeof s->note, "%zu of %zu layers >= 70 %% on their own", pass,
                 s->nlayers);
    judge(s, 0);
}

/* A ratio of two suite times: num / den over the layers where both exist. */
typedef double (*time_fn)(const cph_bench_recs *r, size_t layer, cp_flip flip, int threads);

static double t_im2col(const cph_bench_recs *r, size_t i, cp_flip m, int t) {
    const cph_bench_rec *e = find(r, i, m, t, CPH_ROW_ALGO, "im2col_gemm");
    return e ? e->median : 0;
}
static double t_sgemm(const cph_bench_recs *r, size_t i, cp_flip m, int t) {
    const cph_bench_rec *e = find(r, i, m, t, CPH_ROW_SGEMM, NULL);
    return e ? e->median : 0;
}
static double t_chosen(const cph_bench_recs *r, size_t i, cp_flip m, int t) {
    const cph_bench_rec *e = find(r, i, m, t, CPH_ROW_CHOSEN, NULL);
    return e ? e->median : 0;
}
static double t_wino(const cph_bench_recs *r, size_t i, cp_flip m, int t) {
    return best(r, i, m, t, 1, NULL);
}
static double t_nonwino(const cph_bench_recs *r, size_t i, cp_flip m, int t) {
    return best(r, i, m, t, 0, NULL);
}

static void suite_ratio(cph_summary *s, const cph_bench_recs *r, size_t nl, time_fn num,
                        time_fn den, int (*want)(const cp_shape *), int per_layer) {
    double tn = 0, td = 0;
    for (size_t i = 0; i < nl; i++) {
        const cph_bench_rec *row = any_row(r, i);
        if (!row || (want && !want(&row->shape))) continue;
        const double a = num(r, i, s->flip, s->threads), b = den(r, i, s->flip, s->threads);
        if (a <= 0 || b <= 0) continue;
        add_layer(s, row, a / b, per_layer);
        tn += row->count * a;
        td += row->count * b;
    }
    if (td > 0) s->value = tn / td;
    judge(s, per_layer);
}

static void scaling(sumlist *l, const cph_bench_recs *r, size_t nl, cp_flip flip, int cores) {
    cph_summary *s = push(l, "scaling", 1, SCALING_TARGET, "x", cores, flip, nl);
    if (!s) return;
    s->base_threads = 1;
    snprintf(s->what, sizeof s->what,
             "all %d physical cores vs 1 thread: suite throughput of the chosen (else the "
             "best) algorithm per layer >= 1.7x", cores);
    if (cores < 2) {
        snprintf(s->note, sizeof s->note, "one core only");
        return;
    }
    double t1 = 0, tn = 0;
    int used_chosen = 0, used_best = 0;
    for (size_t i = 0; i < nl; i++) {
        const cph_bench_rec *row = any_row(r, i);
        if (!row) continue;
        double a = t_chosen(r, i, flip, 1), b = t_chosen(r, i, flip, cores);
        if (a > 0 && b > 0) {
            used_chosen++;
        } else {
            a = best(r, i, flip, 1, -1, NULL);
            b = best(r, i, flip, cores, -1, NULL);
            if (a <= 0 || b <= 0) continue;
            used_best++;
        }
        add_layer(s, row, a / b, 0);
        t1 += row->count * a;
        tn += row->count * b;
    }
    if (tn > 0) s->value = t1 / tn;
    if (s->nlayers)
        snprintf(s->note, sizeof s->note, "%d layers by the chosen row, %d by the best algorithm",
                 used_chosen, used_best);
    judge(s, 0);
}

size_t cph_bench_summarize(const cph_bench_recs *r, double peak_1core, int cores,
                           cph_summary **out) {
    sumlist l = {0};
    const size_t nl = max_layer(r);
    for (int mi = 0; mi < 2; mi++) {
        const cp_flip flip = mi == 0 ? CP_XCORR : CP_CONV;
        int threads[64], nt = 0;
        for (size_t i = 0; i < r->n; i++) {
            if (r->v[i].flip != flip) continue;
            int seen = 0;
            for (int j = 0; j < nt; j++) seen |= threads[j] == r->v[i].threads;
            if (!seen && nt < 64) threads[nt++] = r->v[i].threads;
        }
        if (nt == 0) continue;
        for (int j = 0; j < nt; j++)
            if (threads[j] == 1) blocked_peak(&l, r, nl, flip, peak_1core);
        for (int j = 0; j < nt; j++) {
            cph_summary *s = push(&l, "im2col_vs_sgemm", 0, IM2COL_TARGET, "x", threads[j],
                                  flip, nl);
            if (!s) break;
            snprintf(s->what, sizeof s->what,
                     "im2col_gemm suite time <= 1.25x the bare SGEMM of the same products");
            suite_ratio(s, r, nl, t_im2col, t_sgemm, NULL, 0);
        }
        for (int j = 0; j < nt; j++) {
            cph_summary *s = push(&l, "winograd_speedup", 1, WINOGRAD_TARGET, "x", threads[j],
                                  flip, nl);
            if (!s) break;
            snprintf(s->what, sizeof s->what,
                     "3x3 stride-1 layers with C,K >= 64: best non-Winograd time / Winograd time "
                     ">= 1.3, per layer and suite");
            suite_ratio(s, r, nl, t_nonwino, t_wino, winograd_layer, 1);
        }
        for (int j = 0; j < nt; j++) {
            cph_summary *s = push(&l, "chosen_vs_im2col", 0, CHOSEN_TARGET, "x", threads[j],
                                  flip, nl);
            if (!s) break;
            snprintf(s->what, sizeof s->what,
                     "the tuning table's choice: suite time <= 0.8x the im2col_gemm suite time");
            suite_ratio(s, r, nl, t_chosen, t_im2col, NULL, 0);
            if (s->verdict == CPH_NA)
                snprintf(s->note, sizeof s->note, "no --table, or no layer with both rows");
        }
        scaling(&l, r, nl, flip, cores);
    }
    if (l.oom) {
        cph_summaries_free(l.v, l.n);
        *out = NULL;
        return (size_t)-1;
    }
    *out = l.v;
    return l.n;
}

void cph_summaries_free(cph_summary *s, size_t n) {
    if (!s) return;
    for (size_t i = 0; i < n; i++) free(s[i].layers);
    free(s);
}

/* --- output ---------------------------------------------------------------- */

static const char *verdict_name(cph_target_verdict v) {
    return v == CPH_PASS ? "PASS" : v == CPH_MISS ? "MISS" : "n/a";
}

static void fmt_value(const cph_summary *s, double v, char *buf, size_t cap) {
    if (!isfinite(v))
        snprintf(buf, cap, "-");
    else if (strcmp(s->unit, "x") == 0)
        snprintf(buf, cap, "%.3fx", v);
    else
        snprintf(buf, cap, "%.1f %%", 100.0 * v);
}

void cph_summaries_print(FILE *f, const cph_summary *s, const cph_summary *fast, size_t n) {
    fprintf(f, "\nsummary: ratios of medians measured side by side in this run; suite = sum "
               "over layers of count x median%s\n",
            fast ? "; 'fastest': the same from each row's fastest sample (noise floor, "
                   "not the verdict)" : "");
    fprintf(f, "%-17s %-4s %4s %10s %11s  %-7s %9s %15s  %s\n", "target", "flip", "thr", "figure",
            "target", "verdict", "missed_by", fast ? "fastest" : "", "note");
    for (size_t i = 0; i < n; i++) {
        const cph_summary *x = &s[i];
        char v[32], t[32], thr[8], mb[16] = "-";
        fmt_value(x, x->value, v, sizeof v);
        char tv[24];
        fmt_value(x, x->target, tv, sizeof tv);
        snprintf(t, sizeof t, "%s %s", x->at_least ? ">=" : "<=", tv);
        if (x->base_threads)
            snprintf(thr, sizeof thr, "%d:%d", x->base_threads, x->threads);
        else
            snprintf(thr, sizeof thr, "%d", x->threads);
        if (x->verdict == CPH_MISS) snprintf(mb, sizeof mb, "%.1f %%", 100.0 * x->missed_by);
        char fv[40] = "";
        if (fast) {
            char tmp[24];
            fmt_value(&fast[i], fast[i].value, tmp, sizeof tmp);
            snprintf(fv, sizeof fv, "%s %s", tmp, verdict_name(fast[i].verdict));
        }
        fprintf(f, "%-17s %-4s %4s %10s %11s  %-7s %9s %15s  %s\n", x->id,
                cph_flip_word(x->flip), thr, v, t, verdict_name(x->verdict), mb,
                fv, x->note);
    }
    size_t with_layers = 0;
    for (size_t i = 0; i < n; i++) with_layers += s[i].nlayers > 0;
    if (with_layers) fprintf(f, "\nper layer:\n");
    for (size_t i = 0; i < n; i++) {
        const cph_summary *x = &s[i];
        if (!x->nlayers) continue;
        if (x->base_threads)
            fprintf(f, "  %s (flip %s, %d vs %d threads): %s\n", x->id,
                    cph_flip_word(x->flip), x->threads, x->base_threads, x->what);
        else
            fprintf(f, "  %s (flip %s, %d thread%s): %s\n", x->id, cph_flip_word(x->flip),
                    x->threads, x->threads == 1 ? "" : "s", x->what);
        for (size_t j = 0; j < x->nlayers; j++) {
            char v[32];
            fmt_value(x, x->layers[j].value, v, sizeof v);
            char fv[48] = "";
            if (fast && j < fast[i].nlayers) {
                char tmp[24];
                fmt_value(&fast[i], fast[i].layers[j].value, tmp, sizeof tmp);
                snprintf(fv, sizeof fv, "  (fastest %s)", tmp);
            }
            fprintf(f, "    %-20s %10s%s%s%s\n", x->layers[j].layer, v,
                    x->layers[j].verdict == CPH_NA ? "" : "  ",
                    x->layers[j].verdict == CPH_NA ? "" : verdict_name(x->layers[j].verdict), fv);
        }
    }
}

static const char *verdict_json(cph_target_verdict v) {
    return v == CPH_PASS ? "pass" : v == CPH_MISS ? "miss" : "n/a";
}

json_t *cph_summaries_json(const cph_summary *s, const cph_summary *fast, size_t n) {
    json_t *arr = json_array();
    if (!arr) return NULL;
    for (size_t i = 0; i < n; i++) {
        const cph_summary *x = &s[i];
        json_t *layers = json_array();
        for (size_t j = 0; j < x->nlayers; j++) {
            json_t *L = json_pack("{s:s, s:o}", "layer", x->layers[j].layer, "value",
                                  cph_json_number(x->layers[j].value));
            if (L && fast && j < fast[i].nlayers)
                json_object_set_new(L, "value_fastest", cph_json_number(fast[i].layers[j].value));
            if (L && x->layers[j].verdict != CPH_NA)
                json_object_set_new(L, "verdict",
                                    json_string(x->layers[j].verdict == CPH_PASS ? "pass" : "miss"));
            json_array_append_new(layers, L);
        }
        json_t *o = json_pack(
            "{s:s, s:s, s:s, s:f, s:o, s:s, s:s, s:o, s:i, s:o, s:o, s:s, s:o}", "id", x->id, "target_text",
            x->what, "comparison", x->at_least ? ">=" : "<=", "target", x->target, "value",
            cph_json_number(x->value), "unit", x->unit, "verdict",
            x->verdict == CPH_PASS ? "pass" : x->verdict == CPH_MISS ? "miss" : "n/a",
            "missed_by", x->verdict == CPH_MISS ? json_real(x->missed_by) : json_null(),
            "threads", x->threads, "base_threads",
            x->base_threads ? json_integer(x->base_threads) : json_null(), "flipped",
            cph_json_flipped(x->flip), "note", x->note, "layers", layers);
        if (o && fast) {
            json_object_set_new(o, "value_fastest", cph_json_number(fast[i].value));
            json_object_set_new(o, "verdict_fastest", json_string(verdict_json(fast[i].verdict)));
        }
        if (!o || json_array_append_new(arr, o)) {
            json_decref(arr);
            return NULL;
        }
    }
    return arr;
}
