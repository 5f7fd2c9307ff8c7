/* Test-only reader of a measurement object (measurement_read.h). */
#include "tests/support/measurement_read.h"

#include <stdio.h>
#include <string.h>

#include "loader/json_get.h"

static int stop_from_name(const char *s, cph_stop *out) {
    for (int i = CPH_STOP_CONVERGED; i <= CPH_STOP_ERROR; i++)
        if (strcmp(s, cph_stop_name((cph_stop)i)) == 0) {
            *out = (cph_stop)i;
            return 1;
        }
    return 0;
}

static cp_status read_settings(const cpl_jctx *c, const json_t *obj, const char *where,
                               cph_timing_opts *o) {
    json_t *s;
    char sub[256];
    cp_status st = cpl_jfield(c, obj, where, "settings", JSON_OBJECT, 0, &s);
    if (st) return st;
    cpl_jpath(sub, sizeof sub, where, "settings");
    long long warm, lo, hi, flush;
    if ((st = cpl_jint(c, s, sub, "warmup", 0, 1000000, &warm)) ||
        (st = cpl_jint(c, s, sub, "min_samples", 0, (long long)1 << 40, &lo)) ||
        (st = cpl_jint(c, s, sub, "max_samples", 0, (long long)1 << 40, &hi)) ||
        (st = cpl_jreal(c, s, sub, "target_rel_ci", &o->target_rel_ci)) ||
        (st = cpl_jreal(c, s, sub, "confidence", &o->confidence)) ||
        (st = cpl_jreal(c, s, sub, "max_seconds", &o->max_seconds)) ||
        (st = cpl_jbool(c, s, sub, "cold", &o->cold)) ||
        (st = cpl_jint(c, s, sub, "flush_bytes", 0, (long long)1 << 50, &flush)))
        return st;
    o->warmup = (int)warm;
    o->min_samples = (size_t)lo;
    o->max_samples = (size_t)hi;
    o->flush_bytes = (size_t)flush;
    return CP_OK;
}

cp_status cpt_json_read_measurement(const json_t *obj, const char *file, const char *where,
                                    cph_measurement *out, char *msg, size_t cap) {
    const cpl_jctx c = {file, msg, cap};
    memset(out, 0, sizeof *out);
    if (!json_is_object(obj))
        return cpl_jfail(&c, CP_EFORMAT, "%s: expected an object, found %s", where,
                         cpl_json_type_name(obj));
    cp_status st = read_settings(&c, obj, where, &out->opts);
    if (st) return st;
    const char *stop;
    if ((st = cpl_jstr(&c, obj, where, "stop", &stop))) return st;
    if (!stop_from_name(stop, &out->stop))
        return cpl_jfail(&c, CP_EFORMAT, "%s.stop: expected one of converged, max_samples, "
                         "time_cap, error", where);
    long long warm, flushes, checks;
    json_t *samples;
    char sub[256];
    if ((st = cpl_jbool(&c, obj, where, "converged", &out->converged)) ||
        (st = cpl_jint(&c, obj, where, "warmup_runs", 0, 1000000, &warm)) ||
        (st = cpl_jint(&c, obj, where, "flushes", 0, (long long)1 << 40, &flushes)) ||
        (st = cpl_jint(&c, obj, where, "checks", 0, (long long)1 << 40, &checks)) ||
        (st = cpl_jreal(&c, obj, where, "wall_seconds", &out->wall_seconds)) ||
        (st = cpl_jreal(&c, obj, where, "timed_seconds", &out->timed_seconds)) ||
        (st = cpl_jfield(&c, obj, where, "samples", JSON_ARRAY, 0, &samples)) ||
        (st = cpl_jsamples(&c, samples, cpl_jpath(sub, sizeof sub, where, "samples"),
                           &out->samples, &out->n)))
        return st;
    out->warmup_runs = (int)warm;
    out->flushes = (size_t)flushes;
    out->checks = (size_t)checks;
    cph_stats_compute(out->samples, out->n, out->opts.confidence, &out->stats);
    /* the loop's half of the noise rule (timing.h) */
    if (!out->stats.ci_exact || out->stats.rel_ci > out->opts.target_rel_ci) out->stats.noisy = 1;
    return CP_OK;
}
