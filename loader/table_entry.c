/* One tuning-table entry, JSON -> cp_table_entry, every field a lookup relies
 * on checked and named when wrong ("t.json: entries[3].choice.algo: ...").
 * The shared objects (shape, flipped, params, timing) go through codec.h. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "loader/codec.h"
#include "loader/table_impl.h"

static cp_status decode_status(const cpl_jctx *c, const json_t *cj, const char *where,
                               cp_candidate *out) {
    const char *status, *note;
    cp_status st;
    if ((st = cpl_jstr(c, cj, where, "status", &status)) != CP_OK ||
        (st = cpl_jstr(c, cj, where, "note", &note)) != CP_OK)
        return st;
    if (strcmp(status, "disqualified") == 0)
        out->disqualified = 1;
    else if (strcmp(status, "failed") == 0)
        out->failed = 1;
    else if (strcmp(status, "ok") != 0)
        return cpl_jfail(c, CP_EFORMAT, "%s.status: '%s' (expected ok, disqualified or failed)",
                         where, status);
    return CP_OK;
}

static cp_status decode_candidate(const cpl_jctx *c, const json_t *cj, const char *where,
                                  const cp_shape *shape, const cp_cache_sizes *caches,
                                  cp_candidate *out) {
    cp_status st;
    const cp_algo *a;
    memset(out, 0, sizeof *out);
    if (!json_is_object(cj))
        return cpl_jfail(c, CP_EFORMAT, "%s: expected object, found %s", where,
                         cpl_json_type_name(cj));
    if ((st = cpl_decode_algo(c, cj, where, &a)) != CP_OK) return st;
    snprintf(out->algo, sizeof out->algo, "%s", a->name);
    if ((st = cpl_decode_params(c, cj, where, a, shape, caches, &out->params)) != CP_OK ||
        (st = decode_status(c, cj, where, out)) != CP_OK)
        return st;
    json_t *t = NULL, *re = NULL;
    if ((st = cpl_jfield(c, cj, where, "timing", JSON_OBJECT, 1, &t)) != CP_OK ||
        (st = cpl_jfield(c, cj, where, "rel_err", JSON_REAL, 1, &re)) != CP_OK)
        return st;
    const int measured = !out->failed && !out->disqualified;
    if (measured && json_is_null(t))
        return cpl_jfail(c, CP_EFORMAT, "%s.timing: null only when status is disqualified or failed",
                         where);
    if (measured && json_is_null(re))
        return cpl_jfail(c, CP_EFORMAT,
                         "%s.rel_err: null only when status is disqualified or failed", where);
    if (!json_is_null(t)) {
        char sub[160];
        cpl_jpath(sub, sizeof sub, where, "timing");
        st = cpl_decode_timing(c, t, sub, &out->timing, &out->samples, &out->nsamples);
        if (st != CP_OK) return st;
    }
    out->rel_err = NAN;
    if (!json_is_null(re)) return cpl_jreal(c, cj, where, "rel_err", &out->rel_err);
    return CP_OK;
}

/* "margin_interval": [lo, hi] (finite, lo <= hi; lo may be negative), null
 * when unbounded, absent in tables written before the race: NaN then. */
static cp_status decode_margin_interval(const cpl_jctx *c, const json_t *ru, const char *where,
                                        cp_table_entry *out) {
    out->margin_lo = out->margin_hi = NAN;
    const json_t *mi = json_object_get(ru, "margin_interval");
    if (!mi || json_is_null(mi)) return CP_OK;
    if (!json_is_array(mi) || json_array_size(mi) != 2 ||
        !json_is_number(json_array_get(mi, 0)) || !json_is_number(json_array_get(mi, 1)))
        return cpl_jfail(c, CP_EFORMAT, "%s.margin_interval: expected [low, high], found %s",
                         where, cpl_json_type_name(mi));
    const double lo = json_number_value(json_array_get(mi, 0));
    const double hi = json_number_value(json_array_get(mi, 1));
    if (!isfinite(lo) || !isfinite(hi) || lo > hi)
        return cpl_jfail(c, CP_EFORMAT, "%s.margin_interval: expected finite low <= high", where);
    out->margin_lo = lo;
    out->margin_hi = hi;
    return CP_OK;
}

static cp_status decode_choice(const cpl_jctx *c, const json_t *e, const char *where,
                               const cp_cache_sizes *caches, cp_table_entry *out) {
    char sub[96];
    json_t *ch = NULL, *t = NULL, *ru = NULL;
    cp_status st;
    if ((st = cpl_jfield(c, e, where, "choice", JSON_OBJECT, 0, &ch)) != CP_OK) return st;
    snprintf(sub, sizeof sub, "%s.choice", where);
    if ((st = cpl_decode_algo(c, ch, sub, &out->algo)) != CP_OK ||
        (st = cpl_decode_params(c, ch, sub, out->algo, &out->shape, caches, &out->params)) != CP_OK)
        return st;
    /* choice.rel_err: optional (tables before it, or the error was not finite). */
    out->rel_err = NAN;
    const json_t *re = json_object_get(ch, "rel_err");
    if (re && !json_is_null(re) && (st = cpl_jreal(c, ch, sub, "rel_err", &out->rel_err)) != CP_OK)
        return st;
    char why[200];
    if (!out->algo->supports(&out->shape, out->flip, why, sizeof why))
        return cpl_jfail(c, CP_EFORMAT, "%s.algo: %s does not support this entry's shape: %s", sub,
                         out->algo->name, why);
    if ((st = cpl_jfield(c, e, where, "timing", JSON_OBJECT, 0, &t)) != CP_OK) return st;
    snprintf(sub, sizeof sub, "%s.timing", where);
    if ((st = cpl_decode_timing(c, t, sub, &out->timing, NULL, NULL)) != CP_OK) return st;
    if ((st = cpl_jfield(c, e, where, "runner_up", JSON_OBJECT, 1, &ru)) != CP_OK) return st;
    out->runner_up = NULL;
    if (json_is_null(ru)) return CP_OK;
    snprintf(sub, sizeof sub, "%s.runner_up", where);
    if ((st = cpl_decode_algo(c, ru, sub, &out->runner_up)) != CP_OK ||
        (st = cpl_decode_params(c, ru, sub, out->runner_up, &out->shape, caches,
                                &out->runner_up_params)) != CP_OK ||
        (st = cpl_jreal(c, ru, sub, "margin", &out->margin)) != CP_OK ||
        (st = decode_margin_interval(c, ru, sub, out)) != CP_OK)
        return st;
    return cpl_jbool(c, ru, sub, "in_noise", &out->margin_in_noise);
}

cp_status cpl_decode_candidates(const cpl_jctx *c, const json_t *cands, const char *where,
                                const cp_cache_sizes *caches, cp_table_entry *out) {
    out->ncandidates = json_array_size(cands);
    if (out->ncandidates) {
        out->candidates = calloc(out->ncandidates, sizeof *out->candidates);
        if (!out->candidates) return cpl_jfail(c, CP_ENOMEM, "%s: out of memory", where);
    }
    for (size_t i = 0; i < out->ncandidates; i++) {
        char sub[96];
        snprintf(sub, sizeof sub, "%s.candidates[%zu]", where, i);
        cp_status st = decode_candidate(c, json_array_get(cands, i), sub, &out->shape, caches,
                                        &out->candidates[i]);
        if (st != CP_OK) return st;
    }
    return CP_OK;
}

cp_status cpl_decode_entry_head(const cpl_jctx *c, const json_t *e, size_t idx, char where[48],
                                char *name, size_t namecap, cp_shape *shape, cp_flip *flip,
                                int *threads) {
    snprintf(where, 48, "entries[%zu]", idx);
    if (!json_is_object(e))
        return cpl_jfail(c, CP_EFORMAT, "%s: expected object, found %s", where,
                         cpl_json_type_name(e));
    cp_status st;
    long long th;
    if ((st = cpl_jtext(c, e, where, "name", name, namecap)) != CP_OK ||
        (st = cpl_decode_shape(c, e, where, shape)) != CP_OK ||
        (st = cpl_decode_flipped(c, e, where, flip)) != CP_OK ||
        (st = cpl_jint(c, e, where, "threads", 1, 65536, &th)) != CP_OK)
        return st;
    *threads = (int)th;
    return CP_OK;
}

cp_status cpl_decode_entry(const cpl_jctx *c, const json_t *e, size_t idx, cp_table_entry *out,
                           char *key, size_t keycap, const cp_cache_sizes *caches) {
    char where[48];
    cp_status st = cpl_decode_entry_head(c, e, idx, where, out->name, sizeof out->name,
                                         &out->shape, &out->flip, &out->threads);
    if (st != CP_OK) return st;
    if ((st = decode_choice(c, e, where, caches, out)) != CP_OK) return st;

    /* A lean table (docs/table-format.md) leaves out "candidates" and "tried":
     * the evidence lives in its side file. */
    json_t *cands = NULL, *tried = NULL;
    if (json_object_get(e, "candidates") &&
        ((st = cpl_jfield(c, e, where, "candidates", JSON_ARRAY, 0, &cands)) != CP_OK ||
         (st = cpl_decode_candidates(c, cands, where, caches, out)) != CP_OK))
        return st;
    if (json_object_get(e, "tried") &&
        (st = cpl_jfield(c, e, where, "tried", JSON_OBJECT, 0, &tried)) != CP_OK)
        return st;
    return cpl_jtext(c, e, where, "settings_key", key, keycap);
}
