/* Tuning tables (docs/table-format.md) -> measured items, one per candidate
 * measured, and what each entry chose.  Algorithm names stay text (not
 * resolved against this build's registry).  An older version is migrated
 * first (loader/codec_migrate.c), as the loader does. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "harness/io/results_impl.h"

static cp_status read_candidate(cph_rctx *c, const json_t *cand, cph_result_item *it,
                                int *usable) {
    const cpl_jctx *j = &c->j;
    const char *where = it->where;
    *usable = 0;
    cp_status st;
    const char *status = "";
    if (!json_is_object(cand))
        return cpl_jfail(j, CP_EFORMAT, "%s: expected an object, found %s", where,
                         cpl_json_type_name(cand));
    if ((st = cpl_jtext(j, cand, where, "algo", it->algo, sizeof it->algo)) ||
        (st = cph_results_params_text(j, cand, where, it->algo, it->params, sizeof it->params)) ||
        (st = cph_results_rel_err(j, cand, where, &it->rel_err)))
        return st;
    if (cpl_jstr(j, cand, where, "status", &status))
        return cpl_jfail(j, CP_EFORMAT, "%s.status: expected \"ok\", \"disqualified\" or \"failed\"",
                         where);
    if (strcmp(status, "ok") != 0) {
        if (strcmp(status, "disqualified") && strcmp(status, "failed"))
            return cpl_jfail(j, CP_EFORMAT, "%s.status: expected \"ok\", \"disqualified\" or "
                             "\"failed\", found \"%s\"", where, status);
        c->r->nfailed++;
        return CP_OK;
    }
    char sub[160];
    snprintf(sub, sizeof sub, "%s.timing", where);
    cp_timing t;
    if ((st = cpl_decode_timing(j, json_object_get(cand, "timing"), sub, &t, &it->samples,
                                &it->nsamples)))
        return st;
    it->median = it->nsamples ? cph_results_median(it->samples, it->nsamples) : t.median;
    it->timing = t;
    *usable = 1;
    return CP_OK;
}

static cp_status read_entry(cph_rctx *c, const json_t *e, size_t i, int *first_cold, int cold) {
    const cpl_jctx *j = &c->j;
    cph_results *r = c->r;
    char where[48];
    cph_result_choice ch;
    memset(&ch, 0, sizeof ch);
    json_t *choice, *cands;
    char sub[96];
    cp_status st;
    if ((st = cpl_decode_entry_head(j, e, i, where, ch.layer, sizeof ch.layer, &ch.shape, &ch.flip,
                                    &ch.threads)))
        return st;
    snprintf(sub, sizeof sub, "%s.choice", where);
    if ((st = cpl_jfield(j, e, where, "choice", JSON_OBJECT, 0, &choice)) ||
        (st = cpl_jtext(j, choice, sub, "algo", ch.algo, sizeof ch.algo)) ||
        (st = cph_results_params_text(j, choice, sub, ch.algo, ch.params, sizeof ch.params)) ||
        (st = cpl_jfield(j, e, where, "candidates", JSON_ARRAY, 0, &cands)))
        return st;
    ch.median = NAN;
    /* Confidence is read leniently: a runner_up object whose in_noise is false. */
    const json_t *ru = json_object_get(e, "runner_up");
    ch.confident = json_is_object(ru) && json_is_false(json_object_get(ru, "in_noise"));
    for (size_t k = 0; k < json_array_size(cands); k++) {
        cph_result_item it;
        memset(&it, 0, sizeof it);
        snprintf(it.where, sizeof it.where, "%s.candidates[%zu]", where, k);
        int usable;
        if ((st = read_candidate(c, json_array_get(cands, k), &it, &usable))) {
            free(it.samples);
            return st;
        }
        if (!usable) continue;
        memcpy(it.layer, ch.layer, sizeof it.layer);
        it.shape = ch.shape;
        it.flip = ch.flip;
        it.threads = ch.threads;
        it.entry = i;
        it.chosen = strcmp(it.algo, ch.algo) == 0 && strcmp(it.params, ch.params) == 0;
        if (it.chosen) ch.median = it.median;
        cph_results_note_cold(r, cold, first_cold);
        if ((st = cph_results_push(c, &it))) {
            free(it.samples);
            return st;
        }
    }
    r->choices[r->nchoices++] = ch;
    /* The fixed control timed beside this entry's trials, appended to the
     * table's: diff compares the two runs' controls as for bench results. */
    const json_t *tried = json_object_get(e, "tried");
    snprintf(sub, sizeof sub, "%s.tried.control", where);
    return cph_results_read_control(c, json_is_object(tried) ? json_object_get(tried, "control") : NULL,
                                    sub);
}

cp_status cph_results_read_table(cph_rctx *c, json_t *root) {
    const cpl_jctx *j = &c->j;
    cph_results *r = c->r;
    json_t *v, *dev, *entries;
    int from, cold;
    cp_status st;
    cp_cache_sizes caches;
    if ((st = cpl_jfield(j, root, "", "version", JSON_INTEGER, 0, &v)) ||
        (st = cpl_table_migrate(j, root, &from)) ||
        (st = cpl_decode_device(j, root, r->fingerprint, &caches)) ||
        (st = cpl_decode_cold(j, root, &cold)) ||
        (st = cpl_jfield(j, root, "", "entries", JSON_ARRAY, 0, &entries)))
        return st;
    dev = json_object_get(json_object_get(root, "device"), "cpu");
    const json_t *model = json_object_get(dev, "model");
    if (json_is_string(model)) snprintf(r->model, sizeof r->model, "%s", json_string_value(model));
    const size_t n = json_array_size(entries);
    r->choices = n ? calloc(n, sizeof *r->choices) : NULL;
    if (n && !r->choices) return cpl_jfail(j, CP_ENOMEM, "out of memory");
    int first = 1;
    for (size_t i = 0; i < n; i++)
        if ((st = read_entry(c, json_array_get(entries, i), i, &first, cold))) return st;
    if (first) r->cold = cold;
    return CP_OK;
}
