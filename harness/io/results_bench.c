/* Bench results (format convpick-bench-results, harness/cli/cmd_bench.c) ->
 * measured items.  An older version is migrated first (results_migrate.c). */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "harness/io/codec_encode.h"
#include "harness/io/results_impl.h"

/* results[i] of status "ok" -> it (its samples owned by it). */
static cp_status read_result(cph_rctx *c, const json_t *e, cph_result_item *it, int *cold) {
    const cpl_jctx *j = &c->j;
    long long thr = 0;
    cp_status st;
    if ((st = cpl_jtext(j, e, it->where, "layer", it->layer, sizeof it->layer)) ||
        (st = cpl_decode_shape(j, e, it->where, &it->shape)) ||
        (st = cpl_decode_flipped(j, e, it->where, &it->flip)) ||
        (st = cpl_jint(j, e, it->where, "threads", 1, 65536, &thr)) ||
        (st = cpl_jtext(j, e, it->where, "algo", it->algo, sizeof it->algo)) ||
        (st = cph_results_params_text(j, e, it->where, it->algo, it->params, sizeof it->params)))
        return st;
    it->threads = (int)thr;
    if ((st = cph_results_rel_err(j, e, it->where, &it->rel_err))) return st;
    char sub[128];
    json_t *meas, *settings;
    snprintf(sub, sizeof sub, "%s.measurement", it->where);
    if ((st = cpl_jfield(j, e, it->where, "measurement", JSON_OBJECT, 0, &meas)) ||
        (st = cpl_jfield(j, meas, sub, "settings", JSON_OBJECT, 0, &settings)))
        return st;
    char ss[160];
    snprintf(ss, sizeof ss, "%s.settings", sub);
    if ((st = cpl_jbool(j, settings, ss, "cold", cold))) return st;
    const json_t *are = json_object_get(settings, "samples_are");
    it->trials = json_is_string(are) && strcmp(json_string_value(are), "trial_medians") == 0;
    const json_t *kind = json_object_get(e, "kind");
    if (kind) {
        const char *k = json_string_value(kind);
        if (!k || (strcmp(k, "algorithm") && strcmp(k, "reference") && strcmp(k, "chosen")))
            return cpl_jfail(j, CP_EFORMAT, "%s.kind: expected \"algorithm\", \"reference\" or "
                             "\"chosen\"", it->where);
        it->kind = strcmp(k, "chosen") == 0      ? CPH_ITEM_CHOSEN
                   : strcmp(k, "reference") == 0 ? CPH_ITEM_REFERENCE
                                                 : CPH_ITEM_ALGORITHM;
    }
    if (it->kind == CPH_ITEM_CHOSEN &&
        (st = cpl_jtext(j, e, it->where, "chosen_algo", it->chosen_algo, sizeof it->chosen_algo)))
        return st;
    cp_timing t;
    if (!json_object_get(meas, "samples"))
        return cpl_jfail(j, CP_EFORMAT, "%s.samples: missing (expected array)", sub);
    if ((st = cpl_decode_timing(j, meas, sub, &t, &it->samples, &it->nsamples))) return st;
    if (!it->nsamples) return cpl_jfail(j, CP_EFORMAT, "%s.samples: status \"ok\" without samples", sub);
    it->median = cph_results_median(it->samples, it->nsamples);
    it->timing = t;
    const json_t *count = json_object_get(e, "layer_count"); /* lenient: for totals only */
    it->count = json_is_integer(count) && json_integer_value(count) > 0 &&
                        json_integer_value(count) <= 1000000
                    ? (int)json_integer_value(count)
                    : 0;
    return CP_OK;
}

cp_status cph_results_read_bench(cph_rctx *c, json_t *root) {
    cph_results *r = c->r;
    const cpl_jctx *j = &c->j;
    json_t *results, *dev, *cpu;
    cp_status st;
    if ((st = cph_bench_migrate(j, root)) ||
        (st = cpl_jfield(j, root, "", "device", JSON_OBJECT, 0, &dev)) ||
        (st = cpl_jtext(j, dev, "device", "fingerprint", r->fingerprint, sizeof r->fingerprint)) ||
        (st = cpl_jfield(j, root, "", "results", JSON_ARRAY, 0, &results)))
        return st;
    cpu = json_object_get(dev, "cpu");
    const json_t *model = json_is_object(cpu) ? json_object_get(cpu, "model") : NULL;
    if (json_is_string(model)) snprintf(r->model, sizeof r->model, "%s", json_string_value(model));
    if ((st = cph_results_read_control(c, json_object_get(root, "control"), "control")))
        return st;
    int first = 1, ntrials = 0;
    for (size_t i = 0; i < json_array_size(results); i++) {
        const json_t *e = json_array_get(results, i);
        cph_result_item it;
        memset(&it, 0, sizeof it);
        snprintf(it.where, sizeof it.where, "results[%zu]", i);
        if (!json_is_object(e))
            return cpl_jfail(j, CP_EFORMAT, "%s: expected an object, found %s", it.where,
                             cpl_json_type_name(e));
        const char *status = "";
        if (cpl_jstr(j, e, it.where, "status", &status))
            return cpl_jfail(j, CP_EFORMAT, "%s.status: expected \"ok\", \"unsupported\" or \"error\"",
                             it.where);
        if (strcmp(status, "unsupported") == 0) {
            r->nunsupported++;
            continue;
        }
        if (strcmp(status, "error") == 0) {
            r->nfailed++;
            continue;
        }
        if (strcmp(status, "ok") != 0)
            return cpl_jfail(j, CP_EFORMAT, "%s.status: expected \"ok\", \"unsupported\" or "
                             "\"error\", found \"%s\"", it.where, status);
        int cold = 0;
        st = read_result(c, e, &it, &cold);
        if (!st) st = cph_results_push(c, &it);
        if (st) {
            free(it.samples);
            return st;
        }
        cph_results_note_cold(r, cold, &first);
        ntrials += it.trials;
        r->nchosen_rows += it.kind == CPH_ITEM_CHOSEN;
    }
    r->trials = ntrials == 0 ? 0 : (size_t)ntrials == r->nitems ? 1 : -1;
    return CP_OK;
}
