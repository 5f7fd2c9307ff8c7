/* The shared objects as JSON (codec_encode.h; spelling: loader/codec.h). */
#include "harness/io/codec_encode.h"

#include <math.h>

#include "loader/codec.h"

json_t *cph_json_number(double x) { return isfinite(x) ? json_real(x) : json_null(); }

json_t *cph_json_add_plugin(json_t *obj, const cp_algo *a) {
    const cp_plugin *p = a ? cp_algo_plugin(a) : NULL;
    if (!obj || !p) return obj;
    json_t *pj = json_pack("{s:s, s:s}", "name", cp_plugin_name(p), "hash", cp_plugin_hash(p));
    if (!pj || json_object_set_new(obj, "plugin", pj) != 0) {
        json_decref(obj);
        return NULL;
    }
    return obj;
}

static json_t *uint_json(size_t v) { return json_integer((json_int_t)v); }

json_t *cph_json_shape(const cp_shape *s) {
    char spec[256];
    cp_shape_format(s, spec, sizeof spec);
    cp_shape copy = *s;
    int64_t *f[CPL_SHAPE_NKEYS];
    cpl_shape_fields(&copy, f);
    json_t *o = json_object();
    int bad = !o;
    for (size_t i = 0; !bad && i < CPL_SHAPE_NKEYS; i++)
        bad = json_object_set_new(o, cpl_shape_keys[i], json_integer((json_int_t)*f[i])) != 0;
    if (!bad) bad = json_object_set_new(o, "layout", json_string(CPL_LAYOUT)) != 0;
    if (!bad) bad = json_object_set_new(o, "spec", json_string(spec)) != 0;
    if (bad) {
        json_decref(o);
        return NULL;
    }
    return o;
}

json_t *cph_json_flipped(cp_flip f) { return json_boolean(f == CP_CONV); }

json_t *cph_json_params(const cp_algo *a, const cp_params *p) {
    json_t *o = json_object();
    if (!o) return NULL;
    for (int i = 0; a && i < a->nparams && i < CP_MAX_PARAMS; i++)
        if (json_object_set_new(o, a->params[i].name, json_integer((json_int_t)p->v[i])) != 0) {
            json_decref(o);
            return NULL;
        }
    return o;
}

json_t *cph_json_timing(const cp_timing *t, const double *samples, size_t n) {
    json_t *o = json_pack("{s:{s:I, s:o, s:o, s:o, s:b}}", "stats", "n", (json_int_t)t->samples,
                          "median", cph_json_number(t->median), "ci_lo",
                          cph_json_number(t->ci_lo), "ci_hi", cph_json_number(t->ci_hi), "noisy",
                          t->noisy ? 1 : 0);
    if (o && samples && n) {
        json_t *a = json_array();
        for (size_t i = 0; a && i < n; i++) json_array_append_new(a, cph_json_number(samples[i]));
        if (!a || json_object_set_new(o, "samples", a) != 0) {
            json_decref(o);
            return NULL;
        }
    }
    return o;
}

json_t *cph_json_timing_opts(const cph_timing_opts *o) {
    return json_pack("{s:i, s:o, s:o, s:o, s:o, s:o, s:b, s:o}", "warmup", o->warmup,
                     "min_samples", uint_json(o->min_samples), "max_samples",
                     uint_json(o->max_samples), "target_rel_ci", cph_json_number(o->target_rel_ci),
                     "confidence", cph_json_number(o->confidence), "max_seconds",
                     cph_json_number(o->max_seconds), "cold", o->cold, "flush_bytes",
                     uint_json(o->flush_bytes));
}
