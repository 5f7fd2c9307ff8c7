/* Lookup and dispatch on a loaded tuning table: exact entry, else the nearest
 * compatible one (by FLOPs), else the documented default -- the rules are in
 * convpick/table.h.  Exact lookups are a binary search over the loader's
 * sorted index. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "loader/table_impl.h"

size_t cp_table_count(const cp_table *t) { return t ? t->n : 0; }

const cp_table_entry *cp_table_entry_at(const cp_table *t, size_t i) {
    return t && i < t->n ? &t->entries[i] : NULL;
}

const char *cp_table_fingerprint(const cp_table *t) { return t ? t->fingerprint : ""; }

int cp_table_device_matches(const cp_table *t) { return t ? t->device_matches : 0; }

cp_cache_sizes cp_table_caches(const cp_table *t) {
    return t ? t->caches : cp_cache_sizes_fallback();
}

const char *cp_table_settings_key(const cp_table *t, size_t i) {
    return t && i < t->n ? t->settings_keys[i] : "";
}

const char *cp_match_str(cp_match m) {
    switch (m) {
    case CP_MATCH_EXACT: return "exact";
    case CP_MATCH_NEAREST: return "approximate";
    case CP_MATCH_DEFAULT: return "default";
    }
    return "unknown";
}

/* First position in the sorted order whose (shape, flip) is not below s. */
static size_t lower_bound(const cp_table *t, const cp_shape *s, cp_flip flip) {
    size_t lo = 0, hi = t->n;
    while (lo < hi) {
        size_t mid = lo + (hi - lo) / 2;
        const cp_table_entry *e = &t->entries[t->order[mid]];
        if (cpl_shape_flip_cmp(&e->shape, e->flip, s, flip) < 0)
            lo = mid + 1;
        else
            hi = mid;
    }
    return lo;
}

/* threads <= 0: the entry of this shape and flip with the fewest threads. */
const cp_table_entry *cp_table_find(const cp_table *t, const cp_shape *s, cp_flip flip,
                                    int threads) {
    if (!t || !s) return NULL;
    for (size_t i = lower_bound(t, s, flip); i < t->n; i++) {
        const cp_table_entry *e = &t->entries[t->order[i]];
        if (cpl_shape_flip_cmp(&e->shape, e->flip, s, flip) != 0) break;
        if (threads <= 0 || e->threads == threads) return e;
        if (e->threads > threads) break;
    }
    return NULL;
}

static int groups_class(const cp_shape *s) {
    if (s->groups == 1) return 0;
    return s->groups == s->c ? 1 : 2;
}

static int compatible(const cp_table_entry *e, const cp_shape *s, cp_flip flip) {
    const cp_shape *a = &e->shape;
    return e->flip == flip && a->r == s->r && a->s == s->s && a->stride_h == s->stride_h &&
           a->stride_w == s->stride_w && a->dil_h == s->dil_h && a->dil_w == s->dil_w &&
           groups_class(a) == groups_class(s) && e->algo->supports(s, flip, NULL, 0);
}

cp_status cp_table_lookup(const cp_table *t, const cp_shape *s, cp_flip flip, int threads,
                          cp_choice *out, char *msg, size_t cap) {
    memset(out, 0, sizeof *out);
    char why[200];
    if (!s || cp_shape_validate(s, why, sizeof why) != CP_SHAPE_OK) {
        if (msg && cap) snprintf(msg, cap, "invalid shape: %s", s ? why : "no shape given");
        return CP_EINVAL;
    }
    const cp_table_entry *e = cp_table_find(t, s, flip, threads);
    if (e) {
        out->match = CP_MATCH_EXACT;
        out->algo = e->algo;
        out->params = e->params;
        out->entry = e;
        snprintf(out->why, sizeof out->why,
                 "entry '%s' has this shape, flip and %d thread(s); measured median %.4g ms",
                 e->name, e->threads, 1e3 * e->timing.median);
        return CP_OK;
    }
    const cp_table_entry *best = NULL;
    double best_d = 0;
    long best_td = 0;
    double lf = log(cp_shape_flops(s));
    for (size_t i = 0; t && i < t->n; i++) {
        const cp_table_entry *c = &t->entries[i];
        if (!compatible(c, s, flip)) continue;
        double d = fabs(log(cp_shape_flops(&c->shape)) - lf);
        long td = threads > 0 ? labs((long)c->threads - threads) : 0;
        if (!best || d < best_d || (d == best_d && td < best_td)) {
            best = c;
            best_d = d;
            best_td = td;
        }
    }
    if (best) {
        out->match = CP_MATCH_NEAREST;
        out->algo = best->algo;
        out->entry = best;
        int own = cp_params_check(best->algo, &best->params, NULL, 0) == CP_OK;
        if (own) {
            out->params = best->params;
        } else {
            cp_cache_sizes cs = cp_table_caches(t);
            cp_algo_defaults(best->algo, s, &cs, &out->params);
        }
        snprintf(out->why, sizeof out->why,
                 "no exact entry; nearest compatible entry '%s' (%d thread(s), FLOPs x%.3g of "
                 "the asked layer, same kernel, stride, dilation, groups class); %s",
                 best->name, best->threads, exp(log(cp_shape_flops(&best->shape)) - lf),
                 own ? "its parameters" : "default parameters for this shape");
        return CP_OK;
    }
    const cp_algo *a = cp_algo_find("im2col_gemm");
    if (!a) {
        if (msg && cap) snprintf(msg, cap, "default algorithm im2col_gemm is not in this build");
        return CP_ENOTFOUND;
    }
    cp_cache_sizes cs = cp_table_caches(t);
    out->match = CP_MATCH_DEFAULT;
    out->algo = a;
    cp_algo_defaults(a, s, &cs, &out->params);
    snprintf(out->why, sizeof out->why,
             "%s; default im2col_gemm with parameters from the %s cache sizes",
             t ? "no entry of the same flip, kernel, stride, dilation and groups class"
               : "no table",
             t ? "table's" : "fallback");
    return CP_OK;
}

cp_status cp_table_plan(const cp_table *t, const cp_shape *s, cp_flip flip, int threads,
                        const float *w, cp_plan **out, cp_choice *choice, char *msg, size_t cap) {
    cp_choice local;
    cp_choice *c = choice ? choice : &local;
    *out = NULL;
    cp_status st = cp_table_lookup(t, s, flip, threads, c, msg, cap);
    if (st != CP_OK) return st;
    cp_cache_sizes cs = cp_table_caches(t);
    int nt = threads > 0 ? threads : (c->entry ? c->entry->threads : 1);
    return cp_plan_create(c->algo, s, flip, &c->params, &cs, nt, w, out, msg, cap);
}
