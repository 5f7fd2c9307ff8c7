/* JSON for measurements and shapes, and the atomic file write every report
 * uses (structure documented in report_json.h). */
#define _POSIX_C_SOURCE 200809L
#include "harness/io/report_json.h"

#include "algos/core/cpa.h"
#include "harness/io/rawfile.h"

#include <errno.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

json_t *cph_json_number(double x) { return isfinite(x) ? json_real(x) : json_null(); }

static json_t *uint_json(size_t v) { return json_integer((json_int_t)v); }

json_t *cph_json_timing_opts(const cph_timing_opts *o) {
    return json_pack("{s:i, s:o, s:o, s:o, s:o, s:o, s:b, s:o}", "warmup", o->warmup,
                     "min_samples", uint_json(o->min_samples), "max_samples",
                     uint_json(o->max_samples), "target_rel_ci", cph_json_number(o->target_rel_ci),
                     "confidence", cph_json_number(o->confidence), "max_seconds",
                     cph_json_number(o->max_seconds), "cold", o->cold, "flush_bytes",
                     uint_json(o->flush_bytes));
}

json_t *cph_json_stats(const cph_stats *s) {
    return json_pack("{s:o, s:o, s:o, s:o, s:o, s:o, s:b, s:o, s:o, s:o, s:o, s:o, s:o, s:o, "
                     "s:o, s:o, s:b}",
                     "n", uint_json(s->n), "median", cph_json_number(s->median), "ci_lo",
                     cph_json_number(s->ci_lo), "ci_hi", cph_json_number(s->ci_hi), "confidence",
                     cph_json_number(s->confidence), "coverage", cph_json_number(s->coverage),
                     "ci_exact", s->ci_exact, "ci_rank_lo", uint_json(s->ci_rank_lo),
                     "ci_rank_hi", uint_json(s->ci_rank_hi), "rel_ci", cph_json_number(s->rel_ci),
                     "mean", cph_json_number(s->mean), "stddev", cph_json_number(s->stddev), "min",
                     cph_json_number(s->min), "max", cph_json_number(s->max), "q1",
                     cph_json_number(s->q1), "q3", cph_json_number(s->q3), "noisy", s->noisy);
}

json_t *cph_json_measurement(const cph_measurement *m) {
    json_t *samples = json_array();
    if (!samples) return NULL;
    for (size_t i = 0; i < m->n; i++)
        if (json_array_append_new(samples, cph_json_number(m->samples[i]))) {
            json_decref(samples);
            return NULL;
        }
    return json_pack("{s:o, s:s, s:o, s:s, s:b, s:i, s:o, s:o, s:o, s:o, s:o, s:o}", "settings",
                     cph_json_timing_opts(&m->opts), "clock", cph_clock_name(),
                     "clock_resolution_s", cph_json_number(cph_clock_resolution()), "stop",
                     cph_stop_name(m->stop), "converged", m->converged, "warmup_runs",
                     m->warmup_runs, "flushes", uint_json(m->flushes), "checks",
                     uint_json(m->checks), "wall_seconds", cph_json_number(m->wall_seconds),
                     "timed_seconds", cph_json_number(m->timed_seconds), "stats",
                     cph_json_stats(&m->stats), "samples", samples);
}

json_t *cph_json_shape(const cp_shape *s) {
    char spec[256];
    cp_shape_format(s, spec, sizeof spec);
    return json_pack("{s:I, s:I, s:I, s:I, s:I, s:I, s:I, s:I, s:I, s:I, s:I, s:I, s:I, s:I, "
                     "s:I, s:I, s:s}",
                     "n", (json_int_t)s->n, "c", (json_int_t)s->c, "h", (json_int_t)s->h, "w",
                     (json_int_t)s->w, "k", (json_int_t)s->k, "r", (json_int_t)s->r, "s",
                     (json_int_t)s->s, "stride_h", (json_int_t)s->stride_h, "stride_w",
                     (json_int_t)s->stride_w, "pad_top", (json_int_t)s->pad_top, "pad_left",
                     (json_int_t)s->pad_left, "pad_bottom", (json_int_t)s->pad_bottom,
                     "pad_right", (json_int_t)s->pad_right, "dil_h", (json_int_t)s->dil_h,
                     "dil_w", (json_int_t)s->dil_w, "groups", (json_int_t)s->groups, "spec",
                     spec);
}

json_t *cph_json_params(const cp_algo *a, const cp_params *p) {
    json_t *o = json_object();
    if (!o) return NULL;
    for (int i = 0; i < a->nparams && i < CP_MAX_PARAMS; i++)
        json_object_set_new(o, a->params[i].name, json_integer((json_int_t)p->v[i]));
    return o;
}

/* ---- reading a measurement back ------------------------------------------ */

static cp_status get_num(const json_t *obj, const char *where, const char *key, double *out,
                         char *msg, size_t cap) {
    const json_t *v = json_object_get(obj, key);
    if (!v || !json_is_number(v))
        return cpa_fail(CP_EFORMAT, msg, cap, "%s.%s: %s", where, key,
                    v ? "expected a number" : "missing");
    *out = json_number_value(v);
    return CP_OK;
}

static cp_status get_size(const json_t *obj, const char *where, const char *key, size_t *out,
                          char *msg, size_t cap) {
    const json_t *v = json_object_get(obj, key);
    if (!v || !json_is_integer(v) || json_integer_value(v) < 0)
        return cpa_fail(CP_EFORMAT, msg, cap, "%s.%s: %s", where, key,
                    v ? "expected a non-negative integer" : "missing");
    *out = (size_t)json_integer_value(v);
    return CP_OK;
}

static cp_status get_bool(const json_t *obj, const char *where, const char *key, int *out,
                          char *msg, size_t cap) {
    const json_t *v = json_object_get(obj, key);
    if (!v || !json_is_boolean(v))
        return cpa_fail(CP_EFORMAT, msg, cap, "%s.%s: %s", where, key,
                    v ? "expected true or false" : "missing");
    *out = json_is_true(v);
    return CP_OK;
}

static cp_status read_settings(const json_t *s, const char *where, cph_timing_opts *o, char *msg,
                               size_t cap) {
    if (!json_is_object(s)) return cpa_fail(CP_EFORMAT, msg, cap, "%s: expected an object", where);
    size_t warm = 0;
    cp_status st;
    if ((st = get_size(s, where, "warmup", &warm, msg, cap)) ||
        (st = get_size(s, where, "min_samples", &o->min_samples, msg, cap)) ||
        (st = get_size(s, where, "max_samples", &o->max_samples, msg, cap)) ||
        (st = get_num(s, where, "target_rel_ci", &o->target_rel_ci, msg, cap)) ||
        (st = get_num(s, where, "confidence", &o->confidence, msg, cap)) ||
        (st = get_num(s, where, "max_seconds", &o->max_seconds, msg, cap)) ||
        (st = get_bool(s, where, "cold", &o->cold, msg, cap)) ||
        (st = get_size(s, where, "flush_bytes", &o->flush_bytes, msg, cap)))
        return st;
    o->warmup = warm > 1000000 ? 1000000 : (int)warm;
    return CP_OK;
}

static int stop_from_name(const char *s, cph_stop *out) {
    for (int i = CPH_STOP_CONVERGED; i <= CPH_STOP_ERROR; i++)
        if (strcmp(s, cph_stop_name((cph_stop)i)) == 0) {
            *out = (cph_stop)i;
            return 1;
        }
    return 0;
}

cp_status cph_json_read_measurement(const json_t *obj, const char *where, cph_measurement *out,
                                    char *msg, size_t cap) {
    memset(out, 0, sizeof *out);
    if (!json_is_object(obj)) return cpa_fail(CP_EFORMAT, msg, cap, "%s: expected an object", where);
    char sub[256];
    snprintf(sub, sizeof sub, "%s.settings", where);
    cp_status st = read_settings(json_object_get(obj, "settings"), sub, &out->opts, msg, cap);
    if (st) return st;
    const json_t *stop = json_object_get(obj, "stop");
    if (!json_is_string(stop) || !stop_from_name(json_string_value(stop), &out->stop))
        return cpa_fail(CP_EFORMAT, msg, cap, "%s.stop: expected one of converged, max_samples, "
                    "time_cap, error", where);
    size_t warm = 0;
    if ((st = get_bool(obj, where, "converged", &out->converged, msg, cap)) ||
        (st = get_size(obj, where, "warmup_runs", &warm, msg, cap)) ||
        (st = get_size(obj, where, "flushes", &out->flushes, msg, cap)) ||
        (st = get_size(obj, where, "checks", &out->checks, msg, cap)) ||
        (st = get_num(obj, where, "wall_seconds", &out->wall_seconds, msg, cap)) ||
        (st = get_num(obj, where, "timed_seconds", &out->timed_seconds, msg, cap)))
        return st;
    out->warmup_runs = warm > 1000000 ? 1000000 : (int)warm;
    const json_t *samples = json_object_get(obj, "samples");
    if (!json_is_array(samples))
        return cpa_fail(CP_EFORMAT, msg, cap, "%s.samples: %s", where,
                    samples ? "expected an array" : "missing");
    const size_t n = json_array_size(samples);
    if (n) {
        out->samples = malloc(n * sizeof *out->samples);
        if (!out->samples) return cpa_fail(CP_ENOMEM, msg, cap, "%s.samples: out of memory", where);
    }
    for (size_t i = 0; i < n; i++) {
        const json_t *v = json_array_get(samples, i);
        if (!json_is_number(v) || !(json_number_value(v) >= 0.0)) {
            cph_measurement_free(out);
            return cpa_fail(CP_EFORMAT, msg, cap, "%s.samples[%zu]: expected a non-negative number",
                        where, i);
        }
        out->samples[i] = json_number_value(v);
    }
    out->n = n;
    cph_stats_compute(out->samples, n, out->opts.confidence, &out->stats);
    /* the loop's half of the noise rule (timing.h) */
    if (!out->stats.ci_exact || out->stats.rel_ci > out->opts.target_rel_ci) out->stats.noisy = 1;
    return CP_OK;
}

/* ---- atomic write ---------------------------------------------------------- */

cp_status cph_json_write_atomic(const json_t *root, const char *path, char *msg, size_t cap) {
    char *text = json_dumps(root, JSON_INDENT(1) | JSON_REAL_PRECISION(17));
    if (!text) return cpa_fail(CP_ENOMEM, msg, cap, "%s: out of memory for the JSON text", path);
    const size_t len = strlen(text);
    char *line = realloc(text, len + 2);
    if (!line) {
        free(text);
        return cpa_fail(CP_ENOMEM, msg, cap, "%s: out of memory for the JSON text", path);
    }
    line[len] = '\n';
    line[len + 1] = '\0';
    cp_status st = cph_write_atomic(path, line, len + 1, msg, cap);
    free(line);
    return st;
}
