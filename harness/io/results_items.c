/* The item list both result formats fill, and parameters as text. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "harness/measure/stats.h"
#include "harness/io/results_impl.h"

cp_status cph_results_push(cph_rctx *c, const cph_result_item *it) {
    cph_results *r = c->r;
    if (r->nitems == c->items_cap) {
        const size_t nc = c->items_cap ? 2 * c->items_cap : 64;
        cph_result_item *v = realloc(r->items, nc * sizeof *v);
        if (!v) return cpl_jfail(&c->j, CP_ENOMEM, "out of memory");
        r->items = v;
        c->items_cap = nc;
    }
    r->items[r->nitems++] = *it;
    return CP_OK;
}

void cph_results_note_cold(cph_results *r, int cold, int *first) {
    if (*first) {
        r->cold = cold;
        *first = 0;
    } else if (r->cold != cold) {
        r->cold = -1;
    }
}

double cph_results_median(const double *v, size_t n) { return cph_median_of(v, n); }

/* Where a parameter name sorts: its index in the algorithm's declaration,
 * names the algorithm does not declare after all of them. */
static int param_rank(const cp_algo *a, const char *name) {
    const int i = a ? cp_algo_param_index(a, name) : -1;
    return i >= 0 ? i : 64;
}

cp_status cph_results_params_text(const cpl_jctx *c, const json_t *obj, const char *where,
                                  const char *algo, char *out, size_t cap) {
    json_t *p;
    cp_status st = cpl_jfield(c, obj, where, "params", JSON_OBJECT, 0, &p);
    if (st) return st;
    const char *names[64];
    size_t n = 0;
    const char *key;
    json_t *v = NULL;
    json_object_foreach(p, key, v) {
        if (!json_is_integer(v))
            return cpl_jfail(c, CP_EFORMAT, "%s.params.%s: expected integer, found %s", where, key,
                             cpl_json_type_name(v));
        if (n == 64) return cpl_jfail(c, CP_EFORMAT, "%s.params: more than 64 parameters", where);
        names[n++] = key;
    }
    const cp_algo *a = cp_algo_find(algo);
    for (size_t i = 1; i < n; i++) /* insertion sort: at most a few names */
        for (size_t j = i; j > 0; j--) {
            if (param_rank(a, names[j - 1]) <= param_rank(a, names[j]))
                break; /* equal: undeclared names keep the file's order */
            const char *t = names[j];
            names[j] = names[j - 1];
            names[j - 1] = t;
        }
    size_t len = 0;
    out[0] = '\0';
    for (size_t i = 0; i < n; i++) {
        const int w = snprintf(out + len, cap - len, "%s%s=%lld", i ? "," : "", names[i],
                               (long long)json_integer_value(json_object_get(p, names[i])));
        if (w < 0 || (size_t)w >= cap - len)
            return cpl_jfail(c, CP_EFORMAT, "%s.params: too long", where);
        len += (size_t)w;
    }
    return CP_OK;
}

cp_status cph_results_read_control(cph_rctx *c, const json_t *ctl, const char *where) {
    const cpl_jctx *j = &c->j;
    cph_results *r = c->r;
    if (!ctl) return CP_OK;
    if (!json_is_object(ctl))
        return cpl_jfail(j, CP_EFORMAT, "%s: expected an object, found %s", where,
                         cpl_json_type_name(ctl));
    for (int s = 0; s < CPH_RESULTS_CONTROL_SERIES; s++) {
        char key[16], path[160];
        json_t *arr;
        double *v = NULL;
        size_t n = 0;
        cp_status st;
        snprintf(key, sizeof key, "%s_s", cph_results_control_names[s]);
        snprintf(path, sizeof path, "%s.%s", where, key);
        if ((st = cpl_jfield(j, ctl, where, key, JSON_ARRAY, 0, &arr)) ||
            (st = cpl_jsamples(j, arr, path, &v, &n)))
            return st;
        for (size_t i = 0; i < n; i++)
            if (!(v[i] > 0)) {
                free(v);
                return cpl_jfail(j, CP_EFORMAT, "%s[%zu]: expected a number > 0 (seconds)", path,
                                 i);
            }
        cph_result_series *dst = &r->control[s];
        if (n) {
            double *all = realloc(dst->v, (dst->n + n) * sizeof *all);
            if (!all) {
                free(v);
                return cpl_jfail(j, CP_ENOMEM, "out of memory");
            }
            memcpy(all + dst->n, v, n * sizeof *all);
            dst->v = all;
            dst->n += n;
        }
        free(v);
    }
    r->has_control = 1;
    return CP_OK;
}

cp_status cph_results_rel_err(const cpl_jctx *c, const json_t *obj, const char *where,
                              double *out) {
    const json_t *v = json_object_get(obj, "rel_err");
    *out = NAN;
    if (!v || json_is_null(v)) return CP_OK;
    if (!json_is_number(v) || !(json_number_value(v) >= 0.0))
        return cpl_jfail(c, CP_EFORMAT, "%s.rel_err: expected a number >= 0 or null, found %s",
                         where, cpl_json_type_name(v));
    *out = json_number_value(v);
    return CP_OK;
}
